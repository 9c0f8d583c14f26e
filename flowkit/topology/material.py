"""Material ribbons: a closed material curve and its normal carried by a flow; Wr(t), Tw(t), Lk(t).

Method
------
Each point of the curve keeps its Lagrangian label s in [0, 1) (as for
:func:`flowkit.material_line`) and carries, besides its position, a field vector d
obeying dd/dt = (d . grad) u — a material line element, integrated with the flow's
exact gradient by the batch integrator. Each point also carries the curve's tangent
t = dx/ds, which obeys the same equation (position + two field vectors per row), so
the tangent is exact and local. After every pass d is re-projected perpendicular to t
and both are normalised (see :func:`project`: this commutes with the evolution, so
nothing is lost by it, while without it d aligns with t within a turnover of a
chaotic flow and its perpendicular part drowns in round-off). The ribbon's normal is d;
the ribbon's edge x + eps N is then, to first order in eps, a second material curve,
so the linking number of the curve with its edge is conserved by the smooth flow
while writhe and twist trade (Călugăreanu–White, see :mod:`flowkit.topology.ribbons`).

After each pass segments are bisected in label space where they are longer than
``max_spacing``, or the curve or the normal turns by more than ``max_angle`` across
a point; the new point (and its d) is integrated from the initial curve, so every
point is a true material point. At every pass Wr (with its sampling error from every
other point), Tw, Lk(curve, edge) and the defect Lk - Tw - Wr are recorded.

Time-periodic flows: ``periods=k`` runs k periods with passes aligned on period
boundaries and records once per period (``per_period = True``). Maps
(:class:`~flowkit.flows.maps.Map`): ``periods=k`` iterations, recorded after each;
points move by the map's formula applied to unwrapped coordinates (its lift to
R^3, so a periodic map's loop is not cut by the wrap) and t, d by its exact
Jacobian. A map whose lift is discontinuous (``sfs-map``) cuts the loop: it then
needs ever more points and stops at the point budget.

Stops early (``stopped``) when the point budget is reached, a point fails (leaves
the domain), or d becomes nearly parallel to the curve (it aligns with the
stretching direction, as the tangent does, in a chaotic flow; then the normal is lost
in round-off).
"""

from __future__ import annotations

import math
import time as _time

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.integrate.batch import IntegratorSettings, integrate_states
from flowkit.integrate.outcomes import Outcome
from flowkit.topology.curves import closed_curve
from flowkit.topology.ribbons import _perpendicular, polygon_twist
from flowkit.topology.writhe import TOUCH, linking_auto, writhe_auto
from flowkit.validation import count, duration, points_in_domain

#: d must keep at least this share of its length perpendicular to the curve
NORMAL_FLOOR = 1e-6


def default_loop(flow):
    """A tilted circle and a normal in its plane (zero twist) inside the flow's domain."""
    if flow.domain == "ball":
        c, r = np.array([0.1, 0.05, 0.0]), 0.5
    elif flow.domain == "periodic":
        c, r = np.array([np.pi, np.pi, np.pi]), 1.0
    else:
        c, r = np.zeros(3), 1.0
    e1 = np.array([1.0, 0.0, 0.3]) / math.sqrt(1.09)
    e2 = np.array([0.0, 1.0, 0.0])

    def curve(s):
        a = 2 * np.pi * np.asarray(s)[:, None]
        return c + r * (np.cos(a) * e1 + np.sin(a) * e2)

    def normal(s):
        a = 2 * np.pi * np.asarray(s)[:, None]
        return np.cos(a) * e1 + np.sin(a) * e2

    return curve, normal, {"circle": {"center": c.tolist(), "radius": r}, "normal": "in the plane, outward"}


