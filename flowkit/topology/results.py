"""Result types of the topology package (the flowkit result protocol: save/load, summary, HTML)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from flowkit.results import Result


def _f(x):
    return None if x is None or (isinstance(x, float) and not math.isfinite(x)) else x


@dataclass
class CurveGeometry(Result):
    """Smooth-curve geometry of a closed curve (spectral differentiation; see :mod:`flowkit.topology.curves`).

    Attributes
    ----------
    length, total_curvature, total_torsion : float
        Arc length, oint kappa ds and oint tau ds (samples with vanishing curvature left out).
    inflections : ndarray
        Parameters (fractions of the period) of near-zero curvature minima.
    spectral_tail : float
        Share of spectral energy in the top quarter of wavenumbers (resolution check).
    curvature, torsion, speed, points : ndarray
        Per sample; torsion is NaN where the curvature vanishes.
    """

    length: float
    total_curvature: float
    total_torsion: float
    inflections: np.ndarray
    spectral_tail: float
    curvature: np.ndarray
    torsion: np.ndarray
    speed: np.ndarray
    points: np.ndarray
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("inflections", "curvature", "torsion", "speed", "points")
    _DIMS = {"curvature": ("sample",), "torsion": ("sample",), "speed": ("sample",), "points": ("sample", "xyz")}

    def summary(self) -> dict:
        return {"length": self.length, "total_curvature": self.total_curvature,
                "total_torsion": self.total_torsion, "inflections": [float(v) for v in self.inflections],
                "spectral_tail": self.spectral_tail, "samples": int(len(self.points)), "notes": list(self.notes)}

    def headline(self):
        return [("length", self.length, None), ("total curvature", self.total_curvature, None),
                ("total torsion", self.total_torsion, None), ("inflection points", len(self.inflections), None)]


@dataclass
class Writhe(Result):
    """Writhe of a closed curve with a sampling error from half the samples.

    ``method`` "exact" sums the polygon's segment pairs exactly; "fast" uses the
    midpoint rule away from near pairs, and ``method_bound`` bounds its difference
    from the exact polygon sum (see :mod:`flowkit.topology._fast`).
    """

    writhe: float
    error: float
    coarse_writhe: float
    samples: int
    closest_distance: float
    points: np.ndarray
    method: str = "exact"
    method_bound: float = 0.0
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("points",)
    _DIMS = {"points": ("sample", "xyz")}

    def summary(self) -> dict:
        return {"writhe": self.writhe, "error": _f(self.error), "coarse_writhe": _f(self.coarse_writhe),
                "samples": self.samples, "closest_distance": self.closest_distance,
                "method": self.method, "method_bound": self.method_bound}

    def headline(self):
        return [("Wr", self.writhe, self.error), ("samples", self.samples, None),
                ("method", self.method, None), ("bound on |fast - exact|", self.method_bound, None)]


@dataclass
class Linking(Result):
    """Gauss linking number of two closed curves, with its distance from the nearest integer.

    For two field lines (:func:`flowkit.topology.fieldlinks.field_line_linking`)
    ``linking`` is the integral over the open lines, ``integer`` that of the lines
    closed by chords, ``closed_defect`` the closed sum's round-off and ``gaps`` the
    lines' return distances; these stay None for closed curves.
    """

    linking: float
    integer: int
    defect: float
    closest_distance: float
    samples: tuple
    first: np.ndarray
    second: np.ndarray
    open_linking: float | None = None
    closed_defect: float | None = None
    gaps: list | None = None
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("first", "second")
    _DIMS = {"first": ("sample_a", "xyz"), "second": ("sample_b", "xyz")}

    def summary(self) -> dict:
        out = {"linking": self.linking, "integer": self.integer, "defect": self.defect,
               "closest_distance": self.closest_distance, "samples": list(self.samples)}
        if self.gaps is not None:
            out.update({"open_linking": self.open_linking, "closed_defect": self.closed_defect,
                        "gaps": [float(g) for g in self.gaps]})
        return out

    def headline(self):
        return [("Lk", self.linking, None), ("integer", self.integer, None), ("|Lk - integer|", self.defect, None)]


@dataclass
class RibbonTopology(Result):
    """Twist, writhe and linking of a ribbon, and the Călugăreanu–White defect Lk - Tw - Wr.

    ``method_bound`` bounds the fast sums' share of Wr and Lk (0 where they are exact: Wr below
    4,000 points, Lk below 20,000² segment pairs).
    """

    twist: float
    writhe: float
    linking: float
    linking_integer: int
    defect: float
    edge_offset: float
    closest_distance: float
    largest_turn: float
    samples: int
    twist_smooth: float
    writhe_error: float
    twist_error: float
    points: np.ndarray
    normals: np.ndarray
    method_bound: float = 0.0
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("points", "normals")
    _DIMS = {"points": ("sample", "xyz"), "normals": ("sample", "xyz")}

    def summary(self) -> dict:
        return {"twist": self.twist, "writhe": self.writhe, "linking": self.linking,
                "linking_integer": self.linking_integer, "calugareanu_defect": self.defect,
                "twist_error": _f(self.twist_error), "writhe_error": _f(self.writhe_error),
                "twist_smooth": _f(self.twist_smooth), "samples": self.samples, "edge_offset": self.edge_offset,
                "method_bound": self.method_bound, "notes": list(self.notes)}

    def headline(self):
        return [("Tw", self.twist, self.twist_error), ("Wr", self.writhe, self.writhe_error),
                ("Lk", self.linking, None), ("Lk - Tw - Wr", self.defect, None)]


@dataclass
class RibbonHistory(Result):
    """Wr(t), Tw(t), Lk(t) of a material ribbon carried by a flow (see :mod:`flowkit.topology.material`)."""

    times: np.ndarray
    writhe: np.ndarray
    twist: np.ndarray
    linking: np.ndarray
    defect: np.ndarray
    writhe_error: np.ndarray
    lengths: np.ndarray
    npoints: np.ndarray
    positions: np.ndarray
    normals: np.ndarray
    snapshots: dict
    stopped: str
    per_period: bool
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("times", "writhe", "twist", "linking", "defect", "writhe_error", "lengths", "npoints",
               "positions", "normals", "snapshots")
    _DIMS = {k: ("time",) for k in ("times", "writhe", "twist", "linking", "defect", "writhe_error", "lengths",
                                    "npoints")}
    _DIMS.update({"positions": ("point", "xyz"), "normals": ("point", "xyz")})

    @property
    def linking_drift(self) -> float:
        """Largest distance of Lk(t) from its starting integer."""
        return float(np.max(np.abs(self.linking - round(float(self.linking[0])))))

    def summary(self) -> dict:
        return {"final_time": float(self.times[-1]), "writhe": [float(self.writhe[0]), float(self.writhe[-1])],
                "twist": [float(self.twist[0]), float(self.twist[-1])], "linking": int(round(float(self.linking[0]))),
                "linking_drift": self.linking_drift, "largest_defect": float(np.max(np.abs(self.defect))),
                "writhe_range": float(np.ptp(self.writhe)), "length_growth": float(self.lengths[-1] / self.lengths[0]),
                "final_points": int(self.npoints[-1]), "stopped": self.stopped, "per_period": self.per_period,
                "notes": list(self.notes)}

    def headline(self):
        return [("Lk", int(round(float(self.linking[0]))), self.linking_drift),
                ("Wr start", float(self.writhe[0]), None), ("Wr end", float(self.writhe[-1]),
                                                            float(self.writhe_error[-1])),
                ("Tw end", float(self.twist[-1]), None), ("length growth", float(self.lengths[-1] / self.lengths[0]),
                                                          None)]


@dataclass
class Helicity(Result):
    """A helicity integral (kinetic, magnetic or current) over a flow's or mode's domain.

    Attributes
    ----------
    quantity : str
        "kinetic" (int u . curl u dV), "magnetic" (int A . B dV) or "current" (int B . curl B dV).
    value, error : float
        The integral and its error estimate (0 for exact symbolic values).
    energy : float
        int |u|^2 dV (or |B|^2), for the relative helicity value / energy.
    method : str
        "exact (sympy)", "quadrature" or "spectral".
    density, plane : ndarray or None
        Helicity density on a plane grid and the plane's axes (when asked for).
    """

    quantity: str
    value: float
    error: float
    energy: float
    volume: float
    method: str
    exact: str
    density: np.ndarray | None = None
    plane: dict | None = None
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("density", "plane")

    @property
    def relative(self) -> float:
        return self.value / self.energy if self.energy else math.nan

    def summary(self) -> dict:
        return {"quantity": self.quantity, "value": self.value, "error": _f(self.error), "energy": self.energy,
                "relative": _f(self.relative), "volume": self.volume, "method": self.method, "exact": self.exact,
                "notes": list(self.notes)}

    def headline(self):
        return [(f"{self.quantity} helicity", self.value, self.error), ("energy", self.energy, None),
                ("helicity / energy", self.relative, None)]
