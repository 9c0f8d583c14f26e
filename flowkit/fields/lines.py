"""Material lines: advect a curve with adaptive point insertion and measure its length growth.

:func:`material_line` follows a material curve (open or closed) through a flow
or a map and reports its length L(t) and the line-stretching exponent
h_line = d ln L / dt, a lower bound for the topological entropy of the flow.

Method
------
Every point keeps its *Lagrangian label*: the parameter s in [0, 1] of the
initial curve it started from. Between insertion passes all points are advected
as one parallel batch. After each pass, segments that are too long
(> ``max_spacing``) or that bend too sharply (turning angle at either end >
``max_angle``, for segments longer than ``min_spacing``) are bisected *in label
space*: the new point with label (s_i + s_{i+1})/2 is put on the initial curve
and integrated from the start time to the current time (maps: iterated from 0).
So every point is a true material point; nothing is interpolated on the current
curve, whose shape between neighbours is unknown once the line folds. Bisection
repeats until no segment violates the bounds. Its cost is one extra trajectory
of the full elapsed time per inserted point, i.e. roughly (h_line * T) times the
cost of advecting the final points once; we accept that for correctness
(interpolating on the deformed curve misses folds and grows the length wrongly).

A segment whose labels are within ``label_floor`` of each other but whose chord is
still longer than ``max_spacing`` cannot be refined further: the map (or flow map)
is discontinuous there (e.g. the cut of a baker's map) or the resolution of the
labels is exhausted. Such segments are reported as ``cut_segments`` and left out
of the length. Segments with a point that failed (left the domain, non-finite)
are left out too and counted in ``outcomes``.

The length is the sum of chords; with turning angles below ``max_angle`` the
chord sum underestimates the arc length by about max_angle^2 / 24. The reported
``length_error`` is a Richardson estimate from the chord sum over every other
point: (L_fine - L_coarse) / (3 L_fine).
"""

from __future__ import annotations

import math
import resource
import time as _time

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.integrate.outcomes import Outcome
from flowkit.fields.curves import Curve, circle, curve, default_curve, default_spacing, segment  # noqa: F401
from flowkit.fields.particles import (
    advance_points, check_duration, check_points, check_system, provenance_of, stretch_settings, units,
)
from flowkit.fields.rates import RateEstimate, block_rate
from flowkit.fields.results import LineResult
from flowkit.flows.maps import is_map
from flowkit.progress import Budget

__all__ = ["Curve", "LineResult", "circle", "curve", "material_line", "segment"]


# -- the line -------------------------------------------------------------------------------
class _Line:
    """Current state of the line: sorted labels, positions, per-point outcome."""

    def __init__(self, labels, X, outcome):
        self.labels = labels
        self.X = X
        self.outcome = outcome

    @property
    def nbytes(self) -> int:
        return self.labels.nbytes + self.X.nbytes + self.outcome.nbytes


