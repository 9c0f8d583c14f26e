"""Compiled double sums over segment pairs: writhe and linking of closed polygons.

Each pair of straight segments contributes its exact signed solid angle Omega / 4 pi
to the Gauss integral (Biopolymers 54, 2000, 307): with the segments' end points
p1 -> p2 and p3 -> p4, the four unit face normals of the tetrahedron
(p1, p2, p3, p4)

    n1 ~ r13 x r14,  n2 ~ r14 x r24,  n3 ~ r24 x r23,  n4 ~ r23 x r13   (rij = pj - pi)

give Omega = [asin(n1.n2) + asin(n2.n3) + asin(n3.n4) + asin(n4.n1)] sign((r34 x r12).r13),
each asin evaluated as an atan2 so that nearly coplanar pairs keep their digits.

The kernels run in parallel over the rows (segments of the first curve); every
row writes its own slot of the output and the caller sums the slots serially, so
the result does not depend on the number of threads. Beside the sums, every row
records the smallest distance from its segment to the segments it was paired
with (and which one), so touching or self-intersecting curves are reported
instead of summed: the integral is undefined there.
"""

from __future__ import annotations

import math

from numba import njit, prange


@njit(cache=True, inline="always")
def _unit_cross(ax, ay, az, bx, by, bz):
    cx = ay * bz - az * by
    cy = az * bx - ax * bz
    cz = ax * by - ay * bx
    n = math.sqrt(cx * cx + cy * cy + cz * cz)
    if n == 0.0:
        return 0.0, 0.0, 0.0, 0.0
    return cx / n, cy / n, cz / n, n


@njit(cache=True, inline="always")
def _asin_dot(ax, ay, az, bx, by, bz):
    """asin(a . b) of unit vectors; as atan2(a . b, |a x b|) when |a . b| > 0.7.

    The same angle, but accurate when a and b are nearly parallel, where asin of a
    dot product near +-1 loses half the digits (nearly coplanar segment pairs).
    """
    d = ax * bx + ay * by + az * bz
    if -0.7 < d < 0.7:
        return math.asin(d)
    cx = ay * bz - az * by
    cy = az * bx - ax * bz
    cz = ax * by - ay * bx
    return math.atan2(d, math.sqrt(cx * cx + cy * cy + cz * cz))


@njit(cache=True)
def pair_solid_angle(p1, p2, p3, p4):
    """Signed solid angle Omega of segment p1->p2 against p3->p4 (Gauss integral = Omega / 4 pi).

    Coplanar (or degenerate) pairs return exactly 0: their solid angle vanishes.
    """
    return _omega(p1[0], p1[1], p1[2], p2[0], p2[1], p2[2], p3[0], p3[1], p3[2], p4[0], p4[1], p4[2])


@njit(cache=True, inline="always")
def _omega(ax, ay, az, bx, by, bz, cx, cy, cz, dx, dy, dz):
    """:func:`pair_solid_angle` on scalar coordinates (segment a->b against c->d)."""
    r13x, r13y, r13z = cx - ax, cy - ay, cz - az
    r14x, r14y, r14z = dx - ax, dy - ay, dz - az
    r23x, r23y, r23z = cx - bx, cy - by, cz - bz
    r24x, r24y, r24z = dx - bx, dy - by, dz - bz
    r12x, r12y, r12z = bx - ax, by - ay, bz - az
    r34x, r34y, r34z = dx - cx, dy - cy, dz - cz
    # (r34 x r12) . r13: six times the signed volume; zero means coplanar, Omega = 0
    vol = ((r34y * r12z - r34z * r12y) * r13x + (r34z * r12x - r34x * r12z) * r13y
           + (r34x * r12y - r34y * r12x) * r13z)
    if vol == 0.0:
        return 0.0
    n1x, n1y, n1z, a = _unit_cross(r13x, r13y, r13z, r14x, r14y, r14z)
    n2x, n2y, n2z, b = _unit_cross(r14x, r14y, r14z, r24x, r24y, r24z)
    n3x, n3y, n3z, c = _unit_cross(r24x, r24y, r24z, r23x, r23y, r23z)
    n4x, n4y, n4z, d = _unit_cross(r23x, r23y, r23z, r13x, r13y, r13z)
    if a == 0.0 or b == 0.0 or c == 0.0 or d == 0.0:
        return 0.0
    om = (_asin_dot(n1x, n1y, n1z, n2x, n2y, n2z) + _asin_dot(n2x, n2y, n2z, n3x, n3y, n3z)
          + _asin_dot(n3x, n3y, n3z, n4x, n4y, n4z) + _asin_dot(n4x, n4y, n4z, n1x, n1y, n1z))
    return om if vol > 0.0 else -om