def project(Y: np.ndarray) -> np.ndarray:
    """Rows [x, t, d] -> [x, t / |t|, unit part of d perpendicular to t].

    Both t (the tangent, a material line element) and d obey dv/dt = (v . grad) u, and
    removing from d its part along t commutes with that linear evolution, so projecting
    at every pass changes neither the ribbon's normal direction later nor its linking;
    it only stops d from aligning with t and losing its perpendicular part to round-off.
    """
    Y = Y.copy()
    T = Y[:, 3:6] / np.linalg.norm(Y[:, 3:6], axis=1)[:, None]
    D = Y[:, 6:]
    size = np.linalg.norm(D, axis=1)
    P = D - np.einsum("ij,ij->i", D, T)[:, None] * T
    perp = np.linalg.norm(P, axis=1)
    if not np.all(perp > NORMAL_FLOOR * size):
        raise _Parallel()
    Y[:, 3:6] = T
    Y[:, 6:] = P / perp[:, None]
    return Y


def _cyclic(X):
    return np.roll(X, -1, axis=0) - X


def _need(X, D, opts):
    """Segments (k, k+1 cyclic) to bisect: too long, or curve / normal turning too much at an end."""
    seg = _cyclic(X)
    L = np.linalg.norm(seg, axis=1)
    T = seg / np.maximum(L, 1e-300)[:, None]  # coincident points (a cut by a map) are refused later
    cturn = np.einsum("ij,ij->i", T, np.roll(T, 1, axis=0))          # at point k (between k-1 and k)
    Np = D - np.einsum("ij,ij->i", D, T)[:, None] * T
    Np /= np.maximum(np.linalg.norm(Np, axis=1), 1e-300)[:, None]
    nturn = np.einsum("ij,ij->i", Np, np.roll(Np, -1, axis=0))      # across segment k
    sharp = cturn < opts["cos_max"]
    bent = (sharp | np.roll(sharp, -1)) & (L > opts["dmin"])
    return (L > opts["dmax"]) | bent | ((nturn < opts["cos_max"]) & (L > opts["dmin"]))


