"""Kernel template: the k-th return of many states to a section, forward or backward in time.

Each row of the state array is a position, optionally followed by tangent
columns (a 12-component state carries the full 3 x 3 deformation gradient, so
one integration gives both the return point and the monodromy matrix M). The
integration stops at the k-th crossing of the section plane in the wanted
direction, and the full state there is taken from DOP853's 7th-order dense
output at the crossing fraction located by :func:`sec_dense_roots` (the same
location as the section kernels), so the tangent columns are those at the
crossing itself. A stroboscopic section (plane kind 1) integrates to the fixed
time ``span`` instead.

Backward time (``direction`` = -1) is a negative step. Because the projected
dense polynomial then runs against physical time, the caller passes the plane
with the crossing direction already flipped.

Per-row outcomes as in :mod:`flowkit.integrate.outcomes`: 4 the k-th crossing
was reached (success for a plane), 0 the time span was reached (success for a
stroboscopic section, "no return in time" for a plane), 1 left the ball,
2 step underflow, 3 non-finite, 5 step budget.
"""

import math

import numpy as np

from flowkit.integrate.tableau import W_ROWS
from flowkit.kernels._stub import CACHE, njit, prange  # flowkit:stub
from flowkit.kernels.sections_plane import (  # flowkit:stub
    SEC_D, SEC_KIND, SEC_LAM, SEC_MAX_ROOTS, SEC_NX, SEC_NY, SEC_NZ, SEC_SAMPLES, sec_dense_roots,  # flowkit:stub
    sec_end_speed, sec_near,  # flowkit:stub
)  # flowkit:stub
from flowkit.kernels.steppers import (  # flowkit:stub
    dop853_advance, dop853_dense_eval, dop853_dense_prepare, dop853_initial_step, dop853_solve, rhs,  # flowkit:stub
)  # flowkit:stub


@njit(cache=CACHE, error_model="numpy")
def rm_orbit(y, t0, direction, k, span, p, rtol, atol, hmax, max_steps, bounded, plane, W, scratch):
    """k-th crossing of one state ``y`` (updated in place to the crossing state).

    Returns (outcome, time, steps). A crossing within 1e-10 (in distance) of the
    start during the first step is the start point itself and is not counted.
    """
    n = y.shape[0]
    nx = plane[SEC_NX]
    ny = plane[SEC_NY]
    nz = plane[SEC_NZ]
    d = plane[SEC_D]
    lam = plane[SEC_LAM]
    th = scratch[0]
    val = scratch[1]
    rth = scratch[2]
    rdir = scratch[3]
    t = t0
    t_lim = t0 + direction * span
    rhs(t, y, p, W[0])
    for i in range(n):
        if not math.isfinite(W[0, i]):
            return 3, t, 0
    h = dop853_initial_step(t, y, p, direction, rtol, atol, W)
    S_old = nx * y[0] + ny * y[1] + nz * y[2] - d
    count = 0
    steps = 0
    while True:
        if steps >= max_steps:
            return 5, t, steps
        last = False
        if direction * (t + h - t_lim) >= 0.0:
            h = t_lim - t
            last = True
        status, hused, hnext = dop853_advance(t, y, h, p, rtol, atol, hmax, W)
        if status != 0:
            return status, t, steps
        steps += 1
        t_new = t_lim if (last and hused == h) else t + hused
        S_new = nx * y[0] + ny * y[1] + nz * y[2] - d
        speed = sec_end_speed(W)
        if sec_near(S_old, S_new, lam, 1.5 * abs(hused) * speed):
            dop853_dense_prepare(t, hused, y, p, W)
            nr = sec_dense_roots(W, plane, S_old, S_new, th, val, rth, rdir, scratch[6])
            for r in range(nr):
                if steps == 1 and rth[r] * abs(hused) * speed <= 1e-10:
                    continue  # the start point itself lies on the plane
                count += 1
                if count == k:
                    tc = t + rth[r] * hused
                    dop853_dense_eval(rth[r], W, scratch[5], n)
                    for i in range(n):
                        y[i] = scratch[5, i]
                    if bounded and y[0] * y[0] + y[1] * y[1] + y[2] * y[2] > 1.0 + 1e-9:
                        return 1, tc, steps
                    return 4, tc, steps
        for i in range(n):
            W[0, i] = W[12, i]
        t = t_new
        h = hnext
        S_old = S_new
        if bounded and y[0] * y[0] + y[1] * y[1] + y[2] * y[2] > 1.0 + 1e-9:
            return 1, t, steps
        if last:
            return 0, t, steps


@njit(cache=CACHE, parallel=True, error_model="numpy")
def rm_batch(Y, t0, direction, k, spans, p, rtol, atol, hmax, max_steps, bounded, plane, t_out, outcome, steps):
    """Advance every row of ``Y`` (N, 3 + 3m) in place to its k-th return (one task per row).

    ``spans`` (N,) is the time limit of a plane section, or the exact time
    advanced for a stroboscopic one. Writes the return time, outcome and step
    count of each row; rows are independent, so results do not depend on the
    number of threads.
    """
    N, n = Y.shape
    for i in prange(N):
        W = np.zeros((W_ROWS, n))
        y = Y[i]
        if plane[SEC_KIND] == 1.0:
            oc, tt, ns = dop853_solve(t0, y, t0 + direction * spans[i], p, rtol, atol, hmax, max_steps, W, bounded)
        else:
            scratch = np.zeros((7, max(2 * SEC_SAMPLES + 2 + SEC_MAX_ROOTS, n)))
            oc, tt, ns = rm_orbit(y, t0, direction, k, spans[i], p, rtol, atol, hmax, max_steps, bounded, plane,
                                  W, scratch)
        t_out[i] = tt
        outcome[i] = oc
        steps[i] = ns
