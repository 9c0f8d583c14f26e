"""Ribbons: a closed curve with a unit normal field; twist, writhe, linking and their balance.

Twist of a smooth ribbon (curve x, unit normal N perpendicular to the tangent T):
Tw = (1/2 pi) oint (T x N) . dN/ds ds, the turns N makes about T. For the polygon
through the samples we use the exact discrete analogue: on each segment N (projected
perpendicular to the segment) turns by a signed angle about the segment; at each
corner the frame is carried by the rotation that takes one segment direction to the
next (parallel transport, which adds no twist), and the mismatch with the next
projected normal is a turn too. Smoothing each corner into a small planar arc makes
this the twist of a smooth ribbon whose writhe tends to the polygon's, so the
Călugăreanu–White theorem Lk(x, x + eps N) = Tw + Wr holds for the polygon up to
round-off (Rev. Math. Pures Appl. 4, 1959, 5; Amer. J. Math. 91, 1969, 693; cited
from memory). Every ribbon result computes both sides and reports the defect.

For smooth samples at equal parameter steps (or a callable) the smooth-curve twist
is computed too, by spectral differentiation, as a cross-check.
"""

from __future__ import annotations

import math
from typing import Callable

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.topology.curves import ClosedCurve, closed_curve, spectral_derivatives
from flowkit.topology.writhe import TOUCH, check_apart, linking_auto, writhe_auto

#: a normal whose part perpendicular to the tangent is below this share of its length counts as parallel
PARALLEL = 1e-6


