"""The flow type: compiled velocity and gradient, a parameter vector, a domain.

A :class:`FlowFamily` holds what is compiled (the formula, its generated code and
kernels); a :class:`Flow` is a family plus a float64 parameter vector. Changing a
parameter makes a new :class:`Flow` of the same family and never recompiles.
"""

from __future__ import annotations

import datetime
import math
import time
from dataclasses import dataclass, field
from types import ModuleType
from typing import Callable, Mapping

import numpy as np

from flowkit._version import __version__
from flowkit.errors import FlowkitError

#: Domains a flow can live in.
DOMAINS = {
    "ball": "the unit ball r <= 1 (orbits that reach r > 1 have left the domain)",
    "periodic": "the 2*pi-periodic box (integrated unwrapped, wrapped only for display)",
    "unbounded": "all of R^3",
}


@dataclass(eq=False)
class FlowFamily:
    """Everything about a flow that is fixed at compile time.

    Parameters
    ----------
    name : str
        Registry or user name.
    formula : tuple of str
        Human-readable velocity components (u, v, w).
    param_names, defaults : tuple
        Parameter names and default values, in parameter-vector order.
    domain : str
        One of :data:`DOMAINS`.
    code : str
        Generated source defining jitted ``velocity`` and ``gradient``.
    period : callable, optional
        ``period(params) -> float`` for time-periodic flows; ``None`` if steady.
    kind : str
        ``"flow"`` for a velocity field in physical space, ``"system"`` for an
        ODE system kept for validation (Lorenz, Rossler), ``"planar"`` for a
        flow in the (x, y) plane with w = 0.
    gradient_method : str
        How the gradient is obtained: ``"exact (symbolic)"`` or a description of
        the finite-difference rule used for user callables.
    structure : dict
        Extra exact representation (e.g. Lamb harmonic coefficients) for provenance.
    exprs : tuple, optional
        The sympy expressions of (u, v, w), when known.
    inject : dict, optional
        Objects the generated code needs that have no source (user callables).
    """

    name: str
    formula: tuple
    param_names: tuple
    defaults: tuple
    domain: str
    code: str
    period: Callable[[np.ndarray], float] | None = None
    kind: str = "flow"
    gradient_method: str = "exact (symbolic)"
    structure: dict = field(default_factory=dict)
    exprs: tuple | None = None
    inject: dict | None = None
    description: str = ""
    _module: ModuleType | None = field(default=None, repr=False)
    compile_seconds: float = 0.0

    @property
    def kernels(self) -> ModuleType:
        """The compiled kernel module of this family (built on first use)."""
        if self._module is None:
            from flowkit.kernels import build_module

            self._module = build_module(self.name, self.code, self.inject)
        return self._module

    def warm(self) -> float:
        """Compile the velocity and gradient kernels now; return seconds spent."""
        t0 = time.perf_counter()
        pts = np.zeros((1, 3))
        p = np.asarray(self.defaults, dtype=np.float64)
        self.kernels.velocity_many(pts, 0.0, p, np.empty((1, 3)))
        self.kernels.gradient_many(pts, 0.0, p, np.empty((1, 3, 3)))
        dt = time.perf_counter() - t0
        self.compile_seconds += dt
        return dt


def _as_points(points, name: str = "points") -> np.ndarray:
    arr = np.asarray(points, dtype=np.float64)
    if arr.ndim == 1 and arr.shape[0] == 3:
        arr = arr[None, :]
    if arr.ndim != 2 or arr.shape[1] != 3:
        raise FlowkitError(
            f"`{name}` must have shape (N, 3) (one x, y, z row per point); got shape {np.shape(points)}"
        )
    if not np.all(np.isfinite(arr)):
        raise FlowkitError(f"`{name}` contains NaN or infinite values; pass finite coordinates")
    return np.ascontiguousarray(arr)


