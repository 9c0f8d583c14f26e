"""The magnetic field of a ball mode at any point, and its meridional and equatorial slices.

A :class:`~flowkit.dynamo.results.GrowthResult` of a ball flow stores the
toroidal and poloidal scalars at the radial nodes (``mode[part, T/S, order,
degree, node]``). Between nodes each scalar is its parity-extended Chebyshev
interpolant (the basis itself), so the field is evaluated exactly as the solver
represents it: ``B = l(l+1) S/r Y r-hat + (S' + S/r) Psi - T Phi``.
"""

from __future__ import annotations

import numpy as np

from flowkit.dynamo.sphere.basis import RadialBasis
from flowkit.dynamo.sphere.harmonics import normalized_legendre
from flowkit.errors import FlowkitError


def _scalars_at(result, r: np.ndarray, part: str):
    mode = result.mode
    c = mode[0] + 1j * mode[1]  # (2, M, L+1, N)
    lmax, n = c.shape[2] - 1, c.shape[3]
    b = RadialBasis(n, lmax)
    T, S = c[0], c[1]
    dS = np.einsum("lij,mlj->mli", b.d1, S)
    x = np.asarray(r, dtype=float)
    out = []
    for f in (T, S, dS):
        vals = np.zeros(f.shape[:2] + x.shape, complex)
        for l in range(lmax + 1):
            parity = l if f is not dS else l + 1
            coef = b.chebyshev_coefficients(f[:, l, :], parity)  # (M, 2N)
            vals[:, l] = np.polynomial.chebyshev.chebval(x, coef.T)
        out.append(vals)
    return out  # T, S, S' each (M, L+1, npts)


def mode_field(result, points, part: str = "real") -> np.ndarray:
    """Cartesian ``B`` (``(n, 3)``) of a ball result's mode at ``points`` inside the unit ball.

    ``part="real"`` or ``"imag"`` of ``(mode[0] + i mode[1])`` (the complex field
    ``sum c_lm Y_lm`` of the complexified operator; a physical field is its real part).
    """
    if result.mode is None or getattr(result, "domain", "box") != "ball":
        raise FlowkitError("this result has no ball mode; compute it for a ball flow with keep_mode=True")
    if part not in ("real", "imag"):
        raise FlowkitError(f"`part` must be 'real' or 'imag'; got {part!r}")
    pts = np.atleast_2d(np.asarray(points, dtype=float))
    r = np.linalg.norm(pts, axis=1)
    if np.any(r > 1 + 1e-12):
        raise FlowkitError("`points` must lie in the unit ball (r <= 1)")
    r = np.maximum(r, 1e-9)
    ct = np.clip(pts[:, 2] / r, -1 + 1e-12, 1 - 1e-12)
    st = np.sqrt(1 - ct**2)
    phi = np.arctan2(pts[:, 1], pts[:, 0])
    T, S, dS = _scalars_at(result, r, part)
    lmax = T.shape[1] - 1
    ms = np.asarray(result.orders)
    ls = np.arange(lmax + 1)
    pall = normalized_legendre(lmax, ct)  # [|m|, l, pts]
    P = np.stack([pall[abs(m)] for m in ms])
    prev = np.zeros_like(P)
    prev[:, 1:] = P[:, :-1]
    am = np.abs(ms)[:, None]
    c = np.sqrt(np.maximum(0.0, (2 * ls + 1) / np.maximum(2 * ls - 1, 1) * (ls**2 - am**2)))[..., None]
    dP = (ls[None, :, None] * ct * P - c * prev) / st
    Q = ms[:, None, None] * P / st
    e = np.exp(1j * ms[:, None] * phi[None, :])[:, None, :]
    br = (ls * (ls + 1))[None, :, None] * S / r
    bs = dS + S / r
    bt = -T
    Br = np.sum(br * P * e, axis=(0, 1))
    Bt = np.sum((bs * dP - 1j * bt * Q) * e, axis=(0, 1))
    Bp = np.sum((1j * bs * Q + bt * dP) * e, axis=(0, 1))
    cp, sp = np.cos(phi), np.sin(phi)
    cart = np.stack([Br * st * cp + Bt * ct * cp - Bp * sp,
                     Br * st * sp + Bt * ct * sp + Bp * cp,
                     Br * ct - Bt * st], axis=1)
    return cart.real if part == "real" else cart.imag


def ball_slice(result, plane: str = "meridional", part: str = "real", resolution: int = 64):
    """``(h, v, B_h, B_v, |B|, labels)`` on the meridional ``y = 0`` or equatorial ``z = 0`` disk.

    Arrays are indexed ``[v, h]``; points outside ``r <= 1`` are NaN. ``|B|`` includes
    the out-of-plane component.
    """
    if plane not in ("meridional", "equatorial"):
        raise FlowkitError(f"`plane` must be 'meridional' or 'equatorial'; got {plane!r}")
    s = (np.arange(resolution) + 0.5) / resolution * 2 - 1  # cell centres: never on the axis or the centre
    hh, vv = np.meshgrid(s, s)
    inside = hh**2 + vv**2 <= 1.0
    if plane == "meridional":
        pts = np.stack([hh, np.zeros_like(hh), vv], axis=-1)
        ih, iv, labels = 0, 2, ("x", "z")
    else:
        pts = np.stack([hh, vv, np.zeros_like(hh)], axis=-1)
        ih, iv, labels = 0, 1, ("x", "y")
    B = np.full(pts.shape, np.nan)
    B[inside] = mode_field(result, pts[inside], part)
    mag = np.sqrt(np.sum(B**2, axis=-1))
    return s, s, B[..., ih], B[..., iv], mag, labels
