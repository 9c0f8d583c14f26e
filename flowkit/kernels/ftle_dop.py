"""Kernel template: adaptive DOP853 for the position and deformation gradient of FTLE grids.

The generic batch driver steps any state through loops over its components and
evaluates the velocity and the gradient in two calls. FTLE grids always carry the
same two states, so this template steps them directly:

* planar flows: x, y and the 2x2 in-plane block of J (six numbers moved, held in
  the usual nine-column layout x, y, z, J00, J10, 0, J01, J11, 0 so that the error
  norm, the initial step and the stiffness test are those of the generic driver);
* 3-D flows: x, y, z and the 3x3 J (twelve numbers, columns of J one after another).

Each stage is one call of the family's fused ``velocity_gradient`` (shared
subexpressions, e.g. each sin/cos computed once for both) and the stage sums keep
their accumulators in scalar locals. Tableau, step control and stiffness test are
those of :mod:`flowkit.kernels.steppers` (Solving Ordinary Differential Equations I,
Springer, 1993, section II.10).

``position_error`` chooses the error norm: False (the default of ``ftle_field``)
measures every component, as the generic driver does; True measures the position
only (x, y, z), so the step is the one a streamline alone would take and J rides
along unmeasured. Its error is then not controlled; the tests bound the FTLE
difference this makes.
"""

import math

import numpy as np

from flowkit.integrate.tableau import DOP_A, DOP_B, DOP_C, DOP_E3, DOP_E5, W_ROWS, W_YNEW, W_YOLD
from flowkit.kernels._stub import CACHE, gradient, njit, prange, velocity  # flowkit:stub
from flowkit.kernels.stiffness import dop853_stiff_test  # flowkit:stub

try:
    velocity_gradient  # noqa: B018 - printed by flows/codegen.py for symbolic families
except NameError:  # families with their own code (finite-difference gradients, field lines)
    @njit(cache=CACHE, error_model="numpy")
    def velocity_gradient(x, y, z, t, p):
        u = velocity(x, y, z, t, p)
        g = gradient(x, y, z, t, p)
        return (u[0], u[1], u[2], g[0], g[1], g[2], g[3], g[4], g[5], g[6], g[7], g[8])


@njit(cache=CACHE)
def _vg_rate2(t, x, y, z, a, c, b, d, p, W, s):
    """Planar rate into ``W[s]``: (u, v) and (grad u) J for the columns (a, c) and (b, d) of J."""
    g = velocity_gradient(x, y, z, t, p)
    W[s, 0] = g[0]
    W[s, 1] = g[1]
    W[s, 3] = g[3] * a + g[4] * c
    W[s, 4] = g[6] * a + g[7] * c
    W[s, 6] = g[3] * b + g[4] * d
    W[s, 7] = g[6] * b + g[7] * d


@njit(cache=CACHE, fastmath={"contract"})
def _vg_rate3(t, q, p, W, s):
    """3-D rate of the state ``q`` (12-tuple) into ``W[s]``: velocity and (grad u) J column by column."""
    g = velocity_gradient(q[0], q[1], q[2], t, p)
    W[s, 0] = g[0]
    W[s, 1] = g[1]
    W[s, 2] = g[2]
    # written out so that every tuple index is a constant
    W[s, 3] = g[3] * q[3] + g[4] * q[4] + g[5] * q[5]
    W[s, 4] = g[6] * q[3] + g[7] * q[4] + g[8] * q[5]
    W[s, 5] = g[9] * q[3] + g[10] * q[4] + g[11] * q[5]
    W[s, 6] = g[3] * q[6] + g[4] * q[7] + g[5] * q[8]
    W[s, 7] = g[6] * q[6] + g[7] * q[7] + g[8] * q[8]
    W[s, 8] = g[9] * q[6] + g[10] * q[7] + g[11] * q[8]
    W[s, 9] = g[3] * q[9] + g[4] * q[10] + g[5] * q[11]
    W[s, 10] = g[6] * q[9] + g[7] * q[10] + g[8] * q[11]
    W[s, 11] = g[9] * q[9] + g[10] * q[10] + g[11] * q[11]


@njit(cache=CACHE)
def _ftle_rate(t, y, p, W, s, planar):
    """Rate of the state array ``y`` into ``W[s]`` (either layout)."""
    if planar:
        _vg_rate2(t, y[0], y[1], y[2], y[3], y[4], y[6], y[7], p, W, s)
    else:
        _vg_rate3(t, (y[0], y[1], y[2], y[3], y[4], y[5], y[6], y[7], y[8], y[9], y[10], y[11]), p, W, s)


