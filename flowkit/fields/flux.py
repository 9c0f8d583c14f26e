"""Net and unsigned flux of a frozen-in field through a fixed surface: how much cancellation eats.

:func:`flux_growth` starts from a field B0 (uniform by default) at time 0,
carries it with the flow in the ideal (perfectly conducting) limit, and tracks,
through a fixed surface S (a disc or a parallelogram patch),

* the net signed flux  Phi(t) = int_S B(x, t) . n dA, and
* the unsigned flux    |Phi|(t) = int_S |B(x, t) . n| dA,

with their growth rates. Stretching makes |Phi| grow; folding brings field of
both signs through S, so Phi grows more slowly (or decays): the ratio
Phi / |Phi| says how much cancellation eats.

Method (exact for any flow that carries B by the ideal induction equation)
---------------------------------------------------------------------------
Flux through a material surface element is frozen (Alfven's theorem; it holds
for compressible flows too): B(x, t) . n dA = B0(X) . N0 dA0, where X is the
point that arrives at x at time t and N0 dA0 the area element that becomes n dA.
With K = D phi_{t->0}(x), the deformation gradient of the *backward* flow map,
and a, b orthonormal tangent vectors of S with a x b = n, Nanson's formula gives
N0 dA0 = (K a) x (K b) dA. Hence

    Phi(t) = int_S B0(phi_{t->0}(x)) . ((K a) x (K b)) dA,

evaluated by Monte Carlo: M points uniform on S, each integrated backward from
t to 0 with the two tangent vectors a, b (variational equation, exact
gradient; maps: the inverse map and its exact Jacobian). The tangent pair is
kept orthonormal by Gram–Schmidt, K a = R11 q1, K b = R12 q1 + R22 q2, so the
pulled-back area element is R11 R22 (q1 x q2) with ln R11 + ln R22 accumulated:
no overflow and no loss of precision when K a and K b align. Sums over samples
are taken relative to the largest term (log-sum-exp with signs).

For steady flows and maps phi_{t->0} = phi_{0->-t}, so one backward sweep from
0 to -T gives every checkpoint; for time-periodic flows the same holds at
multiples of the period (the default checkpoints); otherwise each checkpoint
gets its own backward integration from t to 0.

Error bars: the net flux's standard error is the sample standard error of the
Monte Carlo mean. Rates are least-squares slopes of ln|Phi| and ln|Phi|_unsigned
over the fit window; their error bars come from a delete-one-group jackknife
over groups of sample points. The net-flux rate uses only checkpoints where
|Phi| exceeds twice its standard error; if fewer than three do, the net flux
is lost in cancellation beyond the sampling resolution and no rate is given.
"""

from __future__ import annotations

import math
import time as _time
from typing import Callable

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.integrate.outcomes import Outcome, outcome_counts
from flowkit.fields.particles import (
    check_duration, check_points, check_system, provenance_of, run_frames, stretch_settings, units,
)
from flowkit.fields.rates import RateEstimate, jackknife_stderr, ols_weights, window_mask
from flowkit.fields.results import FluxResult
from flowkit.fields.surfaces import Surface, default_surface, disc, patch  # noqa: F401
from flowkit.flows.maps import is_map
from flowkit.progress import Budget

__all__ = ["FluxResult", "Surface", "disc", "patch", "flux_growth"]


