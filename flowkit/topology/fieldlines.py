"""Magnetic field lines of a box dynamo mode, as a flow the section / Lyapunov / curve machinery integrates.

The real field B of the mode (its most energetic phase, see
:func:`flowkit.topology.helicity.mode_field`) is written as its exact Fourier sum
over the largest coefficients,

    B(x) = sum_k 2 [Re B_k cos(k . x) - Im B_k sin(k . x)]   (one k of each pair +-k),

truncated at the smallest set of wavevectors carrying ``energy_fraction`` of the
energy (at most ``max_terms``). Each kept term is divergence-free on its own (the
solver keeps k . B_k = 0), so the truncated field is solenoidal exactly. The sum
becomes a :func:`flowkit.custom_flow` on the periodic box with trigonometric
formulas, compiled like any flow, with an exact gradient. Integrating it, "time"
is the field-line parameter (dx/dtau = B).

Ball modes (the sphere dynamo) go to :func:`flowkit.topology.ballfield.ball_field_flow`
(:func:`mode_field_flow` dispatches on the result's domain).
"""

from __future__ import annotations

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.topology.helicity import mode_field


def fourier_terms(B: np.ndarray, energy_fraction: float = 0.99, max_terms: int = 48):
    """The largest Fourier terms of a real periodic field (3, N, N, N) on [0, 2 pi)^3.

    Returns ``(k, cos_coef, sin_coef, fraction)``: integer wavevectors (M, 3), the
    coefficients (M, 3) of cos(k . x) and sin(k . x), and the energy share kept.
    """
    if not 0 < energy_fraction <= 1:
        raise FlowkitError(f"`energy_fraction` must lie in (0, 1]; got {energy_fraction!r}")
    n = B.shape[1]
    F = np.fft.fftn(B, axes=(1, 2, 3)) / n ** 3
    k1 = np.fft.fftfreq(n, 1.0 / n).astype(int)
    K = np.stack(np.meshgrid(k1, k1, k1, indexing="ij"), -1).reshape(-1, 3)
    C = F.reshape(3, -1).T
    # one representative of each pair (k, -k): the first nonzero component positive
    first = np.where(K[:, 0] != 0, K[:, 0], np.where(K[:, 1] != 0, K[:, 1], K[:, 2]))
    half = first > 0
    zero = np.all(K == 0, axis=1)
    nyq = np.any(np.abs(K) == n // 2, axis=1)  # Nyquist planes: no clean pair; left out
    e = np.sum(np.abs(C) ** 2, axis=1)
    total = float(e.sum())
    if total == 0:
        raise FlowkitError("the mode is zero; nothing to trace")
    weight = np.where(half & ~nyq, 2 * e, 0.0)
    weight[zero] = e[zero]
    order = np.argsort(-weight)
    cum = np.cumsum(weight[order]) / total
    m = int(min(np.searchsorted(cum, energy_fraction - 1e-12) + 1, max_terms, np.count_nonzero(weight)))
    idx = order[:m]
    kk, cc = K[idx], C[idx]
    mult = np.where(zero[idx], 1.0, 2.0)[:, None]
    return kk, mult * cc.real, -mult * cc.imag, float(cum[m - 1])


#: Velocity and exact gradient of a Fourier sum whose terms travel in the parameter vector:
#: p[0] = M, then per term k (3), cos coefficients (3), sin coefficients (3). The code does
#: not depend on the mode, so the kernels compile once and come from the disk cache after.
SPECTRAL_CODE = """
@njit(cache=CACHE, error_model="numpy")
def velocity(x, y, z, t, p):
    u = 0.0
    v = 0.0
    w = 0.0
    for j in range(int(p[0])):
        o = 1 + 9 * j
        ph = p[o] * x + p[o + 1] * y + p[o + 2] * z
        c = math.cos(ph)
        s = math.sin(ph)
        u += p[o + 3] * c + p[o + 6] * s
        v += p[o + 4] * c + p[o + 7] * s
        w += p[o + 5] * c + p[o + 8] * s
    return (u, v, w)


@njit(cache=CACHE, error_model="numpy")
def gradient(x, y, z, t, p):
    g0 = g1 = g2 = g3 = g4 = g5 = g6 = g7 = g8 = 0.0
    for j in range(int(p[0])):
        o = 1 + 9 * j
        kx = p[o]
        ky = p[o + 1]
        kz = p[o + 2]
        ph = kx * x + ky * y + kz * z
        c = math.cos(ph)
        s = math.sin(ph)
        d0 = p[o + 6] * c - p[o + 3] * s
        d1 = p[o + 7] * c - p[o + 4] * s
        d2 = p[o + 8] * c - p[o + 5] * s
        g0 += d0 * kx
        g1 += d0 * ky
        g2 += d0 * kz
        g3 += d1 * kx
        g4 += d1 * ky
        g5 += d1 * kz
        g6 += d2 * kx
        g7 += d2 * ky
        g8 += d2 * kz
    return (g0, g1, g2, g3, g4, g5, g6, g7, g8)
"""


def mode_field_flow(result, *, energy_fraction: float = 0.99, max_terms: int = 400, phase: float | None = None,
                    name: str = "dynamo-field"):
    """A flow whose velocity is a dynamo mode's magnetic field B (box: periodic; ball: all of space).

    A ball result (``result.domain == "ball"``) is handed to
    :func:`flowkit.topology.ballfield.ball_field_flow` (``max_terms`` does not apply;
    ``phase`` 0 is the real part of the mode).

    Parameters
    ----------
    result : GrowthResult or (3, N, N, N) array
        A full-box dynamo result with its mode kept (``growth_rate(..., keep_mode=True)``), or a real field.
    energy_fraction : float
        Share of the mode's energy the truncated Fourier sum must keep (stated in the provenance).
    max_terms : int
        Most wavevectors kept (the cost of one evaluation grows with it).
    phase : float, optional
        Phase of the complex mode (default: the most energetic real field).

    Returns
    -------
    Flow
        Compiled spectral sum with its exact gradient; ``flow.family.structure["fourier"]``
        holds the kept wavevectors and the energy fraction. Its kernels are compiled once
        for every mode (the coefficients are parameters).
    """
    from flowkit.flows.base import Flow, FlowFamily

    if getattr(result, "domain", "box") == "ball":
        from flowkit.topology.ballfield import ball_field_flow

        return ball_field_flow(result, energy_fraction=energy_fraction, phase=phase or 0.0)
    B = result if isinstance(result, np.ndarray) else mode_field(result, phase)
    k, a, b, frac = fourier_terms(np.asarray(B, dtype=np.float64), energy_fraction, max_terms)
    p = np.concatenate([[float(len(k))], np.hstack([k.astype(float), a, b]).ravel()])
    names = ("terms",) + tuple(f"c{i}" for i in range(len(p) - 1))
    fam = FlowFamily(name=name, formula=(f"Fourier sum of {len(k)} wavevectors of a dynamo mode "
                                         f"({100 * frac:.1f}% of its energy)",),
                     param_names=names, defaults=tuple(float(v) for v in p), domain="periodic",
                     code=SPECTRAL_CODE, gradient_method="exact (differentiated Fourier sum)",
                     structure={"fourier": {"wavevectors": k.tolist(), "terms": int(len(k)), "energy_fraction": frac,
                                            "rm": getattr(result, "rm", None)}},
                     description="magnetic field of a box dynamo mode (field lines: dx/dtau = B)")
    return Flow(fam)