class Ribbon:
    """A closed curve with unit normals at its points (perpendicular to the local tangent).

    Build with :func:`ribbon`. ``normal_func`` is kept when the normals came from a
    callable, so the ribbon can be resampled.
    """

    def __init__(self, curve: ClosedCurve, normals: np.ndarray, normal_func: Callable | None = None,
                 description: dict | None = None):
        self.curve = curve
        self.normals = normals
        self.normal_func = normal_func
        self.description = description or {}

    @property
    def points(self) -> np.ndarray:
        return self.curve.points

    def coarse(self) -> "Ribbon":
        """The same ribbon at half the samples."""
        if self.curve.func is not None and self.normal_func is not None:
            return ribbon(self.curve.func, self.normal_func, n=max(4, self.curve.n // 2))
        return ribbon(self.points[::2], self.normals[::2])

    def edge(self, eps: float) -> np.ndarray:
        """The ribbon's edge polygon x + eps N."""
        return self.points + eps * self.normals


def ribbon(curve, normals=None, *, edge=None, n: int | None = None) -> Ribbon:
    """A ribbon: a closed curve plus a normal field, or plus a second nearby curve (its edge).

    Parameters
    ----------
    curve : ClosedCurve, (N, 3) points, or callable of t in [0, 1)
        The ribbon's axis.
    normals : (N, 3) array or callable, optional
        Normal vectors at the curve's points (normalised, and their tangential part
        removed). A callable of t is sampled like the curve.
    edge : (N, 3) array, optional
        Instead of ``normals``: a second curve, point k next to point k of the axis;
        the normals are the directions from the axis to it.
    n : int, optional
        Samples of callables (default 256).

    Raises
    ------
    FlowkitError
        Neither or both of ``normals`` and ``edge``; wrong shapes; a normal parallel
        to the tangent (names the point).
    """
    if (normals is None) == (edge is None):
        raise FlowkitError("give exactly one of `normals` (a normal field) and `edge` (a second nearby curve)")
    c = closed_curve(curve, n)
    nfunc = None
    if edge is not None:
        E = np.asarray(edge, dtype=np.float64)
        if E.shape[0] == c.n + 1:
            E = E[:-1]
        if E.shape != c.points.shape:
            raise FlowkitError(f"`edge` must have one point per curve point, shape {c.points.shape}; got {E.shape}")
        N = E - c.points
        desc = {"normals": "from an edge curve"}
    elif callable(normals):
        nfunc = normals
        N = np.asarray(normals(np.arange(c.n) / c.n), dtype=np.float64)
        desc = {"normals": getattr(normals, "__name__", "callable")}
    else:
        N = np.asarray(normals, dtype=np.float64)
        if N.shape[0] == c.n + 1:
            N = N[:-1]
        desc = {"normals": "array"}
    if N.shape != c.points.shape or not np.all(np.isfinite(N)):
        raise FlowkitError(f"the normals must be finite, one per curve point, shape {c.points.shape}; got {N.shape}")
    return Ribbon(c, _perpendicular(c.points, N), nfunc, {"curve": c.description, **desc})


def _perpendicular(P: np.ndarray, N: np.ndarray) -> np.ndarray:
    """Unit normals with the tangential part (central-difference tangent) removed."""
    T = np.roll(P, -1, axis=0) - np.roll(P, 1, axis=0)
    T /= np.linalg.norm(T, axis=1)[:, None]
    size = np.linalg.norm(N, axis=1)
    Np = N - np.einsum("ij,ij->i", N, T)[:, None] * T
    perp = np.linalg.norm(Np, axis=1)
    bad = np.flatnonzero(~(perp > PARALLEL * np.maximum(size, 1e-300)))
    if bad.size:
        k = int(bad[0])
        raise FlowkitError(f"the ribbon normal at point {k} ({P[k].tolist()}) is parallel to the curve's tangent "
                           f"(or zero); {bad.size} point(s) in all. Give normals perpendicular to the curve")
    return np.ascontiguousarray(Np / perp[:, None])


def _signed_angle(a: np.ndarray, b: np.ndarray, axis: np.ndarray) -> np.ndarray:
    """Signed angle from a to b about ``axis`` (rows), all three assumed roughly perpendicular/unit."""
    return np.arctan2(np.einsum("ij,ij->i", np.cross(a, b), axis), np.einsum("ij,ij->i", a, b))


def _project(v: np.ndarray, T: np.ndarray) -> np.ndarray:
    w = v - np.einsum("ij,ij->i", v, T)[:, None] * T
    return w / np.linalg.norm(w, axis=1)[:, None]


def polygon_twist(P: np.ndarray, N: np.ndarray) -> tuple[float, float]:
    """Discrete twist of the polygon ribbon (see the module docstring) and the largest single turn (radians)."""
    seg = np.roll(P, -1, axis=0) - P
    T = seg / np.linalg.norm(seg, axis=1)[:, None]
    Tn = np.roll(T, -1, axis=0)                      # direction of the next segment
    Nn = np.roll(N, -1, axis=0)
    a = _project(N, T)                               # normal at the start of segment k
    b = _project(Nn, T)                              # normal at its end, same plane
    turn_seg = _signed_angle(a, b, T)
    # parallel transport of b across the corner: rotation about T x Tn taking T to Tn
    axis = np.cross(T, Tn)
    s = np.linalg.norm(axis, axis=1)
    cth = np.einsum("ij,ij->i", T, Tn)
    with np.errstate(invalid="ignore", divide="ignore"):
        u = np.where(s[:, None] > 0, axis / s[:, None], 0.0)
    bt = (b * cth[:, None] + np.cross(u, b) * s[:, None]
          + u * np.einsum("ij,ij->i", u, b)[:, None] * (1 - cth)[:, None])
    turn_corner = _signed_angle(bt, _project(Nn, Tn), Tn)
    tw = float(np.sum(turn_seg) + np.sum(turn_corner)) / (2 * math.pi)
    return tw, float(max(np.abs(turn_seg).max(), np.abs(turn_corner).max()))


def spectral_twist(P: np.ndarray, N: np.ndarray) -> float:
    """Smooth-ribbon twist (1/2 pi) oint (T x N) . N' dt by FFT derivatives (equal parameter steps)."""
    x1 = spectral_derivatives(P, (1,))[1]
    T = x1 / np.linalg.norm(x1, axis=1)[:, None]
    Nu = _project(N, T)
    dN = spectral_derivatives(Nu, (1,))[1]
    integrand = np.einsum("ij,ij->i", np.cross(T, Nu), dN)
    return float(integrand.sum() * (2 * math.pi / len(P)) / (2 * math.pi))


def edge_offset(rb: Ribbon, dist: float) -> float:
    """A push-off distance small against the segments and the curve's closest approach to itself."""
    seg = np.linalg.norm(np.roll(rb.points, -1, axis=0) - rb.points, axis=1)
    return 0.05 * min(float(seg.min()), dist)


def ribbon_parts(rb: Ribbon, threads: int | None = None, smooth: bool | None = None) -> dict:
    """Twist, writhe, linking with the edge and the Călugăreanu–White defect of a ribbon (plain dict)."""
    P = rb.points
    wr, bound, dist, i, j = writhe_auto(P, threads)  # the fast sum (with a bound) from FAST_FROM points
    check_apart(dist, i, j, P, P, rb.curve.diameter(), "the ribbon's curve crosses itself")
    tw, turn = polygon_twist(P, rb.normals)
    eps = edge_offset(rb, dist)
    lk, lbound, dl, _, _ = linking_auto(P, rb.edge(eps), threads)
    out = {"twist": tw, "writhe": wr, "linking": lk, "linking_integer": int(round(lk)),
           "defect": lk - tw - wr, "edge_offset": eps, "closest_distance": dist, "largest_turn": turn,
           "samples": len(P), "method_bound": bound + lbound}
    if dl <= TOUCH * rb.curve.diameter():
        raise FlowkitError("the ribbon's edge touches its curve; resample the ribbon more finely")
    if smooth is None:
        smooth = rb.curve.func is not None
    out["twist_smooth"] = spectral_twist(P, rb.normals) if smooth else math.nan
    return out


def ribbon_topology(rb, normals=None, *, n: int | None = None, error: bool = True, threads: int | None = None,
                    smooth: bool | None = None):
    """Twist, writhe and linking number of a ribbon, with the Călugăreanu–White check.

    Parameters
    ----------
    rb : Ribbon, or a curve (then pass ``normals``)
        The ribbon (see :func:`ribbon`).
    normals : optional
        Normals when ``rb`` is a curve.
    n : int, optional
        Samples of callables.
    error : bool
        Estimate the sampling error of Tw and Wr from the ribbon at half the samples.
    smooth : bool, optional
        Also compute the smooth-curve twist by FFT (default: when built from callables).

    Returns
    -------
    RibbonTopology
    """
    from flowkit.topology.results import RibbonTopology

    if not isinstance(rb, Ribbon):
        rb = ribbon(rb, normals, n=n)
    parts = ribbon_parts(rb, threads, smooth)
    wr_err = tw_err = math.nan
    if error and rb.curve.n >= 8:
        cp = ribbon_parts(rb.coarse(), threads, smooth=False)
        wr_err = abs(parts["writhe"] - cp["writhe"]) / 3
        tw_err = abs(parts["twist"] - cp["twist"]) / 3
    notes = []
    if parts["largest_turn"] > math.pi / 2:
        notes.append(f"the normal turns by {parts['largest_turn']:.2f} rad over one segment: under-resolved ribbon")
    return RibbonTopology(**parts, writhe_error=wr_err, twist_error=tw_err, points=rb.points, normals=rb.normals,
                          notes=notes, provenance={"ribbon": rb.description,
                                                   "method": "polygon twist with parallel transport at corners; "
                                                             "polygon Gauss integrals (exact; fast with a bound: "
                                                             "writhe from 4,000 points, linking from 20,000² "
                                                             "segment pairs)"})


def flux_tube_lines(rb: Ribbon, radius: float, twist: int = 0, lines: int = 6) -> list[np.ndarray]:
    """Field lines on a thin flux tube around a ribbon's curve, with ``twist`` extra turns.

    Line j is x + radius (cos phi N + sin phi (T x N)) with phi = 2 pi j / lines + 2 pi twist s
    (s the fraction of the way around), so every line closes. Each line links the tube's
    axis (and every other line) Lk(ribbon) + twist times, as long as ``radius`` is small
    against the curve's curvature radius and its distance to itself.

    Returns
    -------
    list of (n, 3) arrays, one closed polygon per line.
    """
    from flowkit.validation import count, positive

    radius = positive(radius, "radius")
    lines = count(lines, "lines")
    if isinstance(twist, bool) or not float(twist).is_integer():
        raise FlowkitError(f"`twist` must be a whole number of turns (the lines must close); got {twist!r}")
    P, N = rb.points, rb.normals
    T = np.roll(P, -1, axis=0) - np.roll(P, 1, axis=0)
    T /= np.linalg.norm(T, axis=1)[:, None]
    Bn = np.cross(T, N)
    s = np.arange(len(P)) / len(P)
    out = []
    for j in range(lines):
        phi = 2 * np.pi * (j / lines + int(twist) * s)
        out.append(P + radius * (np.cos(phi)[:, None] * N + np.sin(phi)[:, None] * Bn))
    return out
