"""Closed curves: from periodic samples or a periodic callable; length, curvature, torsion.

A :class:`ClosedCurve` is a polygon of ``n`` distinct points, the last joined back
to the first. It may also remember the callable it was sampled from, so that a
coarser or finer sampling of the same curve is available (error estimates).

Smooth-curve quantities (:func:`curve_geometry`) use spectral (FFT)
differentiation in the sample index: they assume the points are samples of a
smooth periodic parametrisation at equal parameter steps (any parametrisation,
not necessarily arc length; curvature and torsion do not depend on it). The
share of spectral energy in the top quarter of wavenumbers is reported as
``spectral_tail``; when it is not tiny the curve is under-resolved.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.validation import count, points as check_points_array


class ClosedCurve:
    """A closed polygon (n, 3) with, optionally, the periodic callable it samples.

    Use :func:`closed_curve` to build one (it validates).
    """

    def __init__(self, points: np.ndarray, func: Callable | None = None, description: dict | None = None):
        self.points = points
        self.func = func
        self.description = description or {"points": len(points)}

    @property
    def n(self) -> int:
        return len(self.points)

    def segments(self) -> np.ndarray:
        """Segment vectors P[k+1] - P[k] (the last closes the curve)."""
        return np.roll(self.points, -1, axis=0) - self.points

    def resample(self, n: int) -> "ClosedCurve":
        """The same curve with ``n`` samples: from the callable, else every ``len/n``-th point."""
        n = count(n, "n", minimum=4)
        if self.func is not None:
            return closed_curve(self.func, n, name=self.description.get("callable", "callable"))
        step = max(1, self.n // n)
        return closed_curve(self.points[::step], name="subsample")

    def coarse(self) -> "ClosedCurve":
        """Half the samples (every other point): the second sampling behind error estimates."""
        return self.resample(max(4, self.n // 2))

    def diameter(self) -> float:
        return float(np.max(np.ptp(self.points, axis=0)))

    def __repr__(self) -> str:
        return f"ClosedCurve(n={self.n}, {self.description})"


def closed_curve(source, n: int | None = None, *, name: str | None = None) -> ClosedCurve:
    """A closed curve from ``(N, 3)`` periodic points or a callable of one parameter.

    Parameters
    ----------
    source : array (N, 3), ClosedCurve, or callable
        Points in order around the curve (the closing segment from the last point to
        the first is implied; a repeated first point at the end is dropped), or
        ``f(t)`` mapping parameters ``t`` (M,) in [0, 1) to points (M, 3) with
        ``f(0) == f(1)``.
    n : int, optional
        Samples of a callable (default 256).
    name : str, optional
        Label stored in the description.

    Raises
    ------
    FlowkitError
        Fewer than 4 points, non-finite points, coincident neighbours, a curve that
        doubles back on itself, or one that does not close (its closing segment
        far longer than the others).
    """
    if isinstance(source, ClosedCurve):
        return source
    if callable(source):
        m = 256 if n is None else count(n, "n", minimum=4)
        t = np.arange(m) / m
        pts = np.asarray(source(t), dtype=np.float64)
        if pts.shape != (m, 3):
            raise FlowkitError(f"the curve callable must map M parameters to an (M, 3) array; got shape {pts.shape}")
        end = np.asarray(source(np.array([0.0, 1.0])), dtype=np.float64)
        scale = max(1.0, float(np.abs(pts).max()))
        if np.linalg.norm(end[1] - end[0]) > 1e-8 * scale:
            raise FlowkitError("the curve callable is not closed: f(0) and f(1) differ by "
                               f"{np.linalg.norm(end[1] - end[0]):.3g}; pass a periodic function of t in [0, 1)")
        return ClosedCurve(_check_closed(pts, "curve"), source, {"callable": name or getattr(source, "__name__", "f"),
                                                                 "samples": m})
    pts = _check_closed(source, name or "points")
    return ClosedCurve(pts, None, {"points": len(pts), "name": name or "points"})


def _check_closed(points, name: str) -> np.ndarray:
    """Validated (n, 3) distinct points of a closed polygon (see :func:`closed_curve`)."""
    P = check_points_array(points, name)
    scale = max(float(np.max(np.ptp(P, axis=0))), 1e-300)
    if len(P) > 1 and np.linalg.norm(P[-1] - P[0]) <= 1e-12 * scale:
        P = P[:-1]
    if len(P) < 4:
        raise FlowkitError(f"`{name}` must hold at least 4 distinct points of a closed curve; got {len(P)}")
    seg = np.roll(P, -1, axis=0) - P
    L = np.sqrt(np.einsum("ij,ij->i", seg, seg))
    bad = np.flatnonzero(L <= 1e-12 * scale)
    if bad.size:
        k = int(bad[0])
        raise FlowkitError(f"`{name}`: points {k} and {(k + 1) % len(P)} coincide ({P[k].tolist()}); "
                           "remove repeated points")
    med = float(np.median(L[:-1]))
    if L[-1] > 10 * max(med, float(L[:-1].max()) / 2):
        raise FlowkitError(f"`{name}` does not look closed: the closing segment from the last point to the first is "
                           f"{L[-1]:.3g} long, the others about {med:.3g}; pass the points of a closed curve "
                           "(last point next to the first)")
    T = seg / L[:, None]
    cosang = np.einsum("ij,ij->i", T, np.roll(T, -1, axis=0))
    back = np.flatnonzero(cosang < -1 + 1e-12)
    if back.size:
        k = (int(back[0]) + 1) % len(P)
        raise FlowkitError(f"`{name}` doubles back on itself at point {k} ({P[k].tolist()}): the segments before "
                           "and after it are antiparallel, so the curve touches itself there")
    return np.ascontiguousarray(P)


# -- spectral differentiation ---------------------------------------------------------------
def spectral_derivatives(P: np.ndarray, orders=(1, 2, 3)) -> dict[int, np.ndarray]:
    """Derivatives d^k P / dt^k (t in [0, 2 pi), equal steps) of periodic samples by FFT.

    The Nyquist mode of an even number of samples is dropped for odd orders (its
    derivative is not real).
    """
    n = len(P)
    F = np.fft.fft(P, axis=0)
    m = np.fft.fftfreq(n, 1.0 / n)
    out = {}
    for k in orders:
        mult = (1j * m) ** k
        if k % 2 and n % 2 == 0:
            mult[n // 2] = 0.0
        out[k] = np.real(np.fft.ifft(F * mult[:, None], axis=0))
    return out


def spectral_tail(P: np.ndarray) -> float:
    """Share of the (mean-free) spectral energy in the top quarter of wavenumbers."""
    F = np.fft.rfft(P - P.mean(axis=0), axis=0)
    e = np.sum(np.abs(F) ** 2, axis=1)
    tot = float(e.sum())
    if tot == 0:
        return 0.0
    return float(e[int(0.75 * (len(e) - 1)):].sum() / tot)


@dataclass
class GeometryParts:
    """Spectral geometry of a curve (the arrays behind :class:`~flowkit.topology.results.CurveGeometry`)."""

    speed: np.ndarray       # |dx/dt|, t in [0, 2 pi)
    curvature: np.ndarray
    torsion: np.ndarray
    length: float
    total_curvature: float
    total_torsion: float
    inflections: np.ndarray  # parameters t / 2 pi in [0, 1) where the curvature has a near-zero minimum
    tail: float
    notes: list = field(default_factory=list)


def geometry_parts(P: np.ndarray, inflection_tol: float = 1e-3) -> GeometryParts:
    """Length, curvature, torsion, inflection points and totals of smooth periodic samples."""
    n = len(P)
    d = spectral_derivatives(P)
    x1, x2, x3 = d[1], d[2], d[3]
    speed = np.linalg.norm(x1, axis=1)
    c = np.cross(x1, x2)
    cn2 = np.einsum("ij,ij->i", c, c)
    kappa = np.sqrt(cn2) / speed ** 3
    dt = 2 * math.pi / n
    length = float(speed.sum() * dt)
    kscale = 2 * math.pi / length  # curvature of the circle of the same length
    with np.errstate(invalid="ignore", divide="ignore"):
        tau = np.einsum("ij,ij->i", c, x3) / cn2
    near_flat = kappa < inflection_tol * kscale
    notes = []
    tau = np.where(near_flat, np.nan, tau)
    if near_flat.any():
        notes.append(f"torsion undefined at {int(near_flat.sum())} sample(s) where the curvature nearly vanishes; "
                     "left out of the total torsion")
    total_tau = float(np.nansum(tau * speed) * dt)
    infl = _inflections(cn2 / speed ** 6, (inflection_tol * kscale) ** 2)
    return GeometryParts(speed, kappa, tau, length, float(np.sum(kappa * speed) * dt), total_tau, infl,
                         spectral_tail(P), notes)


def _inflections(k2: np.ndarray, tol2: float) -> np.ndarray:
    """Parameters (fractions of the period) of local minima of kappa^2 below ``tol2``.

    kappa^2 (not kappa, which has a kink at a zero) is smooth, so a parabola through
    three samples locates the minimum and its value well.
    """
    n = len(k2)
    km, kp = np.roll(k2, 1), np.roll(k2, -1)
    out = []
    for i in np.flatnonzero((k2 <= km) & (k2 < kp)):
        a, b, c = km[i], k2[i], kp[i]
        den = a - 2 * b + c
        off = 0.5 * (a - c) / den if den > 0 else 0.0
        if b - 0.25 * (a - c) * off < tol2:
            out.append(((i + off) / n) % 1.0)
    return np.array(out, dtype=np.float64)


def curve_geometry(curve, n: int | None = None, *, inflection_tol: float = 1e-3):
    """Length, curvature, torsion, inflection points and total torsion of a smooth closed curve.

    Parameters
    ----------
    curve : ClosedCurve, (N, 3) points, or callable
        Smooth periodic samples at equal parameter steps, or a callable (see the
        module docstring for what the spectral method assumes).
    n : int, optional
        Samples of a callable (default 256).
    inflection_tol : float
        Curvature minima below this times 2 pi / length count as inflection points.

    Returns
    -------
    CurveGeometry
    """
    from flowkit.topology.results import CurveGeometry

    c = closed_curve(curve, n)
    g = geometry_parts(c.points, inflection_tol)
    notes = list(g.notes)
    if g.tail > 1e-20:
        notes.append(f"spectral tail {g.tail:.2g}: the samples may not resolve the curve (use more points)")
    return CurveGeometry(length=g.length, total_curvature=g.total_curvature, total_torsion=g.total_torsion,
                         inflections=g.inflections, spectral_tail=g.tail, curvature=g.curvature, torsion=g.torsion,
                         speed=g.speed, points=c.points, notes=notes,
                         provenance={"curve": c.description, "method": "FFT differentiation in the sample index"})
