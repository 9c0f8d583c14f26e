"""A ball mode's magnetic field anywhere in space: inside from its scalars, outside its potential field.

Inside ``r <= 1`` the field is ``B = curl(T x) + curl curl(S x)`` with ``T, S`` the
mode's toroidal and poloidal scalars, each ``sum_lm f_lm(r) Y_lm`` (orthonormal
``Y_lm``, see :mod:`~flowkit.dynamo.sphere.harmonics`), ``f_lm`` the parity-extended
Chebyshev interpolant of the node values (the solver's own representation, see
:mod:`~flowkit.dynamo.sphere.basis`). Per harmonic,

    B = l(l+1) S / r  Y r-hat  +  (S' + S / r) Psi  -  T Phi,    Psi = r grad Y, Phi = r-hat x Psi.

Outside, the insulator carries no current: ``T = 0`` and ``S = S(1) r^-(l+1)``,
harmonic, so ``B = grad d(r S)/dr`` is a decaying potential field. The solver's
condition ``S'(1) + (l+1) S(1) = 0`` makes ``S`` and ``S'`` continuous at ``r = 1``,
hence all three components of ``B``. :func:`radial_series` gives the Chebyshev
coefficients a compiled evaluator needs (:mod:`flowkit.topology.ballfield`).
"""

from __future__ import annotations

import numpy as np

from flowkit.dynamo.sphere.basis import RadialBasis
from flowkit.dynamo.sphere.harmonics import normalized_legendre
from flowkit.errors import FlowkitError


def _coefficients(result, phase: float):
    """Complex scalars ``T, S`` at the nodes (M, L+1, N) rotated by ``exp(-i phase)``, and the orders."""
    mode = getattr(result, "mode", None)
    if mode is None or getattr(result, "domain", "box") != "ball":
        raise FlowkitError("`mode` must be a ball dynamo result with its mode kept "
                           "(flowkit.growth_rate(ball_flow, ..., keep_mode=True))")
    c = (np.asarray(mode[0]) + 1j * np.asarray(mode[1])) * np.exp(-1j * float(phase))
    return c[0], c[1], np.asarray(result.orders, dtype=int)


def radial_series(result, phase: float = 0.0):
    """Chebyshev coefficients on ``[-1, 1]`` of ``T``, ``S`` and ``S'`` per (order, degree).

    Returns ``(T, S, dS, orders)``; the first three complex, shape ``(M, L+1, 2N)``
    (``T, S`` of parity ``(-1)^l``, ``S'`` of the opposite parity).
    """
    T, S, orders = _coefficients(result, phase)
    lmax, n = T.shape[1] - 1, T.shape[2]
    basis = RadialBasis(n, lmax)
    tc = np.zeros(T.shape[:2] + (2 * n,), complex)
    sc, dc = np.zeros_like(tc), np.zeros_like(tc)
    for l in range(lmax + 1):
        tc[:, l] = basis.chebyshev_coefficients(T[:, l], l)
        sc[:, l] = basis.chebyshev_coefficients(S[:, l], l)
        d = np.polynomial.chebyshev.chebder(sc[:, l], axis=-1)
        dc[:, l, : d.shape[-1]] = d
    return tc, sc, dc, orders


def _radial_values(tc, sc, dc, r):
    """``T, S, S'`` per (order, degree) at radii ``r`` (M, L+1, n): interpolants inside, potential outside."""
    inside = r <= 1.0
    ri = np.where(inside, r, 1.0)
    cheb = np.polynomial.chebyshev.chebvander(ri, tc.shape[-1] - 1)  # (n, 2N)
    T, S, dS = (np.einsum("mlk,nk->mln", c, cheb) for c in (tc, sc, dc))
    if np.any(~inside):
        s1 = np.einsum("mlk,k->ml", sc, np.polynomial.chebyshev.chebvander(np.array([1.0]), tc.shape[-1] - 1)[0])
        ls = np.arange(tc.shape[1])[None, :, None]
        ro = np.where(inside, 1.0, r)[None, None, :]
        out = ~inside
        T[..., out] = 0.0
        S[..., out] = (s1[..., None] * ro ** -(ls + 1))[..., out]
        dS[..., out] = (-(ls + 1) * s1[..., None] * ro ** -(ls + 2))[..., out]
    return T, S, dS


