"""Frozen-in field vectors along fluid particles: stretching statistics and moment growth rates.

:func:`stretch` follows an ensemble of fluid particles, each carrying a field
vector, and reports the mean log-stretching rate (the largest Lyapunov
exponent) and the growth rates L(p) of the moments <|B|^p> (generalized
Lyapunov exponents), as time series and as fitted rates with the fitted window
and ensemble error bars.

Equation
--------
Each particle carries a line element d with dd/dt = (d . grad) u, the
variational equation with the flow's exact gradient (for a map, d -> DF d per
iteration). The field reported is

    B = d * rho / rho0,   ln(rho / rho0) = -int div u dt   (maps: -sum ln|det DF|),

which solves the general (compressible) frozen-in equation
dB/dt = (B . grad) u - B (div u); for incompressible flows div u = 0 and B = d
exactly, i.e. dB/dt = (B . grad) u (Cauchy's solution B = J B0). We integrate the
line element and apply the density factor because that keeps the link to the
Lyapunov exponent explicit (the mean log-stretching of d *is* the largest
exponent, for every flow), costs nothing extra (the divergence integral comes
with the tangent kernel), and gives the right field for ODE systems with
non-zero divergence (``quantity="line"`` reports moments of |d| instead).

Numerics
--------
Flows run through the tangent kernel :func:`flowkit.kernels.lyapunov.tangent_batch`
(adaptive DOP853, the vector renormalized after every step, log-norms summed
between checkpoints: nothing overflows and there is no Python per step); maps
through :func:`flowkit.kernels.stretching.map_tangent_batch`. Particles run in
chunks; after each chunk only per-group sufficient statistics are kept, so
memory does not grow with the number of checkpoints times particles, and an
interruption (KeyboardInterrupt) between chunks returns the finished particles
as a result flagged ``partial``.

Statistics
----------
* Mean log-stretching rate: the least-squares slope of each particle's
  ln|d(t)| over the fit window, averaged over particles; error bar = standard
  error of the mean over particles.
* Moments: ln <|B|^p>(t) = logsumexp_i(p ln|B_i|) - ln n (no overflow at any p);
  rate L(p) = least-squares slope over the fit window; error bar = delete-one-
  group jackknife over ``groups`` groups of particles (particle i in group
  i mod groups). The effective number of particles carrying moment p,
  (sum w)^2 / sum w^2 with w = |B|^p, is reported: when it is small the moment is
  carried by a handful of particles and its rate is not trustworthy.
* Ordering: for any ensemble, ln <|B|^p> is convex in p and (1/p) ln <|B|^p> is
  non-decreasing (Hoelder / Jensen), so L(p) is convex with L(p)/p
  non-decreasing as time grows; L'(0) equals the Lyapunov exponent.
"""

from __future__ import annotations

import json
import math
import time as _time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Iterable, NamedTuple, Sequence

import numpy as np
from scipy.special import logsumexp

from flowkit._version import __version__
from flowkit.errors import FlowkitError
from flowkit.integrate.batch import IntegratorSettings, check_seeds, integrate_states
from flowkit.integrate.outcomes import Outcome, outcome_counts
from flowkit.maps import is_map

__all__ = ["RateEstimate", "StretchResult", "stretch", "fit_slope"]


# -- rates and fits (shared with flowkit.lines and flowkit.flux) ---------------------
@dataclass
class RateEstimate:
    """A growth rate with its error bar and the window it was fitted over.

    ``value`` and ``stderr`` are per unit time (flows) or per iteration (maps);
    NaN when no estimate exists (``method`` then says why).
    """

    value: float
    stderr: float
    window: tuple
    method: str

    def to_dict(self) -> dict:
        return {"value": _num(self.value), "stderr": _num(self.stderr), "window": [float(w) for w in self.window],
                "method": self.method}

    def __str__(self) -> str:
        return f"{self.value:.6g} ± {self.stderr:.2g} (fit over t in [{self.window[0]:g}, {self.window[1]:g}])"


def _num(x) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def _rate_from(d: dict) -> RateEstimate:
    val = math.nan if d["value"] is None else d["value"]
    err = math.nan if d["stderr"] is None else d["stderr"]
    return RateEstimate(val, err, tuple(d["window"]), d["method"])


def _jsonable(obj):
    from flowkit.cli import _jsonable as conv

    return conv(obj)