class Flow:
    """A flow family with concrete parameter values.

    Use :func:`flowkit.flow` to get one. ``flow.velocity(points, t)`` and
    ``flow.gradient(points, t)`` evaluate the compiled field; ``flow.params`` is
    the float64 vector handed to every kernel.
    """

    def __init__(self, family: FlowFamily, params: Mapping[str, float] | None = None):
        self.family = family
        values = dict(zip(family.param_names, family.defaults))
        for key, val in (params or {}).items():
            if key not in values:
                known = ", ".join(family.param_names) or "(none)"
                raise FlowkitError(
                    f"flow '{family.name}' has no parameter '{key}'; its parameters are: {known}"
                )
            try:
                val = float(val)
            except (TypeError, ValueError):
                raise FlowkitError(f"parameter '{key}' must be a number; got {val!r}") from None
            if not math.isfinite(val):
                raise FlowkitError(f"parameter '{key}' must be finite; got {val}")
            values[key] = val
        self.params = np.array([values[k] for k in family.param_names], dtype=np.float64)
        if self.params.size == 0:  # numba needs a typed array even when empty
            self.params = np.zeros(1, dtype=np.float64)

    # -- identity -----------------------------------------------------------
    @property
    def name(self) -> str:
        return self.family.name

    @property
    def domain(self) -> str:
        return self.family.domain

    @property
    def kind(self) -> str:
        return self.family.kind

    @property
    def kernels(self) -> ModuleType:
        return self.family.kernels

    def kernel(self, name: str) -> tuple:
        """``(kernel, params)``: the compiled kernel ``name`` to run and the parameter vector to pass.

        The family's own kernel with :attr:`params`, or the generic one while that is not
        ready when ``FLOWKIT_GENERIC_KERNELS=only`` (:func:`flowkit.kernels.generic.kernel_for`).
        """
        from flowkit.kernels.generic import kernel_for

        return kernel_for(self, name)

    @property
    def param_dict(self) -> dict[str, float]:
        return {k: float(v) for k, v in zip(self.family.param_names, self.params)}

    @property
    def period(self) -> float | None:
        """Time period for time-periodic flows, ``None`` for steady ones."""
        if self.family.period is None:
            return None
        return float(self.family.period(self.param_dict))

    @property
    def steady(self) -> bool:
        return self.family.period is None

    def with_params(self, **params: float) -> "Flow":
        """A flow of the same family (no recompilation) with some parameters changed."""
        merged = self.param_dict
        merged.update(params)
        return Flow(self.family, merged)

    # -- evaluation ------------------------------------------------------------
    def velocity(self, points, t: float = 0.0) -> np.ndarray:
        """Velocity at ``points`` (N, 3) and time ``t``; returns (N, 3)."""
        pts = _as_points(points)
        out = np.empty_like(pts)
        self.kernels.velocity_many(pts, float(t), self.params, out)
        return out

    def gradient(self, points, t: float = 0.0) -> np.ndarray:
        """Velocity gradient ``G[n, i, j] = du_i/dx_j`` at ``points``; returns (N, 3, 3)."""
        pts = _as_points(points)
        out = np.empty((pts.shape[0], 3, 3))
        self.kernels.gradient_many(pts, float(t), self.params, out)
        return out

    def contains(self, points) -> np.ndarray:
        """Boolean mask: which points lie inside the flow's domain."""
        pts = np.atleast_2d(np.asarray(points, dtype=np.float64))
        if self.domain == "ball":
            return np.einsum("ij,ij->i", pts, pts) <= 1.0 + 1e-12
        return np.all(np.isfinite(pts), axis=1)

    # -- provenance ------------------------------------------------------------
    def provenance(self) -> dict:
        """JSON-ready description sufficient to rebuild this flow."""
        return {
            "flow": self.name,
            "formula": list(self.family.formula),
            "parameters": self.param_dict,
            "domain": self.domain,
            "period": self.period,
            "kind": self.kind,
            "gradient": self.family.gradient_method,
            "structure": self.family.structure,
            "flowkit_version": __version__,
            "created": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds"),
        }

    def __repr__(self) -> str:
        pars = ", ".join(f"{k}={v:g}" for k, v in self.param_dict.items())
        return f"Flow({self.name!r}{', ' if pars else ''}{pars})"

    def __reduce__(self):
        # Pickle by recipe (registry name or spec), so dask workers rebuild and warm
        # their own kernels instead of shipping compiled code.
        from flowkit.flows.registry import rebuild_flow

        return (rebuild_flow, (self.family.structure.get("recipe", {"preset": self.name}), self.param_dict))
