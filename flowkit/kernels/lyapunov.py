"""Kernel template: tangent vectors kept orthonormal along an orbit (Lyapunov exponents).

The state is the usual ``position + k tangent vectors`` (see
:mod:`flowkit.kernels.steppers`); the tangent vectors obey the variational
equation with the flow's exact gradient. After every accepted DOP853 step the
tangent columns are re-orthonormalized by modified Gram–Schmidt (a QR
factorization Q R of the step's tangent map applied to the previous Q) and the
logarithms of the diagonal of R are accumulated: the method of Meccanica 15
(1980) 9-20 and 21-30, with the renormalization done every step so the columns stay of
order one (DOP853's error control then treats all of them alike and no
renormalization interval has to be tuned). The accumulated sums are reported per
*bookkeeping interval* so that the caller can discard a transient, keep a running
estimate and form block averages.

Along the way the time integral of the divergence (trace of the gradient) is
computed independently of the tangent vectors, by two-point Gauss quadrature on
the cubic Hermite interpolant of the position over each step (local error
O(h^5)). It is the sanity figure for the sum of the exponents (Liouville:
sum of log R_ii over a stretch of orbit equals the integral of div u).
"""

import math

import numpy as np

from flowkit.integrate.tableau import W_ROWS, W_YOLD
from flowkit.kernels._stub import CACHE, gradient, njit, prange  # flowkit:stub
from flowkit.kernels.steppers import dop853_advance, dop853_initial_step, rhs  # flowkit:stub

# Gauss–Legendre nodes on [0, 1] (two points, weights 1/2 each): 1/2 -+ sqrt(3)/6
LYAP_GAUSS_A = 0.5 - math.sqrt(3.0) / 6.0
LYAP_GAUSS_B = 0.5 + math.sqrt(3.0) / 6.0


@njit(cache=CACHE)
def tangent_orthonormalize(y, dy, logs):
    """Orthonormalize the tangent columns of ``y`` in place (modified Gram–Schmidt).

    Adds log R_cc to ``logs[c]``. The same column operations are applied to the
    tangent part of ``dy``: it holds G Q, which is linear in Q, so it stays the
    derivative of the new state without a new gradient evaluation (this keeps
    DOP853's first-same-as-last stage valid). Returns False if a column is zero
    or non-finite.
    """
    ncol = (y.shape[0] - 3) // 3
    for c in range(ncol):
        o = 3 + 3 * c
        for d in range(c):
            q = 3 + 3 * d
            r = y[q] * y[o] + y[q + 1] * y[o + 1] + y[q + 2] * y[o + 2]
            for i in range(3):
                y[o + i] -= r * y[q + i]
                dy[o + i] -= r * dy[q + i]
        nrm = math.sqrt(y[o] * y[o] + y[o + 1] * y[o + 1] + y[o + 2] * y[o + 2])
        if not (nrm > 0.0 and math.isfinite(nrm)):
            return False
        logs[c] += math.log(nrm)
        for i in range(3):
            y[o + i] /= nrm
            dy[o + i] /= nrm
    return True


@njit(cache=CACHE)
def divergence_over_step(t, h, W, y, p):
    """Integral of div u over the last accepted step (two-point Gauss, Hermite position).

    Needs ``W[0]`` = f at the step start, ``W[12]`` = f at its end, ``W[W_YOLD]``
    the start state and ``y`` the end state (as left by ``dop853_advance``).
    """
    acc = 0.0
    for node in (LYAP_GAUSS_A, LYAP_GAUSS_B):
        s = node
        h00 = (1.0 + 2.0 * s) * (1.0 - s) * (1.0 - s)
        h10 = s * (1.0 - s) * (1.0 - s)
        h01 = s * s * (3.0 - 2.0 * s)
        h11 = s * s * (s - 1.0)
        x0 = h00 * W[W_YOLD, 0] + h10 * h * W[0, 0] + h01 * y[0] + h11 * h * W[12, 0]
        x1 = h00 * W[W_YOLD, 1] + h10 * h * W[0, 1] + h01 * y[1] + h11 * h * W[12, 1]
        x2 = h00 * W[W_YOLD, 2] + h10 * h * W[0, 2] + h01 * y[2] + h11 * h * W[12, 2]
        g = gradient(x0, x1, x2, t + s * h, p)
        acc += 0.5 * (g[0] + g[4] + g[8])
    return acc * h


