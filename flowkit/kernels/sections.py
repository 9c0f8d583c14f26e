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

import math

import numpy as np

from flowkit.integrate.tableau import DOP_A, DOP_B, W_F, W_ROWS, W_YOLD
from flowkit.kernels._stub import CACHE, njit, prange, velocity  # flowkit:stub
from flowkit.kernels.splitting import split_step  # flowkit:stub
from flowkit.kernels.steppers import (  # flowkit:stub
    dop853_advance, dop853_dense_eval, dop853_dense_prepare, dop853_initial_step, rhs, rk4_step,  # flowkit:stub
)  # flowkit:stub

#: layout of the ``plane`` parameter vector
SEC_NX, SEC_NY, SEC_NZ, SEC_D, SEC_LAM, SEC_KIND, SEC_PERIOD, SEC_PHASE, SEC_DIR = range(9)
SEC_PLANE_LEN = 9
#: samples of the projected dense output per flagged step
SEC_SAMPLES = 16
#: capacity of the per-step root list (more roots in one step than this: budget cut)
SEC_MAX_ROOTS = 64


@njit(cache=CACHE, error_model="numpy")
def sec_poly(c, theta):
    """P(theta) and dP/dtheta for the projected dense output (same nesting as dop853_dense_eval)."""
    acc = 0.0
    dacc = 0.0
    for r in range(6, -1, -1):
        acc += c[r]
        if (6 - r) % 2 == 0:
            dacc = dacc * theta + acc
            acc *= theta
        else:
            dacc = dacc * (1.0 - theta) - acc
            acc *= 1.0 - theta
    return acc, dacc


@njit(cache=CACHE, error_model="numpy")
def sec_poly_root(c, base, a, fa, b, fb):
    """Root of base + P(theta) in [a, b] where the sign (>= 0 is positive) changes.

    Bracketed Newton iteration: a Newton step that leaves the bracket is replaced
    by bisection, so it always converges; it stops at round-off in theta.
    """
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    pos_a = fa >= 0.0
    x = a - fa * (b - a) / (fb - fa)
    if not (a < x < b):
        x = 0.5 * (a + b)
    for it in range(100):
        P, dP = sec_poly(c, x)
        f = base + P
        if f == 0.0:
            return x
        if (f >= 0.0) == pos_a:
            a = x
        else:
            b = x
        xn = x - f / dP if dP != 0.0 else 0.5 * (a + b)
        if not (a < xn < b):
            xn = 0.5 * (a + b)
        if abs(xn - x) <= 2.3e-16 * max(abs(x), 1e-3) or b - a <= 4.5e-16:
            return xn
        x = xn
    return x


@njit(cache=CACHE, error_model="numpy")
def sec_poly_extremum(c, a, da, b, db):
    """Zero of dP/dtheta in [a, b] (da, db of opposite signs), Illinois regula falsi."""
    side = 0
    x = a
    for it in range(200):
        x = (a * db - b * da) / (db - da)
        if not (a <= x <= b):
            x = 0.5 * (a + b)
        dx = sec_poly(c, x)[1]
        if dx == 0.0 or b - a <= 1e-15:
            return x
        if (dx > 0.0) == (db > 0.0):
            b = x
            db = dx
            if side == -1:
                da *= 0.5
            side = -1
        else:
            a = x
            da = dx
            if side == 1:
                db *= 0.5
            side = 1
    return x


@njit(cache=CACHE, error_model="numpy")
def sec_levels(lo, hi, lam):
    """Integer range [jlo, jhi] of levels j * lam that can lie in [lo, hi] (0, 0 if lam == 0)."""
    if lam == 0.0:
        return 0, 0
    return int(math.floor(lo / lam)), int(math.ceil(hi / lam))


@njit(cache=CACHE, error_model="numpy")
def sec_near(S_old, S_new, lam, reach):
    """Does a level lie between S_old and S_new, or within ``reach`` of either end?"""
    if lam == 0.0:
        return (S_old >= 0.0) != (S_new >= 0.0) or min(abs(S_old), abs(S_new)) <= reach
    if math.floor(S_old / lam) != math.floor(S_new / lam):
        return True
    r_old = abs(S_old - lam * round(S_old / lam))
    r_new = abs(S_new - lam * round(S_new / lam))
    return min(r_old, r_new) <= reach


@njit(cache=CACHE, error_model="numpy")
def sec_sort_roots(rth, rdir, nr):
    """Insertion sort of the (few) roots of one step by theta."""
    for i in range(1, nr):
        th = rth[i]
        dr = rdir[i]
        j = i - 1
        while j >= 0 and rth[j] > th:
            rth[j + 1] = rth[j]
            rdir[j + 1] = rdir[j]
            j -= 1
        rth[j + 1] = th
        rdir[j + 1] = dr


