"""Kernel template: Poincaré sections of many orbits, each with its own adaptive step.

A plane section is S(x) = n.x - d = L for the levels L = 0 (bounded and open
domains) or L = j * lam for every integer j (periodic domains, where the plane
repeats every lam = 2*pi/|k| along n for an integer direction k; orbits are
integrated unwrapped). A stroboscopic section records the state at
t0 + phase + k * period.

Locating crossings
------------------
* DOP853 (``method`` 0): after an accepted step that changes the sign of S - L,
  or ends within about one step length of a level, the step's 7th-order dense
  output is built (Solving ODEs I, Springer 1993, section II.10) and projected on
  n, giving S(theta) as a scalar polynomial of degree 7 in the step fraction
  theta. It is sampled at 17 points; where its derivative changes sign between
  two samples the extremum is located and added, so a pair of crossings hidden
  inside one step (S returning to the same side) is caught. Every sign change
  is then polished by bracketed Newton iteration on the polynomial to round-off
  in theta, and the state is the dense output there. Never linear interpolation.
* Fixed-step methods (``method`` 1 RK4, 2 splitting): Hénon's change of
  independent variable (Physica D 5, 1982, 412): from the state before the
  crossing, one step of an 8th-order Runge–Kutta formula (DOP853's weights) of
  dx/ds = f / (n.f), dt/ds = 1 / (n.f) lands on S = L. A step whose end points
  show S approaching at the start and receding at the end is checked at the
  extremum of the cubic Hermite model of S (one partial step of the method);
  a confirmed hidden pair is located from both ends. A grazing crossing where
  the Hénon step is not trustworthy (n.f near 0) falls back to bisection on
  partial steps of the method. Nothing raises inside the kernel.

A crossing is a change of ``S - L >= 0``: the plane belongs to the positive
side, so every crossing is counted once, a seed lying on the plane is not a
crossing, and a tangency never crashes. Direction +1 means S increases (n.u > 0).

Kernels use ``error_model="numpy"``: a division by zero (n.u = 0 at a grazing
crossing, a singular Newton matrix) gives inf/NaN, which is tested for, instead of
raising inside a parallel loop.

Outcomes (flowkit.integrate.outcomes): 0 reached ``t_max``, 1 left the unit ball,
2 step-size underflow (or an implicit sub-step that did not converge), 3
non-finite value, 4 crossing budget reached, 5 step budget reached.
"""

import numpy as np

from flowkit.integrate.tableau import W_ROWS
from flowkit.kernels._stub import CACHE, njit, prange  # flowkit:stub
from flowkit.kernels.sections_plane import (  # flowkit:stub
    SEC_D, SEC_KIND, SEC_LAM, SEC_MAX_ROOTS, SEC_NX, SEC_NY, SEC_NZ, SEC_PERIOD, SEC_PHASE,  # flowkit:stub
    SEC_SAMPLES, sec_dense_roots, sec_outside, sec_end_speed, sec_may_cross, sec_store,  # flowkit:stub
)  # flowkit:stub
from flowkit.kernels.steppers import (  # flowkit:stub
    dop853_dense_eval, dop853_dense_prepare, dop853_initial_step, rhs,  # flowkit:stub
)  # flowkit:stub


