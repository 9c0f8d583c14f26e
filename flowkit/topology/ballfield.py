"""Magnetic field lines of a ball (sphere-dynamo) mode, as a flow on all of space.

The mode's field (:func:`flowkit.dynamo.sphere.fieldeval.evaluate_field`: the
solver's own Chebyshev x spherical-harmonic representation inside ``r <= 1``, its
potential field outside) is compiled once for every mode: the radial Chebyshev
coefficients of each kept harmonic travel in the parameter vector, and the
kernel sums the harmonics with the Legendre and Chebyshev recurrences.

The gradient is the complex-step derivative of the same code (one evaluation
per coordinate at ``x + i h e_j``, ``h = 1e-30``; "Using complex variables to
estimate derivatives of real functions", SIAM Review 40, 1998, 110, cited from
memory): no subtraction, so it is exact to round-off, and it needs no second,
hand-differentiated formula. Only the real part of the radius decides inside
or outside. ``B`` is solenoidal and continuous across ``r = 1`` (the solver's
insulating condition), so field lines cross the surface and come back; the
flow's domain is "unbounded". Time along the flow is the field-line parameter
(``dx/dtau = B``).
"""

from __future__ import annotations

import numpy as np

from flowkit.errors import FlowkitError

#: Per harmonic block: m, l, then the Chebyshev coefficients (K each) of Re T, Im T, Re S, Im S,
#: Re S', Im S', then Re S(1), Im S(1). p[0] = blocks, p[1] = K, p[2] = complex-step size.
BALL_FIELD_CODE = """
@njit(cache=CACHE, error_model="numpy")
def _ball_field(x, y, z, p):
    nb = int(p[0])
    K = int(p[1])
    size = 4 + 6 * K
    zero = 0.0 * x
    r2 = x * x + y * y + z * z + 1e-300
    r = np.sqrt(r2)
    rho = np.sqrt(x * x + y * y + 1e-300)
    c = z / r
    s = rho / r
    cp = x / rho
    sp = y / rho
    inside = r2.real <= 1.0
    Br = zero
    Bt = zero
    Bp = zero
    for b in range(nb):
        o = 3 + b * size
        m = int(p[o])
        l = int(p[o + 1])
        am = abs(m)
        # normalized Legendre Pbar_l^|m| and Pbar_(l-1)^|m| at cos(theta) (harmonics.normalized_legendre)
        cur = zero + math.sqrt(1.0 / (4.0 * math.pi))
        for k in range(1, am + 1):
            cur = cur * s * math.sqrt((2.0 * k + 1.0) / (2.0 * k))
        prev = zero
        for ll in range(am + 1, l + 1):
            if ll == am + 1:
                nxt = c * math.sqrt(2.0 * am + 3.0) * cur
            else:
                a = math.sqrt((4.0 * ll * ll - 1.0) / (ll * ll - am * am))
                bb = math.sqrt(((ll - 1.0) ** 2 - am * am) / (4.0 * (ll - 1.0) ** 2 - 1.0))
                nxt = a * (c * cur - bb * prev)
            prev = cur
            cur = nxt
        cl = math.sqrt(max(0.0, (2.0 * l + 1.0) / max(2.0 * l - 1.0, 1.0) * (l * l - am * am)))
        dP = (l * c * cur - cl * prev) / s
        Q = m * cur / s
        C = zero + 1.0
        S = zero
        for k in range(am):
            C, S = C * cp - S * sp, S * cp + C * sp
        if m < 0:
            S = -S
        if inside:
            Tr = zero
            Ti = zero
            Sr = zero
            Si = zero
            Dr = zero
            Di = zero
            tkm1 = zero
            tk = zero + 1.0
            for k in range(K):
                q = o + 2 + k
                Tr += p[q] * tk
                Ti += p[q + K] * tk
                Sr += p[q + 2 * K] * tk
                Si += p[q + 3 * K] * tk
                Dr += p[q + 4 * K] * tk
                Di += p[q + 5 * K] * tk
                nxt = r * tk if k == 0 else 2.0 * r * tk - tkm1
                tkm1 = tk
                tk = nxt
        else:
            rl = zero + 1.0
            for k in range(l + 1):
                rl = rl / r
            Tr = zero
            Ti = zero
            Sr = p[o + 2 + 6 * K] * rl
            Si = p[o + 3 + 6 * K] * rl
            Dr = -(l + 1.0) * Sr / r
            Di = -(l + 1.0) * Si / r
        f = l * (l + 1.0) / r
        brR = f * Sr
        brI = f * Si
        bsR = Dr + Sr / r
        bsI = Di + Si / r
        Br += cur * (brR * C - brI * S)
        Bt += dP * (bsR * C - bsI * S) - Q * (Tr * S + Ti * C)
        Bp += Q * (bsR * S + bsI * C) * -1.0 - dP * (Tr * C - Ti * S)
    return (Br * s * cp + Bt * c * cp - Bp * sp, Br * s * sp + Bt * c * sp + Bp * cp, Br * c - Bt * s)


@njit(cache=CACHE, error_model="numpy")
def velocity(x, y, z, t, p):
    return _ball_field(x, y, z, p)


@njit(cache=CACHE, error_model="numpy")
def gradient(x, y, z, t, p):
    h = p[2]
    a = _ball_field(x + 1j * h, y + 0j, z + 0j, p)
    b = _ball_field(x + 0j, y + 1j * h, z + 0j, p)
    d = _ball_field(x + 0j, y + 0j, z + 1j * h, p)
    return (a[0].imag / h, b[0].imag / h, d[0].imag / h,
            a[1].imag / h, b[1].imag / h, d[1].imag / h,
            a[2].imag / h, b[2].imag / h, d[2].imag / h)
"""