@njit(cache=True)
def segment_distance(p1, p2, p3, p4):
    """Smallest distance between segments p1p2 and p3p4 (closest points by clamped parameters).

    Common practice (closest points of two segments, e.g. Real-Time Collision
    Detection, 2005, section 5.1.9; cited from memory).
    """
    d1x, d1y, d1z = p2[0] - p1[0], p2[1] - p1[1], p2[2] - p1[2]
    d2x, d2y, d2z = p4[0] - p3[0], p4[1] - p3[1], p4[2] - p3[2]
    rx, ry, rz = p1[0] - p3[0], p1[1] - p3[1], p1[2] - p3[2]
    a = d1x * d1x + d1y * d1y + d1z * d1z
    e = d2x * d2x + d2y * d2y + d2z * d2z
    f = d2x * rx + d2y * ry + d2z * rz
    c = d1x * rx + d1y * ry + d1z * rz
    b = d1x * d2x + d1y * d2y + d1z * d2z
    den = a * e - b * b
    s = 0.0
    if den > 1e-300 * a * e and den > 0.0:
        s = min(max((b * f - c * e) / den, 0.0), 1.0)
    t = (b * s + f) / e if e > 0.0 else 0.0
    if t < 0.0:
        t = 0.0
        s = min(max(-c / a, 0.0), 1.0) if a > 0.0 else 0.0
    elif t > 1.0:
        t = 1.0
        s = min(max((b - c) / a, 0.0), 1.0) if a > 0.0 else 0.0
    dx = rx + s * d1x - t * d2x
    dy = ry + s * d1y - t * d2y
    dz = rz + s * d1z - t * d2z
    return math.sqrt(dx * dx + dy * dy + dz * dz)


@njit(cache=True, inline="always")
def _closer(P, i, i1, Q, j, j1, best):
    """Exact segment distance if the midpoint bound says it may beat ``best``; else ``best``."""
    mx = 0.5 * (P[i, 0] + P[i1, 0] - Q[j, 0] - Q[j1, 0])
    my = 0.5 * (P[i, 1] + P[i1, 1] - Q[j, 1] - Q[j1, 1])
    mz = 0.5 * (P[i, 2] + P[i1, 2] - Q[j, 2] - Q[j1, 2])
    li = math.sqrt((P[i1, 0] - P[i, 0]) ** 2 + (P[i1, 1] - P[i, 1]) ** 2 + (P[i1, 2] - P[i, 2]) ** 2)
    lj = math.sqrt((Q[j1, 0] - Q[j, 0]) ** 2 + (Q[j1, 1] - Q[j, 1]) ** 2 + (Q[j1, 2] - Q[j, 2]) ** 2)
    if math.sqrt(mx * mx + my * my + mz * mz) - 0.5 * (li + lj) >= best:
        return best
    return segment_distance(P[i], P[i1], Q[j], Q[j1])


@njit(cache=True, parallel=True)
def writhe_rows(P, rows, dmin, jmin):
    """Per-row writhe sums of the closed polygon ``P`` (n, 3): rows[i] = sum over partners of Omega.

    Each unordered pair of non-adjacent segments {i, j} is visited once, from the
    row whose cyclic distance to the other is 2 .. n // 2 (the pair at distance
    n / 2 of an even polygon only from its lower row), so every row does about n / 2
    pairs and the threads stay balanced. Wr = sum(rows) / (2 pi).
    """
    n = P.shape[0]
    half = n // 2
    for i in prange(n):
        i1 = (i + 1) % n
        ax, ay, az = P[i, 0], P[i, 1], P[i, 2]
        bx, by, bz = P[i1, 0], P[i1, 1], P[i1, 2]
        acc = 0.0
        best = math.inf
        bj = -1
        for dj in range(2, half + 1):
            if 2 * dj == n and i >= half:
                continue
            j = i + dj
            if j >= n:
                j -= n
            j1 = j + 1
            if j1 == n:
                j1 = 0
            if j1 == i:
                continue
            acc += _omega(ax, ay, az, bx, by, bz, P[j, 0], P[j, 1], P[j, 2], P[j1, 0], P[j1, 1], P[j1, 2])
            dd = _closer(P, i, i1, P, j, j1, best)
            if dd < best:
                best = dd
                bj = j
        rows[i] = acc
        dmin[i] = best
        jmin[i] = bj


@njit(cache=True, parallel=True)
def linking_rows(P, Q, rows, dmin, jmin):
    """Per-row Gauss linking sums of closed polygons ``P`` (n, 3) and ``Q`` (m, 3).

    rows[i] = sum over every segment j of Q of Omega(P_i P_i+1, Q_j Q_j+1);
    Lk = sum(rows) / (4 pi).
    """
    n = P.shape[0]
    m = Q.shape[0]
    for i in prange(n):
        i1 = (i + 1) % n
        ax, ay, az = P[i, 0], P[i, 1], P[i, 2]
        bx, by, bz = P[i1, 0], P[i1, 1], P[i1, 2]
        acc = 0.0
        best = math.inf
        bj = -1
        for j in range(m):
            j1 = j + 1 if j + 1 < m else 0
            acc += _omega(ax, ay, az, bx, by, bz, Q[j, 0], Q[j, 1], Q[j, 2], Q[j1, 0], Q[j1, 1], Q[j1, 2])
            dd = _closer(P, i, i1, Q, j, j1, best)
            if dd < best:
                best = dd
                bj = j
        rows[i] = acc
        dmin[i] = best
        jmin[i] = bj