def evaluate_field(mode, points, *, phase: float = 0.0) -> np.ndarray:
    """Cartesian magnetic field ``B`` (``(n, 3)``) of a ball mode at ``points`` anywhere in space.

    Parameters
    ----------
    mode : GrowthResult
        A ball-flow result with its mode (``mode[part, T/S, order, degree, node]``, ``orders``).
    points : (n, 3) array
        Inside the unit ball the mode's own field; outside its potential-field continuation.
    phase : float
        The real field ``Re[exp(-i phase) sum c_lm(r) Y_lm]`` of the complex mode
        (0: the real part, pi/2: the imaginary part).

    Returns
    -------
    ndarray
        ``(n, 3)``; points on the polar axis or at the centre are nudged by 1e-12
        (the spherical frames are singular there, the field is not).
    """
    tc, sc, dc, ms = radial_series(mode, phase)
    pts = np.atleast_2d(np.asarray(points, dtype=float))
    if pts.ndim != 2 or pts.shape[1] != 3 or not np.all(np.isfinite(pts)):
        raise FlowkitError("`points` must be a finite (n, 3) array")
    r = np.maximum(np.linalg.norm(pts, axis=1), 1e-12)
    ct = np.clip(pts[:, 2] / r, -1 + 1e-12, 1 - 1e-12)
    st = np.sqrt(1 - ct ** 2)
    phi = np.arctan2(pts[:, 1], pts[:, 0])
    T, S, dS = _radial_values(tc, sc, dc, r)
    lmax = T.shape[1] - 1
    ls = np.arange(lmax + 1)
    pall = normalized_legendre(lmax, ct)
    P = np.stack([pall[abs(m)] for m in ms])  # (M, L+1, n)
    prev = np.zeros_like(P)
    prev[:, 1:] = P[:, :-1]
    am = np.abs(ms)[:, None]
    c = np.sqrt(np.maximum(0.0, (2 * ls + 1) / np.maximum(2 * ls - 1, 1) * (ls ** 2 - am ** 2)))[..., None]
    dP = (ls[None, :, None] * ct * P - c * prev) / st  # d Pbar / d theta
    Q = ms[:, None, None] * P / st  # m Pbar / sin(theta)
    e = np.exp(1j * ms[:, None] * phi[None, :])[:, None, :]
    br = (ls * (ls + 1))[None, :, None] * S / r
    bs = dS + S / r
    bt = -T
    Br = np.sum(br * P * e, axis=(0, 1)).real
    Bt = np.sum((bs * dP - 1j * bt * Q) * e, axis=(0, 1)).real
    Bp = np.sum((1j * bs * Q + bt * dP) * e, axis=(0, 1)).real
    cp, sp = np.cos(phi), np.sin(phi)
    return np.stack([Br * st * cp + Bt * ct * cp - Bp * sp,
                     Br * st * sp + Bt * ct * sp + Bp * cp,
                     Br * ct - Bt * st], axis=1)


def harmonic_energies(mode, phase: float = 0.0, nodes: int = 64) -> np.ndarray:
    """Magnetic energy ``int |B|^2 dV`` inside the ball carried by each (order, degree), shape (M, L+1).

    Orthonormality of ``Y r-hat, Psi, Phi`` over the sphere (``|Psi|^2, |Phi|^2``
    integrate to ``l(l+1)``; common practice, no source) gives
    ``int_0^1 (|l(l+1) S / r|^2 + l(l+1) (|S' + S/r|^2 + |T|^2)) r^2 dr`` per harmonic
    for the complex mode; Gauss-Legendre in ``r`` (exact for the polynomial part).
    """
    tc, sc, dc, _ = radial_series(mode, phase)
    x, w = np.polynomial.legendre.leggauss(nodes)
    r, w = 0.5 * (x + 1), 0.5 * w
    T, S, dS = _radial_values(tc, sc, dc, r)
    l = np.arange(T.shape[1])[None, :, None]
    dens = np.abs(l * (l + 1) * S / r) ** 2 + l * (l + 1) * (np.abs(dS + S / r) ** 2 + np.abs(T) ** 2)
    return np.sum(dens * r ** 2 * w, axis=-1)