@njit(cache=CACHE, error_model="numpy")
def sec_orbit_dop853(y, t0, t_lim, p, rtol, atol, hmax, max_steps, bounded, plane, K, pts, tim, sgn, W, scratch):
    """Section of one orbit with adaptive DOP853; returns (outcome, count, t_end, steps)."""
    nx = plane[SEC_NX]
    ny = plane[SEC_NY]
    nz = plane[SEC_NZ]
    d = plane[SEC_D]
    lam = plane[SEC_LAM]
    strobe = plane[SEC_KIND] == 1.0
    period = plane[SEC_PERIOD]
    th = scratch[0]
    val = scratch[1]
    rth = scratch[2]
    rdir = scratch[3]
    state = scratch[4, :3]
    t = t0
    kstrobe = 0 if plane[SEC_PHASE] > 0.0 else 1
    count = 0
    rhs(t, y, p, W[0])
    h = dop853_initial_step(t, y, p, 1.0, rtol, atol, W)
    S_old = nx * y[0] + ny * y[1] + nz * y[2] - d
    steps = 0
    while True:
        if steps >= max_steps:
            return 5, count, t, steps
        last = False
        if t + h >= t_lim:
            h = t_lim - t
            last = True
        status, hused, hnext = dop853_advance_3(t, y, h, p, rtol, atol, hmax, W)  # noqa: F821
        if status != 0:
            return status, count, t, steps
        steps += 1
        t_new = t_lim if (last and hused == h) else t + hused
        S_new = nx * y[0] + ny * y[1] + nz * y[2] - d
        if strobe:
            prepared = False
            while True:
                ts = t0 + plane[SEC_PHASE] + kstrobe * period
                if ts > t_new:
                    break
                if not prepared:
                    dop853_dense_prepare(t, hused, y, p, W)
                    prepared = True
                if ts == t_new:
                    state[0] = y[0]
                    state[1] = y[1]
                    state[2] = y[2]
                else:
                    dop853_dense_eval((ts - t) / hused, W, state, 3)
                count = sec_store(pts, tim, sgn, count, state[0], state[1], state[2], ts, 0.0)
                kstrobe += 1
                if count >= K:
                    return 4, count, ts, steps
        else:
            speed = sec_end_speed(W)
            m0 = hused * (nx * W[0, 0] + ny * W[0, 1] + nz * W[0, 2])
            m1 = hused * (nx * W[12, 0] + ny * W[12, 1] + nz * W[12, 2])
            if sec_may_cross(S_old, S_new, lam, 1.5 * abs(hused) * speed, m0, m1):
                dop853_dense_prepare(t, hused, y, p, W)
                nr = sec_dense_roots(W, plane, S_old, S_new, th, val, rth, rdir, scratch[6])
                for r in range(nr):
                    if steps == 1 and rth[r] == 0.0:
                        continue  # the seed itself lies on the plane: not a crossing
                    dop853_dense_eval(rth[r], W, state, 3)
                    if sec_outside(bounded, state[0], state[1], state[2]):
                        return 1, count, t + rth[r] * hused, steps
                    count = sec_store(pts, tim, sgn, count, state[0], state[1], state[2], t + rth[r] * hused, rdir[r])
                    if count >= K:
                        return 4, count, t + rth[r] * hused, steps
        for i in range(y.shape[0]):
            W[0, i] = W[12, i]
        t = t_new
        h = hnext
        S_old = S_new
        if sec_outside(bounded, y[0], y[1], y[2]):
            return 1, count, t, steps
        if last:
            return 0, count, t, steps


@njit(cache=CACHE, parallel=True, error_model="numpy")
def sec_batch_dop853(seeds, t0, t_lim, p, rtol, atol, hmax, max_steps, bounded, plane,
                     pts, tim, sgn, count, outcome, t_end, steps):
    """Poincaré section of every seed with adaptive DOP853 (one task per seed).

    ``pts`` (N, K, 3), ``tim`` (N, K), ``sgn`` (N, K) receive the crossings of
    each orbit in time order; ``count``, ``outcome``, ``t_end``, ``steps`` (N,)
    the per-orbit bookkeeping. Each task writes only its own rows, so results do
    not depend on the number of threads.
    """
    K = pts.shape[1]
    for k in prange(seeds.shape[0]):
        W = np.zeros((W_ROWS, 3))
        scratch = np.zeros((7, 2 * SEC_SAMPLES + 2 + SEC_MAX_ROOTS))
        y = seeds[k].copy()
        oc, c, te, ns = sec_orbit_dop853(y, t0, t_lim, p, rtol, atol, hmax, max_steps, bounded, plane, K,
                                         pts[k], tim[k], sgn[k], W, scratch)
        count[k] = c
        outcome[k] = oc
        t_end[k] = te
        steps[k] = ns
