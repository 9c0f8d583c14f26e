"""Tangent-space runs shared by the chaos measures (spectra, per-orbit indicator, FTLE).

:func:`run_tangent` follows positions with orthonormalized tangent columns through
checkpoint times (the kernel in :mod:`flowkit.kernels.lyapunov`); the small helpers
check the flow and integrator and build the method record of a provenance.
"""

from __future__ import annotations

import datetime
import time as _time
from dataclasses import dataclass

import numba
import numpy as np

from flowkit._version import __version__
from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.integrate.batch import IntegratorSettings, thread_limit

__all__ = ["require_flow", "n_exponents", "dop853_settings", "tangent_states", "TangentRun", "run_tangent",
           "method_record"]


# -- shared helpers ------------------------------------------------------------------
def require_flow(flow, name: str = "flow") -> Flow:
    """Return ``flow`` if it is a flowkit :class:`~flowkit.flows.base.Flow`, else a clear error.

    Tangent and variational equations need the flow's gradient; only flowkit flows
    carry one. A plain Python function ``f(x, y, z, t, p) -> (u, v, w)`` can be
    wrapped with :func:`flowkit.custom_flow`, which differentiates it exactly if it
    can be traced symbolically and by fourth-order finite differences otherwise.
    """
    if isinstance(flow, Flow):
        return flow
    raise FlowkitError(
        f"`{name}` must be a flowkit Flow (from flowkit.flow(...), lamb_flow, surface_flow or custom_flow); "
        f"got {type(flow).__name__}. Lyapunov exponents and FTLE need the velocity gradient: wrap a Python "
        "function with flowkit.custom_flow(func) (exact gradient if it can be traced, finite differences otherwise)."
    )


def n_exponents(flow: Flow) -> int:
    """Number of exponents: 2 for planar flows (the x-y block), 3 otherwise."""
    return 2 if flow.kind == "planar" else 3


def dop853_settings(settings: IntegratorSettings | None) -> IntegratorSettings:
    """Settings for the tangent kernels (adaptive DOP853 only)."""
    settings = settings or IntegratorSettings()
    if not isinstance(settings, IntegratorSettings):
        raise FlowkitError(f"`settings` must be an IntegratorSettings; got {type(settings).__name__}")
    if settings.method != "dop853":
        raise FlowkitError(
            "tangent-space integration uses adaptive DOP853; pass IntegratorSettings(method='dop853', ...) "
            f"instead of method={settings.method!r}"
        )
    return settings


def tangent_states(points: np.ndarray, ncol: int, first: np.ndarray | None = None) -> np.ndarray:
    """States (N, 3 + 3 ncol): positions followed by orthonormal tangent columns.

    The columns are the unit axes, or, if ``first`` is given (a unit vector), that
    single vector (``ncol`` must then be 1).
    """
    N = points.shape[0]
    Y = np.zeros((N, 3 + 3 * ncol))
    Y[:, :3] = points
    if first is not None:
        Y[:, 3:6] = first
    else:
        for c in range(ncol):
            Y[:, 3 + 3 * c + c] = 1.0
    return Y


@dataclass
class TangentRun:
    """Raw output of :func:`run_tangent` (per row and per stretch between checkpoints)."""

    logs: np.ndarray      # (N, m, ncol) sums of log R_cc, NaN for stretches not reached
    div: np.ndarray       # (N, m) integral of div u over each stretch
    outcome: np.ndarray   # (N,) int8 outcome codes
    t_end: np.ndarray     # (N,) time reached
    steps: np.ndarray     # (N,) accepted steps
    seconds: float


def run_tangent(flow: Flow, states: np.ndarray, times: np.ndarray, settings: IntegratorSettings,
                threads: int | None = None, max_steps: int | None = None) -> TangentRun:
    """Run the tangent kernel over checkpoint ``times`` for every row of ``states`` (modified in place).

    ``max_steps`` (default ``settings.max_steps``) bounds the steps of each row in this call.
    """
    N, n = states.shape
    m = len(times) - 1
    ncol = (n - 3) // 3
    logs = np.full((N, m, ncol), np.nan)
    div = np.full((N, m), np.nan)
    outcome = np.zeros(N, dtype=np.int8)
    t_end = np.zeros(N)
    steps = np.zeros(N, dtype=np.int64)
    t0 = _time.perf_counter()
    kernel, params = flow.kernel("tangent_batch")
    with thread_limit(threads), numba.parallel_chunksize(1):
        kernel(
            states, np.ascontiguousarray(times, dtype=np.float64), params, settings.rtol, settings.atol,
            float(settings.max_step), int(settings.max_steps if max_steps is None else max_steps),
            flow.domain == "ball",
            logs, div, outcome, t_end, steps,
        )
    return TangentRun(logs, div, outcome, t_end, steps, _time.perf_counter() - t0)


def method_record(settings: IntegratorSettings, **extra) -> dict:
    """Method settings for a result's provenance."""
    rec = {"integrator": settings.as_dict(), "flowkit_version": __version__,
           "date": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")}
    rec.update(extra)
    return rec
