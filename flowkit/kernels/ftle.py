"""Kernel template: fixed-step RK4 for the deformation gradient at many grid points.

The fast path of FTLE fields with ``method="rk4"``: the position and the
deformation gradient J (dJ/dt = (grad u) J, J(t0) = I) are integrated with the
classical Runge–Kutta scheme, with the whole state (3 + 9 numbers, or 2 + 4 for
planar flows) held in local variables instead of a work array, so that each
step is a few hundred floating-point operations with no memory traffic. The
largest singular value of J is taken in the kernel (largest eigenvalue of
J^T J, closed form for the symmetric 3x3 and 2x2 cases), so the output is the
FTLE itself. Adaptive DOP853 fields use the general batch driver instead
(:func:`flowkit.integrate.batch.integrate_states`).

Outcome codes as in :class:`flowkit.integrate.outcomes.Outcome` (0 finished,
1 left the unit ball, 3 non-finite).
"""

import math

import numpy as np

from flowkit.kernels._stub import CACHE, gradient, njit, prange, velocity  # flowkit:stub

#: Let LLVM fuse multiply-adds in these kernels (about 25 % faster here). Only
#: contraction is allowed (no reassociation), so results stay deterministic and
#: independent of the thread count; they differ from unfused arithmetic at round-off.
FTLE_FASTMATH = {"contract"}


@njit(cache=CACHE, fastmath=FTLE_FASTMATH)
def _rate3(x, y, z, j, t, p):
    """Derivative of (position, J) for the 3-D variational state; ``j`` row-major 9-tuple."""
    u, v, w = velocity(x, y, z, t, p)
    g = gradient(x, y, z, t, p)
    d = (
        g[0] * j[0] + g[1] * j[3] + g[2] * j[6], g[0] * j[1] + g[1] * j[4] + g[2] * j[7],
        g[0] * j[2] + g[1] * j[5] + g[2] * j[8],
        g[3] * j[0] + g[4] * j[3] + g[5] * j[6], g[3] * j[1] + g[4] * j[4] + g[5] * j[7],
        g[3] * j[2] + g[4] * j[5] + g[5] * j[8],
        g[6] * j[0] + g[7] * j[3] + g[8] * j[6], g[6] * j[1] + g[7] * j[4] + g[8] * j[7],
        g[6] * j[2] + g[7] * j[5] + g[8] * j[8],
    )
    return u, v, w, d


@njit(cache=CACHE, fastmath=FTLE_FASTMATH)
def _axpy9(a, h, b):
    return (a[0] + h * b[0], a[1] + h * b[1], a[2] + h * b[2], a[3] + h * b[3], a[4] + h * b[4],
            a[5] + h * b[5], a[6] + h * b[6], a[7] + h * b[7], a[8] + h * b[8])


@njit(cache=CACHE, fastmath=FTLE_FASTMATH)
def _rk4_sum9(a, h, k1, k2, k3, k4):
    return (a[0] + h * (k1[0] + 2 * (k2[0] + k3[0]) + k4[0]), a[1] + h * (k1[1] + 2 * (k2[1] + k3[1]) + k4[1]),
            a[2] + h * (k1[2] + 2 * (k2[2] + k3[2]) + k4[2]), a[3] + h * (k1[3] + 2 * (k2[3] + k3[3]) + k4[3]),
            a[4] + h * (k1[4] + 2 * (k2[4] + k3[4]) + k4[4]), a[5] + h * (k1[5] + 2 * (k2[5] + k3[5]) + k4[5]),
            a[6] + h * (k1[6] + 2 * (k2[6] + k3[6]) + k4[6]), a[7] + h * (k1[7] + 2 * (k2[7] + k3[7]) + k4[7]),
            a[8] + h * (k1[8] + 2 * (k2[8] + k3[8]) + k4[8]))


@njit(cache=CACHE, fastmath=FTLE_FASTMATH)
def _largest_singular_log3(j):
    """log of the largest singular value of the row-major 3x3 ``j``.

    Largest eigenvalue of C = J^T J by the trigonometric closed form for
    symmetric 3x3 matrices (Communications of the ACM 4(4), 1961, 168; cited from
    memory). J is first scaled by its largest entry so that J^T J cannot overflow.
    """
    m = 0.0
    for e in j:
        m = max(m, abs(e))
    if m == 0.0:
        return -np.inf
    j = (j[0] / m, j[1] / m, j[2] / m, j[3] / m, j[4] / m, j[5] / m, j[6] / m, j[7] / m, j[8] / m)
    c00 = j[0] * j[0] + j[3] * j[3] + j[6] * j[6]
    c11 = j[1] * j[1] + j[4] * j[4] + j[7] * j[7]
    c22 = j[2] * j[2] + j[5] * j[5] + j[8] * j[8]
    c01 = j[0] * j[1] + j[3] * j[4] + j[6] * j[7]
    c02 = j[0] * j[2] + j[3] * j[5] + j[6] * j[8]
    c12 = j[1] * j[2] + j[4] * j[5] + j[7] * j[8]
    q = (c00 + c11 + c22) / 3.0
    p1 = c01 * c01 + c02 * c02 + c12 * c12
    p2 = (c00 - q) ** 2 + (c11 - q) ** 2 + (c22 - q) ** 2 + 2.0 * p1
    if p2 <= 0.0:
        lam = q
    else:
        pp = math.sqrt(p2 / 6.0)
        b00 = (c00 - q) / pp
        b11 = (c11 - q) / pp
        b22 = (c22 - q) / pp
        b01 = c01 / pp
        b02 = c02 / pp
        b12 = c12 / pp
        r = 0.5 * (b00 * (b11 * b22 - b12 * b12) - b01 * (b01 * b22 - b12 * b02) + b02 * (b01 * b12 - b11 * b02))
        r = min(1.0, max(-1.0, r))
        lam = q + 2.0 * pp * math.cos(math.acos(r) / 3.0)
    return 0.5 * math.log(lam) + math.log(m)


