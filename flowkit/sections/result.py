"""The :class:`Section` result: crossings, per-orbit bookkeeping, provenance, I/O."""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.integrate.outcomes import OUTCOME_NAMES, outcome_counts

#: per-crossing arrays, per-orbit arrays (saved under these names)
CROSSING_ARRAYS = ("points", "coords", "time", "orbit", "crossing_direction")
ORBIT_ARRAYS = ("seeds", "outcome", "t_end", "steps", "counts")
_VALUE_PREFIX = "orbit_value__"


@dataclass(eq=False)
class Section:
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
        """JSON-ready counts: crossings, orbits, outcomes."""
        return {"crossings_total": self.crossings_total, "orbits": self.n_orbits, "outcomes": self.outcomes}

    # -- files -------------------------------------------------------------------
    def save(self, path) -> Path:
        """Write an ``.npz`` (no pickle): the arrays plus geometry and provenance as JSON strings."""
        path = Path(path)
        arrays = {name: getattr(self, name) for name in CROSSING_ARRAYS + ORBIT_ARRAYS}
        arrays.update({_VALUE_PREFIX + k: np.asarray(v) for k, v in self.orbit_values.items()})
        arrays["geometry"] = np.array(json.dumps(self.geometry))
        arrays["provenance"] = np.array(json.dumps(_jsonable(self.provenance)))
        with open(path, "wb") as fh:
            np.savez_compressed(fh, **arrays)
        return path

    @classmethod
    def load(cls, path) -> "Section":
        """Read a section written by :meth:`save` (never executes code: ``allow_pickle=False``)."""
        try:
            data = np.load(Path(path), allow_pickle=False)
        except (OSError, ValueError) as exc:
            raise FlowkitError(f"cannot read section file {str(path)!r}: {exc}") from None
        with data:
            missing = [k for k in CROSSING_ARRAYS + ORBIT_ARRAYS + ("geometry", "provenance") if k not in data]
            if missing:
                raise FlowkitError(f"{str(path)!r} is not a flowkit section file (missing {', '.join(missing)})")
            kw = {k: data[k] for k in CROSSING_ARRAYS + ORBIT_ARRAYS}
            values = {k[len(_VALUE_PREFIX):]: data[k] for k in data.files if k.startswith(_VALUE_PREFIX)}
            return cls(**kw, geometry=json.loads(str(data["geometry"])),
                       provenance=json.loads(str(data["provenance"])), orbit_values=values)

    def to_xarray(self):
        """An :class:`xarray.Dataset` with dimensions ``crossing``, ``orbit_id``, ``xyz``, ``uv``.

        Geometry and provenance are JSON strings in the attributes (netCDF-safe).
        """
        import xarray as xr

        ds = xr.Dataset(
            {
                "points": (("crossing", "xyz"), self.points),
                "coords": (("crossing", "uv"), self.coords),
                "time": (("crossing",), self.time),
                "orbit": (("crossing",), self.orbit.astype(np.int32)),
                "crossing_direction": (("crossing",), self.crossing_direction.astype(np.int8)),
                "seeds": (("orbit_id", "xyz"), self.seeds),
                "outcome": (("orbit_id",), self.outcome.astype(np.int8),
                            {"flag_values": list(OUTCOME_NAMES), "flag_meanings": " ".join(
                                n.replace(" ", "_") for n in OUTCOME_NAMES.values())}),
                "t_end": (("orbit_id",), self.t_end),
                # int32 and int8 only, so that every netCDF engine (netCDF3 too) can write them
                "steps": (("orbit_id",), self.steps.astype(np.int32)),
                "counts": (("orbit_id",), self.counts.astype(np.int32)),
                **{_VALUE_PREFIX + k: (("orbit_id",), np.asarray(v)) for k, v in self.orbit_values.items()},
            },
            coords={"xyz": ["x", "y", "z"], "uv": ["u", "v"]},
            attrs={"title": "Poincaré section (flowkit)", "geometry": json.dumps(self.geometry),
                   "provenance": json.dumps(_jsonable(self.provenance))},
        )
        return ds

    @classmethod
    def from_xarray(cls, ds) -> "Section":
        """Inverse of :meth:`to_xarray`."""
        kw = {k: np.asarray(ds[k].values) for k in CROSSING_ARRAYS + ORBIT_ARRAYS}
        for k in ("orbit", "steps", "counts"):
            kw[k] = kw[k].astype(np.int64)
        values = {k[len(_VALUE_PREFIX):]: np.asarray(ds[k].values) for k in ds.data_vars if k.startswith(_VALUE_PREFIX)}
        return cls(**kw, geometry=json.loads(ds.attrs["geometry"]), provenance=json.loads(ds.attrs["provenance"]),
                   orbit_values=values)

    def to_netcdf(self, path) -> Path:
        """Write a netCDF file through xarray (:meth:`to_xarray`)."""
        self.to_xarray().to_netcdf(path)
        return Path(path)

    @classmethod
    def load_netcdf(cls, path) -> "Section":
        import xarray as xr

        with xr.open_dataset(path) as ds:
            return cls.from_xarray(ds.load())

    def __repr__(self) -> str:
        flow = self.provenance.get("flow", "?")
        return f"Section({flow!r}, orbits={self.n_orbits}, crossings={self.crossings_total}, outcomes={self.outcomes})"


def _jsonable(obj):
    """Provenance as plain JSON values (inf/nan as strings, so they round-trip)."""
    from flowkit.jsonable import json_ready

    return json_ready(obj, nonfinite="string")
