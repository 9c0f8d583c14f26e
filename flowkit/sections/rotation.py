"""Rotation numbers of the regular orbits around an elliptic periodic point (an island).

Seeds on a segment from the island centre c outward are followed for N returns
of P^k (k the centre's period); the angle of xi_n - c is unwrapped (each step
taken in (-pi, pi]) and the rotation number is the least-squares slope of the
angle against n over 2 pi: turns per iteration of P^k, known modulo 1 and
taken in (-1/2, 1/2]. Resonances show as plateaus at rationals p/q, where the
orbit is a chain of q islands; near the centre the profile tends to the
linear value +-arccos(tr DP^k / 2) / (2 pi).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.results import Result
from flowkit.sections.compute import poincare_section
from flowkit.validation import count, positive


@dataclass(eq=False)
class RotationProfile(Result):
    """Rotation number against distance from an island centre.

    Attributes
    ----------
    distance : (n,)
        Distance of each seed from the centre (section units).
    seeds : (n, 2)
        Seeds in section coordinates.
    rotation : (n,)
        Turns per iteration of P^period about the centre, in (-1/2, 1/2] (NaN if the orbit failed).
    spread : (n,)
        RMS deviation of the unwrapped angle from the fitted line, in turns (large: not a regular orbit).
    """

    _ARRAYS = ("distance", "seeds", "rotation", "spread", "centre")
    _DIMS = {"distance": ("seed",), "seeds": ("seed", "coord"), "rotation": ("seed",), "spread": ("seed",)}
    distance: np.ndarray
    seeds: np.ndarray
    rotation: np.ndarray
    spread: np.ndarray
    centre: np.ndarray
    period: int
    iterations: int
    provenance: dict = field(default_factory=dict)

    def summary(self) -> dict:
        from flowkit.results import plain

        ok = np.isfinite(self.rotation)
        return plain({"centre": self.centre.tolist(), "period": self.period, "iterations": self.iterations,
                      "seeds": int(self.distance.size), "rotation_range": [float(np.min(self.rotation[ok])),
                                                                           float(np.max(self.rotation[ok]))]
                      if ok.any() else None, "distance": self.distance.tolist(), "rotation": self.rotation.tolist()})

    def headline(self):
        s = self.summary()
        return [("centre", s["centre"], None), ("period", self.period, None), ("seeds", s["seeds"], None),
                ("rotation range", s["rotation_range"], None)]


def rotation_profile(flow, centre, section=None, *, towards=None, radius: float = 0.2, seeds: int = 20,
                     iterations: int = 400, period: int = 1, rtol: float = 1e-10) -> RotationProfile:
    """Rotation numbers of orbits seeded from an island centre outward.

    Parameters
    ----------
    flow : Flow
    centre : PeriodicOrbit or section coordinates
        The elliptic periodic point (a PeriodicOrbit brings its period).
    section : Plane or Stroboscopic
        Default as in :func:`~flowkit.sections.periodic.find_periodic_orbit`.
    towards : 2 numbers, optional
        Direction (in section coordinates) of the seed segment; default +e1.
    radius : float
        Length of the seed segment.
    seeds, iterations : int
        Seeds on the segment (the centre itself excluded) and iterations of P^period each.
    """
    from flowkit.sections.periodic import make_map

    rm = make_map(flow, section)
    if rm.dim != 2:
        raise FlowkitError("rotation numbers need a 2-D section map")
    if hasattr(centre, "xi"):
        if not centre.converged:
            raise FlowkitError(f"`centre` is an unconverged orbit ({centre.message})")
        period = int(centre.minimal_period)
        centre = centre.xi[0]
    c = np.asarray(centre, dtype=float).reshape(2)
    period = count(period, "period")
    n = count(seeds, "seeds", minimum=2)
    iterations = count(iterations, "iterations", minimum=8)
    radius = positive(radius, "radius")
    d = np.array([1.0, 0.0]) if towards is None else np.asarray(towards, float).reshape(2)
    if not np.linalg.norm(d) > 0:
        raise FlowkitError("`towards` must be a non-zero direction")
    d = d / np.linalg.norm(d)
    dist = radius * np.arange(1, n + 1) / n
    xi = c[None] + dist[:, None] * d[None]
    rm.check_start(xi, "seeds")
    if rm.strobe:
        sec = poincare_section(flow, rm.embed(xi), rm.section, crossings=iterations * period, t0=rm.t0, rtol=rtol)
    else:
        sec = poincare_section(flow, rm.embed(xi), rm.section, crossings=iterations * period, rtol=rtol)
    rot = np.full(n, np.nan)
    spread = np.full(n, np.nan)
    for i in range(n):
        pts = sec.coords[sec.orbit == i]
        if rm.flow.domain == "periodic":
            pts = c + np.mod(pts - c + np.pi, 2 * np.pi) - np.pi
        pts = np.vstack([xi[i], pts])[::period]
        if len(pts) < 8:
            continue
        ang = np.arctan2(pts[:, 1] - c[1], pts[:, 0] - c[0])
        steps = np.mod(np.diff(ang) + np.pi, 2 * np.pi) - np.pi
        theta = np.concatenate([[0.0], np.cumsum(steps)])
        k = np.arange(theta.size)
        slope, icept = np.polyfit(k, theta, 1)
        turns = slope / (2 * np.pi)
        rot[i] = turns - np.round(turns) if abs(turns - np.round(turns)) != 0.5 else 0.5
        spread[i] = float(np.sqrt(np.mean((theta - slope * k - icept) ** 2)) / (2 * np.pi))
    prov = rm.flow.provenance()
    prov.update(return_map=rm.describe(), radius=radius, towards=d.tolist(), iterations=iterations, rtol=rtol)
    return RotationProfile(distance=dist, seeds=xi, rotation=rot, spread=spread, centre=c, period=period,
                           iterations=iterations, provenance=prov)
