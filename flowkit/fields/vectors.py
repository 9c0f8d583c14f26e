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

import math
import time as _time
from dataclasses import dataclass
from typing import Iterable, Sequence

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.fields.particles import (
    advance_points, check_duration, check_points, check_system, check_transient, checkpoints, default_seeds,
    provenance_of, random_directions, run_frames, stretch_settings, units, _planar,
)
from flowkit.fields.rates import (RateEstimate, group_log_sum_exp, jackknife_stderr, log_sum_exp, mean_rate,
                                  ols_weights, window_mask)
from flowkit.fields.results import StretchResult
from flowkit.flows.maps import is_map
from flowkit.integrate.batch import IntegratorSettings
from flowkit.integrate.outcomes import Outcome, outcome_counts
from flowkit.progress import Budget
from flowkit.validation import count

__all__ = ["StretchResult", "stretch"]


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
    progress: bool | None = None,
    max_seconds: float | None = None,
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
    progress : bool, optional
        A progress bar over chunks once the run lasts 2 s (default); False: never.
    max_seconds : float, optional
        Wall-clock budget, checked between chunks: the statistics of the finished
        chunks are returned, flagged ``partial`` (as after Ctrl-C).

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
        _check_memory(int(particles), samples, keep_series)
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
    groups = count(groups, "groups", what=" (jackknife groups)")
    G = int(min(groups, N))
    if chunk is None:
        chunk = int(min(8192, max(256, -(-N // 8))))
    chunk = count(chunk, "chunk", what=" (particles per kernel call)")
    tr = check_transient(system, transient)
    Q = np.unique(np.concatenate([orders, 2 * orders]))

    t_start = _time.perf_counter()
    chunks: list[_Chunk] = []
    with Budget(total=N, desc=f"stretch {getattr(system, 'name', '')}", unit="particle", progress=progress,
                max_seconds=max_seconds) as budget:
        for s in range(0, N, int(chunk)):
            if budget.expired():
                break
            idx = np.arange(s, min(N, s + int(chunk)))
            chunks.append(_run_chunk(system, X0[idx], B0[idx], idx, marks, tr, settings, threads, weights, Q,
                                     G, quantity, keep_series))
            budget.advance(idx.size)
    partial = budget.reason   # "" when every chunk finished
    seconds = _time.perf_counter() - t_start
    prov = provenance_of(system, settings, algorithm=_ALGORITHM, samples=int(samples), transient=tr,
                         groups=G, chunk=int(chunk), seed=seed, quantity=quantity,
                         field="isotropic random" if field is None else "given")
    return _assemble(chunks, times, orders, Q, window, mask, G, N, X0, B0, units(system), quantity, partial,
                     seconds, keep_series, prov)


_ALGORITHM = ("line elements by the variational equation with the exact gradient (maps: the exact Jacobian), "
              "renormalized every step; B = d rho/rho0 with ln(rho/rho0) = -int div u dt")


def _check_memory(n: int, samples, keep_series: bool) -> None:
    """Refuse particle counts x checkpoints that cannot fit, before any allocation."""
    from flowkit.validation import memory

    if isinstance(samples, (int, np.integer)) and not isinstance(samples, bool):
        # per particle: its state, seeds and results (~40 doubles) plus moments (and the series) per checkpoint
        per = 320.0 + 8.0 * (int(samples) + 1) * (2 + (1 if keep_series else 0))
        memory(n * per, "particles", per_unit=per, value=f"{n} with {samples} checkpoints")


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
    lse, count = group_log_sum_exp(logB[ok][:, :, None] * Q[None, None, :], gid[ok], G)
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
        notes.append(f"{partial}: statistics over the {n_run} particles finished (of {N} requested)")
    if n < n_run:
        notes.append(f"{n_run - n} particle(s) did not finish (see `outcomes`) and are left out of the statistics")
    if n == 0:
        raise FlowkitError("no particle finished the run (see the outcomes); nothing to average. "
                           f"Outcomes: {outcome_counts(outcome[outcome >= 0])}")
    qi = {q: i for i, q in enumerate(Q)}
    tot = log_sum_exp(lse, axis=0)                        # (K1, Q)
    logm_all = tot - math.log(n)
    # leave-one-group-out moments (groups with no particle are skipped)
    live = np.flatnonzero(count > 0)
    loo = np.empty((len(live), K1, len(Q)))
    for j, g in enumerate(live):
        others = np.delete(lse, g, axis=0)
        loo[j] = log_sum_exp(others, axis=0) - math.log(max(n - count[g], 1))
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
    lyap = mean_rate(rates, win, "ln|d|")
    field_rate = mean_rate(fslopes, win, "ln|B|")
    return StretchResult(
        times=times, p=orders, log_moments=np.stack(moments, axis=1), log_moments_stderr=np.stack(moments_err, axis=1),
        mean_log=mean, mean_log_stderr=mean_err, lyapunov=lyap, moment_rates=mrates, field_rate=field_rate,
        effective_particles=neff, window=win, units=unit, quantity=quantity, n_requested=N, n_run=n_run, n_used=n,
        outcomes=outcome_counts(outcome[outcome >= 0]), mean_divergence=div_sum / n / (times[-1] - times[0]),
        partial=bool(partial), notes=notes, seeds=X0, initial_field=B0, particle_rates=rates, final_log_field=final_log,
        final_direction=final_dir, final_positions=final_pos, outcome=outcome, seconds=seconds, series=series,
        provenance=prov,
    )
