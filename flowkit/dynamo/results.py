"""Result dataclasses of the spectral dynamo solver: provenance, save/load, xarray.

Every class follows the shared result protocol (:class:`flowkit.results.Result`):
``save`` to ``.npz``/``.nc``/``.json`` by suffix (``.npz`` when none is given),
``flowkit.load`` or ``Class.load`` to reopen, ``summary()`` for ``--json``.
``to_xarray()`` keeps the solver's own layout (the box mode as ``B(part,
component, x, y, z)``, metadata as a JSON attribute).
"""

from __future__ import annotations

import datetime
import json
from dataclasses import asdict, dataclass, field, fields
from pathlib import Path

import numpy as np

from flowkit._version import __version__
from flowkit.results import Result


def stamp(flow, settings: dict) -> dict:
    """Provenance: the flow's own record plus method settings, version and date."""
    prov = flow.provenance()
    prov["method_settings"] = settings
    prov["flowkit_version"] = __version__
    prov["created"] = datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")
    return prov


class _DynamoResult(Result):
    """Shared behaviour: a path without a suffix is saved as ``.npz`` (the solver's historic default)."""

    def save(self, path) -> Path:
        """Write ``path`` (``.npz``, ``.nc`` or ``.json`` by suffix; ``.npz`` if none). Reload with
        :func:`flowkit.load` or ``type(self).load(path)``."""
        path = Path(path)
        if path.suffix == "":
            path = path.with_suffix(".npz")
        return super().save(path)


@dataclass
class GrowthResult(_DynamoResult):
    """Growth rate and frequency of the leading magnetic mode of one flow at one ``Rm``.

    Attributes
    ----------
    growth_rate, frequency : float
        ``Re`` and ``|Im|`` of the leading eigenvalue (Floquet exponent for
        time-periodic flows, frequency then defined modulo ``2 pi / period``).
    rm : float
        Magnetic Reynolds number ``1/eta``.
    resolution : int or list
        Box: grid points per side. Ball: ``[L, N]`` (harmonic degree, radial nodes).
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
        Box: the leading mode on the grid, shape ``(2, 3, N, N, N)``: real and imaginary
        parts (the field is ``Re[(mode[0] + i mode[1]) exp(lambda t)]``). Ball: the
        toroidal and poloidal scalars at the radial nodes, shape ``(2, 2, M, L+1, N)``
        (part, T/S, order ``orders[i]``, degree, node); see :mod:`flowkit.dynamo.sphere.mode`.
    domain : str
        ``"box"`` (periodic) or ``"ball"`` (insulating sphere).
    orders : list or None
        Ball: the azimuthal orders ``m`` of the mode's rows.
    reason : str
        Why ``converged`` is what it is; when not converged, the resolution to try next.
    provenance : dict
    seconds : float
    """

    growth_rate: float
    frequency: float
    rm: float
    resolution: int | list
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
    domain: str = "box"
    orders: list | None = None
    reason: str = ""

    _ARRAYS = ("mode",)

    def summary(self) -> dict:
        """JSON-ready dict of everything but the mode."""
        out = {f.name: getattr(self, f.name) for f in fields(self) if f.name != "mode"}
        return json.loads(json.dumps(out, default=_json_default))

    def headline(self):
        return [("growth rate", self.growth_rate, self.error_estimate), ("frequency", self.frequency, None),
                ("Rm", self.rm, None), ("resolution", self.resolution, None), ("method", self.method, None),
                ("converged", self.converged, None), ("domain", self.domain, None)]

    def _dims(self) -> dict:
        if self.mode is None:
            return {}
        if self.domain == "ball":
            return {"mode": ("part", "scalar", "order", "degree", "node")}
        return {"mode": ("part", "component", "x", "y", "z")}

    def to_xarray(self):
        """``xarray.Dataset`` with the mode as ``B(part, component, x, y, z)`` and scalars as attributes."""
        import xarray as xr

        attrs = {k: v for k, v in self.summary().items() if isinstance(v, (int, float, str)) and v is not None}
        attrs["converged"] = str(self.converged)
        attrs["metadata_json"] = json.dumps(self.summary())
        data = {}
        coords = {}
        if self.mode is not None and self.domain == "ball":
            coords = {"part": ["real", "imag"], "scalar": ["T", "S"], "order": list(self.orders or []),
                      "degree": np.arange(self.mode.shape[3])}
            data["mode"] = (("part", "scalar", "order", "degree", "node"), self.mode)
        elif self.mode is not None:
            n = self.mode.shape[-1]
            x = 2 * np.pi * np.arange(n) / n
            coords = {"part": ["real", "imag"], "component": ["x", "y", "z"], "x": x, "y": x, "z": x}
            data["B"] = (("part", "component", "x", "y", "z"), self.mode)
        return xr.Dataset(data, coords=coords, attrs=attrs)


class _GrowthCurve(_DynamoResult):
    """Shared by growth-rate curves; ``axis`` names the varied quantity."""

    axis = "rm"

    def summary(self) -> dict:
        return json.loads(json.dumps(asdict(self), default=_json_default))

    def headline(self):
        g = np.asarray(self.growth_rate, dtype=float)
        i = int(np.nanargmax(g)) if g.size and np.isfinite(g).any() else 0
        x = np.asarray(getattr(self, self.axis), dtype=float)
        return [("points", int(g.size), None),
                (f"fastest growth at {self.axis}", float(x[i]) if g.size else float("nan"), None),
                ("largest growth rate", float(g[i]) if g.size else float("nan"),
                 float(np.asarray(self.error_estimate, dtype=float)[i]) if g.size else None)]

    def _dims(self) -> dict:
        return {k: (self.axis,) for k in self._ARRAYS}

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

    _ARRAYS = ("rm", "growth_rate", "frequency", "error_estimate")


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
    _ARRAYS = ("kz", "growth_rate", "frequency", "error_estimate")

    @property
    def fastest(self) -> tuple[float, float]:
        """``(kz, growth rate)`` of the fastest-growing scanned wavenumber."""
        i = int(np.nanargmax(self.growth_rate))
        return float(self.kz[i]), float(self.growth_rate[i])


@dataclass
class CriticalRm(_DynamoResult):
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
    resolution: int | list = 0
    method: str = "eigen"
    provenance: dict = field(default_factory=dict, repr=False)
    seconds: float = 0.0

    def summary(self) -> dict:
        return json.loads(json.dumps(asdict(self), default=_json_default))

    def headline(self):
        return [("critical Rm", self.rm_critical, self.uncertainty), ("frequency at onset", self.frequency, None),
                ("slope d sigma / d Rm", self.slope, None), ("resolution", self.resolution, None),
                ("method", self.method, None)]


def _json_default(obj):
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if isinstance(obj, np.generic):
        return obj.item()
    raise TypeError(f"not JSON-serializable: {type(obj).__name__}")
