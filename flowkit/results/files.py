"""The one writer and reader of result files: ``.npz``, ``.json`` and ``.nc``.

A stored result is a header (kind, flowkit version), its fields as tagged JSON
(:mod:`flowkit.results.encoding`) and named arrays. Nothing is pickled: npz files
are read with ``allow_pickle=False``, JSON with :func:`json.loads`, netCDF through
xarray, and only numeric, boolean and text arrays are accepted.

Writes go to a temporary file in the target folder, then are renamed, so a
killed run never leaves half a file. If the write still fails (disk full,
permissions changed after the check), the file goes to a fallback folder (the
current folder, then the temporary folder) and a :class:`FlowkitNotice` says
where: finished work is never lost.
"""

from __future__ import annotations

import functools
import json
import os
import tempfile
import warnings
from pathlib import Path
from typing import Callable

import numpy as np

from flowkit.errors import FlowkitError, FlowkitNotice
from flowkit.results.encoding import decode, encode

HEADER = "__flowkit__"


def write_safely(path: Path, write: Callable[[Path], None]) -> Path:
    """Run ``write(tmp)`` then move ``tmp`` to ``path``; on failure write to a fallback folder.

    Returns the path actually written.
    """
    path = Path(path)
    try:
        _write_atomic(path, write)
        return path
    except OSError as exc:
        first = exc
    for folder in (Path.cwd(), Path(tempfile.gettempdir())):
        alt = folder / path.name
        if alt.resolve() == path.resolve():
            alt = folder / f"{path.stem}-{os.getpid()}{path.suffix}"
        try:
            _write_atomic(alt, write)
        except OSError:
            continue
        warnings.warn(f"could not write {path} ({first.strerror or first}); the result was saved to {alt} instead",
                      FlowkitNotice, stacklevel=3)
        return alt
    raise FlowkitError(f"could not write {path} ({first}) nor any fallback copy; the result is still in memory")


def _write_atomic(path: Path, write: Callable[[Path], None]) -> None:
    fd, tmp = tempfile.mkstemp(prefix=f".{path.stem}-", suffix=path.suffix, dir=path.parent if str(path.parent) else ".")
    os.close(fd)
    tmp = Path(tmp)
    try:
        write(tmp)
        # mkstemp makes the file private (0600); a result file gets the usual mode, as open() would give it
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()


