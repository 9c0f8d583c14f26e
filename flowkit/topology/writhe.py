"""Writhe of a closed curve and linking number of two: exact Gauss integrals of polygons.

The polygon through the sample points is summed exactly, pair of segments by pair
of segments (solid angles, see :mod:`flowkit.topology._kernels`), so only the
sampling errs. For writhe the sampling error is estimated from the same curve at
half the samples, assuming second-order convergence: err = |Wr_n - Wr_n/2| / 3.
The linking number of disjoint polygons is an integer up to round-off; the
distance to the nearest integer is reported.

Both sums are O(n m) and run in parallel (numba ``prange`` over segments, each
thread filling its own rows, then a serial sum: thread-count independent). From
FAST_FROM points on (``method="auto"``) a fast path replaces the solid angles of
all but the near segment pairs by a corrected midpoint rule (about 30x cheaper per
pair) and reports a rigorous bound on the difference from the exact polygon sum
(:mod:`flowkit.topology._fast`); the exact kernels stay the reference.
"""

from __future__ import annotations

import math

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.integrate.batch import thread_limit
from flowkit.topology import _fast as K2
from flowkit.topology import _kernels as K
from flowkit.topology.curves import closed_curve

#: touching is declared when two non-neighbouring segments come closer than this times the curve's size
TOUCH = 1e-9


def writhe_sum(P: np.ndarray, threads: int | None = None) -> tuple[float, float, int, int]:
    """Writhe of the closed polygon ``P`` (n, 3) and its closest non-adjacent segment pair.

    Returns ``(Wr, distance, i, j)``: the pair (i, j) of segments closest to each
    other among the non-neighbouring ones and their distance.
    """
    P = np.ascontiguousarray(P, dtype=np.float64)
    n = len(P)
    rows = np.zeros(n)
    dmin = np.full(n, np.inf)
    jmin = np.full(n, -1, dtype=np.int64)
    with thread_limit(threads):
        K.writhe_rows(P, rows, dmin, jmin)
    i = int(np.argmin(dmin))
    return float(np.sum(rows) / (2 * math.pi)), float(dmin[i]), i, int(jmin[i])


#: ``method="auto"`` takes the fast writhe from this many points on. Measured on a (2, 3) torus knot,
#: one thread: at 5,000 points 0.04 s against the exact sum's 1.7 s, bound 2e-7 on the difference
#: (10,000 points: 0.15 s against 7.0 s, bound 5e-8), far below the sampling error of such a polygon.
FAST_FROM = 4_000

#: ... and the fast linking sum from FAST_LINK_FROM^2 segment pairs on: the linking of a ribbon's edge
#: with its curve (a push-off a twentieth of a segment away) is harder for the midpoint rule (10,000
#: points of a stretched material ribbon: 1.4e-3 from the integer, against 2e-13 exact)
FAST_LINK_FROM = 20_000

#: near pairs (exact solid angles) of the fast writhe: midpoints closer than this many longest segments
NEAR = 8.0


def _prepare(P: np.ndarray):
    """Segments S, midpoints M, longest segment and the SoA columns (M, S) of a closed polygon."""
    P = np.ascontiguousarray(P, dtype=np.float64)
    S = np.roll(P, -1, axis=0) - P
    M = P + 0.5 * S
    lmax = float(np.sqrt((S * S).sum(1)).max())
    return P, M, lmax, [np.ascontiguousarray(a) for a in (*M.T, *S.T)]


def _check_fast(n: int, near: float) -> None:
    if n < 8:
        raise FlowkitError(f"the fast sums need at least 8 points per curve (got {n}): use method='exact'")
    if not near >= 2:
        raise FlowkitError(f"near must be at least 2 (segment lengths; got {near})")


def _bound_factor(lmax: float, keep2: float) -> float:
    """(31/16) lmax^4 / (1 - lmax / r)^7 at r = sqrt(keep2): times sum |V_s| / r^7, bounds the far pairs' error."""
    return 31 / 16 * lmax ** 4 / (1 - lmax / math.sqrt(keep2)) ** 7


