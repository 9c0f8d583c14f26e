"""Lyapunov spectra from the variational equations with the exact gradient.

:func:`lyapunov_spectrum` follows one orbit with its tangent vectors, keeps them
orthonormal by QR (Gram–Schmidt) after every integrator step and averages the
logarithms of the diagonal of R (Meccanica 15, 1980, 9-20 and 21-30). It discards a
transient, keeps the running estimate, gives standard errors from block
averages, and says whether the estimate has converged (and why not). Its sanity
figure is the mean divergence along the same stretch of orbit, computed
independently of the tangent vectors: the exponents must add up to it (zero for
incompressible flows).

Every flowkit flow carries its gradient: exact (symbolic) for presets, Lamb
flows and symbolic user flows; fourth-order finite differences for user Python
functions that cannot be traced (``flow.family.gradient_method`` says which, and
it is recorded in the provenance).

The tangent-space helpers live in :mod:`flowkit.chaos.tangent`.
"""


from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from flowkit.chaos.tangent import (
    TangentRun, dop853_settings, method_record, n_exponents, require_flow, run_tangent, tangent_states,
)
from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.integrate.batch import IntegratorSettings
from flowkit.integrate.outcomes import OUTCOME_NAMES, Outcome, outcome_notes
from flowkit.progress import Budget
from flowkit.results import Result, plain
from flowkit.validation import count, finite, points_in_domain, positive
from flowkit.validation import duration as check_time

__all__ = ["Spectrum", "lyapunov_spectrum"]


@dataclass
class Spectrum(Result):
    """Lyapunov spectrum of one orbit, with error bars and a convergence verdict.

    Attributes
    ----------
    exponents : ndarray
        Exponents in QR-column order (largest first), per unit time.
    stderr : ndarray
        Standard error of each exponent from ``blocks`` block averages.
    converged : bool
        True when the orbit finished, the standard errors are below ``tolerance``,
        the two halves of the run agree, and the sum matches the mean divergence.
    reason : str
        Why ``converged`` is False ("" when it is True).
    mean_divergence : float
        Time average of div u along the same stretch of orbit (independent of the
        tangent vectors); ``exponents.sum()`` should equal it.
    times, running : ndarray
        End times of the kept bookkeeping intervals and the running estimate there.
    block_means : ndarray
        (blocks, k) exponent estimate of each block.
    """

    exponents: np.ndarray
    stderr: np.ndarray
    converged: bool
    reason: str
    mean_divergence: float
    tolerance: float
    point: np.ndarray
    time: float
    transient: float
    t0: float
    times: np.ndarray
    running: np.ndarray
    block_means: np.ndarray
    outcome: str
    steps: int
    seconds: float
    partial: bool = False
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("exponents", "stderr", "point", "times", "running", "block_means")
    _DIMS = {"exponents": ("exponent",), "stderr": ("exponent",), "point": ("xyz",), "times": ("time",),
             "running": ("time", "exponent"), "block_means": ("block", "exponent")}

    @property
    def sum(self) -> float:
        """Sum of the exponents."""
        return float(np.sum(self.exponents))

    @property
    def sum_stderr(self) -> float:
        """Standard error of the sum (from the block sums)."""
        b = self.block_means.sum(axis=1)
        return float(np.std(b, ddof=1) / math.sqrt(len(b))) if len(b) > 1 else math.nan

    def summary(self) -> dict:
        """Exponents with errors, the verdict and the sanity figures (what ``--json`` prints)."""
        return plain({
            "exponents": self.exponents, "stderr": self.stderr,
            "converged": self.converged, "reason": self.reason, "sum": self.sum,
            "sum_stderr": self.sum_stderr, "mean_divergence": self.mean_divergence,
            "tolerance": self.tolerance, "point": self.point, "time": self.time,
            "transient": self.transient, "t0": self.t0, "outcome": self.outcome, "steps": self.steps,
            "seconds": self.seconds, "partial": self.partial,
        })

    def headline(self) -> list:
        rows = [(f"lambda_{i + 1}", float(e), float(s)) for i, (e, s) in enumerate(zip(self.exponents, self.stderr))]
        return rows + [("sum", self.sum, self.sum_stderr), ("mean divergence", self.mean_divergence, None),
                       ("converged", self.converged, None)]

    def __str__(self) -> str:
        vals = ", ".join(f"{e:+.5f} ± {s:.1e}" for e, s in zip(self.exponents, self.stderr))
        verdict = "converged" if self.converged else f"NOT converged: {self.reason}"
        return (f"Lyapunov spectrum [{vals}]; sum {self.sum:+.6f} vs mean divergence "
                f"{self.mean_divergence:+.6f}; {verdict}")