@njit(cache=CACHE, fastmath=FTLE_FASTMATH)
def _largest_singular_log2(a, b, c, d):
    """log of the largest singular value of [[a, b], [c, d]] (closed form, scaled against overflow)."""
    m = max(max(abs(a), abs(b)), max(abs(c), abs(d)))
    if m == 0.0:
        return -np.inf
    a, b, c, d = a / m, b / m, c / m, d / m
    s1 = a * a + b * b + c * c + d * d
    det = a * d - b * c
    disc = math.sqrt(max(0.0, s1 * s1 - 4.0 * det * det))
    return 0.5 * math.log(0.5 * (s1 + disc)) + math.log(m)


@njit(cache=CACHE, fastmath=FTLE_FASTMATH)
def _ftle_rk4_point3(x, y, z, t0, h, nsteps, p, bounded):
    j = (1.0, 0.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0)
    for k in range(nsteps):
        t = t0 + k * h
        u1, v1, w1, d1 = _rate3(x, y, z, j, t, p)
        u2, v2, w2, d2 = _rate3(x + 0.5 * h * u1, y + 0.5 * h * v1, z + 0.5 * h * w1, _axpy9(j, 0.5 * h, d1),
                                t + 0.5 * h, p)
        u3, v3, w3, d3 = _rate3(x + 0.5 * h * u2, y + 0.5 * h * v2, z + 0.5 * h * w2, _axpy9(j, 0.5 * h, d2),
                                t + 0.5 * h, p)
        u4, v4, w4, d4 = _rate3(x + h * u3, y + h * v3, z + h * w3, _axpy9(j, h, d3), t + h, p)
        s = h / 6.0
        x += s * (u1 + 2.0 * (u2 + u3) + u4)
        y += s * (v1 + 2.0 * (v2 + v3) + v4)
        z += s * (w1 + 2.0 * (w2 + w3) + w4)
        j = _rk4_sum9(j, s, d1, d2, d3, d4)
        if not (math.isfinite(x + y + z) and math.isfinite(j[0] + j[4] + j[8])):
            return 3, k + 1, 0.0
        if bounded and x * x + y * y + z * z > 1.0 + 1e-9:
            return 1, k + 1, 0.0
    return 0, nsteps, _largest_singular_log3(j)


@njit(cache=CACHE, fastmath=FTLE_FASTMATH)
def _rate2(x, y, z, a, b, c, d, t, p):
    """Derivative of the planar state: in-plane velocity and (grad u) J for J = [[a, b], [c, d]]."""
    u, v, _ = velocity(x, y, z, t, p)
    g = gradient(x, y, z, t, p)
    return u, v, g[0] * a + g[1] * c, g[0] * b + g[1] * d, g[3] * a + g[4] * c, g[3] * b + g[4] * d


@njit(cache=CACHE, fastmath=FTLE_FASTMATH)
def _ftle_rk4_point2(x, y, z, t0, h, nsteps, p, bounded):
    a, b, c, d = 1.0, 0.0, 0.0, 1.0
    for k in range(nsteps):
        t = t0 + k * h
        hh = 0.5 * h
        u1, v1, a1, b1, c1, d1 = _rate2(x, y, z, a, b, c, d, t, p)
        u2, v2, a2, b2, c2, d2 = _rate2(x + hh * u1, y + hh * v1, z, a + hh * a1, b + hh * b1, c + hh * c1,
                                        d + hh * d1, t + hh, p)
        u3, v3, a3, b3, c3, d3 = _rate2(x + hh * u2, y + hh * v2, z, a + hh * a2, b + hh * b2, c + hh * c2,
                                        d + hh * d2, t + hh, p)
        u4, v4, a4, b4, c4, d4 = _rate2(x + h * u3, y + h * v3, z, a + h * a3, b + h * b3, c + h * c3,
                                        d + h * d3, t + h, p)
        s = h / 6.0
        x += s * (u1 + 2.0 * (u2 + u3) + u4)
        y += s * (v1 + 2.0 * (v2 + v3) + v4)
        a += s * (a1 + 2.0 * (a2 + a3) + a4)
        b += s * (b1 + 2.0 * (b2 + b3) + b4)
        c += s * (c1 + 2.0 * (c2 + c3) + c4)
        d += s * (d1 + 2.0 * (d2 + d3) + d4)
        if not (math.isfinite(x + y) and math.isfinite(a + b + c + d)):
            return 3, k + 1, 0.0
        if bounded and x * x + y * y + z * z > 1.0 + 1e-9:
            return 1, k + 1, 0.0
    return 0, nsteps, _largest_singular_log2(a, b, c, d)


@njit(cache=CACHE, parallel=True, fastmath=FTLE_FASTMATH)
def ftle_rk4_grid(points, t0, h, nsteps, p, planar, bounded, out, outcome):
    """log(sigma_max(J)) after ``nsteps`` RK4 steps of size ``h`` (negative: backward) from each point.

    Writes into ``out`` (N,) (divide by the integration time for the FTLE) and
    the outcome code into ``outcome``; failed points get NaN. Points are spread
    over threads; each writes only its own entries.
    """
    for i in prange(points.shape[0]):
        x = points[i, 0]
        y = points[i, 1]
        z = points[i, 2]
        if planar:
            oc, _, val = _ftle_rk4_point2(x, y, z, t0, h, nsteps, p, bounded)
        else:
            oc, _, val = _ftle_rk4_point3(x, y, z, t0, h, nsteps, p, bounded)
        outcome[i] = oc
        out[i] = val if oc == 0 else np.nan
