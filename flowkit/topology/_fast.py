"""Fast polygon writhe: a corrected midpoint Gauss sum over all pairs plus exact near pairs.

For straight segments a(s) = m_i + s u_i, b(t) = m_j + t u_j (|s| <= l_i / 2,
|t| <= l_j / 2, u unit) the Gauss integrand is (u_i x u_j).(a - b) / |a - b|^3, and
its numerator V = (u_i x u_j).(m_i - m_j) is the same for every (s, t) because
u_i x u_j is normal to both segments. The exact pair integral (the solid angle
Omega of :mod:`flowkit.topology._kernels`) is therefore

    Omega_ij = V * int int f ds dt,     f = |d + s u_i - t u_j|^-3,  d = m_i - m_j.

The rule used here is the midpoint value plus its second-derivative correction,

    int int f ~ l_i l_j [f + (l_i^2 f_ss + l_j^2 f_tt) / 24]   (at s = t = 0)
    =>  Omega_ij ~ V_s [r^-3 + r^-5 (5 ((d.s_i)^2 + (d.s_j)^2) / r^2 - l_i^2 - l_j^2) / 8],

with s_i = l_i u_i the segment vectors, V_s = (s_i x s_j).d and r = |d|. It is exact
for every cubic in (s, t), so its error is the integral of the fourth-order Taylor
remainder. The fourth derivative of |x|^-3 along a unit direction at angle theta to
x is (945 cos^4 - 630 cos^2 + 45) / |x|^7, at most 360 / |x|^7 in size (derived
here; the radial direction is the largest); with |h| <= |s| + |t| and
int int (|s| + |t|)^4 ds dt = (4/30) ((al + be)^6 - al^6 - be^6) <= 62 l_i l_j l_max^4 / 480
(al = l_i / 2, be = l_j / 2) the remainder is at most 15 |V| / rho^7 times that, per pair

    |Omega_ij - rule_ij| <= (31 / 16) l_max^4 |V_s| / rho^7,

rho the smallest distance of the two segments, rho >= r - l_max. Pairs with
midpoints closer than a cutoff ``cut`` (a few segment lengths) take the exact
solid angle instead (found with a cell list of the midpoints); for the others
rho >= r (1 - l_max / cut), which the caller folds into a constant, so the
all-pairs loop only sums |V_s| / r^7 beside the rule terms.

The all-pairs loop is branch-free and allocation-free with ``fastmath`` (the
compiler may reorder the sums within a row); each row is written to its own slot
and the slots are summed serially, so the thread count does not change the result.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit, prange

from flowkit.topology._kernels import _omega, segment_distance


# error_model="numpy": no zero-division checks, so the loops vectorize (a zero distance
# cannot occur: non-adjacent pairs of a polygon without coincident points are apart)
@njit(cache=True, fastmath=True, error_model="numpy", inline="always")
def _rule(dx, dy, dz, sxi, syi, szi, sxj, syj, szj):
    """Corrected midpoint value of Omega_ij (see the module notes) and |V_s| / r^7 for the bound."""
    v = ((syi * szj - szi * syj) * dx + (szi * sxj - sxi * szj) * dy + (sxi * syj - syi * sxj) * dz)
    r2 = dx * dx + dy * dy + dz * dz
    a = dx * sxi + dy * syi + dz * szi
    b = dx * sxj + dy * syj + dz * szj
    l2 = sxi * sxi + syi * syi + szi * szi + sxj * sxj + syj * syj + szj * szj
    inv = 1.0 / np.sqrt(r2)
    inv2 = inv * inv
    inv3 = inv2 * inv
    inv5 = inv3 * inv2
    val = v * (inv3 + 0.125 * inv5 * (5.0 * (a * a + b * b) * inv2 - l2))
    return val, np.abs(v) * inv5 * inv2, r2


@njit(cache=True, fastmath=True, error_model="numpy", inline="always")
def _mid_span(j0, j1, mxi, myi, mzi, sxi, syi, szi, mx, my, mz, sx, sy, sz, keep2):
    """Rule terms and bound terms of row i against segments j0 <= j < j1 (no wrap)."""
    acc = 0.0
    bnd = 0.0
    for j in range(j0, j1):
        val, b, r2 = _rule(mxi - mx[j], myi - my[j], mzi - mz[j], sxi, syi, szi, sx[j], sy[j], sz[j])
        acc += val
        # pairs the near kernel corrects (r2 < cut2) carry no bound term; keep2 is a hair
        # below cut2 so that a pair on the boundary is never in neither set (a select, not a branch)
        bnd += b * (r2 >= keep2)
    return acc, bnd


@njit(cache=True, fastmath=True, error_model="numpy", inline="always")
def _span(j0, j1, i, mx, my, mz, sx, sy, sz, keep2):
    """Row i against segments j0 <= j < j1, on slices: a loop from 0 vectorizes, one from j0 does not
    (numba cannot prove the index non-negative and keeps its wrap-around select; measured 3-4x)."""
    if j1 <= j0:
        return 0.0, 0.0
    return _mid_span(0, j1 - j0, mx[i], my[i], mz[i], sx[i], sy[i], sz[i], mx[j0:j1], my[j0:j1], mz[j0:j1],
                     sx[j0:j1], sy[j0:j1], sz[j0:j1], keep2)


@njit(cache=True, fastmath=True, error_model="numpy", parallel=True)
def midpoint_rows(mx, my, mz, sx, sy, sz, keep2, rows, bounds):
    """Per-row corrected-midpoint Gauss sums of a closed polygon over unordered non-adjacent pairs.

    The same pairing as :func:`flowkit.topology._kernels.writhe_rows` (cyclic distance
    2 .. n // 2 from the row, the pair at n / 2 of an even polygon from its lower row
    only), walked as at most two contiguous spans so the loop vectorizes.
    Wr ~ sum(rows) / (2 pi); bounds[i] is row i's sum of |V_s| / r^7 over far pairs.
    """
    n = mx.shape[0]
    half = n // 2
    for i in prange(n):
        top = half
        if 2 * half == n and i >= half:
            top = half - 1
        a0 = i + 2
        a1 = min(i + top + 1, n)
        acc, bnd = _span(a0, a1, i, mx, my, mz, sx, sy, sz, keep2)
        b1 = i + top + 1 - n
        if b1 > 0:
            acc2, bnd2 = _span(max(a0 - n, 0), b1, i, mx, my, mz, sx, sy, sz, keep2)
            acc += acc2
            bnd += bnd2
        rows[i] = acc
        bounds[i] = bnd


@njit(cache=True)
def _cells(M, cut):
    """Integer cell of every midpoint (cell size ``cut``), the sorted cell keys and their order.

    Cells per axis <= (total length) / cut + 3 <= n + 3, so the keys fit in int64 for
    any polygon that fits in memory.
    """
    n = M.shape[0]
    lo = np.empty(3)
    for k in range(3):
        lo[k] = M[:, k].min()
    C = np.empty((n, 3), dtype=np.int64)
    for i in range(n):
        for k in range(3):
            C[i, k] = 1 + int(math.floor((M[i, k] - lo[k]) / cut))  # 1.. so neighbours stay >= 0
    span = C.max() + 3
    key = (C[:, 0] * span + C[:, 1]) * span + C[:, 2]
    order = np.argsort(key)
    return C, span, key[order], order


@njit(cache=True, inline="always")
def _correction(P, i, Q, j, dx, dy, dz, r2):
    """Exact solid angle minus the rule's value for segment i of P and j of Q, and their distance."""
    i1 = i + 1 if i + 1 < P.shape[0] else 0
    j1 = j + 1 if j + 1 < Q.shape[0] else 0
    sxi, syi, szi = P[i1, 0] - P[i, 0], P[i1, 1] - P[i, 1], P[i1, 2] - P[i, 2]
    sxj, syj, szj = Q[j1, 0] - Q[j, 0], Q[j1, 1] - Q[j, 1], Q[j1, 2] - Q[j, 2]
    mid = _rule(dx, dy, dz, sxi, syi, szi, sxj, syj, szj)[0] if r2 > 0.0 else 0.0
    om = _omega(P[i, 0], P[i, 1], P[i, 2], P[i1, 0], P[i1, 1], P[i1, 2],
                Q[j, 0], Q[j, 1], Q[j, 2], Q[j1, 0], Q[j1, 1], Q[j1, 2])
    return om - mid, segment_distance(P[i], P[i1], Q[j], Q[j1])


