"""Kernel template: right-hand side and Runge–Kutta steps for one flow family.

State layout: ``y[0:3]`` is the position; any further entries come in groups of
three, each a tangent vector v obeying dv/dt = (grad u) v (the variational
equation; for incompressible flow also the frozen-in field equation
dB/dt = (B . grad) u). So a 3-vector integrates a streamline, a 6-vector a
streamline with one field vector, a 12-vector a streamline with the full
deformation gradient (columns stored one after another).

Integrating backward in time is a negative step ``h``.

DOP853 follows Solving Ordinary Differential Equations I (Springer, 1993,
section II.10): error estimate from the embedded 5th- and 3rd-order solutions,
step-size control with safety 0.9 and factors clipped to [0.2, 10], initial step
by the algorithm of section II.4, and the 7th-order dense output.
"""

import math

import numpy as np

from flowkit.integrate.tableau import (
    DOP_A, DOP_B, DOP_C, DOP_D, DOP_E3, DOP_E5, RK4_B, RK4_C, W_F, W_K, W_YNEW, W_YOLD, W_YTMP,
)
from flowkit.kernels._stub import CACHE, gradient, njit, velocity  # flowkit:stub


@njit(cache=CACHE)
def rhs(t, y, p, dy):
    """Time derivative of the state ``y`` (position + tangent vectors) into ``dy``."""
    u, v, w = velocity(y[0], y[1], y[2], t, p)
    dy[0] = u
    dy[1] = v
    dy[2] = w
    ncol = (y.shape[0] - 3) // 3
    if ncol > 0:
        g = gradient(y[0], y[1], y[2], t, p)
        for c in range(ncol):
            o = 3 + 3 * c
            a0 = y[o]
            a1 = y[o + 1]
            a2 = y[o + 2]
            dy[o] = g[0] * a0 + g[1] * a1 + g[2] * a2
            dy[o + 1] = g[3] * a0 + g[4] * a1 + g[5] * a2
            dy[o + 2] = g[6] * a0 + g[7] * a1 + g[8] * a2


@njit(cache=CACHE)
def rk4_step(t, y, h, p, W):
    """One classical RK4 step of size ``h``; ``y`` is updated in place. Uses W rows 0..4."""
    n = y.shape[0]
    k = W
    tmp = W[W_YTMP]
    rhs(t, y, p, k[0])
    for s in range(1, 4):
        for i in range(n):
            tmp[i] = y[i] + RK4_C[s] * h * k[s - 1, i]
        rhs(t + RK4_C[s] * h, tmp, p, k[s])
    for i in range(n):
        y[i] += h * (RK4_B[0] * k[0, i] + RK4_B[1] * k[1, i] + RK4_B[2] * k[2, i] + RK4_B[3] * k[3, i])


@njit(cache=CACHE)
def dop853_stages(t, y, h, p, W, first, last):
    """Stages ``first..last-1`` of a DOP853 step of size ``h`` from (t, y) into W rows."""
    n = y.shape[0]
    tmp = W[W_YTMP]
    for s in range(first, last):
        for i in range(n):
            acc = 0.0
            for j in range(s):
                acc += DOP_A[s, j] * W[j, i]
            tmp[i] = y[i] + h * acc
        rhs(t + DOP_C[s] * h, tmp, p, W[s])


@njit(cache=CACHE)
def dop853_try(t, y, h, p, rtol, atol, W):
    """Attempt one DOP853 step from (t, y) with W[0] = f(t, y) already set.

    Writes the candidate into ``W[W_YNEW]`` and f(t + h, ynew) into ``W[12]``.
    Returns the scaled error norm (accept when <= 1); NaN if anything is non-finite.
    """
    n = y.shape[0]
    K = W
    dop853_stages(t, y, h, p, W, 1, 12)
    ynew = W[W_YNEW]
    for i in range(n):
        acc = 0.0
        for j in range(12):
            acc += DOP_B[j] * K[j, i]
        ynew[i] = y[i] + h * acc
    rhs(t + h, ynew, p, K[12])
    e5 = 0.0
    e3 = 0.0
    for i in range(n):
        sc = atol + rtol * max(abs(y[i]), abs(ynew[i]))
        a5 = 0.0
        a3 = 0.0
        for j in range(13):
            a5 += DOP_E5[j] * K[j, i]
            a3 += DOP_E3[j] * K[j, i]
        e5 += (a5 / sc) ** 2
        e3 += (a3 / sc) ** 2
    if not (math.isfinite(e5) and math.isfinite(e3)):
        return np.nan
    if e5 == 0.0 and e3 == 0.0:
        return 0.0
    return abs(h) * e5 / math.sqrt((e5 + 0.01 * e3) * n)


@njit(cache=CACHE)
def dop853_initial_step(t, y, p, direction, rtol, atol, W):
    """First step size (Solving ODEs I, section II.4); W[0] must hold f(t, y)."""
    n = y.shape[0]
    f0 = W[0]
    d0 = 0.0
    d1 = 0.0
    for i in range(n):
        sc = atol + abs(y[i]) * rtol
        d0 += (y[i] / sc) ** 2
        d1 += (f0[i] / sc) ** 2
    d0 = math.sqrt(d0 / n)
    d1 = math.sqrt(d1 / n)
    h0 = 1e-6 if (d0 < 1e-5 or d1 < 1e-5) else 0.01 * d0 / d1
    tmp = W[W_YTMP]
    for i in range(n):
        tmp[i] = y[i] + direction * h0 * f0[i]
    f1 = W[1]
    rhs(t + direction * h0, tmp, p, f1)
    d2 = 0.0
    for i in range(n):
        sc = atol + abs(y[i]) * rtol
        d2 += ((f1[i] - f0[i]) / sc) ** 2
    d2 = math.sqrt(d2 / n) / h0
    if d1 <= 1e-15 and d2 <= 1e-15:
        h1 = max(1e-6, h0 * 1e-3)
    else:
        h1 = (0.01 / max(d1, d2)) ** (1.0 / 8.0)
    return direction * min(100 * h0, h1)


