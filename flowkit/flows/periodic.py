"""Classic 2*pi-periodic flows used in fast-dynamo and chaotic-advection studies."""

from __future__ import annotations

import math

import sympy as sp

from flowkit.flows.base import FlowFamily
from flowkit.flows.codegen import T, X, Y, Z
from flowkit.flows.formulas import family_from_exprs

S = sp.sin
C = sp.cos


def abc_family() -> FlowFamily:
    """Arnold-Beltrami-Childress flow; a Beltrami field (curl u = u) for any A, B, C."""
    A, B, Cc = sp.symbols("A B C", real=True)
    return family_from_exprs(
        "abc",
        (A * S(Z) + Cc * C(Y), B * S(X) + A * C(Z), Cc * S(Y) + B * C(X)),
        [("A", 1.0), ("B", 1.0), ("C", 1.0)],
        "periodic",
        description="ABC flow u = (A sin z + C cos y, B sin x + A cos z, C sin y + B cos x) in the 2*pi box.",
    )


def roberts_family() -> FlowFamily:
    """Roberts flow: the z-independent Beltrami cell flow (the ABC flow with A = 0)."""
    B, Cc = sp.symbols("B C", real=True)
    return family_from_exprs(
        "roberts",
        (Cc * C(Y), B * S(X), Cc * S(Y) + B * C(X)),
        [("B", 1.0), ("C", 1.0)],
        "periodic",
        description="Roberts cell flow u = (C cos y, B sin x, C sin y + B cos x), "
        "independent of z (Phil. Trans. R. Soc. A 271, 1972); the ABC flow with A = 0.",
    )


def circular_family() -> FlowFamily:
    """Circularly polarized time-periodic flow (Nature 356, 1992).

    psi = sqrt(3/2) [cos(x + eps cos(omega t)) + sin(y + eps sin(omega t))],
    u = (d psi/dy, -d psi/dx, psi).
    """
    eps, om = sp.symbols("epsilon omega", real=True)
    a = sp.sqrt(sp.Rational(3, 2))
    psi = a * (C(X + eps * C(om * T)) + S(Y + eps * S(om * T)))
    exprs = (sp.diff(psi, Y), -sp.diff(psi, X), psi)
    return family_from_exprs(
        "circular",
        exprs,
        [("epsilon", 1.0), ("omega", 1.0)],
        "periodic",
        period=lambda p: 2 * math.pi / abs(p["omega"]),
        period_expr="2*pi/|omega|",
        description="Circularly polarized time-periodic fast-dynamo flow (Nature 356, 1992): "
        "u = (dpsi/dy, -dpsi/dx, psi), psi = sqrt(3/2)[cos(x + eps cos wt) + sin(y + eps sin wt)].",
    )