def material_line(
    system,
    time,
    curve: Curve | None = None,
    *,
    max_spacing: float | None = None,
    max_angle: float = 0.3,
    min_spacing: float | None = None,
    interval=None,
    max_points: int = 1_000_000,
    initial_points: int = 64,
    label_floor: float = 1e-13,
    window: tuple | None = None,
    snapshots: int = 4,
    snapshot_points: int = 20_000,
    settings=None,
    threads: int | None = None,
    progress: bool | None = None,
    max_seconds: float | None = None,
) -> LineResult:
    """Advect a material curve with adaptive point insertion; measure its length growth.

    Parameters
    ----------
    system : Flow or Map
        The flow (or map) that carries the line.
    time : float or int
        Duration (flows) or number of iterations (maps).
    curve : Curve, optional
        Initial curve (:func:`segment`, :func:`circle`, :func:`curve`); default a
        generic segment inside the domain.
    max_spacing : float, optional
        Largest allowed distance between neighbours (default 1/200 of the domain
        size: 0.01 in the unit ball, 2 pi / 200 in the periodic box, 0.005 for maps).
    max_angle : float
        Largest turning angle (radians) at a point before its segments are bisected.
    min_spacing : float, optional
        Segments shorter than this are not bisected for curvature (default
        ``max_spacing / 20``); bounds the work spent on hairpin folds.
    interval : float or int, optional
        Time between insertion passes (default ``time / 100``; maps: 1 iteration).
    max_points : int
        Point budget; the run stops (``stopped = "max_points"``) when it is reached.
    initial_points : int
        Points on the initial curve before refinement.
    label_floor : float
        Smallest label gap that is still bisected (see the module docstring).
    window : (float, float), optional
        Fit window for the rate (default: the last three quarters of the time reached).
    snapshots : int
        Number of stored drawings of the line (evenly spaced passes, first and last included).
    snapshot_points : int
        Most points per stored drawing.
    settings : IntegratorSettings, optional
        DOP853 tolerances (default rtol 1e-9, atol 1e-12).
    threads : int, optional
        Numba threads.
    progress : bool, optional
        A progress bar over passes once the run lasts 2 s (default); False: never.
    max_seconds : float, optional
        Wall-clock budget, checked between passes: the line and lengths so far are
        returned (``stopped == "max_seconds"``, ``partial``), as after Ctrl-C.

    Returns
    -------
    LineResult
    """
    system = check_system(system)
    mapping = is_map(system)
    T = check_duration(system, time)
    settings = None if mapping else stretch_settings(settings)
    crv = curve if curve is not None else default_curve(system)
    if not isinstance(crv, Curve):
        raise FlowkitError("`curve` must be a flowkit.fields.Curve (segment(a, b), circle(c, r, n) or curve(func))")
    dmax = default_spacing(system) if max_spacing is None else float(max_spacing)
    if not (math.isfinite(dmax) and dmax > 0):
        raise FlowkitError(f"`max_spacing` must be positive; got {max_spacing!r}")
    dmin = dmax / 20 if min_spacing is None else float(min_spacing)
    if not (0 < dmin <= dmax):
        raise FlowkitError(f"`min_spacing` must lie in (0, max_spacing]; got {min_spacing!r}")
    if not (0 < max_angle < math.pi):
        raise FlowkitError(f"`max_angle` must lie in (0, pi) radians; got {max_angle!r}")
    if not (isinstance(max_points, (int, np.integer)) and max_points >= 16):
        raise FlowkitError(f"`max_points` must be an integer >= 16; got {max_points!r}")
    if not (isinstance(initial_points, (int, np.integer)) and 2 <= initial_points <= max_points):
        raise FlowkitError(f"`initial_points` must be an integer in [2, max_points]; got {initial_points!r}")
    from flowkit.validation import memory

    # at the budget: positions, labels and the copies made while inserting points (~25 doubles a point)
    memory(int(max_points) * 200.0, "max_points", per_unit=200.0, value=int(max_points))
    marks = _pass_times(system, T, interval)
    periods = system.periods if mapping else np.zeros(3)

    labels0 = np.linspace(0.0, 1.0, int(initial_points))
    X0 = crv.points(labels0)
    try:
        check_points(system, X0, "curve")
    except FlowkitError as exc:
        raise FlowkitError(f"the initial curve must lie inside the domain: {exc}") from None
    if crv.closed and np.linalg.norm(_delta(X0[[0, -1]], periods)) > 1e-9 * max(1.0, np.abs(X0).max()):
        raise FlowkitError("a closed curve must return to its start: curve(0) and curve(1) differ")

    def trace(labels, t):
        pts = crv.points(labels)
        if mapping:
            pts = system.wrap(pts)
        if t == marks[0]:
            return pts, np.zeros(len(labels), dtype=np.int8)
        return advance_points(system, pts, marks[0], t, settings, threads)

    opts = dict(dmax=dmax, dmin=dmin, cos_max=math.cos(max_angle), floor=float(label_floor), periods=periods,
                closed=crv.closed, max_points=int(max_points))
    t_start = _time.perf_counter()
    line = _Line(labels0, X0, np.zeros(len(labels0), dtype=np.int8))
    line, ok_refine, cuts = _refine(line, marks[0], trace, opts)
    rec_t, rec_L, rec_N, rec_E = [], [], [], []
    snaps_at = set(np.unique(np.round(np.linspace(0, len(marks) - 1, max(int(snapshots), 2))).astype(int)))
    snaps = []
    stopped = "time"
    peak = line.nbytes
    cut_len = [0.0]

    def record(k, ln, ncut):
        L, err, cut_len[0] = _length(ln, opts)
        rec_t.append(float(marks[k]))
        rec_L.append(L)
        rec_N.append(len(ln.labels))
        rec_E.append(err)
        if k in snaps_at:
            snaps.append((float(marks[k]), _thin(ln, snapshot_points)))
        return ncut

    cut_count = record(0, line, cuts)
    with Budget(total=len(marks) - 1, desc=f"material line {getattr(system, 'name', '')}", unit="pass",
                progress=progress, max_seconds=max_seconds, keep_empty=True) as budget:
        for k in budget.iterate(range(1, len(marks))):
            live = line.outcome == Outcome.FINISHED
            X = line.X.copy()
            oc = line.outcome.copy()
            if live.any():
                moved, moc = advance_points(system, np.ascontiguousarray(X[live]), marks[k - 1], marks[k],
                                            settings, threads)
                X[live] = moved
                oc[live] = moc
            new, ok_refine, cuts = _refine(_Line(line.labels, X, oc), marks[k], trace, opts)
            peak = max(peak, new.nbytes + line.nbytes)
            if not ok_refine:
                stopped = "max_points"
                break
            line = new
            cut_count = record(k, line, cuts)
            if len(line.labels) >= max_points:
                stopped = "max_points" if k < len(marks) - 1 else "time"
                break
    if budget.partial:
        stopped = "interrupted" if budget.interrupted else "max_seconds"
    if snaps and snaps[-1][0] != rec_t[-1]:
        snaps.append((rec_t[-1], _thin(line, snapshot_points)))
    seconds = _time.perf_counter() - t_start
    times = np.array(rec_t)
    lengths = np.array(rec_L)
    notes = _line_notes(stopped, line, cut_count, cut_len[0] / max(lengths[-1], 1e-300), times, T, max_points)
    win = _line_window(window, times)
    if win is None:
        rate = RateEstimate(math.nan, math.nan, (0.0, float(times[-1])), "too few passes for a rate")
    else:
        rate = block_rate(times, np.log(lengths), win, what="line length: ")
    prov = provenance_of(system, settings, algorithm="Lagrangian labels; bisection in label space, inserted "
                         "points integrated from the initial curve", curve=crv.description, closed=crv.closed,
                         max_spacing=dmax, min_spacing=dmin, max_angle=max_angle, label_floor=label_floor,
                         passes=len(marks) - 1, max_points=int(max_points))
    return LineResult(
        times=times, lengths=lengths, npoints=np.array(rec_N), length_error=np.array(rec_E), rate=rate,
        snapshots=snaps, labels=line.labels, positions=line.X, outcome=line.outcome, cut_segments=cut_count,
        cut_length=cut_len[0], closed=crv.closed, stopped=stopped, units=units(system),
        memory_bytes=int(line.nbytes), peak_bytes=int(peak),
        peak_rss_bytes=int(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss) * 1024, seconds=seconds,
        notes=notes, provenance=prov,
    )


