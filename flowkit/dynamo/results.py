"""Result dataclasses of the spectral dynamo solver: provenance, save/load, xarray.

Files are ``.npz`` archives holding plain arrays plus one JSON string of metadata,
so they load with ``allow_pickle=False``; ``to_xarray()`` gives a Dataset that
``to_netcdf`` writes (metadata as a JSON attribute).
"""

from __future__ import annotations

import datetime
import json
from dataclasses import asdict, dataclass, field, fields
from pathlib import Path

import numpy as np

from flowkit._version import __version__


def stamp(flow, settings: dict) -> dict:
    """Provenance: the flow's own record plus method settings, version and date."""
    prov = flow.provenance()
    prov["method_settings"] = settings
    prov["flowkit_version"] = __version__
    prov["created"] = datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")
    return prov


def _write(path, arrays: dict, meta: dict) -> Path:
    path = Path(path)
    if path.suffix != ".npz":
        path = path.with_suffix(".npz")
    np.savez_compressed(path, meta=np.array(json.dumps(meta)), **arrays)
    return path


def _read(path) -> tuple[dict, dict]:
    with np.load(Path(path), allow_pickle=False) as data:
        meta = json.loads(str(data["meta"]))
        arrays = {k: data[k] for k in data.files if k != "meta"}
    return meta, arrays


@dataclass
class GrowthResult:
    """Growth rate and frequency of the leading magnetic mode of one flow at one ``Rm``.

    Attributes
    ----------
    growth_rate, frequency : float
        ``Re`` and ``|Im|`` of the leading eigenvalue (Floquet exponent for
        time-periodic flows, frequency then defined modulo ``2 pi / period``).
    rm : float
        Magnetic Reynolds number ``1/eta``.
    resolution : int
        Grid points per side of the reported value.
    method : str
        ``"eigen"`` (Arnoldi) or ``"march"`` (time stepping and fit).
    kz : float or None
        The single vertical wavenumber solved for (``z``-independent flows), or
        ``None`` for the full 3-D box.
    converged : bool or None
        Whether the growth rate agrees within ``tolerance`` with the run at
        ``check["resolution"]`` and the solver itself converged; ``None`` if no check ran.
    error_estimate : float
        ``|growth_rate - growth rate at check resolution|`` (NaN without a check).
    check : dict
        The resolution check: ``resolution``, ``growth_rate``, ``frequency``.
    diagnostics : dict
        Solver details (matvecs, residual, fit window, spectral tail of the mode, ...).
    mode : ndarray or None
        The leading mode on the grid, shape ``(2, 3, N, N, N)``: real and imaginary
        parts (the field is ``Re[(mode[0] + i mode[1]) exp(lambda t)]``).
    provenance : dict
    seconds : float
    """

    growth_rate: float
    frequency: float
    rm: float
    resolution: int
    method: str
    kz: float | None = None
    converged: bool | None = None
    error_estimate: float = float("nan")
    tolerance: float = 1e-3
    check: dict = field(default_factory=dict)
    diagnostics: dict = field(default_factory=dict)
    mode: np.ndarray | None = field(default=None, repr=False)
    provenance: dict = field(default_factory=dict, repr=False)
    seconds: float = 0.0

    def summary(self) -> dict:
        """JSON-ready dict of everything but the mode."""
        out = {f.name: getattr(self, f.name) for f in fields(self) if f.name != "mode"}
        return json.loads(json.dumps(out, default=_json_default))

    def save(self, path) -> Path:
        """Write ``path`` (``.npz``; no pickle needed to load)."""
        arrays = {} if self.mode is None else {"mode": self.mode}
        return _write(path, arrays, {"type": "GrowthResult", **self.summary()})

    @classmethod
    def load(cls, path) -> "GrowthResult":
        meta, arrays = _read(path)
        meta.pop("type", None)
        return cls(**meta, mode=arrays.get("mode"))

    def to_xarray(self):
        """``xarray.Dataset`` with the mode as ``B(part, component, x, y, z)`` and scalars as attributes."""
        import xarray as xr

        attrs = {k: v for k, v in self.summary().items() if isinstance(v, (int, float, str)) and v is not None}
        attrs["converged"] = str(self.converged)
        attrs["metadata_json"] = json.dumps(self.summary())
        data = {}
        coords = {}
        if self.mode is not None:
            n = self.mode.shape[-1]
            x = 2 * np.pi * np.arange(n) / n
            coords = {"part": ["real", "imag"], "component": ["x", "y", "z"], "x": x, "y": x, "z": x}
            data["B"] = (("part", "component", "x", "y", "z"), self.mode)
        return xr.Dataset(data, coords=coords, attrs=attrs)