# -- the computation ------------------------------------------------------------------------------
def flux_growth(
    system,
    time,
    surface: Surface | None = None,
    *,
    field=None,
    samples: int = 4000,
    checkpoints: int | None = None,
    window: tuple | None = None,
    groups: int = 32,
    settings=None,
    seed: int = 0,
    threads: int | None = None,
    progress: bool | None = None,
    max_seconds: float | None = None,
) -> FluxResult:
    """Net and unsigned flux of a frozen-in field through a fixed surface, and their growth rates.

    Parameters
    ----------
    system : Flow or Map
        The flow (or map, which must have an inverse) carrying the field.
    time : float or int
        Duration (flows) or number of iterations (maps).
    surface : Surface, optional
        The fixed surface (:func:`disc`, :func:`patch`). Default: the equatorial
        disc of radius 0.999 in the unit ball; the patch x = 1, 0 <= y, z <= pi in
        the periodic box; the full cross-section x = 0.37 of a map's cell.
    field : array_like (3,) or callable, optional
        Initial field B0: a uniform vector (default: the surface normal, so the
        initial net and unsigned fluxes equal the area) or ``B0(X) -> (M, 3)``
        (vectorized; should be divergence-free for the result to mean flux).
    samples : int
        Monte Carlo points on the surface.
    checkpoints : int, optional
        Number of checkpoints after 0 (default 40; maps: every iteration up to
        100; time-periodic flows: whole periods).
    window : (float, float), optional
        Fit window for the rates (default [time/4, time]).
    groups : int
        Jackknife groups of sample points.
    settings : IntegratorSettings, optional
        DOP853 tolerances (default rtol 1e-9, atol 1e-12).
    seed : int
        Random seed of the sample points.
    threads : int, optional
        Numba threads.
    progress : bool, optional
        A progress bar over backward sweeps once the run lasts 2 s (default); False: never.
    max_seconds : float, optional
        Wall-clock budget, checked between sweeps: the checkpoints finished so far
        are returned, flagged ``partial`` (as after Ctrl-C).

    Returns
    -------
    FluxResult
    """
    system = check_system(system)
    mapping = is_map(system)
    T = check_duration(system, time)
    settings = None if mapping else stretch_settings(settings)
    if mapping:
        system.inverse_kernels  # noqa: B018 - raises a clear error if the map has no inverse
    S = surface if surface is not None else default_surface(system)
    if not isinstance(S, Surface):
        raise FlowkitError("`surface` must be a flowkit.fields.Surface (disc(...) or patch(...))")
    if not (isinstance(samples, (int, np.integer)) and samples >= 2):
        raise FlowkitError(f"`samples` must be an integer >= 2; got {samples!r}")
    rng = np.random.default_rng(seed)
    X = S.sample(int(samples), rng)
    try:
        X = check_points(system, X, "surface")
    except FlowkitError as exc:
        raise FlowkitError(f"the surface must lie inside the domain: {exc}") from None
    B0, field_desc = _initial_field(field, S)
    marks = _checkpoints(system, T, checkpoints)
    window = (0.25 * float(marks[-1]), float(marks[-1])) if window is None else tuple(float(w) for w in window)
    window_mask(marks.astype(float), window)  # a bad window is an error before any work
    M = X.shape[0]
    G = int(min(groups, M))
    gid = np.arange(M) % G

    t0 = _time.perf_counter()
    loglocal = np.full((len(marks), M), -np.inf)  # ln |f_i|, f_i = flux density at sample i
    sign = np.zeros((len(marks), M))
    with np.errstate(divide="ignore"):
        loglocal[0] = np.log(np.abs(B0(X) @ S.normal))
    sign[0] = np.sign(B0(X) @ S.normal)
    outcome = np.zeros(M, dtype=np.int8)
    done = 1
    sweeps = _sweeps(system, marks)
    with Budget(total=len(marks) - 1, desc=f"flux {getattr(system, 'name', '')}", unit="checkpoint",
                progress=progress, max_seconds=max_seconds) as budget:
        for k_list, path in sweeps:
            if budget.expired():
                break
            Y = np.zeros((M, 9))
            Y[:, :3] = X
            Y[:, 3:6] = S.a
            Y[:, 6:9] = S.b
            acc = np.zeros(M)
            for j, k in enumerate(k_list):
                run = run_frames(system, Y, np.array(path[j: j + 2]), settings, threads)
                bad = run.outcome != Outcome.FINISHED
                outcome[bad & (outcome == 0)] = run.outcome[bad & (outcome == 0)]
                acc = acc + run.logs[:, 0, 0] + run.logs[:, 0, 1]
                dA = np.cross(Y[:, 3:6], Y[:, 6:9])
                dens = np.einsum("ij,ij->i", B0(Y[:, :3]), dA)
                with np.errstate(divide="ignore"):
                    loglocal[k] = acc + np.log(np.abs(dens))
                sign[k] = np.sign(dens)
                loglocal[k, outcome != 0] = -np.inf
                sign[k, outcome != 0] = 0.0
                done = max(done, k + 1)
                budget.advance(1)
                if budget.expired():
                    break
    partial = budget.partial
    seconds = _time.perf_counter() - t0
    ok = outcome == Outcome.FINISHED
    times = marks[:done].astype(float)
    stats = _flux_stats(loglocal[:done], sign[:done], ok, gid, G, S.area)
    notes = []
    if partial:
        notes.append(f"{'interrupted' if budget.interrupted else 'stopped at the time budget `max_seconds`'}: "
                     f"checkpoints up to t = {times[-1]:g} are kept")
    if not ok.all():
        notes.append(f"{int((~ok).sum())} of {M} sample points failed on the way back (see `outcomes`) and are "
                     "left out; the surface integral then covers only the rest")
    flux_rate, unsigned_rate = _rates(times, stats, window, notes)
    prov = provenance_of(system, settings, algorithm="flux frozen into material surfaces: backward flow map + "
                         "Nanson's formula, Monte Carlo over the fixed surface", surface=S.description,
                         field=field_desc, samples=M, groups=G, seed=seed)
    return FluxResult(times=times, log_unsigned=stats["log_unsigned"], ratio=stats["ratio"],
                      ratio_stderr=stats["ratio_stderr"], flux_rate=flux_rate, unsigned_rate=unsigned_rate,
                      area=S.area, surface=S.description, field=field_desc, samples=M,
                      outcomes=outcome_counts(outcome), units=units(system), partial=partial, notes=notes,
                      seconds=seconds, provenance=prov)


