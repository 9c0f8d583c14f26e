"""Save/load of the frozen-in field results as ``.npz`` (arrays + JSON, no pickle)."""

from __future__ import annotations

import json
import math
from pathlib import Path

from flowkit.errors import FlowkitError
from flowkit.results.encoding import plain
from flowkit.fields.rates import _rate_from


def _jsonable(obj):
    return plain(obj)


class SavedResult:
    """Mixin for result dataclasses: ``save``/``load`` as ``.npz`` (arrays + JSON, no pickle), ``to_xarray``.

    A subclass names its array fields in ``_ARRAYS`` (``None`` values are skipped),
    its :class:`RateEstimate` fields in ``_RATES`` and its ``{float: RateEstimate}``
    fields in ``_RATE_DICTS``; every other field must be JSON-ready. Fields
    annotated ``float`` come back NaN where JSON stored null, ``tuple`` fields as
    tuples, and dicts keyed by moment order with float keys.
    """

    _ARRAYS: tuple = ()
    _RATES: tuple = ()
    _RATE_DICTS: tuple = ()

    def _fields_json(self) -> dict:
        import dataclasses

        out = {}
        for f in dataclasses.fields(self):
            v = getattr(self, f.name)
            if f.name in self._ARRAYS:
                continue
            if f.name in self._RATES:
                v = v.to_dict()
            elif f.name in self._RATE_DICTS:
                v = {repr(float(k)): r.to_dict() for k, r in v.items()}
            elif isinstance(v, dict) and v and all(isinstance(k, float) for k in v):
                v = {repr(k): x for k, x in v.items()}
            out[f.name] = v
        return _jsonable(out)

    def _save_arrays(self) -> dict:
        return {k: getattr(self, k) for k in self._ARRAYS if getattr(self, k) is not None}

    @classmethod
    def _restore(cls, fields: dict, arrays: dict) -> dict:
        """Hook: turn stored arrays back into fields (default: by name)."""
        return {**fields, **arrays}

    def save(self, path) -> Path:
        """Write to ``.npz``: arrays plus JSON metadata (summary, provenance); reloads without pickle."""
        from flowkit.chaos.tangent import write_npz

        path = Path(path)
        if path.suffix != ".npz":
            raise FlowkitError(f"`path` must end in .npz; got {path.name!r}")
        meta = {"flowkit_result": type(self).__name__, "fields": self._fields_json(), "summary": self.to_dict()}
        return write_npz(path, self._save_arrays(), meta)

    @classmethod
    def load(cls, path):
        """Read a file written by :meth:`save` (no code is executed)."""
        import dataclasses

        from flowkit.chaos.tangent import read_npz

        arrays, meta = read_npz(Path(path))
        if meta.get("flowkit_result") != cls.__name__:
            raise FlowkitError(f"{path} does not hold a flowkit {cls.__name__}")
        fields = meta["fields"]
        for f in dataclasses.fields(cls):
            if f.name not in fields:
                continue
            v = fields[f.name]
            if f.name in cls._RATES:
                v = _rate_from(v)
            elif f.name in cls._RATE_DICTS:
                v = {float(k): _rate_from(r) for k, r in v.items()}
            elif f.type == "float" and v is None:
                v = math.nan
            elif f.type == "tuple" and isinstance(v, list):
                v = tuple(v)
            elif f.type == "dict" and isinstance(v, dict) and v and all(_is_float_key(k) for k in v):
                v = {float(k): x for k, x in v.items()}
            fields[f.name] = v
        return cls(**cls._restore(fields, arrays))

    def _dataset(self, data_vars: dict, coords: dict):
        """An ``xarray.Dataset`` with the JSON summary in ``attrs``."""
        import xarray as xr

        ds = xr.Dataset(data_vars, coords=coords)
        ds.attrs["flowkit_result"] = type(self).__name__
        ds.attrs["summary"] = json.dumps(_jsonable(self.to_dict()))
        return ds


def _is_float_key(k: str) -> bool:
    try:
        float(k)
    except ValueError:
        return False
    return "." in k or "e" in k or k in ("inf", "-inf", "nan")

