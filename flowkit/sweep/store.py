"""On-disk store of a sweep: survives a kill at any moment, resumes without duplicates.

Layout of the store folder::

    manifest.json        the sweep spec, its fingerprint, flowkit version, run log
    points/000012.json   one record per finished point (written atomically)
    results.nc           all finished points as an xarray Dataset (rewritten atomically)

Every file is written to a temporary name and renamed into place, so a reader
never sees a half-written file. A folder that is not empty and has no manifest,
or whose manifest describes a different sweep, is refused and left untouched.
"""

from __future__ import annotations

import datetime
import json
import os
from pathlib import Path

import numpy as np

from flowkit._version import __version__
from flowkit.errors import FlowkitError
from flowkit.sweep.spec import SweepSpec

MAGIC = "flowkit-sweep-store"


def atomic_write_text(path: Path, text: str) -> None:
    """Write ``text`` to ``path`` so that readers see the old or the new file, never a mix."""
    tmp = path.with_name(f".{path.name}.tmp{os.getpid()}")
    with open(tmp, "w") as fh:
        fh.write(text)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, path)


class SweepStore:
    """The folder holding one sweep's results (see module docstring)."""

    def __init__(self, path, spec: SweepSpec):
        self.path = Path(path)
        self.spec = spec
        self.points_dir = self.path / "points"
        self._open()

    # -- opening ---------------------------------------------------------------
    def _open(self) -> None:
        manifest = self.path / "manifest.json"
        if self.path.exists() and not self.path.is_dir():
            raise FlowkitError(f"store path {str(self.path)!r} is a file, not a folder; choose a folder path")
        if manifest.exists():
            data, _ = read_manifest(self.path)
            if data.get("fingerprint") != self.spec.fingerprint():
                raise FlowkitError(
                    f"store {str(self.path)!r} holds a different sweep (flow, ranges, measures or options differ); "
                    "it was left untouched — use a new --store path to run this one"
                )
            self.manifest = data
        else:
            if self.path.exists() and any(self.path.iterdir()):
                raise FlowkitError(
                    f"{str(self.path)!r} is not empty and is not a flowkit sweep store; it was left untouched — "
                    "choose a new or empty folder for --store"
                )
            self.points_dir.mkdir(parents=True, exist_ok=True)
            self.manifest = {
                "magic": MAGIC,
                "fingerprint": self.spec.fingerprint(),
                "spec": self.spec.as_dict(),
                "flowkit_version": __version__,
                "created": _now(),
                "runs": [],
            }
            atomic_write_text(manifest, json.dumps(self.manifest, indent=1))
        self.points_dir.mkdir(exist_ok=True)

    # -- records -----------------------------------------------------------------
    def done(self) -> dict[int, dict]:
        """Finished records by point index (refuses a store with a corrupt record)."""
        out = {}
        for f in sorted(self.points_dir.glob("[0-9]*.json")):
            try:
                rec = _check_record(json.loads(f.read_text(encoding="utf-8")), self.spec)
                idx = rec["index"]
            except (OSError, ValueError, KeyError, TypeError, json.JSONDecodeError):
                raise FlowkitError(
                    f"store record {f.name} in {str(self.path)!r} is corrupt; the store was left untouched — "
                    "delete that file to recompute the point, or use a new --store path"
                ) from None
            out[idx] = rec
        return out

    def write(self, record: dict) -> None:
        atomic_write_text(self.points_dir / f"{record['index']:06d}.json", json.dumps(record))

    def log_run(self, info: dict) -> None:
        self.manifest["runs"].append({"at": _now(), **info})
        atomic_write_text(self.path / "manifest.json", json.dumps(self.manifest, indent=1))

    # -- assembled view ------------------------------------------------------------
    def to_xarray(self):
        """All finished points as an ``xarray.Dataset`` (NaN where a point is not done)."""
        import xarray as xr

        spec = self.spec
        recs = self.done()
        shape = spec.shape
        data = {}
        for m in spec.measures:
            for part in ("value", "stderr"):
                arr = np.full(shape, np.nan)
                for idx, rec in recs.items():
                    val = rec["measures"].get(m, {}).get(part)
                    arr[np.unravel_index(idx, shape)] = np.nan if val is None else val
                data[f"{m}" if part == "value" else f"{m}_stderr"] = (tuple(spec.axes), arr)
        done = np.zeros(shape, dtype=bool)
        for idx in recs:
            done[np.unravel_index(idx, shape)] = True
        data["done"] = (tuple(spec.axes), done.astype(np.int8))
        ds = xr.Dataset(data, coords={k: np.asarray(v) for k, v in spec.axes.items()})
        ds.attrs["provenance"] = json.dumps({k: v for k, v in self.manifest.items() if k != "runs"})
        ds.attrs["flowkit_version"] = __version__
        return ds

    def write_netcdf(self) -> Path:
        """Rewrite ``results.nc`` atomically from the finished records."""
        path = self.path / "results.nc"
        tmp = path.with_name(f".results.nc.tmp{os.getpid()}")
        self.to_xarray().to_netcdf(tmp)
        os.replace(tmp, path)
        return path


#: Keys of a manifest.
MANIFEST_KEYS = ("magic", "fingerprint", "spec", "flowkit_version", "created", "runs")


def read_manifest(store_path) -> tuple[dict, str]:
    """The manifest of a store, checked key by key (it is data from a file); also its path as text."""
    path = Path(store_path) / "manifest.json"
    where = str(path)
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise FlowkitError(f"{str(store_path)!r} holds no manifest.json; it is not a flowkit sweep store") from None
    except (OSError, ValueError) as exc:  # ValueError covers bad JSON and text that is not UTF-8
        raise FlowkitError(f"store {str(store_path)!r} has an unreadable manifest ({exc}); it was left untouched — "
                           "use a new --store path") from None
    if not isinstance(data, dict) or data.get("magic") != MAGIC:
        raise FlowkitError(f"{str(store_path)!r} is not a flowkit sweep store; use a new --store path")
    for key in data:
        if key not in MANIFEST_KEYS:
            raise FlowkitError(f"{where}: unknown key {key!r}; a manifest holds {', '.join(MANIFEST_KEYS)}")
    if not isinstance(data.get("spec"), dict):
        raise FlowkitError(f"{where}: key 'spec' must be a mapping (the sweep spec)")
    if not isinstance(data.get("fingerprint"), str) or not isinstance(data.get("runs", []), list):
        raise FlowkitError(f"{where}: key 'fingerprint' must be text and 'runs' a list")
    return data, where


def _check_record(rec, spec: SweepSpec) -> dict:
    """A point record read back: index in range, measures holding numbers or null (else ValueError)."""
    n = len(spec.points())
    if not isinstance(rec, dict) or isinstance(rec.get("index"), bool) or not isinstance(rec.get("index"), int) \
            or not 0 <= rec["index"] < n or not isinstance(rec.get("measures"), dict):
        raise ValueError("bad record")
    for m in rec["measures"].values():
        if not isinstance(m, dict):
            raise ValueError("bad measure")
        for part in ("value", "stderr"):
            v = m.get(part)
            if not (v is None or (isinstance(v, (int, float)) and not isinstance(v, bool))):
                raise ValueError("bad number")
    return rec


def _now() -> str:
    return datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")