class _GrowthCurve:
    """Save/load/xarray shared by growth-rate curves; ``axis`` names the varied quantity."""

    axis = "rm"

    def summary(self) -> dict:
        return json.loads(json.dumps(asdict(self), default=_json_default))

    def save(self, path) -> Path:
        """Write ``path`` (``.npz``; no pickle needed to load)."""
        names = (self.axis, "growth_rate", "frequency", "error_estimate")
        arrays = {k: np.asarray(getattr(self, k), dtype=float) for k in names}
        meta = {f.name: getattr(self, f.name) for f in fields(self) if f.name not in names}
        return _write(path, arrays, json.loads(json.dumps({"type": type(self).__name__, **meta},
                                                          default=_json_default)))

    @classmethod
    def load(cls, path):
        meta, arrays = _read(path)
        meta.pop("type", None)
        return cls(**arrays, **meta)

    def to_xarray(self):
        import xarray as xr

        a = self.axis
        return xr.Dataset(
            {"growth_rate": (a, np.asarray(self.growth_rate)),
             "frequency": (a, np.asarray(self.frequency)),
             "error_estimate": (a, np.asarray(self.error_estimate)),
             "converged": (a, np.array([bool(c) for c in self.converged]))},
            coords={a: np.asarray(getattr(self, a))},
            attrs={"metadata_json": json.dumps(self.summary()["provenance"])},
        )


@dataclass
class RmSweep(_GrowthCurve):
    """Growth rate against ``Rm`` (one :class:`GrowthResult` summary per point)."""

    rm: np.ndarray
    growth_rate: np.ndarray
    frequency: np.ndarray
    error_estimate: np.ndarray
    converged: list
    points: list = field(default_factory=list, repr=False)
    provenance: dict = field(default_factory=dict, repr=False)
    seconds: float = 0.0


@dataclass
class KzScan(_GrowthCurve):
    """Growth rate against the vertical wavenumber ``kz`` at one ``Rm`` (``z``-independent flows).

    The dispersion relation of the dynamo: which vertical scale grows fastest.
    """

    kz: np.ndarray
    growth_rate: np.ndarray
    frequency: np.ndarray
    error_estimate: np.ndarray
    converged: list
    rm: float = float("nan")
    points: list = field(default_factory=list, repr=False)
    provenance: dict = field(default_factory=dict, repr=False)
    seconds: float = 0.0

    axis = "kz"

    @property
    def fastest(self) -> tuple[float, float]:
        """``(kz, growth rate)`` of the fastest-growing scanned wavenumber."""
        i = int(np.nanargmax(self.growth_rate))
        return float(self.kz[i]), float(self.growth_rate[i])


@dataclass
class CriticalRm:
    """The ``Rm`` where the leading growth rate crosses zero from below.

    ``uncertainty`` adds the root-finding tolerance and the resolution error of the
    growth rate at the root divided by the slope ``d sigma / d Rm`` there.
    """

    rm_critical: float
    uncertainty: float
    bracket: list
    slope: float
    frequency: float
    evaluations: list = field(default_factory=list)
    resolution: int = 0
    method: str = "eigen"
    provenance: dict = field(default_factory=dict, repr=False)
    seconds: float = 0.0

    def summary(self) -> dict:
        return json.loads(json.dumps(asdict(self), default=_json_default))

    def save(self, path) -> Path:
        return _write(path, {}, {"type": "CriticalRm", **self.summary()})

    @classmethod
    def load(cls, path) -> "CriticalRm":
        meta, _ = _read(path)
        meta.pop("type", None)
        return cls(**meta)


def _json_default(obj):
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if isinstance(obj, np.generic):
        return obj.item()
    raise TypeError(f"not JSON-serializable: {type(obj).__name__}")
