"""Kernel template: DOP853's stiffness test, shared by every adaptive kernel.

After accepted steps the ratio h*|lambda| is estimated from stages already computed
(no extra evaluation) and compared with the method's stability boundary; an orbit
held by stability rather than accuracy ends with outcome 6 ("stiff").
"""

import math

from flowkit.integrate.tableau import (
    STIFF_ACTIVE, STIFF_BOUND, STIFF_CLEAR, STIFF_D, STIFF_EVERY, STIFF_RUN, STIFF_SEPARATION, W_STIFF,
)
from flowkit.kernels._stub import CACHE, njit  # flowkit:stub


@njit(cache=CACHE)
def dop853_stiff_ratio(W, n):
    """h*|lambda| estimated from the accepted step in W: |K13 - K12| / |sum_j STIFF_D[j] K_j|.

    K12 = f(t + h, Y12) is the last stage and K13 = f(t + h, ynew) the first-same-as-last
    evaluation, both at t + h; their difference over the state difference ynew - Y12
    (= h * sum_j STIFF_D[j] K_j, so h cancels) estimates the Jacobian's dominant
    eigenvalue times h. Zero when the states coincide.
    """
    num = 0.0
    den = 0.0
    for i in range(n):
        d = 0.0
        for j in range(12):
            d += STIFF_D[j] * W[j, i]
        den += d * d
        e = W[12, i] - W[11, i]
        num += e * e
    if not den > 0.0:
        return 0.0
    return math.sqrt(num / den)


@njit(cache=CACHE)
def dop853_stiff_separated(W, n):
    """Is the step of a state with tangent vectors held by a mode far faster than the orbit?

    True when h*|lambda| > STIFF_ACTIVE and h*|lambda| > STIFF_SEPARATION * |f1 - f0| / |f0|
    (positions' velocity at the end and the start of the step): the relative change of the
    velocity over the step is h times the orbit's own rate (see tableau.STIFF_SEPARATION).
    """
    r = dop853_stiff_ratio(W, n)
    if not r > STIFF_ACTIVE:
        return False
    a = W[0, 0] * W[0, 0] + W[0, 1] * W[0, 1] + W[0, 2] * W[0, 2]
    if not a > 0.0:
        return False  # at rest: no time scale of the orbit to compare with
    d0 = W[12, 0] - W[0, 0]
    d1 = W[12, 1] - W[0, 1]
    d2 = W[12, 2] - W[0, 2]
    return r * r > STIFF_SEPARATION * STIFF_SEPARATION * (d0 * d0 + d1 * d1 + d2 * d2) / a


@njit(cache=CACHE)
def dop853_stiff_test(W, n):
    """Stiffness bookkeeping after an accepted step; True once the orbit has proven stiff.

    The test of the published DOP853 code (Solving Ordinary Differential
    Equations II, 2nd ed., Springer, 1996, section IV.2; cited from memory): every
    :data:`STIFF_EVERY` accepted steps, and after every accepted step once a test
    came out stiff, h*|lambda| (:func:`dop853_stiff_ratio`) is compared with the
    stability boundary :data:`STIFF_BOUND` of DOP853 on the negative real axis;
    :data:`STIFF_RUN` stiff results (not interrupted by :data:`STIFF_CLEAR` calm
    ones in a row) mean the step is held by stability, not accuracy. Counters
    live in ``W[W_STIFF]`` (zero at the start of an orbit). Costs one counter
    update per step; the estimate itself runs on one step in a thousand.
    With tangent vectors a step also counts as stiff when the fast mode is
    separated from the orbit's own time scale (:func:`dop853_stiff_separated`).
    """
    c = W[W_STIFF]
    c[0] += 1.0
    if c[0] < STIFF_EVERY and c[1] == 0.0:
        return False
    if c[0] >= STIFF_EVERY:
        c[0] = 0.0
    if dop853_stiff_ratio(W, n) > STIFF_BOUND or (n > 3 and dop853_stiff_separated(W, n)):
        c[2] = 0.0
        c[1] += 1.0
        return c[1] >= STIFF_RUN
    c[2] += 1.0
    if c[2] >= STIFF_CLEAR:
        c[1] = 0.0
    return False