@njit(cache=CACHE)
def tangent_advance(t, y, t1, h, p, rtol, atol, hmax, max_steps, W, bounded, logs, div):
    """Advance ``y`` from t to t1 with adaptive DOP853, orthonormalizing after each step.

    ``W[0]`` must hold f(t, y) on entry and holds f at the new state on exit.
    ``h`` is the trial step (its sign is the direction). ``logs[c]`` receives the
    sum of log R_cc and ``div[0]`` the integral of div u. Returns
    (outcome, t, h_next, steps) with the outcome codes of
    :class:`flowkit.integrate.outcomes.Outcome`.
    """
    direction = 1.0 if t1 >= t else -1.0
    steps = 0
    while direction * (t1 - t) > 0:
        if steps >= max_steps:
            return 5, t, h, steps
        hh = h
        last = direction * (t + hh - t1) >= 0
        if last:
            hh = t1 - t
        status, hused, hnext = dop853_advance(t, y, hh, p, rtol, atol, hmax, W)
        if status != 0:
            return status, t, h, steps
        steps += 1
        div[0] += divergence_over_step(t, hused, W, y, p)
        landed = last and hused == hh
        t = t1 if landed else t + hused
        if not landed:
            h = hnext  # a shortened landing step says nothing new about the step size
            if direction * (t1 - t) <= 16.0 * 2.220446049250313e-16 * max(abs(t), abs(t1)):
                t = t1  # within round-off of the checkpoint: a further step would underflow
        for i in range(y.shape[0]):
            W[0, i] = W[12, i]
        if not tangent_orthonormalize(y, W[0], logs):
            return 3, t, h, steps
        if bounded and y[0] * y[0] + y[1] * y[1] + y[2] * y[2] > 1.0 + 1e-9:
            return 1, t, h, steps
    return 0, t, h, steps


@njit(cache=CACHE, parallel=True)
def tangent_batch(Y, times, p, rtol, atol, hmax, max_steps, bounded, logs, div, outcome, t_end, steps):
    """Follow each row of ``Y`` (N, 3 + 3k) through the checkpoint ``times`` (m + 1,).

    The tangent columns of each row must be orthonormal on entry. For each row n
    and stretch j (from ``times[j]`` to ``times[j + 1]``) writes the sum of
    log R_cc into ``logs[n, j, c]`` and the integral of div u into ``div[n, j]``;
    stretches not reached keep the caller's fill value. Writes the per-row
    outcome code, the time reached and the number of steps. ``max_steps`` bounds
    the steps of each row over the whole run. Rows run in parallel and write only
    their own slices, so results do not depend on the thread count.
    """
    N, n = Y.shape
    m = times.shape[0] - 1
    for k in prange(N):
        W = np.zeros((W_ROWS, n))
        y = Y[k]
        t = times[0]
        direction = 1.0 if times[m] >= times[0] else -1.0
        rhs(t, y, p, W[0])
        h = dop853_initial_step(t, y, p, direction, rtol, atol, W)
        used = 0
        oc = 0
        acc = np.zeros(max(1, (n - 3) // 3))
        dv = np.zeros(1)
        for j in range(m):
            acc[:] = 0.0
            dv[0] = 0.0
            oc, t, h, ns = tangent_advance(t, y, times[j + 1], h, p, rtol, atol, hmax, max_steps - used,
                                           W, bounded, acc, dv)
            used += ns
            if oc != 0:
                break
            for c in range(logs.shape[2]):
                logs[k, j, c] = acc[c]
            div[k, j] = dv[0]
        outcome[k] = oc
        t_end[k] = t
        steps[k] = used