@njit(cache=True)
def _near_row(P, MP, i, Q, MQ, C, ci, span, skey, order, cut2, same):
    """Near-pair correction of segment i of P against Q, from the 27 cells around cell row ``ci``.

    ``same``: Q is P, each unordered non-adjacent pair is taken from its lower index;
    otherwise the cell list holds Q's midpoints then P's, and P's own are skipped.
    Returns (sum, closest exact segment distance, its segment of Q, near-pair count).
    """
    m = Q.shape[0]
    i1 = i + 1 if i + 1 < m else 0
    acc = 0.0
    best = math.inf
    bj = -1
    cnt = 0
    total = skey.shape[0]
    for ox in range(-1, 2):
        for oy in range(-1, 2):
            for oz in range(-1, 2):
                k = ((C[ci, 0] + ox) * span + C[ci, 1] + oy) * span + C[ci, 2] + oz
                a = np.searchsorted(skey, k)
                while a < total and skey[a] == k:
                    j = order[a]
                    a += 1
                    if j >= m or (same and (j <= i or j == i1 or (j + 1) % m == i)):
                        continue
                    dx = MP[i, 0] - MQ[j, 0]
                    dy = MP[i, 1] - MQ[j, 1]
                    dz = MP[i, 2] - MQ[j, 2]
                    r2 = dx * dx + dy * dy + dz * dz
                    if r2 >= cut2:
                        continue
                    c, d = _correction(P, i, Q, j, dx, dy, dz, r2)
                    acc += c
                    cnt += 1
                    if d < best:
                        best = d
                        bj = j
    return acc, best, bj, cnt


