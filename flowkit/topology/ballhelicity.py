"""Relative magnetic helicity of a ball dynamo mode with its potential-field exterior.

Inside the unit ball ``B = curl(T x) + curl curl(S x)``; outside, the insulator
carries the potential field ``T = 0``, ``S = S(1) r^-(l+1)`` (see
:mod:`flowkit.dynamo.sphere.fieldeval`). The field is then defined in all of space
and decays like ``r^-3`` at least, so ``H = int_{R^3} A . B dV`` does not depend on
the gauge (``int grad(chi) . B dV`` is a surface term at infinity that vanishes).
It equals the relative helicity of ``B`` in the ball with respect to the
potential field of the same ``B . n`` on ``r = 1`` (the definition of J. Fluid
Mech. 147, 1984, 133, cited from memory): that helicity is the whole-space
helicity of ``B`` continued by its exterior, minus that of the potential
reference continued by the same exterior, and the latter vanishes (below, it has
``T = 0`` everywhere).

Derivation (ours). ``A = T x + curl(S x)`` has ``curl A = B``. Per harmonic,
with ``Psi = r grad Y``, ``Phi = r-hat x Psi`` (``|Psi|^2, |Phi|^2`` integrate to
``l(l+1)`` over the unit sphere, and ``Y r-hat, Psi, Phi`` are orthogonal):
``curl(T x) = -T Phi``, ``curl(S x) = -S Phi``, ``x . curl curl(S x) = l(l+1) S``.
So ``A . B`` integrates over each sphere to ``l(l+1) T S`` (from ``T x . B_pol``)
plus ``l(l+1) T S`` (from ``S Phi . T Phi``), the other products vanish
(``x . Phi = 0`` and ``Phi . B_pol = 0``), and for a real field with complex
coefficients ``f_lm`` (``f_l,-m = conj f_lm``)

    H = 2 sum_lm l(l+1) int_0^1 Re(T_lm conj S_lm) r^2 dr      (nothing from r > 1: T = 0 there).

The energies: ``int_{r<1} |B|^2 = sum int_0^1 (|l(l+1) S / r|^2 + l(l+1) (|S' + S/r|^2 + |T|^2)) r^2 dr``
and ``int_{r>1} |B|^2 = sum l^2 (l+1) |S_lm(1)|^2`` (the exterior integral of
``S(1)^2 r^(-2l-4) l^2 (l+1) (2l+1)``). Radial integrals by Gauss-Legendre, exact
for the interpolants' products. The check in ``tests/test_topology.py`` integrates
``A . B`` of a closed-form field in Cartesian coordinates instead.
"""

from __future__ import annotations

import numpy as np

from flowkit.errors import FlowkitError


def _real_field_series(result, phase: float):
    """Chebyshev series of the real field's complex coefficients per (m, l): dict m -> (T, S, S') (L+1, K)."""
    from flowkit.dynamo.sphere.fieldeval import radial_series

    tc, sc, dc, ms = radial_series(result, phase)
    rows = {int(m): i for i, m in enumerate(ms)}
    out = {}
    for m in sorted(set(rows) | {-m for m in rows}):
        parts = []
        for c in (tc, sc, dc):
            a = c[rows[m]] if m in rows else 0.0
            b = np.conj(c[rows[-m]]) if -m in rows else 0.0
            parts.append(0.5 * (a + b) + np.zeros(c.shape[1:], complex))  # Re(z) = (z + conj z) / 2 per harmonic
        out[m] = parts
    return out


def ball_helicity(result, *, phase: float = 0.0):
    """Relative magnetic helicity of a ball mode's real field (potential field outside r = 1).

    Parameters
    ----------
    result : GrowthResult
        A ball-flow result with its mode kept.
    phase : float
        The real field ``Re[exp(-i phase) mode]`` (0: the real part).

    Returns
    -------
    Helicity
        ``quantity="relative magnetic"``; ``energy`` is ``int |B|^2`` over all space
        (inside and outside parts in ``notes``), so ``relative`` is helicity / energy.
    """
    from flowkit.topology.results import Helicity

    if getattr(result, "domain", "box") != "ball" or getattr(result, "mode", None) is None:
        raise FlowkitError("`result` must be a ball dynamo result with its mode kept (keep_mode=True)")
    series = _real_field_series(result, phase)
    K = next(iter(series.values()))[0].shape[-1]
    x, w = np.polynomial.legendre.leggauss(K + 4)
    r, w = 0.5 * (x + 1), 0.5 * w
    V = np.polynomial.chebyshev.chebvander(r, K - 1)
    one = np.polynomial.chebyshev.chebvander(np.array([1.0]), K - 1)[0]
    H = E_in = E_out = 0.0
    for T, S, dS in series.values():
        t, s, ds = T @ V.T, S @ V.T, dS @ V.T  # (L+1, nodes)
        l = np.arange(T.shape[0])[:, None]
        ll = l * (l + 1)
        H += float(np.sum(2 * ll * np.real(t * np.conj(s)) * r ** 2 * w))
        E_in += float(np.sum((np.abs(ll * s / r) ** 2 + ll * (np.abs(ds + s / r) ** 2 + np.abs(t) ** 2)) * r ** 2 * w))
        E_out += float(np.sum(l[:, 0] ** 2 * (l[:, 0] + 1) * np.abs(S @ one) ** 2))
    prov = dict(getattr(result, "provenance", None) or {})
    prov.update({"resolution": list(getattr(result, "resolution", [])), "rm": getattr(result, "rm", None),
                 "phase": float(phase)})
    return Helicity(quantity="relative magnetic", value=H, error=0.0, energy=E_in + E_out, volume=4 * np.pi / 3,
                    method="toroidal-poloidal sum, H = 2 sum l(l+1) int T S r^2 dr (potential exterior)",
                    exact="", notes=[f"energy inside the ball {E_in:.6g}, outside {E_out:.6g}"], provenance=prov)