@njit(cache=CACHE, error_model="numpy")
def sec_dense_roots(W, plane, S_old, S_new, th, val, rth, rdir, c):
    """Crossings of every level inside the last accepted step, on the dense output.

    ``W`` must hold the prepared dense output. Writes the step fractions and
    directions of the crossings, in time order, to ``rth``/``rdir`` and returns
    their number. ``c`` (length >= 7) receives the projected dense coefficients.
    """
    nx = plane[SEC_NX]
    ny = plane[SEC_NY]
    nz = plane[SEC_NZ]
    lam = plane[SEC_LAM]
    want = plane[SEC_DIR]
    for r in range(7):
        c[r] = nx * W[W_F + r, 0] + ny * W[W_F + r, 1] + nz * W[W_F + r, 2]
    # samples of S(theta), refined by the extrema between samples
    m = 0
    th[0] = 0.0
    val[0] = S_old
    d_prev = sec_poly(c, 0.0)[1]
    lo = S_old
    hi = S_old
    for j in range(1, SEC_SAMPLES + 1):
        tj = j / SEC_SAMPLES
        Pj, dj = sec_poly(c, tj)
        vj = S_new if j == SEC_SAMPLES else S_old + Pj
        if (d_prev < 0.0 and dj > 0.0) or (d_prev > 0.0 and dj < 0.0):
            te = sec_poly_extremum(c, th[m], d_prev, tj, dj)
            if th[m] < te < tj:
                m += 1
                th[m] = te
                val[m] = S_old + sec_poly(c, te)[0]
                lo = min(lo, val[m])
                hi = max(hi, val[m])
        m += 1
        th[m] = tj
        val[m] = vj
        lo = min(lo, vj)
        hi = max(hi, vj)
        d_prev = dj
    jlo, jhi = sec_levels(lo, hi, lam)
    nr = 0
    for jl in range(jlo, jhi + 1):
        L = jl * lam
        for k in range(m):
            fa = val[k] - L
            fb = val[k + 1] - L
            if (fa >= 0.0) == (fb >= 0.0):
                continue
            sgn = 1.0 if fb >= 0.0 else -1.0
            if want != 0.0 and sgn != want:
                continue
            if nr < rth.shape[0]:
                rth[nr] = sec_poly_root(c, S_old - L, th[k], fa, th[k + 1], fb)
                rdir[nr] = sgn
                nr += 1
    sec_sort_roots(rth, rdir, nr)
    return nr


@njit(cache=CACHE, error_model="numpy")
def sec_henon(ya, ta, target, plane, p, H):
    """Hénon's step: from state ``ya`` at ``ta`` to S(x) = ``target`` in one 8th-order step.

    Integrates dx/ds = f/(n.f), dt/ds = 1/(n.f) in s = n.x - d with DOP853's
    12-stage weights. The result (x, y, z, t) is left in ``H[12]``.
    """
    nx = plane[SEC_NX]
    ny = plane[SEC_NY]
    nz = plane[SEC_NZ]
    ds = target - (nx * ya[0] + ny * ya[1] + nz * ya[2] - plane[SEC_D])
    tmp = H[13]
    for s in range(12):
        tmp[0] = ya[0]
        tmp[1] = ya[1]
        tmp[2] = ya[2]
        tmp[3] = ta
        for j in range(s):
            a = DOP_A[s, j] * ds
            for i in range(4):
                tmp[i] += a * H[j, i]
        u, v, w = velocity(tmp[0], tmp[1], tmp[2], tmp[3], p)
        g = nx * u + ny * v + nz * w
        H[s, 0] = u / g
        H[s, 1] = v / g
        H[s, 2] = w / g
        H[s, 3] = 1.0 / g
    out = H[12]
    out[0] = ya[0]
    out[1] = ya[1]
    out[2] = ya[2]
    out[3] = ta
    for j in range(12):
        b = DOP_B[j] * ds
        for i in range(4):
            out[i] += b * H[j, i]


@njit(cache=CACHE, error_model="numpy")
def sec_fixed_step(method, t, y, h, p, order, W):
    """One step of a fixed-step method (1: RK4, 2: splitting); returns a status code."""
    if method == 1:
        rk4_step(t, y, h, p, W)
        for i in range(3):
            if not math.isfinite(y[i]):
                return 3
        return 0
    return split_step(t, y, h, p, order)