def fast_writhe_sum(P: np.ndarray, threads: int | None = None, near: float = NEAR):
    """Writhe of the closed polygon ``P`` by a corrected midpoint rule with exact near pairs.

    See :mod:`flowkit.topology._fast`. Returns ``(Wr, bound, distance, i, j, near_pairs)``:
    ``bound`` is a rigorous bound on |Wr - exact polygon writhe| up to round-off;
    the closest pair (i, j) is searched among the near pairs only (every pair
    farther apart is at least (near - 1) longest segments apart, which is the
    distance returned when no pair is near).
    """
    P, M, lmax, cols = _prepare(P)
    n = len(P)
    _check_fast(n, near)
    cut = near * lmax
    keep2 = cut * cut * (1 - 1e-9)
    rows, bounds = np.zeros(n), np.zeros(n)
    nrows, dmin = np.zeros(n), np.full(n, np.inf)
    jmin, counts = np.full(n, -1, dtype=np.int64), np.zeros(n, dtype=np.int64)
    with thread_limit(threads):
        K2.midpoint_rows(*cols, keep2, rows, bounds)
        K2.near_rows(P, M, cut, nrows, dmin, jmin, counts)
    wr = (float(np.sum(rows)) + float(np.sum(nrows))) / (2 * math.pi)
    i = int(np.argmin(dmin))
    bound = _bound_factor(lmax, keep2) * float(np.sum(bounds)) / (2 * math.pi)
    return wr, bound, min(float(dmin[i]), (near - 1) * lmax), i, int(jmin[i]), int(counts.sum())


def fast_linking_sum(P: np.ndarray, Q: np.ndarray, threads: int | None = None, near: float = NEAR):
    """Gauss linking sum of closed polygons by the fast rule (as :func:`fast_writhe_sum`, all n x m pairs).

    Returns ``(Lk, bound, distance, i, j, near_pairs)``.
    """
    P, MP, lp, cp = _prepare(P)
    Q, MQ, lq, cq = _prepare(Q)
    _check_fast(min(len(P), len(Q)), near)
    lmax = max(lp, lq)
    cut = near * lmax
    keep2 = cut * cut * (1 - 1e-9)
    n = len(P)
    rows, bounds = np.zeros(n), np.zeros(n)
    nrows, dmin = np.zeros(n), np.full(n, np.inf)
    jmin, counts = np.full(n, -1, dtype=np.int64), np.zeros(n, dtype=np.int64)
    with thread_limit(threads):
        K2.midpoint_rows_two(*cp, *cq, keep2, rows, bounds)
        K2.near_rows_two(P, MP, Q, MQ, cut, nrows, dmin, jmin, counts)
    lk = (float(np.sum(rows)) + float(np.sum(nrows))) / (4 * math.pi)
    i = int(np.argmin(dmin))
    bound = _bound_factor(lmax, keep2) * float(np.sum(bounds)) / (4 * math.pi)
    return lk, bound, min(float(dmin[i]), (near - 1) * lmax), i, int(jmin[i]), int(counts.sum())


def writhe_auto(P: np.ndarray, threads: int | None = None):
    """``(Wr, bound, distance, i, j)``: the exact sum below FAST_FROM points, the fast one (with its bound) above."""
    if len(P) >= FAST_FROM:
        return fast_writhe_sum(P, threads)[:5]
    wr, dist, i, j = writhe_sum(P, threads)
    return wr, 0.0, dist, i, j


def linking_auto(P: np.ndarray, Q: np.ndarray, threads: int | None = None):
    """``(Lk, bound, distance, i, j)``: exact below FAST_LINK_FROM^2 segment pairs, fast (with its bound) above."""
    if len(P) * len(Q) >= FAST_LINK_FROM ** 2:
        return fast_linking_sum(P, Q, threads)[:5]
    lk, dist, i, j = linking_sum(P, Q, threads)
    return lk, 0.0, dist, i, j


def linking_sum(P: np.ndarray, Q: np.ndarray, threads: int | None = None) -> tuple[float, float, int, int]:
    """Gauss linking sum of closed polygons ``P`` and ``Q`` and their closest segment pair (i of P, j of Q)."""
    P = np.ascontiguousarray(P, dtype=np.float64)
    Q = np.ascontiguousarray(Q, dtype=np.float64)
    rows = np.zeros(len(P))
    dmin = np.full(len(P), np.inf)
    jmin = np.full(len(P), -1, dtype=np.int64)
    with thread_limit(threads):
        K.linking_rows(P, Q, rows, dmin, jmin)
    i = int(np.argmin(dmin))
    return float(np.sum(rows) / (4 * math.pi)), float(dmin[i]), i, int(jmin[i])


def check_apart(dist: float, i: int, j: int, P, Q, scale: float, what: str) -> None:
    """Raise if two segments touch: the Gauss integral is undefined there (names where)."""
    if dist <= TOUCH * scale:
        s = np.linspace(0.0, 1.0, 201)[:, None]
        a = P[i] + s * (P[(i + 1) % len(P)] - P[i])
        b = Q[j] + s * (Q[(j + 1) % len(Q)] - Q[j])
        k = np.argmin(np.linalg.norm(a[:, None, :] - b[None, :, :], axis=-1)) // len(s)
        where = a[k]
        raise FlowkitError(
            f"{what}: segment {i} of the first curve and segment {j} of the "
            f"{'same' if Q is P else 'second'} curve touch (distance {dist:.3g}) near {np.round(where, 6).tolist()}; "
            "the writhe / linking number is undefined for touching curves: move them apart")