@njit(cache=CACHE)
def dop853_advance(t, y, h, p, rtol, atol, hmax, W):
    """Take one accepted adaptive DOP853 step from (t, y) trying size ``h`` first.

    ``W[0]`` must hold f(t, y) (the caller sets it once; afterwards each call
    leaves f at the new point in ``W[0]``, first-same-as-last). On success the
    old state is kept in ``W[W_YOLD]`` and the stages in W rows 0..12 are those
    of the step (so :func:`dop853_dense_prepare` can follow), ``y`` holds the new
    state, and the return value is (status, h_used, h_next) with status 0.
    Status 2: step-size underflow; status 3: non-finite values.
    """
    n = y.shape[0]
    direction = 1.0 if h >= 0 else -1.0
    habs = min(abs(h), hmax)
    nonfinite = False
    while True:
        hmin = 10.0 * (abs(t) * 2.220446049250313e-16 + 1e-300)
        if habs < hmin:
            # a step that keeps producing non-finite values is reported as such
            return (3 if nonfinite else 2), 0.0, 0.0
        hh = direction * habs
        err = dop853_try(t, y, hh, p, rtol, atol, W)
        if not math.isfinite(err):
            nonfinite = True
            habs *= 0.2  # a non-finite stage: retreat, and report only if it persists
            continue
        nonfinite = False
        if err <= 1.0:
            fac = 10.0 if err == 0.0 else min(10.0, 0.9 * err ** (-1.0 / 8.0))
            for i in range(n):
                W[W_YOLD, i] = y[i]
                y[i] = W[W_YNEW, i]
            hnext = direction * min(habs * fac, hmax)
            return 0, hh, hnext
        habs *= max(0.2, 0.9 * err ** (-1.0 / 8.0))


@njit(cache=CACHE)
def dop853_dense_prepare(t_old, h, y, p, W):
    """After an accepted step of size ``h`` from ``t_old``: fill the dense-output rows.

    Needs the step's stages (W rows 0..12), ``W[W_YOLD]`` and the new state ``y``.
    Costs three extra right-hand-side evaluations.
    """
    n = y.shape[0]
    K = W
    yold = W[W_YOLD]
    dop853_stages(t_old, yold, h, p, W, 13, 16)
    for i in range(n):
        dy = y[i] - yold[i]
        W[W_F, i] = dy
        W[W_F + 1, i] = h * K[0, i] - dy
        W[W_F + 2, i] = 2.0 * dy - h * (K[12, i] + K[0, i])
        for r in range(4):
            acc = 0.0
            for j in range(16):
                acc += DOP_D[r, j] * K[j, i]
            W[W_F + 3 + r, i] = h * acc


@njit(cache=CACHE)
def dop853_dense_eval(theta, W, out, ncomp):
    """State at fraction ``theta`` in [0, 1] of the last step, first ``ncomp`` components."""
    for i in range(ncomp):
        acc = 0.0
        for r in range(6, -1, -1):
            acc += W[W_F + r, i]
            if (6 - r) % 2 == 0:
                acc *= theta
            else:
                acc *= 1.0 - theta
        out[i] = acc + W[W_YOLD, i]


@njit(cache=CACHE)
def dop853_solve(t0, y, t1, p, rtol, atol, hmax, max_steps, W, bounded):
    """Integrate ``y`` in place from t0 to t1 (either direction) with adaptive DOP853.

    The last step is shortened to land on t1 exactly. ``bounded`` stops with
    outcome 1 when the position leaves the unit ball. Returns (outcome, t, steps).
    """
    direction = 1.0 if t1 >= t0 else -1.0
    t = t0
    if t1 == t0:
        return 0, t, 0
    rhs(t, y, p, W[0])
    for i in range(y.shape[0]):
        if not math.isfinite(W[0, i]):
            return 3, t, 0
    h = dop853_initial_step(t, y, p, direction, rtol, atol, W)
    steps = 0
    while direction * (t1 - t) > 0:
        if steps >= max_steps:
            return 5, t, steps
        last = False
        if direction * (t + h - t1) > 0:
            h = t1 - t
            last = True
        status, hused, hnext = dop853_advance(t, y, h, p, rtol, atol, hmax, W)
        if status != 0:
            return status, t, steps
        steps += 1
        t = t1 if (last and hused == h) else t + hused
        h = hnext
        W[0, :] = W[12, :]
        if bounded and y[0] * y[0] + y[1] * y[1] + y[2] * y[2] > 1.0 + 1e-9:
            return 1, t, steps
    return 0, t, steps


@njit(cache=CACHE)
def rk4_solve(t0, y, t1, nsteps, p, W, bounded):
    """Integrate ``y`` in place from t0 to t1 with ``nsteps`` equal RK4 steps."""
    h = (t1 - t0) / nsteps
    for k in range(nsteps):
        rk4_step(t0 + k * h, y, h, p, W)
        for i in range(y.shape[0]):
            if not math.isfinite(y[i]):
                return 3, t0 + (k + 1) * h, k + 1
        if bounded and y[0] * y[0] + y[1] * y[1] + y[2] * y[2] > 1.0 + 1e-9:
            return 1, t0 + (k + 1) * h, k + 1
    return 0, t1, nsteps