@njit(cache=CACHE, error_model="numpy")
def sec_partial(method, t, ya, theta, h, p, order, W, out):
    """The method's own step of size theta*h from ``ya`` into ``out``; returns its status."""
    for i in range(3):
        out[i] = ya[i]
    return sec_fixed_step(method, t, out, theta * h, p, order, W)


@njit(cache=CACHE, error_model="numpy")
def sec_fixed_locate(method, t, ya, yb, h, L, plane, p, order, W, H, from_end, tmp):
    """Crossing of level L inside a fixed step [t, t + h] from ya to yb.

    Hénon's step from ``ya`` (or from ``yb`` backwards when ``from_end``); if
    that is not trustworthy (non-finite, or a time outside the step: a grazing
    crossing), bisection on partial steps of the method. Result in ``H[12]``.
    """
    start = yb if from_end else ya
    t_start = t + h if from_end else t
    sec_henon(start, t_start, L, plane, p, H)
    out = H[12]
    tt = out[3]
    lo_t = min(t, t + h)
    hi_t = max(t, t + h)
    ok = math.isfinite(out[0]) and math.isfinite(out[1]) and math.isfinite(out[2]) and lo_t <= tt <= hi_t
    if ok:
        return
    # fallback: bisection in theta on the method's own partial steps
    nx = plane[SEC_NX]
    ny = plane[SEC_NY]
    nz = plane[SEC_NZ]
    d = plane[SEC_D]
    fa = nx * ya[0] + ny * ya[1] + nz * ya[2] - d - L
    a = 0.0
    b = 1.0
    for it in range(60):
        mid = 0.5 * (a + b)
        sec_partial(method, t, ya, mid, h, p, order, W, tmp)
        fm = nx * tmp[0] + ny * tmp[1] + nz * tmp[2] - d - L
        if (fm >= 0.0) == (fa >= 0.0):
            a = mid
        else:
            b = mid
    sec_partial(method, t, ya, b, h, p, order, W, tmp)
    for i in range(3):
        out[i] = tmp[i]
    out[3] = t + b * h


@njit(cache=CACHE, error_model="numpy")
def sec_store(pts, tim, sgn, count, x, y, z, t, direction):
    pts[count, 0] = x
    pts[count, 1] = y
    pts[count, 2] = z
    tim[count] = t
    sgn[count] = direction
    return count + 1


@njit(cache=CACHE, error_model="numpy")
def sec_outside(bounded, x, y, z):
    return bounded and x * x + y * y + z * z > 1.0 + 1e-9


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
        status, hused, hnext = dop853_advance(t, y, h, p, rtol, atol, hmax, W)
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
            f0 = W[0]
            f1 = W[12]
            speed = math.sqrt(max(f0[0] * f0[0] + f0[1] * f0[1] + f0[2] * f0[2],
                                  f1[0] * f1[0] + f1[1] * f1[1] + f1[2] * f1[2]))
            if sec_near(S_old, S_new, lam, 1.5 * abs(hused) * speed):
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