def writhe(curve, *, n: int | None = None, error: bool = True, threads: int | None = None,
           method: str = "auto", near: float = NEAR):
    """Writhe of a closed curve: the Gauss double integral of its polygon.

    Parameters
    ----------
    curve : ClosedCurve, (N, 3) points, or callable
        See :func:`~flowkit.topology.curves.closed_curve`.
    n : int, optional
        Samples of a callable (default 256).
    error : bool
        Estimate the sampling error from the curve at half the samples.
    threads : int, optional
        Numba threads (the value does not depend on it).
    method : {"auto", "exact", "fast"}
        "exact": every segment pair's solid angle (O(N^2) solid angles).
        "fast": corrected midpoint Gauss rule for pairs farther apart than ``near`` longest
        segments, exact solid angles for the others, and a rigorous bound on the
        difference from "exact" (``method_bound``; see :mod:`flowkit.topology._fast`).
        "auto": "fast" from FAST_FROM points on.
    near : float
        Near-pair radius of the fast method, in longest-segment lengths (>= 2).

    Returns
    -------
    Writhe

    Raises
    ------
    FlowkitError
        If the curve touches or crosses itself (names the segments and where).
    """
    from flowkit.topology.results import Writhe

    if method not in ("auto", "exact", "fast"):
        raise FlowkitError(f"method must be 'auto', 'exact' or 'fast' (got {method!r})")
    c = closed_curve(curve, n)
    if method == "auto":
        method = "fast" if c.n >= FAST_FROM else "exact"
    if method == "fast":
        wr, bound, dist, i, j, _ = fast_writhe_sum(c.points, threads, near)
    else:
        (wr, dist, i, j), bound = writhe_sum(c.points, threads), 0.0
    check_apart(dist, i, j, c.points, c.points, c.diameter(), "the curve crosses itself")
    err, coarse = math.nan, math.nan
    if error and c.n >= (16 if method == "fast" else 8):
        P = c.coarse().points
        coarse = fast_writhe_sum(P, threads, near)[0] if method == "fast" else writhe_sum(P, threads)[0]
        err = abs(wr - coarse) / 3
    how = ("exact polygon solid angles (Biopolymers 54, 2000, 307)" if method == "exact" else
           f"corrected midpoint Gauss rule, exact solid angles (Biopolymers 54, 2000, 307) within {near:g} segments")
    return Writhe(writhe=wr, error=err, coarse_writhe=coarse, samples=c.n, closest_distance=dist,
                  points=c.points, method=method, method_bound=bound,
                  provenance={"curve": c.description, "method": how + "; error from half the samples"})


def linking_number(a, b, *, n: int | None = None, threads: int | None = None, method: str = "auto"):
    """Gauss linking number of two disjoint closed curves (exact for their polygons).

    Parameters
    ----------
    a, b : ClosedCurve, (N, 3) points, or callable
        The two curves (see :func:`~flowkit.topology.curves.closed_curve`).
    n : int, optional
        Samples of callables (default 256).
    method : {"auto", "exact", "fast"}
        As for :func:`writhe` ("auto": fast from FAST_LINK_FROM^2 segment pairs on); the fast
        method's bound on |Lk - exact polygon sum| is added to the provenance.

    Returns
    -------
    Linking

    Raises
    ------
    FlowkitError
        If the curves touch or cross (names the segments and where).
    """
    from flowkit.topology.results import Linking

    if method not in ("auto", "exact", "fast"):
        raise FlowkitError(f"method must be 'auto', 'exact' or 'fast' (got {method!r})")
    ca, cb = closed_curve(a, n), closed_curve(b, n)
    if method == "auto":
        method = "fast" if ca.n * cb.n >= FAST_LINK_FROM ** 2 else "exact"
    if method == "fast":
        lk, bound, dist, i, j, _ = fast_linking_sum(ca.points, cb.points, threads)
    else:
        (lk, dist, i, j), bound = linking_sum(ca.points, cb.points, threads), 0.0
    scale = max(ca.diameter(), cb.diameter())
    check_apart(dist, i, j, ca.points, cb.points, scale, "the curves touch")
    return Linking(linking=lk, integer=int(round(lk)), defect=abs(lk - round(lk)), closest_distance=dist,
                   samples=(ca.n, cb.n), first=ca.points, second=cb.points,
                   provenance={"curves": [ca.description, cb.description], "method_bound": bound,
                               "method": "exact polygon solid angles (Biopolymers 54, 2000, 307)" if method == "exact"
                               else "corrected midpoint Gauss rule, exact solid angles for near pairs"})