def _pass_times(system, T, interval) -> np.ndarray:
    if is_map(system):
        step = 1 if interval is None else interval
        if not (isinstance(step, (int, np.integer)) and step >= 1):
            raise FlowkitError(f"`interval` is a number of iterations for maps (integer >= 1); got {interval!r}")
        return np.unique(np.append(np.arange(0, T, int(step)), T)).astype(np.int64)
    dt = T / 100 if interval is None else float(interval)
    if not (math.isfinite(dt) and 0 < dt <= T):
        raise FlowkitError(f"`interval` must be a positive time no longer than `time`; got {interval!r}")
    n = max(1, int(math.ceil(T / dt - 1e-9)))
    return np.linspace(0.0, T, n + 1)


def _line_window(window, times):
    if window is not None:
        a, b = (float(w) for w in window)
        return (a, b)
    if len(times) < 4:
        return None
    return (0.25 * float(times[-1]), float(times[-1]))


def _line_notes(stopped, line, cuts, cut_fraction, times, T, max_points) -> list:
    notes = []
    if stopped == "max_points":
        notes.append(f"stopped at t = {times[-1]:g} of {T:g}: the point budget ({max_points}) was reached")
    if stopped == "interrupted":
        notes.append(f"interrupted: lengths up to t = {times[-1]:g} are kept")
    if stopped == "max_seconds":
        notes.append(f"stopped at the time budget `max_seconds`: lengths up to t = {times[-1]:g} of {T:g} are kept")
    failed = int(np.sum(line.outcome != Outcome.FINISHED))
    if failed:
        notes.append(f"{failed} point(s) failed (left the domain or became non-finite); their segments are "
                     "left out of the length (see `outcomes`)")
    if cuts:
        notes.append(f"{cuts} segment(s) could not be refined below `max_spacing` (a discontinuity of the map, "
                     "or label resolution exhausted) and are left out of the length; their chords add up to "
                     f"{100 * cut_fraction:.2g}% of it")
    return notes