@njit(cache=CACHE, error_model="numpy")
def sec_orbit_fixed(method, y, t0, t_lim, p, hfix, order, max_steps, bounded, plane, K, pts, tim, sgn, W, H, scratch):
    """Section of one orbit with a fixed-step method (1 RK4, 2 splitting)."""
    nx = plane[SEC_NX]
    ny = plane[SEC_NY]
    nz = plane[SEC_NZ]
    d = plane[SEC_D]
    lam = plane[SEC_LAM]
    want = plane[SEC_DIR]
    strobe = plane[SEC_KIND] == 1.0
    period = plane[SEC_PERIOD]
    ya = scratch[4, :3]  # views of length 3: the steppers read the state size from them
    tmp = scratch[5, :3]
    t = t0
    count = 0
    steps = 0
    kstrobe = 0 if plane[SEC_PHASE] > 0.0 else 1
    target = t_lim
    n_left = 0  # fixed steps left to the next stroboscopic time
    hh = hfix
    fa = velocity(y[0], y[1], y[2], t, p)
    while True:
        if strobe and n_left == 0:
            target = min(t0 + plane[SEC_PHASE] + kstrobe * period, t_lim)
            n_left = max(1, int(math.ceil((target - t) / hfix - 1e-9)))
            hh = (target - t) / n_left
        if steps >= max_steps:
            return 5, count, t, steps
        last = False
        if strobe:
            h = hh
        else:
            h = hfix
            if t + h >= t_lim:
                h = t_lim - t
                last = True
        for i in range(3):
            ya[i] = y[i]
        status = sec_fixed_step(method, t, y, h, p, order, W)
        if status != 0:
            return status, count, t, steps
        steps += 1
        t_new = t + h
        if strobe:
            n_left -= 1
            if n_left == 0:
                t_new = target
                if target >= t_lim:
                    last = True
                if target == t0 + plane[SEC_PHASE] + kstrobe * period:
                    count = sec_store(pts, tim, sgn, count, y[0], y[1], y[2], t_new, 0.0)
                    kstrobe += 1
                    if count >= K:
                        return 4, count, t_new, steps
        else:
            S_a = nx * ya[0] + ny * ya[1] + nz * ya[2] - d
            S_b = nx * y[0] + ny * y[1] + nz * y[2] - d
            fb = velocity(y[0], y[1], y[2], t_new, p)
            g_a = h * (nx * fa[0] + ny * fa[1] + nz * fa[2])
            g_b = h * (nx * fb[0] + ny * fb[1] + nz * fb[2])
            # extremum of the cubic Hermite model of S over the step (when S' changes sign)
            S_ext = S_a
            th_ext = -1.0
            if g_a * g_b < 0.0:
                # H'(th) = 0 for the cubic through (S_a, g_a) and (S_b, g_b): quadratic in th
                qa = 3.0 * (g_a + g_b) - 6.0 * (S_b - S_a)
                qb = 6.0 * (S_b - S_a) - 4.0 * g_a - 2.0 * g_b
                qc = g_a
                if abs(qa) < 1e-300:
                    th_ext = -qc / qb
                else:
                    disc = math.sqrt(max(qb * qb - 4.0 * qa * qc, 0.0))
                    r1 = (-qb - disc) / (2.0 * qa)
                    r2 = (-qb + disc) / (2.0 * qa)
                    th_ext = r1 if 0.0 < r1 < 1.0 else r2
                if 0.0 < th_ext < 1.0:
                    sec_partial(method, t, ya, th_ext, h, p, order, W, tmp)
                    S_ext = nx * tmp[0] + ny * tmp[1] + nz * tmp[2] - d
                else:
                    th_ext = -1.0
            lo = min(S_a, S_b, S_ext)
            hi = max(S_a, S_b, S_ext)
            jlo, jhi = sec_levels(lo, hi, lam)
            for jj in range(jhi - jlo + 1):
                jl = jlo + jj if S_b >= S_a else jhi - jj  # levels in the order the orbit meets them
                L = jl * lam
                pa = S_a - L >= 0.0
                pb = S_b - L >= 0.0
                pe = S_ext - L >= 0.0
                if pa != pb:  # one crossing of this level: Hénon from the start of the step
                    if steps == 1 and S_a == L:
                        continue  # the seed itself lies on the plane: not a crossing
                    nloc = 1
                elif th_ext > 0.0 and pe != pa:  # a hidden pair: locate from both ends
                    nloc = 2
                else:
                    continue
                for e in range(nloc):
                    if nloc == 1:
                        sgn_c = 1.0 if pb else -1.0
                    else:
                        sgn_c = (1.0 if pe else -1.0) if e == 0 else (1.0 if pb else -1.0)
                    if want != 0.0 and sgn_c != want:
                        continue
                    sec_fixed_locate(method, t, ya, y, h, L, plane, p, order, W, H, e == 1, tmp)
                    o = H[12]
                    if sec_outside(bounded, o[0], o[1], o[2]):
                        return 1, count, o[3], steps
                    count = sec_store(pts, tim, sgn, count, o[0], o[1], o[2], o[3], sgn_c)
                    if count >= K:
                        return 4, count, o[3], steps
            fa = fb
        t = t_new
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


@njit(cache=CACHE, parallel=True, error_model="numpy")
def sec_batch_fixed(seeds, t0, t_lim, p, method, hfix, order, max_steps, bounded, plane,
                    pts, tim, sgn, count, outcome, t_end, steps):
    """As :func:`sec_batch_dop853` with a fixed-step method (1 RK4, 2 splitting).

    A separate kernel so that DOP853-only users never compile the fixed-step path.
    """
    K = pts.shape[1]
    for k in prange(seeds.shape[0]):
        W = np.zeros((W_ROWS, 3))
        H = np.zeros((14, 4))
        scratch = np.zeros((7, 2 * SEC_SAMPLES + 2 + SEC_MAX_ROOTS))
        y = seeds[k].copy()
        oc, c, te, ns = sec_orbit_fixed(method, y, t0, t_lim, p, hfix, order, max_steps, bounded, plane, K,
                                        pts[k], tim[k], sgn[k], W, H, scratch)
        count[k] = c
        outcome[k] = oc
        t_end[k] = te
        steps[k] = ns