@functools.lru_cache(maxsize=1)
def _umask() -> int:
    """The process's umask (read once: setting it to read it is not thread-safe)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _check_array(name: str, arr: np.ndarray, where: str) -> np.ndarray:
    if arr.dtype.kind not in "biufcU":
        raise FlowkitError(f"{where}: array {name!r} has dtype {arr.dtype}, which flowkit never stores")
    return arr


# -- writers -------------------------------------------------------------------------
def write(path: Path, header: dict, fields: dict, arrays: dict[str, np.ndarray], dims: dict) -> Path:
    """Write one result to ``path`` in the format its suffix names."""
    path = Path(path)
    meta = json.dumps({"header": header, "fields": encode(fields)}, allow_nan=False)
    suffix = path.suffix.lower()
    if suffix == ".npz":
        return write_safely(path, lambda p: _npz(p, meta, arrays))
    if suffix == ".json":
        doc = {"header": header, "fields": encode(fields), "arrays": {k: encode(np.asarray(v)) for k, v in arrays.items()}}
        text = json.dumps(doc, allow_nan=False)
        return write_safely(path, lambda p: p.write_text(text, encoding="utf-8"))
    if suffix == ".nc":
        ds = dataset(header, fields, arrays, dims)
        return write_safely(path, lambda p: ds.to_netcdf(p, engine="h5netcdf"))
    raise FlowkitError(f"`path` {str(path)!r} must end in .npz, .nc or .json")


def _npz(path: Path, meta: str, arrays: dict) -> None:
    with open(path, "wb") as fh:
        np.savez_compressed(fh, **{HEADER: np.array(meta)}, **arrays)


def dataset(header: dict, fields: dict, arrays: dict[str, np.ndarray], dims: dict):
    """An ``xarray.Dataset`` holding the arrays (complex ones split in real and imaginary parts).

    ``dims`` maps array names to dimension names; arrays not named there get
    dimensions of their own (``<name>_0``, ``<name>_1``, ...).
    """
    import xarray as xr

    data = {}
    for name, arr in arrays.items():
        arr = np.asarray(arr)
        d = tuple(dims.get(name, ())) or tuple(f"{name}_{i}" for i in range(arr.ndim))
        if len(d) != arr.ndim:
            d = tuple(f"{name}_{i}" for i in range(arr.ndim))
        if arr.dtype.kind == "c":
            data[f"{name}__real"] = (d, arr.real)
            data[f"{name}__imag"] = (d, arr.imag)
        else:
            data[name] = (d, arr)
    ds = xr.Dataset(data)
    ds.attrs[HEADER] = json.dumps({"header": header, "fields": encode(fields)}, allow_nan=False)
    ds.attrs["flowkit_kind"] = header["kind"]
    return ds


# -- the reader ------------------------------------------------------------------------
def read(path) -> tuple[dict, dict, dict[str, np.ndarray]]:
    """(header, fields, arrays) from a file written by :func:`write`; never runs code."""
    path = Path(path)
    where = str(path)
    if not path.is_file():
        raise FlowkitError(f"`path`: no file {where!r}")
    suffix = path.suffix.lower()
    try:
        if suffix == ".npz":
            with np.load(path, allow_pickle=False) as data:
                if HEADER not in data.files:
                    raise FlowkitError(f"{where} is an npz file but not a flowkit result (no {HEADER} entry)")
                meta = json.loads(str(data[HEADER]))
                arrays = {k: _check_array(k, data[k], where) for k in data.files if k != HEADER}
        elif suffix == ".json":
            doc = json.loads(path.read_text(encoding="utf-8"))
            if not isinstance(doc, dict) or "header" not in doc:
                raise FlowkitError(f"{where} is JSON but not a flowkit result (no 'header' key)")
            meta = doc
            arrays = {k: _check_array(k, np.asarray(decode(v, where)), where) for k, v in doc.get("arrays", {}).items()}
        elif suffix == ".nc":
            meta, arrays = _read_nc(path, where)
        else:
            raise FlowkitError(f"`path` {where!r}: flowkit reads .npz, .nc and .json result files")
    except (ValueError, OSError, KeyError) as exc:
        if isinstance(exc, FlowkitError):
            raise
        raise FlowkitError(f"{where} could not be read as a flowkit result: {exc}") from None
    header = meta.get("header")
    if not isinstance(header, dict) or not isinstance(header.get("kind"), str):
        raise FlowkitError(f"{where}: the header names no result kind")
    fields = decode(meta.get("fields", {}), where)
    if not isinstance(fields, dict):
        raise FlowkitError(f"{where}: stored fields must be a mapping")
    return header, fields, arrays


def _read_nc(path: Path, where: str):
    import xarray as xr

    with xr.open_dataset(path, engine="h5netcdf") as ds:
        if HEADER not in ds.attrs:
            raise FlowkitError(f"{where} is a netCDF file but not a flowkit result (no {HEADER} attribute)")
        meta = json.loads(ds.attrs[HEADER])
        # variables, not data_vars: an array named like its dimension comes back as a coordinate
        raw = {str(k): np.asarray(v.values) for k, v in ds.variables.items()}
    arrays = {}
    for k, v in raw.items():
        if k.endswith("__imag"):
            continue
        if k.endswith("__real"):
            base = k[: -len("__real")]
            arrays[base] = v + 1j * raw[f"{base}__imag"]
        else:
            if v.dtype == object:  # text arrays come back as objects from netCDF
                v = v.astype(str)
            arrays[k] = _check_array(k, v, where)
    return meta, arrays