def _delta(X: np.ndarray, periods: np.ndarray) -> np.ndarray:
    """Differences of consecutive points, minimal image for periodic coordinates (maps)."""
    d = np.diff(X, axis=0)
    for i, L in enumerate(periods):
        if L > 0:
            d[:, i] -= L * np.round(d[:, i] / L)
    return d


def _segments(line: _Line, opts):
    """Per-segment chord, usable mask, and whether it must be bisected / is a cut."""
    d = _delta(line.X, opts["periods"])
    seg = np.sqrt(np.einsum("ij,ij->i", d, d))
    okp = line.outcome == Outcome.FINISHED
    usable = okp[:-1] & okp[1:] & np.isfinite(seg)
    # turning angle at interior points (and at the seam of a closed curve)
    dots = np.einsum("ij,ij->i", d[:-1], d[1:])
    with np.errstate(invalid="ignore", divide="ignore"):
        cosang = dots / (seg[:-1] * seg[1:])
    sharp = np.zeros(len(seg) + 1, dtype=bool)
    sharp[1:-1] = ~(cosang >= opts["cos_max"])
    if opts["closed"] and len(seg) > 1:
        c = float(np.dot(d[-1], d[0]) / (seg[-1] * seg[0])) if seg[-1] * seg[0] > 0 else -1.0
        sharp[0] = sharp[-1] = not c >= opts["cos_max"]
    bent = (sharp[:-1] | sharp[1:]) & (seg > opts["dmin"])
    want = usable & ((seg > opts["dmax"]) | bent)
    gap = np.diff(line.labels)
    can = gap > opts["floor"]
    cut = want & ~can & (seg > opts["dmax"])
    return seg, usable, want & can, cut


def _refine(line: _Line, t, trace, opts):
    """Bisect offending segments (new points integrated from the initial curve) until none is left.

    Returns (line, finished, cuts): ``finished`` is False if the point budget
    stopped the refinement.
    """
    for _ in range(200):
        seg, usable, need, cut = _segments(line, opts)
        idx = np.flatnonzero(need)
        if idx.size == 0:
            return line, True, int(cut.sum())
        if len(line.labels) + idx.size > opts["max_points"]:
            return line, False, int(cut.sum())
        mid = 0.5 * (line.labels[idx] + line.labels[idx + 1])
        Xn, on = trace(mid, t)
        at = idx + 1
        line = _Line(np.insert(line.labels, at, mid), np.insert(line.X, at, Xn, axis=0),
                     np.insert(line.outcome, at, on))
    seg, usable, need, cut = _segments(line, opts)
    return line, True, int(cut.sum() + need.sum())


def _length(line: _Line, opts) -> tuple[float, float, float]:
    """Chord length over usable, non-cut segments, its Richardson error estimate, and the cut chords."""
    seg, usable, need, cut = _segments(line, opts)
    good = usable & ~cut
    L = float(seg[good].sum())
    cut_len = float(seg[usable & cut].sum())
    n = len(seg) // 2
    if n < 2 or L == 0:
        return L, math.nan, cut_len
    fine = seg[: 2 * n].reshape(n, 2)
    pair_ok = good[: 2 * n].reshape(n, 2).all(axis=1)
    d2 = _delta(line.X[0: 2 * n + 1: 2], opts["periods"])
    coarse = np.sqrt(np.einsum("ij,ij->i", d2, d2))
    f = float(fine[pair_ok].sum())
    c = float(coarse[pair_ok].sum())
    return L, ((f - c) / (3 * f) if f > 0 else math.nan), cut_len


def _thin(line: _Line, m: int) -> np.ndarray:
    """At most ``m`` points of the line for drawing (failed points as NaN, breaking the polyline)."""
    X = line.X.copy()
    X[line.outcome != Outcome.FINISHED] = np.nan
    if len(X) <= m:
        return X
    return X[np.unique(np.linspace(0, len(X) - 1, m).astype(np.int64))]