@njit(cache=True, parallel=True)
def near_rows(P, M, cut, rows, dmin, jmin, counts):
    """Exact solid angle minus the rule's value for near pairs (midpoint distance < cut), per row.

    Neighbours come from the 27 cells around each midpoint (cell size ``cut``, keys
    found by binary search in the sorted key list). Each unordered non-adjacent pair
    is taken from its lower index. Also records each row's closest near segment
    (exact segment distance) and how many near pairs it has.
    """
    C, span, skey, order = _cells(M, cut)
    for i in prange(P.shape[0]):
        k = np.int64(i)  # numba types the index uint64 in one lowering, int64 in another: two compiles of _near_row
        rows[k], dmin[k], jmin[k], counts[k] = _near_row(P, M, k, P, M, C, k, span, skey, order, cut * cut, True)


@njit(cache=True, fastmath=True, error_model="numpy", parallel=True)
def midpoint_rows_two(mx, my, mz, sx, sy, sz, qx, qy, qz, tx, ty, tz, keep2, rows, bounds):
    """Per-row rule sums of closed polygons P (midpoints m, segments s) against Q (q, t): all n x m pairs.

    Lk ~ sum(rows) / (4 pi); bounds[i] is row i's sum of |V_s| / r^7 over far pairs.
    """
    for i in prange(mx.shape[0]):
        acc, bnd = _mid_span(0, qx.shape[0], mx[i], my[i], mz[i], sx[i], sy[i], sz[i], qx, qy, qz, tx, ty, tz, keep2)
        rows[i] = acc
        bounds[i] = bnd


@njit(cache=True, parallel=True)
def near_rows_two(P, MP, Q, MQ, cut, rows, dmin, jmin, counts):
    """Exact solid angle minus the rule's value for pairs of P and Q segments with midpoints closer than cut.

    The cell list holds Q's midpoints (then P's, for one grid origin); every segment
    of P looks in its 27 cells. Also records each row's closest near segment of Q.
    """
    m = Q.shape[0]
    C, span, skey, order = _cells(np.concatenate((MQ, MP)), cut)
    for i in prange(P.shape[0]):
        k = np.int64(i)  # one compile of _near_row, as in near_rows
        rows[k], dmin[k], jmin[k], counts[k] = _near_row(P, MP, k, Q, MQ, C, m + k, span, skey, order, cut * cut,
                                                         False)
