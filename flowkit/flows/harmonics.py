"""Real solid harmonics as exact polynomials (sympy).

``solid_harmonic(n, m)`` is r^n P_n^|m|(cos theta) cos(m phi) for m >= 0 and
r^n P_n^|m|(cos theta) sin(|m| phi) for m < 0, without the Condon-Shortley phase
and without normalisation, written as a homogeneous polynomial of degree n in
x, y, z. Labels: ``"0"``, ``"c<m>"`` (cosine type), ``"s<m>"`` (sine type).
"""

from __future__ import annotations

from functools import lru_cache

import sympy as sp

from flowkit.flows.codegen import X, Y, Z


def order_label(m: int) -> str:
    """Label of order ``m``: '0', 'c<m>' for m > 0, 's<|m|>' for m < 0."""
    return "0" if m == 0 else (f"c{m}" if m > 0 else f"s{-m}")


def parse_order(label: str) -> int:
    """Inverse of :func:`order_label`."""
    if label == "0":
        return 0
    if len(label) > 1 and label[0] in "cs" and label[1:].isdigit() and int(label[1:]) > 0:
        m = int(label[1:])
        return m if label[0] == "c" else -m
    raise ValueError(f"order label must be '0', 'c<m>' or 's<m>' with m >= 1; got {label!r}")


@lru_cache(maxsize=None)
def solid_harmonic(n: int, m: int) -> sp.Expr:
    """Real regular solid harmonic of degree ``n`` and order ``m`` (|m| <= n)."""
    if n < 0 or abs(m) > n:
        raise ValueError(f"need 0 <= |m| <= n; got n={n}, m={m}")
    am = abs(m)
    tt = sp.Symbol("tt")
    dp = sp.Poly(sp.diff(sp.legendre(n, tt), tt, am), tt)
    r2 = X**2 + Y**2 + Z**2
    radial = 0
    for (k,), coef in dp.terms():
        radial += coef * Z**k * r2 ** ((n - am - k) // 2)
    ang = sp.expand((X + sp.I * Y) ** am)
    ang = sp.re(ang) if m >= 0 else sp.im(ang)
    return sp.expand(ang * radial)


def grad(f: sp.Expr) -> tuple:
    return tuple(sp.diff(f, c) for c in (X, Y, Z))


def cross(a, b) -> tuple:
    return (
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    )


def curl(u) -> tuple:
    return (
        sp.diff(u[2], Y) - sp.diff(u[1], Z),
        sp.diff(u[0], Z) - sp.diff(u[2], X),
        sp.diff(u[1], X) - sp.diff(u[0], Y),
    )


def laplacian(f: sp.Expr) -> sp.Expr:
    return sum(sp.diff(f, c, 2) for c in (X, Y, Z))


def divergence(u) -> sp.Expr:
    return sp.diff(u[0], X) + sp.diff(u[1], Y) + sp.diff(u[2], Z)
