"""Kernel template: Poincaré sections with fixed-step methods (RK4, splitting).

Crossings are located by Hénon's change of independent variable (Physica D 5,
1982, 412) with DOP853's weights, hidden pairs by the extremum of the cubic
Hermite model of S, grazing crossings by bisection on partial steps. See
:mod:`flowkit.kernels.sections` for the method and the outcome codes.
"""

import math

import numpy as np

from flowkit.integrate.tableau import DOP_A, DOP_B, W_ROWS
from flowkit.kernels._stub import CACHE, njit, prange, velocity  # flowkit:stub
from flowkit.kernels.sections_plane import (  # flowkit:stub
    SEC_D, SEC_DIR, SEC_KIND, SEC_LAM, SEC_MAX_ROOTS, SEC_NX, SEC_NY, SEC_NZ, SEC_PERIOD, SEC_PHASE,  # flowkit:stub
    SEC_SAMPLES, sec_levels, sec_outside, sec_store,  # flowkit:stub
)  # flowkit:stub
from flowkit.kernels.splitting import split_step  # flowkit:stub
from flowkit.kernels.steppers import rk4_step  # flowkit:stub


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
