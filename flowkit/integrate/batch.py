"""Integrate many trajectories (optionally with tangent vectors) to a common end time."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numba
import numpy as np

from flowkit.errors import FlowkitError
from flowkit.integrate.outcomes import Outcome, outcome_counts, outcome_notes

if TYPE_CHECKING:  # annotations only: integrate/ must not import flows/ (flows use these drivers)
    from flowkit.flows.base import Flow

METHODS = {"dop853": 0, "rk4": 1}


@dataclass
class IntegratorSettings:
    """Validated integrator settings (recorded in every result's provenance).

    Parameters
    ----------
    method : {"dop853", "rk4"}
        Adaptive DOP853 (default) or fixed-step classical Runge–Kutta.
    rtol, atol : float
        Tolerances of DOP853 (defaults 1e-10, 1e-12: tight, as sections need).
    max_step : float
        Upper bound on the DOP853 step (default inf).
    max_steps : int
        Step budget per trajectory for DOP853 (outcome "step budget" if reached).
        The default, 10 million, is about 3 s of one core for a streamline and
        about 20 s with the full deformation gradient (12 components), so one
        orbit cannot grind for minutes unnoticed; a stiff orbit ends far sooner
        with outcome "stiff" (DOP853's stiffness test).
    step : float
        RK4 step size (required for ``method="rk4"``).
    """

    method: str = "dop853"
    rtol: float = 1e-10
    atol: float = 1e-12
    max_step: float = math.inf
    max_steps: int = 10_000_000
    step: float | None = None
    extra: dict = field(default_factory=dict)

    def __post_init__(self):
        if self.method not in METHODS:
            raise FlowkitError(f"`method` must be one of {', '.join(METHODS)}; got {self.method!r}")
        for name in ("rtol", "atol"):
            val = getattr(self, name)
            if not (isinstance(val, (int, float)) and math.isfinite(val) and val > 0):
                raise FlowkitError(f"`{name}` must be a positive number; got {val!r}")
        if self.rtol < 1e-15:
            raise FlowkitError(f"`rtol` = {self.rtol:g} is below double-precision round-off; use 1e-14 or larger")
        if not self.max_step > 0:
            raise FlowkitError(f"`max_step` must be positive; got {self.max_step!r}")
        if not (isinstance(self.max_steps, (int, np.integer)) and self.max_steps > 0):
            raise FlowkitError(f"`max_steps` must be a positive integer; got {self.max_steps!r}")
        if self.method == "rk4" and not (self.step is not None and self.step > 0 and math.isfinite(self.step)):
            raise FlowkitError("`step` must be a positive number when method='rk4' (e.g. step=0.01)")

    def as_dict(self) -> dict:
        d = {"method": self.method}
        if self.method == "dop853":
            d.update(rtol=self.rtol, atol=self.atol, max_step=self.max_step, max_steps=self.max_steps)
        else:
            d.update(step=self.step)
        d.update(self.extra)
        return d


@dataclass
class BatchResult:
    """Final states of a batch, with per-trajectory outcome, end time and step count."""

    states: np.ndarray
    outcome: np.ndarray
    t_end: np.ndarray
    steps: np.ndarray
    settings: IntegratorSettings

    @property
    def outcomes(self) -> dict[str, int]:
        return outcome_counts(self.outcome)

    @property
    def ok(self) -> np.ndarray:
        """Mask of trajectories that reached the end time."""
        return self.outcome == Outcome.FINISHED

    @property
    def notes(self) -> list[str]:
        """What to do about orbits that ended early (stiff, step budget, ...), one sentence each."""
        return outcome_notes(self.outcome)


def check_seeds(flow: Flow, seeds, name: str = "seeds") -> np.ndarray:
    """(N, 3) float array of finite seeds inside the flow's domain, or a clear error.

    The shared check :func:`flowkit.validation.points_in_domain`, under its old name.
    """
    from flowkit.validation import points_in_domain

    return points_in_domain(flow, seeds, name)


def prepare_states(states, t0: float, t1: float) -> np.ndarray:
    """A fresh C-contiguous float copy of ``states`` (N, 3 + 3k), with the times checked."""
    Y = np.array(states, dtype=np.float64, order="C", copy=True)
    if Y.ndim != 2 or Y.shape[1] < 3 or (Y.shape[1] - 3) % 3:
        raise FlowkitError(f"`states` must have shape (N, 3 + 3k); got {Y.shape}")
    if not (math.isfinite(t0) and math.isfinite(t1)):
        raise FlowkitError("`t0` and `t1` must be finite")
    return Y


def integrate_states(
    flow: Flow,
    states,
    t0: float,
    t1: float,
    settings: IntegratorSettings | None = None,
    threads: int | None = None,
) -> BatchResult:
    """Integrate states (N, 3 + 3k): positions plus k tangent vectors, from t0 to t1.

    The tangent vectors obey the variational equation with the flow's exact
    gradient. Runs in parallel over rows; per-row outcomes report failures.
    Twelve components (the full deformation gradient) with DOP853 take their own
    kernel (``batch_solve_12``: stage sums in locals, contracted multiply-adds),
    whose numbers differ from the generic loops' at round-off.
    """
    settings = settings or IntegratorSettings()
    Y = prepare_states(states, t0, t1)
    N = Y.shape[0]
    outcome = np.zeros(N, dtype=np.int8)
    t_end = np.zeros(N)
    steps = np.zeros(N, dtype=np.int64)
    nsteps = 1
    if settings.method == "rk4":
        nsteps = max(1, int(math.ceil(abs(t1 - t0) / settings.step - 1e-9)))
    with thread_limit(threads), numba.parallel_chunksize(1):
        if settings.method == "dop853" and Y.shape[1] == 12:  # position + deformation gradient: own kernel
            flow.kernels.batch_solve_12(
                Y, float(t0), float(t1), flow.params, settings.rtol, settings.atol, float(settings.max_step),
                int(settings.max_steps), flow.domain == "ball", outcome, t_end, steps,
            )
        else:
            kernel, params = flow.kernel("batch_solve")
            kernel(
                Y, float(t0), float(t1), params, METHODS[settings.method], settings.rtol, settings.atol,
                float(settings.max_step), int(settings.max_steps), nsteps, flow.domain == "ball",
                outcome, t_end, steps,
            )
    return BatchResult(Y, outcome, t_end, steps, settings)


class thread_limit:
    """Context manager: run numba parallel kernels on ``n`` threads (None: all)."""

    def __init__(self, n: int | None):
        self.n = n

    def __enter__(self):
        self.old = numba.get_num_threads()
        if self.n is not None:
            if not (1 <= self.n <= numba.config.NUMBA_NUM_THREADS):
                raise FlowkitError(f"`threads` must be between 1 and {numba.config.NUMBA_NUM_THREADS}; got {self.n}")
            numba.set_num_threads(self.n)
        return self

    def __exit__(self, *exc):
        numba.set_num_threads(self.old)
        return False