@njit(cache=CACHE)
def _ftle_norm(y, W, rtol, atol, h, nerr):
    """DOP853's error measure over the first ``nerr`` columns (all, or the position only)."""
    n = y.shape[0]
    e5 = 0.0
    e3 = 0.0
    for i in range(n if nerr == n else 3):
        ynew = W[W_YNEW, i]
        sc = atol + rtol * max(abs(y[i]), abs(ynew))
        b5 = 0.0
        b3 = 0.0
        for j in range(13):
            b5 += DOP_E5[j] * W[j, i]
            b3 += DOP_E3[j] * W[j, i]
        e5 += (b5 / sc) ** 2
        e3 += (b3 / sc) ** 2
    if not (math.isfinite(e5) and math.isfinite(e3)):
        return np.nan
    if e5 == 0.0 and e3 == 0.0:
        return 0.0
    return abs(h) * e5 / math.sqrt((e5 + 0.01 * e3) * nerr)


@njit(cache=CACHE)
def _ftle_try2(t, y, h, p, rtol, atol, W, nerr):
    """One DOP853 attempt of the planar state (W[0] = f(t, y) set); returns the error measure."""
    y0, y1, y2, y3, y4, y6, y7 = y[0], y[1], y[2], y[3], y[4], y[6], y[7]
    for s in range(1, 12):
        a0 = a1 = a3 = a4 = a6 = a7 = 0.0
        for j in range(s):
            c = DOP_A[s, j]
            a0 += c * W[j, 0]
            a1 += c * W[j, 1]
            a3 += c * W[j, 3]
            a4 += c * W[j, 4]
            a6 += c * W[j, 6]
            a7 += c * W[j, 7]
        _vg_rate2(t + DOP_C[s] * h, y0 + h * a0, y1 + h * a1, y2, y3 + h * a3, y4 + h * a4, y6 + h * a6,
                  y7 + h * a7, p, W, s)
    for i in range(y.shape[0]):
        acc = 0.0
        for j in range(12):
            acc += DOP_B[j] * W[j, i]
        W[W_YNEW, i] = y[i] + h * acc
    _vg_rate2(t + h, W[W_YNEW, 0], W[W_YNEW, 1], W[W_YNEW, 2], W[W_YNEW, 3], W[W_YNEW, 4], W[W_YNEW, 6],
              W[W_YNEW, 7], p, W, 12)
    return _ftle_norm(y, W, rtol, atol, h, nerr)


@njit(cache=CACHE, fastmath={"contract"})
def _ftle_try3(t, y, h, p, rtol, atol, W, nerr):
    """One DOP853 attempt of the 3-D state (12 numbers, W[0] = f(t, y) set); returns the error measure."""
    for s in range(1, 12):
        a0 = a1 = a2 = a3 = a4 = a5 = a6 = a7 = a8 = a9 = a10 = a11 = 0.0
        for j in range(s):
            c = DOP_A[s, j]
            a0 += c * W[j, 0]
            a1 += c * W[j, 1]
            a2 += c * W[j, 2]
            a3 += c * W[j, 3]
            a4 += c * W[j, 4]
            a5 += c * W[j, 5]
            a6 += c * W[j, 6]
            a7 += c * W[j, 7]
            a8 += c * W[j, 8]
            a9 += c * W[j, 9]
            a10 += c * W[j, 10]
            a11 += c * W[j, 11]
        q = (y[0] + h * a0, y[1] + h * a1, y[2] + h * a2, y[3] + h * a3, y[4] + h * a4, y[5] + h * a5,
             y[6] + h * a6, y[7] + h * a7, y[8] + h * a8, y[9] + h * a9, y[10] + h * a10, y[11] + h * a11)
        _vg_rate3(t + DOP_C[s] * h, q, p, W, s)
    for i in range(12):
        acc = 0.0
        for j in range(12):
            acc += DOP_B[j] * W[j, i]
        W[W_YNEW, i] = y[i] + h * acc
    _ftle_rate(t + h, W[W_YNEW], p, W, 12, False)
    return _ftle_norm(y, W, rtol, atol, h, nerr)