class SavedResult:
    """Mixin for result dataclasses: ``save``/``load`` as ``.npz`` (arrays + JSON, no pickle), ``to_xarray``.

    A subclass names its array fields in ``_ARRAYS`` (``None`` values are skipped),
    its :class:`RateEstimate` fields in ``_RATES`` and its ``{float: RateEstimate}``
    fields in ``_RATE_DICTS``; every other field must be JSON-ready. Fields
    annotated ``float`` come back NaN where JSON stored null, ``tuple`` fields as
    tuples, and dicts keyed by moment order with float keys.
    """

    _ARRAYS: tuple = ()
    _RATES: tuple = ()
    _RATE_DICTS: tuple = ()

    def _fields_json(self) -> dict:
        import dataclasses

        out = {}
        for f in dataclasses.fields(self):
            v = getattr(self, f.name)
            if f.name in self._ARRAYS:
                continue
            if f.name in self._RATES:
                v = v.to_dict()
            elif f.name in self._RATE_DICTS:
                v = {repr(float(k)): r.to_dict() for k, r in v.items()}
            elif isinstance(v, dict) and v and all(isinstance(k, float) for k in v):
                v = {repr(k): x for k, x in v.items()}
            out[f.name] = v
        return _jsonable(out)

    def _save_arrays(self) -> dict:
        return {k: getattr(self, k) for k in self._ARRAYS if getattr(self, k) is not None}

    @classmethod
    def _restore(cls, fields: dict, arrays: dict) -> dict:
        """Hook: turn stored arrays back into fields (default: by name)."""
        return {**fields, **arrays}

    def save(self, path) -> Path:
        """Write to ``.npz``: arrays plus JSON metadata (summary, provenance); reloads without pickle."""
        from flowkit.lyapunov import write_npz

        path = Path(path)
        if path.suffix != ".npz":
            raise FlowkitError(f"`path` must end in .npz; got {path.name!r}")
        meta = {"flowkit_result": type(self).__name__, "fields": self._fields_json(), "summary": self.to_dict()}
        return write_npz(path, self._save_arrays(), meta)

    @classmethod
    def load(cls, path):
        """Read a file written by :meth:`save` (no code is executed)."""
        import dataclasses

        from flowkit.lyapunov import read_npz

        arrays, meta = read_npz(Path(path))
        if meta.get("flowkit_result") != cls.__name__:
            raise FlowkitError(f"{path} does not hold a flowkit {cls.__name__}")
        fields = meta["fields"]
        for f in dataclasses.fields(cls):
            if f.name not in fields:
                continue
            v = fields[f.name]
            if f.name in cls._RATES:
                v = _rate_from(v)
            elif f.name in cls._RATE_DICTS:
                v = {float(k): _rate_from(r) for k, r in v.items()}
            elif f.type == "float" and v is None:
                v = math.nan
            elif f.type == "tuple" and isinstance(v, list):
                v = tuple(v)
            elif f.type == "dict" and isinstance(v, dict) and v and all(_is_float_key(k) for k in v):
                v = {float(k): x for k, x in v.items()}
            fields[f.name] = v
        return cls(**cls._restore(fields, arrays))

    def _dataset(self, data_vars: dict, coords: dict):
        """An ``xarray.Dataset`` with the JSON summary in ``attrs``."""
        import xarray as xr

        ds = xr.Dataset(data_vars, coords=coords)
        ds.attrs["flowkit_result"] = type(self).__name__
        ds.attrs["summary"] = json.dumps(_jsonable(self.to_dict()))
        return ds


def _is_float_key(k: str) -> bool:
    try:
        float(k)
    except ValueError:
        return False
    return "." in k or "e" in k or k in ("inf", "-inf", "nan")


def ols_weights(t: np.ndarray) -> np.ndarray:
    """Weights w with sum(w * y) = least-squares slope of y against ``t``."""
    t = np.asarray(t, dtype=float)
    dt = t - t.mean()
    den = float(np.sum(dt * dt))
    if den <= 0:
        raise FlowkitError("a rate fit needs at least two distinct times in the fit window; widen `window`")
    return dt / den


def fit_slope(t, y) -> float:
    """Least-squares slope of ``y`` against ``t`` (along the last axis of ``y``)."""
    return np.asarray(y, dtype=float) @ ols_weights(t)


def window_mask(times: np.ndarray, window: tuple) -> np.ndarray:
    """Checkpoints inside the fit window, with a clear error if fewer than three."""
    mask = (times >= window[0] - 1e-12 * max(1.0, abs(window[0]))) & (times <= window[1] + 1e-12 * abs(window[1]))
    if mask.sum() < 3:
        raise FlowkitError(f"the fit window [{window[0]:g}, {window[1]:g}] holds {int(mask.sum())} checkpoints; "
                           "at least 3 are needed: widen `window` or use more checkpoints (`samples`)")
    return mask


def jackknife_stderr(estimates: np.ndarray) -> np.ndarray:
    """Delete-one-group jackknife standard error from the G leave-one-out estimates (axis 0)."""
    est = np.asarray(estimates, dtype=float)
    G = est.shape[0]
    if G < 2:
        return np.full(est.shape[1:], np.nan)
    return np.sqrt((G - 1) / G * np.sum((est - est.mean(axis=0)) ** 2, axis=0))


