"""Volume-preserving splitting integrator for divergence-free flows (Python side).

The kernels are in :mod:`flowkit.kernels.splitting`; the sub-fields are
generated from the family's sympy expressions by
:func:`flowkit.flows.codegen.splitting_source`. This module validates input,
refuses flows that cannot be split, and runs the parallel batch kernel.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numba
import numpy as np

from flowkit.errors import FlowkitError
from flowkit.integrate.batch import BatchResult, prepare_states, thread_limit

if TYPE_CHECKING:  # annotations only: integrate/ must not import flows/ (flows use these drivers)
    from flowkit.flows.base import Flow

SCHEMES = {
    2: "Strang composition a(h/2) b(h) a(h/2) of implicit-midpoint sub-steps",
    4: "triple-jump composition (Phys. Lett. A 150, 1990) of Strang steps",
}
SPLIT_RULE = "a = (u, -int du/dx dy, 0), b = (0, v + int du/dx dy, w) (Numer. Math. 71, 1995)"


@dataclass
class SplittingSettings:
    """Settings of the splitting scheme (recorded in provenance).

    Parameters
    ----------
    step : float
        Fixed step size (positive).
    order : {2, 4}
        2: Strang; 4: triple-jump composition of Strang steps.
    """

    step: float
    order: int = 2
    extra: dict = field(default_factory=dict)
    method: str = field(default="splitting", init=False)

    def __post_init__(self):
        if not (isinstance(self.step, (int, float)) and math.isfinite(self.step) and self.step > 0):
            raise FlowkitError(f"`step` must be a positive number for the splitting scheme (e.g. 0.01); got {self.step!r}")
        if self.order not in SCHEMES:
            raise FlowkitError(f"`order` must be 2 or 4 for the splitting scheme; got {self.order!r}")

    def as_dict(self) -> dict:
        return {"method": "splitting", "step": float(self.step), "order": int(self.order),
                "scheme": SCHEMES[self.order], "split": SPLIT_RULE, **self.extra}


def check_splittable(flow: Flow) -> None:
    """Raise a clear :class:`FlowkitError` if ``flow`` cannot use the splitting scheme."""
    status = flow.kernels.SPLIT_STATUS
    if status != "ok":
        raise FlowkitError(
            f"method='splitting' is not available for flow '{flow.name}': {status}. The splitting scheme needs a "
            "divergence-free field given by sympy expressions or formula strings; use method='dop853' instead."
        )


def integrate_split(
    flow: Flow,
    states,
    t0: float,
    t1: float,
    settings: SplittingSettings,
    threads: int | None = None,
) -> BatchResult:
    """Integrate states (N, 3 + 3k) from t0 to t1 with the volume-preserving splitting scheme.

    The number of steps is ``ceil(|t1 - t0| / settings.step)`` (equal steps that
    land on t1). Tangent vectors (columns after the position) are mapped by the
    exact derivative of the numerical map, so their determinant measures the
    volume the scheme actually preserves.
    """
    check_splittable(flow)
    Y = prepare_states(states, t0, t1)
    N = Y.shape[0]
    nsteps = max(1, int(math.ceil(abs(t1 - t0) / settings.step - 1e-9)))
    outcome = np.zeros(N, dtype=np.int8)
    t_end = np.zeros(N)
    steps = np.zeros(N, dtype=np.int64)
    with thread_limit(threads), numba.parallel_chunksize(1):
        flow.kernels.split_batch_solve(Y, float(t0), float(t1), nsteps, flow.params, int(settings.order),
                                       flow.domain == "ball", outcome, t_end, steps)
    return BatchResult(Y, outcome, t_end, steps, settings)
