"""Low-dimensional ODE systems and planar flows kept to validate the analysis tools."""

from __future__ import annotations

import math

import sympy as sp

from flowkit.flows.base import FlowFamily
from flowkit.flows.codegen import T, X, Y, Z
from flowkit.flows.formulas import family_from_exprs


def lorenz_family() -> FlowFamily:
    """Lorenz system dx/dt = sigma (y - x), dy/dt = x (rho - z) - y, dz/dt = x y - beta z."""
    s, r, b = sp.symbols("sigma rho beta", real=True)
    return family_from_exprs(
        "lorenz",
        (s * (Y - X), X * (r - Z) - Y, X * Y - b * Z),
        [("sigma", 10.0), ("rho", 28.0), ("beta", 8.0 / 3.0)],
        "unbounded",
        kind="system",
        description="Lorenz system (J. Atmos. Sci. 20, 1963); mean divergence -(sigma + 1 + beta).",
    )


def rossler_family() -> FlowFamily:
    """Rossler system dx/dt = -y - z, dy/dt = x + a y, dz/dt = b + z (x - c)."""
    a, b, c = sp.symbols("a b c", real=True)
    return family_from_exprs(
        "rossler",
        (-Y - Z, X + a * Y, b + Z * (X - c)),
        [("a", 0.2), ("b", 0.2), ("c", 5.7)],
        "unbounded",
        kind="system",
        description="Rossler system (Phys. Lett. A 57, 1976).",
    )


def double_gyre_family() -> FlowFamily:
    """Time-periodic double gyre on [0, 2] x [0, 1] (Physica D 212, 2005).

    psi = A sin(pi f(x, t)) sin(pi y), f = eps sin(w t) x^2 + (1 - 2 eps sin(w t)) x,
    u = -d psi/dy, v = d psi/dx, w = 0.
    """
    A, eps, om = sp.symbols("A epsilon omega", real=True)
    f = eps * sp.sin(om * T) * X**2 + (1 - 2 * eps * sp.sin(om * T)) * X
    psi = A * sp.sin(sp.pi * f) * sp.sin(sp.pi * Y)
    return family_from_exprs(
        "double-gyre",
        (-sp.diff(psi, Y), sp.diff(psi, X), sp.Integer(0) * Z),
        [("A", 0.1), ("epsilon", 0.25), ("omega", 2 * math.pi / 10)],
        "unbounded",
        kind="planar",
        period=lambda p: 2 * math.pi / abs(p["omega"]),
        period_expr="2*pi/|omega|",
        description="Planar time-periodic double gyre on [0,2]x[0,1] (Physica D 212, 2005), w = 0.",
    )
