"""The :class:`Section` result: crossings, per-orbit bookkeeping, provenance (files by the results protocol)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.integrate.outcomes import OUTCOME_NAMES, outcome_counts
from flowkit.results import Result

#: per-crossing arrays, per-orbit arrays (saved under these names)
CROSSING_ARRAYS = ("points", "coords", "time", "orbit", "crossing_direction")
ORBIT_ARRAYS = ("seeds", "outcome", "t_end", "steps", "counts")


@dataclass(eq=False)
class Section(Result):
    """A Poincaré section of one or more orbits.

    Attributes
    ----------
    points : (M, 3) float
        Crossing points, unwrapped (periodic domains: see :meth:`wrapped_points`).
    coords : (M, 2) float
        In-plane coordinates (u, v) in the basis ``geometry["e1"], geometry["e2"]``
        (see :mod:`flowkit.sections.geometry`).
    time : (M,) float
        Crossing times.
    orbit : (M,) int
        Index of the orbit (row of ``seeds``) of each crossing; crossings of one
        orbit are contiguous and in time order.
    crossing_direction : (M,) int8
        +1 where n.u > 0, -1 where n.u < 0, 0 for stroboscopic samples.
    seeds : (N, 3) float
        Initial points.
    outcome : (N,) int8
        How each orbit ended (:class:`flowkit.integrate.outcomes.Outcome`).
    t_end, steps, counts : (N,)
        End time, integrator steps and number of crossings of each orbit.
    geometry : dict
        The section (plane normal, offset, direction and in-plane basis, or the
        stroboscopic period and phase) and the periodic lattice spacing if any.
    provenance : dict
        Flow, parameters, integrator and tolerances, budget, seeds, version, date.
    orbit_values : dict of str -> (N,) array
        Per-orbit values (e.g. a chaos indicator) for colouring; see :meth:`attach`.
    """

    points: np.ndarray
    coords: np.ndarray
    time: np.ndarray
    orbit: np.ndarray
    crossing_direction: np.ndarray
    seeds: np.ndarray
    outcome: np.ndarray
    t_end: np.ndarray
    steps: np.ndarray
    counts: np.ndarray
    geometry: dict
    provenance: dict
    orbit_values: dict = field(default_factory=dict)

    _ARRAYS = CROSSING_ARRAYS + ORBIT_ARRAYS + ("orbit_values",)
    _DIMS = {"points": ("crossing", "xyz"), "coords": ("crossing", "uv"), "time": ("crossing",),
             "orbit": ("crossing",), "crossing_direction": ("crossing",), "seeds": ("orbit_id", "xyz"),
             "outcome": ("orbit_id",), "t_end": ("orbit_id",), "steps": ("orbit_id",), "counts": ("orbit_id",)}

    # -- summaries ---------------------------------------------------------------
    @property
    def n_orbits(self) -> int:
        return int(self.seeds.shape[0])

    @property
    def crossings_total(self) -> int:
        return int(self.points.shape[0])

    @property
    def outcomes(self) -> dict[str, int]:
        """Number of orbits per outcome name."""
        return outcome_counts(self.outcome)

    def outcome_names(self) -> list[str]:
        """Outcome name of each orbit."""
        return [OUTCOME_NAMES[int(c)] for c in self.outcome]

    def orbit_slice(self, i: int) -> slice:
        """Rows of the crossing arrays that belong to orbit ``i``."""
        if not 0 <= i < self.n_orbits:
            raise FlowkitError(f"orbit index {i} out of range; this section has {self.n_orbits} orbits")
        start = int(self.counts[:i].sum())
        return slice(start, start + int(self.counts[i]))

    def wrapped_points(self) -> np.ndarray:
        """Points for display: periodic domains wrapped into [0, 2 pi)^3, others unchanged."""
        if self.provenance.get("domain") != "periodic":
            return self.points
        return np.mod(self.points, 2 * math.pi)

    def display_coords(self) -> np.ndarray:
        """In-plane coordinates for display: wrapped to [0, 2 pi) along in-plane coordinate axes
        of periodic domains, unchanged otherwise."""
        uv = np.array(self.coords, copy=True)
        if self.provenance.get("domain") == "periodic":
            for col, e in enumerate((self.geometry["e1"], self.geometry["e2"])):
                if np.count_nonzero(np.abs(e) > 1e-12) == 1:  # along a coordinate axis: period 2 pi
                    uv[:, col] = np.mod(uv[:, col], 2 * math.pi)
        return uv

    def attach(self, name: str, values) -> "Section":
        """Attach a per-orbit array (length ``n_orbits``) under ``name``; returns self.

        Attached values are saved with the section and can colour a plot:
        ``plot_section(ax, sec, color_by=name)``.
        """
        vals = np.asarray(values)
        if not isinstance(name, str) or not name.isidentifier():
            raise FlowkitError(f"orbit value name must be an identifier; got {name!r}")
        if vals.shape != (self.n_orbits,):
            raise FlowkitError(f"`values` for {name!r} must have one entry per orbit ({self.n_orbits}); got shape {vals.shape}")
        self.orbit_values[name] = vals
        return self

    def summary(self) -> dict:
        """JSON-ready counts: crossings, orbits, outcomes (what ``--json`` prints)."""
        return {"crossings_total": self.crossings_total, "orbits": self.n_orbits, "outcomes": self.outcomes}

    def headline(self) -> list:
        return [("orbits", self.n_orbits, None), ("crossings", self.crossings_total, None),
                *[(name, n, None) for name, n in self.outcomes.items()]]

    # -- files (the results protocol: save by suffix, flowkit.load) -----------------
    def _dims(self) -> dict:
        dims = dict(self._DIMS)
        dims.update({f"orbit_values__{i}": ("orbit_id",) for i in range(len(self.orbit_values))})
        return dims

    def to_netcdf(self, path) -> Path:
        """Write a netCDF file (same as ``save`` with a ``.nc`` path)."""
        if Path(path).suffix.lower() != ".nc":
            raise FlowkitError(f"`path` {str(path)!r} must end in .nc for to_netcdf (or use save(path))")
        return self.save(path)

    @classmethod
    def load_netcdf(cls, path) -> "Section":
        """Read a netCDF file written by :meth:`to_netcdf` (same as :meth:`load`)."""
        return cls.load(path)

    def __repr__(self) -> str:
        flow = self.provenance.get("flow", "?")
        return f"Section({flow!r}, orbits={self.n_orbits}, crossings={self.crossings_total}, outcomes={self.outcomes})"