#: complex-step size of the gradient (any tiny value works: nothing is subtracted)
STEP = 1e-30


def ball_field_parameters(result, *, energy_fraction: float = 1.0, phase: float = 0.0):
    """Parameter vector of :data:`BALL_FIELD_CODE` for a ball mode and the energy share it keeps.

    Harmonics are kept largest energy first (:func:`~flowkit.dynamo.sphere.fieldeval.harmonic_energies`)
    until ``energy_fraction`` of the mode's energy inside the ball is kept.
    """
    from flowkit.dynamo.sphere.fieldeval import harmonic_energies, radial_series

    if not 0 < energy_fraction <= 1:
        raise FlowkitError(f"`energy_fraction` must lie in (0, 1]; got {energy_fraction!r}")
    tc, sc, dc, ms = radial_series(result, phase)
    e = harmonic_energies(result, phase)
    e[:, 0] = 0.0  # degree 0 carries no field
    total = float(e.sum())
    if total == 0:
        raise FlowkitError("the mode is zero; nothing to trace")
    order = np.argsort(-e, axis=None)
    cum = np.cumsum(e.ravel()[order]) / total
    count = int(min(np.searchsorted(cum, energy_fraction - 1e-12) + 1, np.count_nonzero(e)))
    K = tc.shape[-1]
    one = np.polynomial.chebyshev.chebvander(np.array([1.0]), K - 1)[0]
    blocks = []
    for flat in order[:count]:
        i, l = np.unravel_index(flat, e.shape)
        s1 = complex(sc[i, l] @ one)
        blocks.append(np.concatenate([[ms[i], l], tc[i, l].real, tc[i, l].imag, sc[i, l].real, sc[i, l].imag,
                                      dc[i, l].real, dc[i, l].imag, [s1.real, s1.imag]]))
    p = np.concatenate([[float(count), float(K), STEP], np.concatenate(blocks)])
    return p, float(cum[count - 1]), [(int(ms[np.unravel_index(f, e.shape)[0]]), int(np.unravel_index(f, e.shape)[1]))
                                       for f in order[:count]]


def ball_field_flow(result, *, energy_fraction: float = 1.0, phase: float = 0.0, name: str = "ball-dynamo-field"):
    """A flow on all of space whose velocity is a ball dynamo mode's magnetic field B.

    Parameters
    ----------
    result : GrowthResult
        A ball-flow result with its mode kept (``growth_rate(ball_flow, ..., keep_mode=True)``).
    energy_fraction : float
        Share of the mode's energy inside the ball the kept harmonics must carry (1: all).
    phase : float
        Phase of the complex mode (0: its real part).

    Returns
    -------
    Flow
        Compiled harmonic sum with its complex-step gradient, domain "unbounded" (the
        potential field continues B outside the sphere). ``flow.family.structure["harmonics"]``
        names the kept (m, l) and the energy share.
    """
    from flowkit.flows.base import Flow, FlowFamily

    p, frac, kept = ball_field_parameters(result, energy_fraction=energy_fraction, phase=phase)
    names = ("blocks", "coefficients", "step") + tuple(f"c{i}" for i in range(len(p) - 3))
    L, N = (list(result.resolution) + [None, None])[:2]
    fam = FlowFamily(name=name, formula=(f"harmonic sum of {len(kept)} (m, l) of a ball dynamo mode "
                                         f"({100 * frac:.2f}% of its energy); potential field outside r = 1",),
                     param_names=names, defaults=tuple(float(v) for v in p), domain="unbounded",
                     code=BALL_FIELD_CODE, gradient_method="exact to round-off (complex step)",
                     structure={"harmonics": {"kept": kept, "energy_fraction": frac, "phase": float(phase),
                                              "resolution": [L, N], "rm": getattr(result, "rm", None)}},
                     description="magnetic field of a ball dynamo mode (field lines: dx/dtau = B)")
    return Flow(fam)