@njit(cache=CACHE)
def _ftle_initial_step(t, y, p, direction, rtol, atol, W, nerr, planar):
    """First step size (Solving ODEs I, section II.4) over the measured columns; W[0] holds f(t, y)."""
    m = y.shape[0] if nerr == y.shape[0] else 3
    d0 = 0.0
    d1 = 0.0
    for i in range(m):
        sc = atol + abs(y[i]) * rtol
        d0 += (y[i] / sc) ** 2
        d1 += (W[0, i] / sc) ** 2
    d0 = math.sqrt(d0 / nerr)
    d1 = math.sqrt(d1 / nerr)
    h0 = 1e-6 if (d0 < 1e-5 or d1 < 1e-5) else 0.01 * d0 / d1
    for i in range(y.shape[0]):
        W[W_YOLD, i] = y[i] + direction * h0 * W[0, i]
    _ftle_rate(t + direction * h0, W[W_YOLD], p, W, 1, planar)
    d2 = 0.0
    for i in range(m):
        sc = atol + abs(y[i]) * rtol
        d2 += ((W[1, i] - W[0, i]) / sc) ** 2
    d2 = math.sqrt(d2 / nerr) / h0
    if d1 <= 1e-15 and d2 <= 1e-15:
        h1 = max(1e-6, h0 * 1e-3)
    else:
        h1 = (0.01 / max(d1, d2)) ** (1.0 / 8.0)
    return direction * min(100 * h0, h1)


@njit(cache=CACHE)
def _ftle_solve(t0, y, t1, p, rtol, atol, hmax, max_steps, W, bounded, planar, nerr):
    """Integrate ``y`` in place from t0 to t1; returns (outcome, t, steps) as ``dop853_solve`` does."""
    direction = 1.0 if t1 >= t0 else -1.0
    t = t0
    n = y.shape[0]
    if t1 == t0:
        return 0, t, 0
    _ftle_rate(t, y, p, W, 0, planar)
    for i in range(n):
        if not math.isfinite(W[0, i]):
            return 3, t, 0
    h = _ftle_initial_step(t, y, p, direction, rtol, atol, W, nerr, planar)
    steps = 0
    while direction * (t1 - t) > 0:
        if steps >= max_steps:
            return 5, t, steps
        last = False
        if direction * (t + h - t1) > 0:
            h = t1 - t
            last = True
        habs = min(abs(h), hmax)
        nonfinite = False
        while True:  # the step attempts of dop853_advance
            if habs < 10.0 * (abs(t) * 2.220446049250313e-16 + 1e-300):
                return (3 if nonfinite else 2), t, steps
            hh = direction * habs
            if planar:
                err = ftle_try2_unrolled(t, y, hh, p, rtol, atol, W, nerr)  # noqa: F821 (ftle_dop_planar.py)
            else:
                err = _ftle_try3(t, y, hh, p, rtol, atol, W, nerr)
            if not math.isfinite(err):
                nonfinite = True
                habs *= 0.2
                continue
            nonfinite = False
            if err <= 1.0:
                break
            habs *= max(0.2, 0.9 * err ** (-1.0 / 8.0))
        if dop853_stiff_test(W, n):
            return 6, t, steps
        fac = 10.0 if err == 0.0 else min(10.0, 0.9 * err ** (-1.0 / 8.0))
        for i in range(n):
            y[i] = W[W_YNEW, i]
            W[0, i] = W[12, i]
        steps += 1
        t = t1 if (last and hh == h) else t + hh
        h = direction * min(habs * fac, hmax)
        if bounded and y[0] * y[0] + y[1] * y[1] + y[2] * y[2] > 1.0 + 1e-9:
            return 1, t, steps
    return 0, t, steps


@njit(cache=CACHE, parallel=True)
def ftle_dop853_batch(Y, t0, t1, p, rtol, atol, hmax, max_steps, bounded, planar, position_error,
                      outcome, t_end, steps):
    """Advance each row of ``Y`` (N, 9 planar or N, 12) in place from t0 to t1 with adaptive DOP853.

    Rows are positions followed by the columns of J (planar: the nine-column layout of
    the module docstring). Writes per-row outcome code, final time and accepted steps;
    each row only touches its own output, so results do not depend on the thread count.
    """
    N, n = Y.shape
    nerr = 3 if position_error else n
    for k in prange(N):
        W = np.zeros((W_ROWS, n))  # zero stiffness counters (row W_STIFF) and unused planar columns
        oc, tt, ns = _ftle_solve(t0, Y[k], t1, p, rtol, atol, hmax, max_steps, W, bounded, planar, nerr)
        outcome[k] = oc
        t_end[k] = tt
        steps[k] = ns
