"""Kernel template: fixed-step RK4 for the deformation gradient at many grid points.

The fast path of FTLE fields with ``method="rk4"``: the position and the
deformation gradient J (dJ/dt = (grad u) J, J(t0) = I) are integrated with the
classical Runge–Kutta scheme. In 3-D, :data:`FTLE_LANES` grid points step
together through a flat work vector laid out so that the compiler vectorizes
across points; planar flows (2 + 4 numbers) keep the whole state of one point in
local variables. The largest singular value of J is taken in the kernel (largest
eigenvalue of J^T J, closed form for the symmetric 3x3 and 2x2 cases), so the
output is the FTLE itself. Adaptive DOP853 fields use the general batch driver instead
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

#: Grid points integrated side by side in one block. A compile-time constant, so
#: every row of the block's flat work vector sits at a fixed offset and LLVM can
#: prove the rows apart and vectorize the stage loop across points (8 doubles per
#: AVX-512 instruction for polynomial flows; flows with sin/cos stay scalar since
#: numba has no vector math library here).
FTLE_LANES = 64


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
def _lane_stage3(W, t, p, wacc, anext):
    """One RK4 stage for all lanes of a block: k = f(T), A += wacc k, T = S + anext k.

    ``W`` is one flat vector of 36 rows of :data:`FTLE_LANES` values: rows 0-11 the
    state at the start of the step (x, y, z, then J row-major), rows 12-23 the
    stage argument T, rows 24-35 the accumulated new state A.
    """
    L = FTLE_LANES
    for i in range(L):
        x = W[12 * L + i]
        y = W[13 * L + i]
        z = W[14 * L + i]
        j0, j1, j2 = W[15 * L + i], W[16 * L + i], W[17 * L + i]
        j3, j4, j5 = W[18 * L + i], W[19 * L + i], W[20 * L + i]
        j6, j7, j8 = W[21 * L + i], W[22 * L + i], W[23 * L + i]
        u, v, w = velocity(x, y, z, t, p)
        g = gradient(x, y, z, t, p)
        # d(J)/dt = G J, entry (r, c) = sum_k G[r, k] J[k, c]
        d0 = g[0] * j0 + g[1] * j3 + g[2] * j6
        d1 = g[0] * j1 + g[1] * j4 + g[2] * j7
        d2 = g[0] * j2 + g[1] * j5 + g[2] * j8
        d3 = g[3] * j0 + g[4] * j3 + g[5] * j6
        d4 = g[3] * j1 + g[4] * j4 + g[5] * j7
        d5 = g[3] * j2 + g[4] * j5 + g[5] * j8
        d6 = g[6] * j0 + g[7] * j3 + g[8] * j6
        d7 = g[6] * j1 + g[7] * j4 + g[8] * j7
        d8 = g[6] * j2 + g[7] * j5 + g[8] * j8
        # written out row by row on purpose: a loop over a tuple index stops LLVM vectorizing
        W[24 * L + i] += wacc * u
        W[25 * L + i] += wacc * v
        W[26 * L + i] += wacc * w
        W[27 * L + i] += wacc * d0
        W[28 * L + i] += wacc * d1
        W[29 * L + i] += wacc * d2
        W[30 * L + i] += wacc * d3
        W[31 * L + i] += wacc * d4
        W[32 * L + i] += wacc * d5
        W[33 * L + i] += wacc * d6
        W[34 * L + i] += wacc * d7
        W[35 * L + i] += wacc * d8
        W[12 * L + i] = W[i] + anext * u
        W[13 * L + i] = W[L + i] + anext * v
        W[14 * L + i] = W[2 * L + i] + anext * w
        W[15 * L + i] = W[3 * L + i] + anext * d0
        W[16 * L + i] = W[4 * L + i] + anext * d1
        W[17 * L + i] = W[5 * L + i] + anext * d2
        W[18 * L + i] = W[6 * L + i] + anext * d3
        W[19 * L + i] = W[7 * L + i] + anext * d4
        W[20 * L + i] = W[8 * L + i] + anext * d5
        W[21 * L + i] = W[9 * L + i] + anext * d6
        W[22 * L + i] = W[10 * L + i] + anext * d7
        W[23 * L + i] = W[11 * L + i] + anext * d8


@njit(cache=CACHE, fastmath=FTLE_FASTMATH)
def _lane_rk4_3(W, t0, h, nsteps, p, bounded, left):
    """``nsteps`` RK4 steps of every lane of a block; ``left[i] = 1`` once lane i leaves the unit ball."""
    L = FTLE_LANES
    for k in range(nsteps):
        t = t0 + k * h
        for r in range(12 * L):
            W[12 * L + r] = W[r]
            W[24 * L + r] = W[r]
        _lane_stage3(W, t, p, h / 6.0, 0.5 * h)
        _lane_stage3(W, t + 0.5 * h, p, h / 3.0, 0.5 * h)
        _lane_stage3(W, t + 0.5 * h, p, h / 3.0, h)
        _lane_stage3(W, t + h, p, h / 6.0, 0.0)
        for r in range(12 * L):
            W[r] = W[24 * L + r]
        if bounded:
            for i in range(L):
                if W[i] * W[i] + W[L + i] * W[L + i] + W[2 * L + i] * W[2 * L + i] > 1.0 + 1e-9:
                    left[i] = 1


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
def ftle_rk4_grid(points, t0, h, nsteps, p, bounded, out, outcome):
    """log(sigma_max(J)) after ``nsteps`` RK4 steps of size ``h`` (negative: backward) from each point.

    3-D flows. Points go in blocks of :data:`FTLE_LANES` (the last block padded
    with copies of the last point), blocks are spread over threads. Writes into
    ``out`` (N,) (divide by the integration time for the FTLE) and the outcome
    code into ``outcome``; failed points get NaN. The blocks are fixed by the
    point order, so results do not depend on the number of threads.
    """
    N = points.shape[0]
    L = FTLE_LANES
    for b in prange((N + L - 1) // L):
        W = np.zeros(36 * L)
        left = np.zeros(L, dtype=np.int8)
        for i in range(L):
            q = min(b * L + i, N - 1)
            W[i] = points[q, 0]
            W[L + i] = points[q, 1]
            W[2 * L + i] = points[q, 2]
            W[3 * L + i] = 1.0
            W[7 * L + i] = 1.0
            W[11 * L + i] = 1.0
        _lane_rk4_3(W, t0, h, nsteps, p, bounded, left)
        for i in range(min(L, N - b * L)):
            q = b * L + i
            j = (W[3 * L + i], W[4 * L + i], W[5 * L + i], W[6 * L + i], W[7 * L + i], W[8 * L + i],
                 W[9 * L + i], W[10 * L + i], W[11 * L + i])
            finite = math.isfinite(W[i] + W[L + i] + W[2 * L + i])
            for e in j:
                finite = finite and math.isfinite(e)
            if left[i]:
                outcome[q] = 1
                out[q] = np.nan
            elif not finite:
                outcome[q] = 3
                out[q] = np.nan
            else:
                outcome[q] = 0
                out[q] = _largest_singular_log3(j)


@njit(cache=CACHE, parallel=True, fastmath=FTLE_FASTMATH)
def ftle_rk4_grid_planar(points, t0, h, nsteps, p, bounded, out, outcome):
    """As :func:`ftle_rk4_grid` for planar flows (2x2 block of J), one point at a time."""
    for i in prange(points.shape[0]):
        oc, _, val = _ftle_rk4_point2(points[i, 0], points[i, 1], points[i, 2], t0, h, nsteps, p, bounded)
        outcome[i] = oc
        out[i] = val if oc == 0 else np.nan