def lyapunov_spectrum(
    flow: Flow,
    point,
    time: float,
    *,
    transient: float | None = None,
    t0: float = 0.0,
    intervals: int = 1000,
    blocks: int = 20,
    tolerance: float | None = None,
    settings: IntegratorSettings | None = None,
    max_seconds: float | None = None,
    progress: bool | None = None,
) -> Spectrum:
    """Full Lyapunov spectrum of the orbit through ``point``.

    Parameters
    ----------
    flow : Flow
        Any flowkit flow or ODE system (planar flows give their two in-plane exponents).
    point : array_like, shape (3,)
        Starting point, inside the flow's domain.
    time : float
        Averaging time after the transient (positive).
    transient : float, optional
        Time integrated first and discarded (default ``0.1 * time``).
    t0 : float
        Start time (matters for time-periodic flows).
    intervals : int
        Number of bookkeeping intervals in the averaging window (running
        estimate resolution); rounded up to a multiple of ``blocks``.
    blocks : int
        Number of blocks for the standard error (at least 4).
    tolerance : float, optional
        Largest acceptable standard error for ``converged`` (default
        ``max(1e-3, 0.01 * |largest exponent|)``); an exponent larger in magnitude
        may have a standard error up to 1 % of itself.
    settings : IntegratorSettings, optional
        DOP853 tolerances (default rtol 1e-10, atol 1e-12).
    max_seconds : float, optional
        Wall-clock budget: the run stops after the first block that ends past
        it and returns what finished, flagged ``partial`` (not converged).
    progress : bool, optional
        A progress bar over blocks once the run lasts 2 s (default); False: never.

    Returns
    -------
    Spectrum
        Ctrl-C between blocks also returns the finished blocks, flagged ``partial``.

    Notes
    -----
    Method of Meccanica 15 (1980) 9-20 (theory) and 21-30 (numerics; page
    numbers cited from memory): tangent vectors obey the variational equation
    with the flow's exact gradient; they are re-orthonormalized by Gram–Schmidt
    after every DOP853 step (see :mod:`flowkit.kernels.lyapunov`). ``seconds``
    is the wall time of the kernel calls (numba compiles on the first call for
    a flow family).
    A failed orbit (left the domain, non-finite values, step budget) is not an
    exception: the result keeps what was finished and ``converged`` is False
    with the outcome as the reason.
    """
    flow = require_flow(flow)
    time = check_time(time)
    settings = dop853_settings(settings)
    transient = 0.1 * time if transient is None else positive(transient, "transient", allow_zero=True, what="time")
    blocks = count(blocks, "blocks", minimum=4, what=" (for a standard error)")
    intervals = count(intervals, "intervals")
    t0 = finite(t0, "t0")
    x0 = points_in_domain(flow, point, "point")
    if x0.shape[0] != 1:
        raise FlowkitError(f"`point` must be one point (x, y, z); got {x0.shape[0]} points")

    per_block = -(-intervals // blocks)
    n_keep = per_block * blocks
    tau = time / n_keep
    n_tr = int(math.ceil(transient / tau - 1e-9))
    times = float(t0) + tau * np.arange(n_tr + n_keep + 1)
    k = n_exponents(flow)
    budget = Budget(total=blocks + (1 if n_tr else 0), desc=f"Lyapunov {flow.name}", unit="block",
                    progress=progress, max_seconds=max_seconds)
    run = _run_in_pieces(flow, tangent_states(x0, k), times, settings, n_tr, per_block, budget)

    logs = run.logs[0, n_tr:]
    div = run.div[0, n_tr:]
    done = int(np.sum(np.isfinite(div)))          # completed kept intervals
    usable = (done // per_block) * per_block
    outcome = OUTCOME_NAMES[int(run.outcome[0])]
    reasons = []
    if budget.partial:
        reasons.append(f"{budget.reason} (at t = {run.t_end[0]:.6g}; {done} of {n_keep} averaging intervals)")
    elif run.outcome[0] != Outcome.FINISHED:
        reasons.append(f"orbit ended early ({outcome}) at t = {run.t_end[0]:.6g}; "
                       f"{done} of {n_keep} averaging intervals were completed")
        reasons += outcome_notes(run.outcome)
    nb = usable // per_block
    if nb >= 2:
        block_means = logs[:usable].reshape(nb, per_block, k).sum(axis=1) / (per_block * tau)
        exps = block_means.mean(axis=0)
        stderr = block_means.std(axis=0, ddof=1) / math.sqrt(nb)
        mean_div = float(np.sum(div[:usable]) / (usable * tau))
    else:
        block_means = np.zeros((0, k))
        exps = np.full(k, np.nan)
        stderr = np.full(k, np.nan)
        mean_div = math.nan
        reasons.append("fewer than two blocks were completed: no estimate")
    running = np.cumsum(logs[:done], axis=0) / (tau * np.arange(1, done + 1))[:, None]
    if tolerance is not None:
        tol = float(tolerance)
    else:
        tol = max(1e-3, 0.01 * abs(float(exps[0]))) if math.isfinite(exps[0]) else 1e-3
    if nb >= 2:
        reasons += _convergence_problems(block_means, exps, stderr, mean_div, tol, nb, blocks)

    provenance = flow.provenance()
    provenance["method"] = method_record(
        settings, algorithm="variational equations, Gram-Schmidt QR after every DOP853 step (Meccanica 15, 1980)",
        interval=tau, intervals=n_keep, transient_intervals=n_tr, blocks=blocks)
    return Spectrum(
        exponents=exps, stderr=stderr, converged=not reasons, reason="; ".join(reasons),
        mean_divergence=mean_div, tolerance=tol, point=x0[0].copy(), time=time, transient=n_tr * tau,
        t0=float(t0), times=times[n_tr + 1: n_tr + 1 + done], running=running, block_means=block_means,
        outcome=outcome, steps=int(run.steps[0]), seconds=run.seconds, partial=budget.partial,
        provenance=provenance,
    )


def _run_in_pieces(flow, Y, times, settings, n_tr, per_block, budget: Budget) -> TangentRun:
    """Run the transient, then one block at a time under ``budget`` (progress, time, Ctrl-C).

    Returns the joined run of the finished pieces (``budget.partial`` says whether
    it stopped early). The step budget ``settings.max_steps`` covers the whole run.
    """
    m = len(times) - 1
    ncol = (Y.shape[1] - 3) // 3
    joined = TangentRun(np.full((1, m, ncol), np.nan), np.full((1, m), np.nan), np.zeros(1, dtype=np.int8),
                        np.array([times[0]]), np.zeros(1, dtype=np.int64), 0.0)
    cuts = ([0, n_tr] if n_tr else [0]) + list(range(n_tr + per_block, m + 1, per_block))
    if cuts[-1] != m:
        cuts.append(m)
    with budget:
        for a, b in budget.iterate(zip(cuts[:-1], cuts[1:])):
            left = int(settings.max_steps - joined.steps[0])
            run = run_tangent(flow, Y, times[a:b + 1], settings, max_steps=max(left, 1))
            joined.logs[:, a:b] = run.logs
            joined.div[:, a:b] = run.div
            joined.outcome[:] = run.outcome
            joined.t_end[:] = run.t_end
            joined.steps += run.steps
            joined.seconds += run.seconds
            if run.outcome[0] != Outcome.FINISHED:
                break
    return joined


def _convergence_problems(block_means, exps, stderr, mean_div, tol, nb, blocks) -> list[str]:
    """Reasons (possibly none) why a finished estimate should not be trusted."""
    out = []
    if nb < blocks:
        out.append(f"only {nb} of {blocks} blocks were completed")
    allowed = np.maximum(tol, 0.01 * np.abs(exps))  # each exponent to 1 % of itself or `tolerance`
    worst = int(np.argmax(stderr / allowed))
    if stderr[worst] > allowed[worst]:
        out.append(f"standard error of exponent {worst + 1} is {stderr[worst]:.2g} > tolerance "
                   f"{allowed[worst]:.2g}; integrate longer")
    half = nb // 2
    if half >= 2:
        a, b = block_means[:half], block_means[nb - half:]
        gap = np.abs(a.mean(axis=0) - b.mean(axis=0))
        noise = np.sqrt(a.var(axis=0, ddof=1) / half + b.var(axis=0, ddof=1) / half)
        drifting = np.flatnonzero((gap > 3 * noise) & (gap > allowed))
        if drifting.size:
            i = int(drifting[0])
            out.append(f"exponent {i + 1} still drifts (first half {a[:, i].mean():+.4g}, second half "
                       f"{b[:, i].mean():+.4g}); integrate longer or discard a longer transient")
    gap = abs(float(np.sum(exps)) - mean_div)
    if gap > 0.01 * tol:
        out.append(f"sum of exponents differs from the mean divergence by {gap:.2g}; tighten rtol")
    return out