def _initial_field(field, S: Surface) -> tuple[Callable, object]:
    if field is None:
        n = S.normal
        return (lambda X: np.broadcast_to(n, X.shape)), {"uniform": n.tolist()}
    if callable(field):
        def B0(X):
            out = np.asarray(field(X), dtype=np.float64)
            if out.shape != X.shape or not np.all(np.isfinite(out)):
                raise FlowkitError(f"`field(X)` must return finite values of shape {X.shape}; got {out.shape}")
            return out
        return B0, {"callable": getattr(field, "__qualname__", repr(field))}
    v = np.asarray(field, dtype=np.float64)
    if v.shape != (3,) or not np.all(np.isfinite(v)) or not np.any(v):
        raise FlowkitError(f"`field` must be a non-zero vector (3,) or a callable B0(X); got {field!r}")
    return (lambda X: np.broadcast_to(v, X.shape)), {"uniform": v.tolist()}


def _checkpoints(system, T, checkpoints) -> np.ndarray:
    if checkpoints is not None and not (isinstance(checkpoints, (int, np.integer)) and checkpoints >= 2):
        raise FlowkitError(f"`checkpoints` must be an integer >= 2; got {checkpoints!r}")
    if is_map(system):
        n = min(T, 100) if checkpoints is None else min(int(checkpoints), T)
        return np.unique(np.round(np.linspace(0, T, n + 1)).astype(np.int64))
    per = system.period
    if checkpoints is None and per is not None and T >= 3 * per:
        n = int(T // per)
        k = max(1, -(-n // 40))
        return per * np.arange(0, n + 1, k, dtype=float)
    return np.linspace(0.0, float(T), (40 if checkpoints is None else int(checkpoints)) + 1)


def _time_shift_invariant(system, marks) -> bool:
    """True if phi_{t->0} = phi_{0->-t} at every checkpoint (steady flows, maps, whole periods)."""
    if is_map(system):
        return True
    exprs = system.family.exprs
    if exprs is None and system.steady:
        return False  # a compiled user function might depend on t: be safe
    from flowkit.flows.codegen import T as tsym

    depends = exprs is None or any(tsym in e.free_symbols for e in exprs)
    if not depends:
        return True
    per = system.period
    if per is None:
        return False
    q = marks / per
    return bool(np.all(np.abs(q - np.round(q)) < 1e-9 * np.maximum(1, q)))


def _sweeps(system, marks):
    """List of (checkpoint indices, time path) backward integrations."""
    k_all = list(range(1, len(marks)))
    if _time_shift_invariant(system, marks):
        return [(k_all, [-m for m in marks] if not is_map(system) else list(-np.asarray(marks)))]
    return [([k], [marks[k], 0.0]) for k in k_all]


def _flux_stats(logf, sign, ok, gid, G, area) -> dict:
    """Unsigned flux, net/unsigned ratio, their errors, and leave-one-group-out values."""
    K1, M = logf.shape
    m = np.max(np.where(np.isfinite(logf), logf, -np.inf), axis=1)
    m = np.where(np.isfinite(m), m, 0.0)
    with np.errstate(over="ignore", invalid="ignore"):
        f = sign * np.exp(logf - m[:, None])          # flux densities scaled by e^-m (<= 1)
    f[:, ~ok] = 0.0
    n = int(ok.sum())
    n_g = np.bincount(gid[ok], minlength=G).astype(float)
    pos = np.zeros((K1, G))
    neg = np.zeros((K1, G))
    for g in range(G):
        sel = ok & (gid == g)
        pos[:, g] = np.sum(np.where(f[:, sel] > 0, f[:, sel], 0.0), axis=1)
        neg[:, g] = -np.sum(np.where(f[:, sel] < 0, f[:, sel], 0.0), axis=1)
    P, N = pos.sum(axis=1), neg.sum(axis=1)
    uns = (P + N) / max(n, 1)
    net = (P - N) / max(n, 1)
    var = np.sum(f[:, ok] ** 2, axis=1) / max(n, 1) - net**2
    net_err = np.sqrt(np.maximum(var, 0.0) / max(n - 1, 1))
    with np.errstate(divide="ignore", invalid="ignore"):
        log_uns = m + np.log(uns) + math.log(area)
        ratio = net / uns
        ratio_err = net_err / uns
    live = np.flatnonzero(n_g > 0)
    loo_uns = np.empty((len(live), K1))
    loo_net = np.empty((len(live), K1))
    for j, g in enumerate(live):
        cnt = n - n_g[g]
        with np.errstate(divide="ignore"):
            loo_uns[j] = m + np.log((P - pos[:, g] + N - neg[:, g]) / cnt) + math.log(area)
            loo_net[j] = m + np.log(np.abs(P - pos[:, g] - N + neg[:, g]) / cnt) + math.log(area)
    with np.errstate(divide="ignore"):
        log_net = m + np.log(np.abs(net)) + math.log(area)
    return {"log_unsigned": log_uns, "ratio": ratio, "ratio_stderr": ratio_err, "log_net": log_net,
            "resolved": np.abs(net) > 2 * net_err, "loo_uns": loo_uns, "loo_net": loo_net}


def _rates(times, stats, window, notes) -> tuple[RateEstimate, RateEstimate]:
    try:
        mask = window_mask(times, window)
    except FlowkitError as exc:  # an interrupted run that stopped before the window
        notes.append(f"no rates: {exc}")
        nan = RateEstimate(math.nan, math.nan, window, "too few finished checkpoints in the window")
        return nan, nan
    w = ols_weights(times[mask])
    win = (float(times[mask][0]), float(times[mask][-1]))
    njk = len(stats["loo_uns"])
    uns = RateEstimate(float(stats["log_unsigned"][mask] @ w),
                       float(jackknife_stderr(stats["loo_uns"][:, mask] @ w)) if njk > 1 else math.nan, win,
                       f"least-squares slope of ln(unsigned flux); jackknife over {njk} groups of sample points")
    sel = mask & stats["resolved"]
    if sel.sum() < 3:
        notes.append(f"net flux is below twice its Monte Carlo error at {int(mask.sum() - sel.sum())} of "
                     f"{int(mask.sum())} checkpoints of the window: cancellation beyond the sampling resolution, "
                     "no net-flux rate (more samples resolve smaller net fluxes)")
        return RateEstimate(math.nan, math.nan, win, "net flux unresolved (below 2 standard errors)"), uns
    w2 = ols_weights(times[sel])
    loo = stats["loo_net"][:, sel]
    err = float(jackknife_stderr(loo @ w2)) if njk > 1 and np.all(np.isfinite(loo)) else math.nan
    if sel.sum() < mask.sum():
        notes.append(f"net-flux rate fitted over the {int(sel.sum())} of {int(mask.sum())} window checkpoints "
                     "where the net flux exceeds twice its Monte Carlo error")
    flips = int(np.sum(np.diff(np.sign(stats["ratio"][sel])) != 0))
    if flips:
        notes.append(f"the net flux changes sign {flips} time(s) in the fit window: its rate describes the "
                     "envelope of an oscillating flux only roughly (see `ratio` over time)")
    net = RateEstimate(float(stats["log_net"][sel] @ w2), err, (float(times[sel][0]), float(times[sel][-1])),
                       f"least-squares slope of ln|net flux| over resolved checkpoints; jackknife over {njk} groups")
    return net, uns
