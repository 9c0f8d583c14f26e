"""Residual checks of a flow: incompressibility, impermeable wall, Stokes equations.

``divergence_max`` uses the compiled exact gradient. ``boundary_normal_max``
(max |u . n| on r = 1) is evaluated on random points of the sphere for flows in
the ball. ``stokes_residual_max`` (max |curl lap u|; zero for Stokes flow, whose
lap u is a pressure gradient) is evaluated from the exact expressions for flows
in the ball; it is ``None`` for other domains, where the Stokes equations are not
the governing equations.
"""

from __future__ import annotations

import numpy as np

from flowkit.flows.base import Flow
from flowkit.flows.custom import sample_points


def check_flow(flow: Flow, n: int = 2000, seed: int = 0) -> dict:
    """Residuals of a flow over ``n`` random points (see module docstring)."""
    rng = np.random.default_rng(seed)
    pts = sample_points(flow, n, rng)
    g = flow.gradient(pts)
    div = np.abs(np.trace(g, axis1=1, axis2=2))
    out = {
        "flow": flow.name,
        "parameters": flow.param_dict,
        "points": int(n),
        "velocity_scale": float(np.abs(flow.velocity(pts)).max()),
        "divergence_max": float(div.max()),
        "boundary_normal_max": None,
        "stokes_residual_max": None,
    }
    if flow.domain == "ball":
        s = rng.normal(size=(n, 3))
        s /= np.linalg.norm(s, axis=1)[:, None]
        un = np.einsum("ij,ij->i", flow.velocity(s), s)
        out["boundary_normal_max"] = float(np.abs(un).max())
        if flow.family.exprs is not None:
            out["stokes_residual_max"] = _stokes_residual(flow, pts)
    return out


def _stokes_residual(flow: Flow, pts: np.ndarray) -> float:
    import sympy as sp

    from flowkit.flows.codegen import T, X, Y, Z
    from flowkit.flows.harmonics import curl, laplacian

    subs = {sp.Symbol(k, real=True): v for k, v in flow.param_dict.items()}
    u = [e.xreplace(subs) for e in flow.family.exprs]
    res = curl([laplacian(c) for c in u])
    fn = sp.lambdify((X, Y, Z, T), list(res), "numpy")
    vals = [np.broadcast_to(np.asarray(v, dtype=float), (len(pts),)) for v in fn(pts[:, 0], pts[:, 1], pts[:, 2], 0.0)]
    return float(np.max(np.sqrt(sum(v**2 for v in vals))))