def material_ribbon(flow, time=None, curve=None, normals=None, *, periods: int | None = None, passes: int = 40,
                    max_spacing: float | None = None, max_angle: float = 0.25, initial_points: int = 128,
                    max_points: int = 20_000, settings: IntegratorSettings | None = None,
                    threads: int | None = None, snapshots: int = 4):
    """Carry a closed ribbon through a flow; record Wr(t), Tw(t), Lk(t) and the Călugăreanu–White defect.

    Parameters
    ----------
    flow : Flow
        The flow (steady or time-periodic).
    time : float, optional
        Duration (give this or ``periods``).
    curve, normals : callable, optional
        The initial loop ``curve(s)`` (M,) -> (M, 3), s in [0, 1), periodic, and its
        normal field ``normals(s)``. Default: a tilted circle with an in-plane normal.
    periods : int, optional
        Number of periods of a time-periodic flow (records once per period).
    passes : int
        Insertion passes (and records) for ``time``; per period for ``periods``.
    max_spacing, max_angle : float
        Refinement bounds (default spacing 1/100 of the domain size; angle in radians).
    initial_points, max_points : int
        Points of the initial loop and the point budget.
    settings : IntegratorSettings, optional
        DOP853 tolerances (default rtol 1e-10, atol 1e-12).

    Returns
    -------
    RibbonHistory
    """
    from flowkit.flows.maps import is_map
    from flowkit.topology.results import RibbonHistory

    if (time is None) == (periods is None):
        raise FlowkitError("give exactly one of `time` (a duration) and `periods` (periods of a time-periodic flow)")
    passes = count(passes, "passes")
    mapped = is_map(flow)
    if mapped:
        if periods is None:
            raise FlowkitError(f"'{flow.name}' is a map: pass `periods` (iterations), not `time`")
        periods = count(periods, "periods")
        marks = np.arange(periods + 1, dtype=np.float64)
        record = set(range(len(marks)))
    elif periods is not None:
        periods = count(periods, "periods")
        if flow.period is None:
            raise FlowkitError(f"`periods` needs a time-periodic flow; '{flow.name}' is steady: pass `time` instead")
        T = periods * flow.period
        marks = np.linspace(0.0, T, periods * passes + 1)
        record = set(range(0, len(marks), passes))
    else:
        T = duration(time, "time")
        marks = np.linspace(0.0, T, passes + 1)
        record = set(range(len(marks)))
    n0 = count(initial_points, "initial_points", minimum=8)
    max_points = count(max_points, "max_points", minimum=n0)
    if curve is None:
        if normals is not None:
            raise FlowkitError("`normals` without `curve`: give the loop too")
        curve, normals, desc = default_loop(flow)
    else:
        if not callable(curve) or not callable(normals):
            raise FlowkitError("`curve` and `normals` must be callables of the label s in [0, 1) "
                               "(M,) -> (M, 3)")
        desc = {"curve": getattr(curve, "__name__", "callable"), "normal": getattr(normals, "__name__", "callable")}
    size = 2.0 if flow.domain == "ball" else (2 * math.pi if flow.domain == "periodic" else 2.0)
    if mapped:
        size = max(hi - lo for lo, hi in flow.family.box)
    dmax = size / 100 if max_spacing is None else float(max_spacing)
    opts = {"dmax": dmax, "dmin": dmax / 50, "cos_max": math.cos(max_angle)}
    settings = settings or IntegratorSettings(rtol=1e-10, atol=1e-12)

    def start(s):
        s = np.asarray(s, dtype=np.float64)
        X = points_in_domain(flow, np.asarray(curve(s), dtype=np.float64), "curve")
        D = np.asarray(normals(s), dtype=np.float64)
        if D.shape != X.shape or not np.all(np.isfinite(D)):
            raise FlowkitError(f"`normals` must map M labels to finite (M, 3) vectors; got shape {D.shape}")
        h = 1e-4  # fourth-order central difference for the initial tangent
        Tg = (8 * (curve(s + h) - curve(s - h)) - (curve(s + 2 * h) - curve(s - 2 * h))) / (12 * h)
        return np.hstack([X, np.asarray(Tg, dtype=np.float64), D])

    def advance(Y, k):
        """Rows [x, tangent, normal] carried from mark k - 1 to mark k (an iteration for a map)."""
        if mapped:
            return _map_step(flow, Y)
        res = integrate_states(flow, Y, float(marks[k - 1]), float(marks[k]), settings, threads)
        if np.any(res.outcome != Outcome.FINISHED):
            raise _Failed()
        return res.states

    def trace(s, k):
        """Rows [x, tangent, normal] of new labels, carried from the start through marks 0..k."""
        Y = project(start(s))
        for i in range(1, k + 1):
            Y = project(advance(Y, i))
        return Y

    Y0 = start(np.arange(n0) / n0)
    _perpendicular(closed_curve(Y0[:, :3], name="curve").points, Y0[:, 6:])  # refuses a normal along the tangent
    state = [np.arange(n0) / n0, project(Y0)]
    rec = {k: [] for k in ("t", "wr", "tw", "lk", "defect", "err", "L", "n")}
    snaps = {}
    snap_at = set(np.unique(np.round(np.linspace(0, len(marks) - 1, max(snapshots, 2))).astype(int)).tolist())
    stopped, notes = "time", []
    t_start = _time.perf_counter()

    def refine(k):
        for _ in range(60):
            lab, Y = state
            idx = np.flatnonzero(_need(Y[:, :3], Y[:, 6:], opts))
            if idx.size == 0:
                return True
            if len(lab) + idx.size > max_points:
                return False
            nxt = np.where(idx + 1 < len(lab), lab[(idx + 1) % len(lab)], 1.0)
            mid = 0.5 * (lab[idx] + nxt)
            state[:] = [np.insert(lab, idx + 1, mid), np.insert(Y, idx + 1, trace(mid, k), axis=0)]
        return True

    def measure(k):
        X, N = state[1][:, :3], state[1][:, 6:]
        seg = _cyclic(X)
        wr, bound, dist, i, j = writhe_auto(X, threads)  # the fast sum (with a bound) from FAST_FROM points
        if dist <= TOUCH * size:
            why = ("; this map's lift is discontinuous (it cuts the loop and lays pieces on each other): use a "
                   "continuous map" if mapped else "")
            raise FlowkitError(f"the material curve touches itself at {'iteration' if mapped else 't ='} "
                               f"{marks[k]:g} (segments {i}, {j}){why}")
        tw, _ = polygon_twist(X, N)
        eps = 0.05 * min(float(np.linalg.norm(seg, axis=1).min()), dist)
        lk = linking_auto(X, X + eps * N, threads)[0]
        wr2 = writhe_auto(X[::2], threads)[0] if len(X) >= 16 else math.nan
        for key, v in (("t", marks[k]), ("wr", wr), ("tw", tw), ("lk", lk), ("defect", lk - tw - wr),
                       ("err", abs(wr - wr2) / 3 + bound), ("L", float(np.linalg.norm(seg, axis=1).sum())), ("n", len(X))):
            rec[key].append(v)
        if k in snap_at:
            snaps[f"t={marks[k]:.6g}"] = X.copy()

    try:
        refine(0)
        measure(0)
        for k in range(1, len(marks)):
            lab, Y = state
            state[1] = project(advance(Y, k))
            if not refine(k):
                stopped = "max_points"
                notes.append(f"point budget {max_points} reached at t = {marks[k]:g}")
                break
            if k in record:
                measure(k)
    except _Failed:
        stopped = "failed"
        notes.append("a point of the loop failed (left the domain or became non-finite); stopped")
    except _Parallel:
        stopped = "normal_lost"
        notes.append("the carried normal became parallel to the curve within one pass (both align with the "
                     "stretching direction); use more passes")
    except KeyboardInterrupt:
        stopped = "interrupted"
    lab, Y = state
    X, D = Y[:, :3], Y[:, 6:]
    prov = flow.provenance()
    if mapped:
        prov["iterations"] = int(marks[-1])
    prov["method"] = {"algorithm": "Lagrangian labels with bisection; normal carried as a field vector "
                                   + ("d -> DF d (the map's exact Jacobian, unwrapped lift)" if mapped else
                                      "dd/dt = (d.grad)u") + ", re-projected perpendicular to the curve",
                      "integrator": settings.as_dict(), "max_spacing": dmax, "max_angle": max_angle,
                      "loop": desc, "seconds": _time.perf_counter() - t_start}
    return RibbonHistory(times=np.array(rec["t"]), writhe=np.array(rec["wr"]), twist=np.array(rec["tw"]),
                         linking=np.array(rec["lk"]), defect=np.array(rec["defect"]),
                         writhe_error=np.array(rec["err"]), lengths=np.array(rec["L"]),
                         npoints=np.array(rec["n"], dtype=np.int64), positions=X, normals=D / np.linalg.norm(D, axis=1)[:, None],
                         snapshots=snaps, stopped=stopped, per_period=periods is not None, notes=notes,
                         provenance=prov)


def _map_step(m, Y: np.ndarray) -> np.ndarray:
    """One iteration of rows [x, t, d]: x -> F(x) unwrapped (the formula's lift), t, d -> DF(x) t, DF(x) d."""
    X = np.ascontiguousarray(Y[:, :3])
    out = np.empty_like(X)
    m.kernels.velocity_many(X, 0.0, m.params, out)  # a map's generated "velocity" is its image
    J = m.jacobian(X)
    Z = np.hstack([out, np.einsum("nij,nj->ni", J, Y[:, 3:6]), np.einsum("nij,nj->ni", J, Y[:, 6:9])])
    if not np.all(np.isfinite(Z)):
        raise _Failed()
    return Z


class _Failed(Exception):
    pass


class _Parallel(Exception):
    pass