def block_rate(t: np.ndarray, y: np.ndarray, window: tuple, blocks: int = 4, what: str = "") -> RateEstimate:
    """Slope of ``y(t)`` over ``window`` with a block error bar (for a single object, e.g. one line).

    The window is cut into ``blocks`` consecutive blocks; the error bar is the
    standard error of the block slopes (it catches a slope that drifts or
    fluctuates, which the residuals of one straight line would not).
    """
    try:
        mask = window_mask(t, window) & np.isfinite(y)
    except FlowkitError as exc:  # e.g. an interrupted run that stopped before the window
        return RateEstimate(math.nan, math.nan, window, f"{what}no estimate: {exc}")
    tw, yw = t[mask], y[mask]
    if len(tw) < 3:
        return RateEstimate(math.nan, math.nan, window, f"{what}: fewer than 3 finite points in the window")
    value = float(fit_slope(tw, yw))
    blocks = max(2, min(blocks, len(tw) // 3))
    parts = [(a, b) for a, b in zip(np.array_split(tw, blocks), np.array_split(yw, blocks)) if len(a) >= 2]
    slopes = [float(fit_slope(a, b)) for a, b in parts if np.ptp(a) > 0]
    err = float(np.std(slopes, ddof=1) / math.sqrt(len(slopes))) if len(slopes) >= 2 else math.nan
    return RateEstimate(value, err, (float(tw[0]), float(tw[-1])),
                        f"{what}least-squares slope; error = standard error of {len(slopes)} block slopes")


# -- flows and maps alike ---------------------------------------------------------------
def check_system(system, name: str = "flow"):
    """A flowkit Flow or Map, or a clear error."""
    from flowkit.flows.base import Flow

    if isinstance(system, Flow) or is_map(system):
        return system
    raise FlowkitError(f"`{name}` must be a flowkit flow or map (flowkit.flow('stf'), flowkit.custom_flow(...), "
                       f"flowkit.flow('cat-map')); got {type(system).__name__}")


def check_duration(system, time, name: str = "time"):
    """Positive finite duration; a positive integer number of iterations for maps."""
    if is_map(system):
        if isinstance(time, float) and time.is_integer():
            time = int(time)
        if not (isinstance(time, (int, np.integer)) and not isinstance(time, bool) and time > 0):
            raise FlowkitError(f"`{name}` is a number of iterations for map '{system.name}': a positive integer; "
                               f"got {time!r}")
        return int(time)
    try:
        val = float(time)
    except (TypeError, ValueError):
        raise FlowkitError(f"`{name}` must be a positive number; got {time!r}") from None
    if not (math.isfinite(val) and val > 0):
        raise FlowkitError(f"`{name}` must be a positive, finite duration; got {time!r}")
    return val


def units(system) -> str:
    return "per iteration" if is_map(system) else "per unit time"


def checkpoints(system, time, samples: int) -> np.ndarray:
    """Checkpoint times 0 .. time (``samples`` stretches; maps: distinct iteration counts)."""
    if not (isinstance(samples, (int, np.integer)) and samples >= 2):
        raise FlowkitError(f"`samples` must be an integer >= 2 (number of checkpoints); got {samples!r}")
    if is_map(system):
        return np.unique(np.round(np.linspace(0, time, min(samples, time) + 1)).astype(np.int64))
    return np.linspace(0.0, float(time), samples + 1)


def default_seeds(system, n: int, rng: np.random.Generator) -> np.ndarray:
    """``n`` random points spread over the domain of a flow or the cell of a map."""
    if is_map(system):
        return system.sample(n, rng)
    from flowkit.flows.custom import sample_points

    pts = sample_points(system, n, rng)
    if system.domain == "ball":
        pts *= 0.999  # keep seeds strictly inside, away from the wall
    return pts


def check_points(system, seeds, name: str = "seeds") -> np.ndarray:
    """Validated (N, 3) starting points inside the domain."""
    if not is_map(system):
        return check_seeds(system, seeds, name)
    arr = np.asarray(seeds, dtype=np.float64)
    if arr.ndim == 1 and arr.size == 3:
        arr = arr[None, :]
    if arr.ndim != 2 or arr.shape[1] != 3 or arr.shape[0] == 0:
        raise FlowkitError(f"`{name}` must be a non-empty array of shape (N, 3); got shape {np.shape(seeds)}")
    inside = system.contains(arr)
    if not np.all(inside):
        bad = int(np.flatnonzero(~inside)[0])
        raise FlowkitError(f"`{name}` row {bad} ({arr[bad].tolist()}) lies outside the cell of map '{system.name}' "
                           f"(box {system.family.box}); move it inside")
    return np.ascontiguousarray(system.wrap(arr))


class FrameRun(NamedTuple):
    logs: np.ndarray     # (N, m, ncol) sums of log R_cc per stretch (NaN where not reached)
    div: np.ndarray      # (N, m) integral of div u (maps: sum of ln|det DF|) per stretch
    outcome: np.ndarray  # (N,) int8


def run_frames(system, states: np.ndarray, marks: np.ndarray, settings: IntegratorSettings | None,
               threads: int | None = None) -> FrameRun:
    """Advance position + orthonormal tangent columns (rows of ``states``, in place) through ``marks``.

    Flows: :func:`flowkit.lyapunov.run_tangent` (adaptive DOP853; ``marks`` are
    times, decreasing for backward integration). Maps: the map kernel (``marks``
    are iteration counts; a decreasing sequence iterates the inverse map).
    """
    if is_map(system):
        from flowkit.maps import run_map

        marks = np.asarray(marks, dtype=np.int64)
        backward = marks[-1] < marks[0]
        kern = system.inverse_kernels if backward else system.kernels
        counts = marks[0] - marks if backward else marks
        r = run_map(kern, states, counts, system.params, system.periods, threads)
        return FrameRun(r.logs, r.logvol, r.outcome)
    from flowkit.lyapunov import run_tangent

    r = run_tangent(system, states, np.asarray(marks, dtype=np.float64), settings, threads)
    return FrameRun(r.logs, r.div, r.outcome)


def advance_points(system, points: np.ndarray, t0, t1, settings: IntegratorSettings | None,
                   threads: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Positions (N, 3) moved from t0 to t1 (maps: iteration counts); returns (positions, outcome)."""
    if is_map(system):
        Y = np.ascontiguousarray(points, dtype=np.float64).copy()
        r = run_frames(system, Y, np.array([t0, t1]), None, threads)
        return Y, r.outcome
    res = integrate_states(system, points, float(t0), float(t1), settings, threads)
    return res.states, res.outcome


def stretch_settings(settings: IntegratorSettings | None, rtol: float = 1e-9) -> IntegratorSettings:
    """DOP853 settings for the tangent kernel (default rtol 1e-9, atol 1e-12)."""
    if settings is None:
        return IntegratorSettings(rtol=rtol, atol=1e-12)
    if not isinstance(settings, IntegratorSettings):
        raise FlowkitError(f"`settings` must be an IntegratorSettings; got {type(settings).__name__}")
    if settings.method != "dop853":
        raise FlowkitError("field vectors are integrated with adaptive DOP853; pass "
                           f"IntegratorSettings(method='dop853', ...) instead of method={settings.method!r}")
    return settings


def random_directions(n: int, rng: np.random.Generator, planar: bool = False) -> np.ndarray:
    """``n`` isotropically distributed unit vectors (in the x-y plane if ``planar``)."""
    v = rng.normal(size=(n, 3))
    if planar:
        v[:, 2] = 0.0
    return v / np.linalg.norm(v, axis=1)[:, None]


def _planar(system) -> bool:
    return getattr(system, "kind", "") == "planar"


def provenance_of(system, settings, **method) -> dict:
    """Flow/map provenance plus the method record of a result."""
    import datetime

    prov = system.provenance()
    rec = {"flowkit_version": __version__,
           "date": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")}
    if not is_map(system) and settings is not None:
        rec["integrator"] = settings.as_dict()
    rec.update(method)
    prov["method"] = rec
    return prov


# -- the ensemble -------------------------------------------------------------------------
def _orders(p: Iterable[float]) -> np.ndarray:
    try:
        vals = {float(v) for v in p}
    except (TypeError, ValueError):
        raise FlowkitError(f"`p` must be a list of moment orders (numbers); got {p!r}") from None
    if any(not math.isfinite(v) or v == 0 for v in vals):
        raise FlowkitError(f"moment orders `p` must be finite and non-zero; got {sorted(vals)}")
    return np.array(sorted(vals | {1.0, 2.0}))


@dataclass
class _Chunk:
    """Sufficient statistics of one finished chunk of particles."""

    index: np.ndarray        # particle indices
    lse: np.ndarray          # (G, K+1, Q) logsumexp of q ln|B| per group
    count: np.ndarray        # (G,) valid particles per group
    sum_log: np.ndarray      # (K+1,) sum of ln|B| over valid particles
    sum_log2: np.ndarray     # (K+1,)
    rates: np.ndarray        # (nc,) per-particle slope of ln|d| over the window (NaN if failed)
    field_slopes: np.ndarray  # (nc,) per-particle slope of ln|B| over the window
    final_log: np.ndarray    # (nc,) final ln|B|
    final_dir: np.ndarray    # (nc, 3) final unit direction of B
    final_pos: np.ndarray    # (nc, 3)
    outcome: np.ndarray      # (nc,)
    div_sum: float           # sum over valid particles of the integral of div u
    series: np.ndarray | None  # (nc, K+1) ln|B| if kept


@dataclass
class StretchResult(SavedResult):
    """Stretching statistics of an ensemble of field vectors (see :mod:`flowkit.stretching`).

    Attributes
    ----------
    times : ndarray (K+1,)
        Checkpoints (time, or iteration count for maps), starting at 0.
    p : ndarray (P,)
        Moment orders.
    log_moments, log_moments_stderr : ndarray (K+1, P)
        ln <|B|^p> at each checkpoint and its jackknife error.
    mean_log, mean_log_stderr : ndarray (K+1,)
        <ln|B|> and its standard error over particles.
    lyapunov : RateEstimate
        Mean log-stretching rate of the line element (= largest Lyapunov exponent).
    moment_rates : dict float -> RateEstimate
        Fitted L(p) for each order.
    field_rate : RateEstimate
        Slope of <ln|B|> (equals ``lyapunov`` minus the mean divergence).
    effective_particles : dict float -> float
        (sum w)^2 / sum w^2, w = |B|^p at the final checkpoint.
    window : tuple
        Fit window actually used.
    partial : bool
        True if the run was interrupted; statistics then cover the finished particles.
    """

    times: np.ndarray
    p: np.ndarray
    log_moments: np.ndarray
    log_moments_stderr: np.ndarray
    mean_log: np.ndarray
    mean_log_stderr: np.ndarray
    lyapunov: RateEstimate
    moment_rates: dict
    field_rate: RateEstimate
    effective_particles: dict
    window: tuple
    units: str
    quantity: str
    n_requested: int
    n_run: int
    n_used: int
    outcomes: dict
    mean_divergence: float
    partial: bool
    notes: list
    seeds: np.ndarray
    initial_field: np.ndarray
    particle_rates: np.ndarray
    final_log_field: np.ndarray
    final_direction: np.ndarray
    final_positions: np.ndarray
    outcome: np.ndarray
    seconds: float
    series: np.ndarray | None = None
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("times", "p", "log_moments", "log_moments_stderr", "mean_log", "mean_log_stderr", "seeds",
               "initial_field", "particle_rates", "final_log_field", "final_direction", "final_positions",
               "outcome", "series")
    _RATES = ("lyapunov", "field_rate")
    _RATE_DICTS = ("moment_rates",)

    @property
    def final_field(self) -> np.ndarray:
        """Final field vectors B (N, 3) relative to |B0| = 1 (overflows to inf beyond e^709)."""
        with np.errstate(over="ignore"):
            return self.final_direction * np.exp(self.final_log_field)[:, None]

    def rate(self, p: float) -> RateEstimate:
        """The fitted moment rate L(p)."""
        key = float(p)
        if key not in self.moment_rates:
            raise FlowkitError(f"no moment of order {p}; computed orders: {sorted(self.moment_rates)}")
        return self.moment_rates[key]

    def to_dict(self) -> dict:
        """JSON-ready summary (rates, counts, window, provenance; no per-particle arrays)."""
        return {
            "lyapunov": self.lyapunov.to_dict(),
            "moment_rates": {_pkey(k): v.to_dict() for k, v in self.moment_rates.items()},
            "field_rate": self.field_rate.to_dict(),
            "effective_particles": {_pkey(k): v for k, v in self.effective_particles.items()},
            "window": list(self.window), "units": self.units, "quantity": self.quantity,
            "particles": {"requested": self.n_requested, "run": self.n_run, "used": self.n_used},
            "outcomes": self.outcomes, "mean_divergence": _num(self.mean_divergence),
            "partial": self.partial, "notes": list(self.notes), "seconds": self.seconds,
            "provenance": self.provenance,
        }

    def to_xarray(self):
        """Time series and per-particle data as an ``xarray.Dataset`` (summary JSON in ``attrs``)."""
        return self._dataset(
            {"log_moments": (("time", "p"), self.log_moments),
             "log_moments_stderr": (("time", "p"), self.log_moments_stderr),
             "mean_log": (("time",), self.mean_log), "mean_log_stderr": (("time",), self.mean_log_stderr),
             "particle_rates": (("particle",), self.particle_rates),
             "final_log_field": (("particle",), self.final_log_field),
             "seeds": (("particle", "xyz"), self.seeds), "outcome": (("particle",), self.outcome)},
            {"time": self.times, "p": self.p, "particle": np.arange(len(self.seeds)), "xyz": ["x", "y", "z"]},
        )

    def __str__(self) -> str:
        lines = [f"mean log-stretching rate {self.lyapunov} {self.units}"]
        for k, v in self.moment_rates.items():
            lines.append(f"L({k:g}) = {v.value:.6g} ± {v.stderr:.2g}   (effective particles "
                         f"{self.effective_particles[k]:.3g})")
        if self.partial:
            lines.append(f"PARTIAL: interrupted after {self.n_run} of {self.n_requested} particles")
        lines += self.notes
        return "\n".join(lines)


def _pkey(p: float) -> str:
    """Moment order as a JSON key: '1', '2', '0.5'."""
    return f"{p:g}"


def stretch(
    system,
    particles: int = 1000,
    time=None,
    *,
    seeds=None,
    field=None,
    p: Sequence[float] = (1.0, 2.0),
    samples: int = 100,
    window: tuple | None = None,
    transient: float = 0.0,
    quantity: str = "field",
    settings: IntegratorSettings | None = None,
    chunk: int | None = None,
    groups: int = 32,
    seed: int = 0,
    threads: int | None = None,
    keep_series: bool = False,
    progress: bool = False,
) -> StretchResult:
    """Stretching statistics of frozen-in field vectors carried by an ensemble of particles.

    Parameters
    ----------
    system : Flow or Map
        A flowkit flow (``flowkit.flow("stf", rotation=0.3)``) or map (``"cat-map"``).
    particles : int
        Number of particles (ignored when ``seeds`` is given).
    time : float or int
        Duration (flows) or number of iterations (maps).
    seeds : array_like (N, 3), optional
        Starting points; default: uniform random points in the domain.
    field : array_like (3,) or (N, 3), optional
        Initial field vectors; default: independent isotropic random unit vectors.
        Only directions matter (rates are relative to |B0|).
    p : sequence of float
        Moment orders (1 and 2 are always included; non-zero, any sign).
    samples : int
        Number of checkpoint intervals between 0 and ``time`` (maps: at most one
        per iteration).
    window : (float, float), optional
        Fit window for rates (default: the last three quarters, [time/4, time]).
    transient : float
        Time (iterations) the particles are advanced before the field is attached,
        e.g. to settle onto an attractor; not part of ``time``.
    quantity : {"field", "line"}
        Moments of the frozen-in field B (general compressible form, see the
        module docstring) or of the line element d (identical for
        incompressible flows).
    settings : IntegratorSettings, optional
        DOP853 tolerances (default rtol 1e-9, atol 1e-12).
    chunk : int, optional
        Particles per kernel call (interrupt granularity); default about N/8,
        between 256 and 8192.
    groups : int
        Jackknife groups for the moment error bars.
    seed : int
        Random seed for default seeds and field directions.
    threads : int, optional
        Numba threads (default: all).
    keep_series : bool
        Keep every particle's ln|B(t)| (memory N x (samples+1)).
    progress : bool
        Show a progress bar over chunks.

    Returns
    -------
    StretchResult
    """
    system = check_system(system)
    mapping = is_map(system)
    if time is None:
        raise FlowkitError("`time` is required: a duration for flows, a number of iterations for maps")
    T = check_duration(system, time)
    if quantity not in ("field", "line"):
        raise FlowkitError(f"`quantity` must be 'field' or 'line'; got {quantity!r}")
    orders = _orders(p)
    settings = None if mapping else stretch_settings(settings)
    rng = np.random.default_rng(seed)
    if seeds is None:
        if not (isinstance(particles, (int, np.integer)) and not isinstance(particles, bool)):
            raise FlowkitError(f"`particles` must be a positive integer; got {particles!r}")
        if particles < 1:
            raise FlowkitError(f"`particles` must be at least 1; got {particles} (zero particles give no statistics)")
        X0 = default_seeds(system, int(particles), rng)
    else:
        X0 = check_points(system, seeds)
    N = X0.shape[0]
    B0 = _initial_field(field, N, rng, _planar(system))
    marks = checkpoints(system, T, samples)
    K1 = len(marks)
    times = marks.astype(float)
    window = _window(window, times)
    mask = window_mask(times, window)
    weights = np.zeros(K1)
    weights[mask] = ols_weights(times[mask])
    if not (isinstance(groups, (int, np.integer)) and groups >= 1):
        raise FlowkitError(f"`groups` must be a positive integer; got {groups!r}")
    G = int(min(groups, N))
    if chunk is None:
        chunk = int(min(8192, max(256, -(-N // 8))))
    if not (isinstance(chunk, (int, np.integer)) and chunk >= 1):
        raise FlowkitError(f"`chunk` must be a positive integer; got {chunk!r}")
    tr = _check_transient(system, transient)
    Q = np.unique(np.concatenate([orders, 2 * orders]))

    t_start = _time.perf_counter()
    chunks: list[_Chunk] = []
    partial = False
    starts = range(0, N, int(chunk))
    bar = progress_bar(starts, progress, "chunk of particles")
    try:
        for s in bar:
            idx = np.arange(s, min(N, s + int(chunk)))
            chunks.append(_run_chunk(system, X0[idx], B0[idx], idx, marks, tr, settings, threads, weights, Q,
                                     G, quantity, keep_series))
    except KeyboardInterrupt:
        if not chunks:
            raise
        partial = True
    finally:
        if hasattr(bar, "close"):
            bar.close()
    seconds = _time.perf_counter() - t_start
    prov = provenance_of(system, settings, algorithm=_ALGORITHM, samples=int(samples), transient=tr,
                         groups=G, chunk=int(chunk), seed=seed, quantity=quantity,
                         field="isotropic random" if field is None else "given")
    return _assemble(chunks, times, orders, Q, window, mask, G, N, X0, B0, units(system), quantity, partial,
                     seconds, keep_series, prov)


_ALGORITHM = ("line elements by the variational equation with the exact gradient (maps: the exact Jacobian), "
              "renormalized every step; B = d rho/rho0 with ln(rho/rho0) = -int div u dt")


def _initial_field(field, N, rng, planar) -> np.ndarray:
    if field is None:
        return random_directions(N, rng, planar)
    B = np.asarray(field, dtype=np.float64)
    if B.shape == (3,):
        B = np.broadcast_to(B, (N, 3))
    if B.shape != (N, 3):
        raise FlowkitError(f"`field` must be one vector (3,) or one per particle ({N}, 3); got shape {np.shape(field)}")
    nrm = np.linalg.norm(B, axis=1)
    if not np.all(np.isfinite(nrm) & (nrm > 0)):
        raise FlowkitError("`field` vectors must be finite and non-zero")
    return np.ascontiguousarray(B / nrm[:, None])


def _window(window, times) -> tuple:
    T = float(times[-1])
    if window is None:
        return (0.25 * T, T)
    try:
        a, b = (float(w) for w in window)
    except (TypeError, ValueError):
        raise FlowkitError(f"`window` must be a pair (start, end); got {window!r}") from None
    if not (0 <= a < b <= T * (1 + 1e-12)):
        raise FlowkitError(f"`window` must satisfy 0 <= start < end <= time ({T:g}); got ({a:g}, {b:g})")
    return (a, b)


def _check_transient(system, transient):
    if is_map(system):
        if not (isinstance(transient, (int, np.integer)) or float(transient).is_integer()) or transient < 0:
            raise FlowkitError(f"`transient` is a number of iterations for maps (integer >= 0); got {transient!r}")
        return int(transient)
    tr = float(transient)
    if not (math.isfinite(tr) and tr >= 0):
        raise FlowkitError(f"`transient` must be a non-negative time; got {transient!r}")
    return tr


def progress_bar(iterable, enabled: bool, unit: str):
    """``iterable`` wrapped in a tqdm progress bar (notebooks and terminals) when ``enabled``."""
    if not enabled:
        return iterable
    from tqdm.auto import tqdm

    return tqdm(iterable, unit=unit)


def _run_chunk(system, X, B, idx, marks, transient, settings, threads, weights, Q, G, quantity, keep) -> _Chunk:
    nc = len(idx)
    outcome0 = np.zeros(nc, dtype=np.int8)
    if transient:
        X, outcome0 = advance_points(system, X, 0, transient, settings, threads)
        marks = marks + transient
    Y = np.zeros((nc, 6))
    Y[:, :3] = X
    Y[:, 3:] = B
    run = run_frames(system, Y, marks, settings, threads)
    outcome = np.where(outcome0 != 0, outcome0, run.outcome).astype(np.int8)
    ok = outcome == Outcome.FINISHED
    line = np.zeros((nc, len(marks)))
    line[:, 1:] = np.cumsum(run.logs[:, :, 0], axis=1)
    dens = np.zeros_like(line)
    dens[:, 1:] = np.cumsum(run.div, axis=1)
    logB = line - dens if quantity == "field" else line
    logB[~ok] = np.nan
    gid = idx % G
    lse = np.full((G, len(marks), len(Q)), -np.inf)
    count = np.zeros(G, dtype=np.int64)
    for g in np.unique(gid[ok]):
        sub = logB[ok & (gid == g)]
        lse[g] = logsumexp(sub[:, :, None] * Q[None, None, :], axis=0)
        count[g] = len(sub)
    good = logB[ok]
    rates = np.full(nc, np.nan)
    rates[ok] = line[ok] @ weights
    fslopes = np.full(nc, np.nan)
    fslopes[ok] = logB[ok] @ weights
    return _Chunk(
        index=idx, lse=lse, count=count, sum_log=good.sum(axis=0), sum_log2=(good * good).sum(axis=0),
        rates=rates, field_slopes=fslopes, final_log=logB[:, -1], final_dir=Y[:, 3:6].copy(), final_pos=Y[:, :3].copy(),
        outcome=outcome, div_sum=float(dens[ok, -1].sum()), series=logB if keep else None,
    )


def _mean_rate(slopes: np.ndarray, win: tuple, what: str) -> RateEstimate:
    """Mean of per-particle least-squares slopes with its standard error over particles."""
    good = slopes[np.isfinite(slopes)]
    err = float(np.std(good, ddof=1) / math.sqrt(len(good))) if len(good) > 1 else math.nan
    return RateEstimate(float(good.mean()), err, win,
                        f"mean over particles of the least-squares slope of {what}; standard error over particles")


def _assemble(chunks, times, orders, Q, window, mask, G, N, X0, B0, unit, quantity, partial, seconds, keep,
              prov) -> StretchResult:
    K1 = len(times)
    lse = np.full((G, K1, len(Q)), -np.inf)
    count = np.zeros(G, dtype=np.int64)
    s1 = np.zeros(K1)
    s2 = np.zeros(K1)
    rates = np.full(N, np.nan)
    fslopes = np.full(N, np.nan)
    final_log = np.full(N, np.nan)
    final_dir = np.full((N, 3), np.nan)
    final_pos = np.full((N, 3), np.nan)
    outcome = np.full(N, -1, dtype=np.int8)  # -1: not run (interrupted)
    series = np.full((N, K1), np.nan) if keep else None
    div_sum = 0.0
    for c in chunks:
        lse = np.logaddexp(lse, c.lse)
        count += c.count
        s1 += c.sum_log
        s2 += c.sum_log2
        rates[c.index] = c.rates
        fslopes[c.index] = c.field_slopes
        final_log[c.index] = c.final_log
        final_dir[c.index] = c.final_dir
        final_pos[c.index] = c.final_pos
        outcome[c.index] = c.outcome
        div_sum += c.div_sum
        if keep:
            series[c.index] = c.series
    n_run = int(np.sum(outcome >= 0))
    n = int(count.sum())
    notes = []
    if partial:
        notes.append(f"interrupted: statistics over the {n_run} particles finished before the interrupt "
                     f"(of {N} requested)")
    if n < n_run:
        notes.append(f"{n_run - n} particle(s) did not finish (see `outcomes`) and are left out of the statistics")
    if n == 0:
        raise FlowkitError("no particle finished the run (see the outcomes); nothing to average. "
                           f"Outcomes: {outcome_counts(outcome[outcome >= 0])}")
    qi = {q: i for i, q in enumerate(Q)}
    tot = logsumexp(lse, axis=0)                        # (K1, Q)
    logm_all = tot - math.log(n)
    # leave-one-group-out moments (groups with no particle are skipped)
    live = np.flatnonzero(count > 0)
    loo = np.empty((len(live), K1, len(Q)))
    for j, g in enumerate(live):
        others = np.delete(lse, g, axis=0)
        loo[j] = logsumexp(others, axis=0) - math.log(max(n - count[g], 1))
    if len(live) < 2:
        loo = loo[:0]
    wts = ols_weights(times[mask])
    win = (float(times[mask][0]), float(times[mask][-1]))
    moments, moments_err, mrates, neff = [], [], {}, {}
    for pv in orders:
        i = qi[pv]
        moments.append(logm_all[:, i])
        moments_err.append(jackknife_stderr(loo[:, :, i]) if len(loo) else np.full(K1, np.nan))
        val = float(logm_all[mask, i] @ wts)
        err = float(jackknife_stderr(loo[:, mask, i] @ wts)) if len(loo) else math.nan
        mrates[float(pv)] = RateEstimate(val, err, win, f"least-squares slope of ln<|B|^p>; delete-one-group "
                                                         f"jackknife over {len(live)} groups of particles")
        neff[float(pv)] = float(np.exp(2 * tot[-1, i] - tot[-1, qi[2 * pv]]))
        if neff[float(pv)] < 10:
            notes.append(f"moment p = {pv:g} is carried by about {neff[float(pv)]:.1f} particles at the end: its "
                         "rate is not trustworthy (more particles or a shorter time)")
    mean = s1 / n
    var = np.maximum(s2 / n - mean**2, 0.0)
    mean_err = np.sqrt(var / max(n - 1, 1))
    lyap = _mean_rate(rates, win, "ln|d|")
    field_rate = _mean_rate(fslopes, win, "ln|B|")
    return StretchResult(
        times=times, p=orders, log_moments=np.stack(moments, axis=1), log_moments_stderr=np.stack(moments_err, axis=1),
        mean_log=mean, mean_log_stderr=mean_err, lyapunov=lyap, moment_rates=mrates, field_rate=field_rate,
        effective_particles=neff, window=win, units=unit, quantity=quantity, n_requested=N, n_run=n_run, n_used=n,
        outcomes=outcome_counts(outcome[outcome >= 0]), mean_divergence=div_sum / n / (times[-1] - times[0]),
        partial=partial, notes=notes, seeds=X0, initial_field=B0, particle_rates=rates, final_log_field=final_log,
        final_direction=final_dir, final_positions=final_pos, outcome=outcome, seconds=seconds, series=series,
        provenance=prov,
    )
