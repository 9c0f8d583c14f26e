"""One JSON encoding for everything a result stores beside its arrays.

:func:`encode` turns nested Python/numpy values into plain JSON with a few tagged
forms (tuples, non-finite floats, complex numbers, dicts with non-string keys,
small arrays, registered value types) so that :func:`decode` gives back exactly
what was stored. Decoding only recognises these tags: nothing read here can name
a class to build or run code. :func:`plain` is the lossy form for reports
(``--json`` output): tuples become lists and non-finite numbers ``null``.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from flowkit.errors import FlowkitError

#: Value types (small dataclasses such as a rate with its error) that may appear
#: inside a result's fields, by the name written to files.
VALUE_TYPES: dict[str, type] = {}


def value_type(cls: type) -> type:
    """Class decorator: let instances of a small dataclass travel inside result files."""
    VALUE_TYPES[cls.__name__] = cls
    return cls


def _float(x: float):
    return x if math.isfinite(x) else {"__float__": repr(x)}


def encode(obj: Any) -> Any:
    """Lossless JSON-ready copy of ``obj`` (see the module docstring for the tags)."""
    if obj is None or isinstance(obj, (bool, str)):
        return obj
    if isinstance(obj, (int, np.integer)) and not isinstance(obj, np.bool_):
        return int(obj)
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, (float, np.floating)):
        return _float(float(obj))
    if isinstance(obj, (complex, np.complexfloating)):
        return {"__complex__": [_float(obj.real), _float(obj.imag)]}
    if isinstance(obj, tuple):
        return {"__tuple__": [encode(v) for v in obj]}
    if isinstance(obj, list):
        return [encode(v) for v in obj]
    if isinstance(obj, dict):
        if all(isinstance(k, str) for k in obj):
            return {k: encode(v) for k, v in obj.items()}
        return {"__dict__": [[encode(k), encode(v)] for k, v in obj.items()]}
    if isinstance(obj, np.ndarray):
        return {"__array__": {"dtype": obj.dtype.str, "shape": list(obj.shape),
                              "data": [encode(v) for v in obj.ravel().tolist()]}}
    if dataclasses.is_dataclass(obj) and type(obj).__name__ in VALUE_TYPES:
        return {"__value__": type(obj).__name__,
                "fields": {f.name: encode(getattr(obj, f.name)) for f in dataclasses.fields(obj)}}
    raise FlowkitError(f"cannot store a {type(obj).__name__} in a flowkit result file ({obj!r:.80})")


_TAGS = ("__float__", "__complex__", "__tuple__", "__dict__", "__array__", "__value__")


def decode(obj: Any, where: str = "file") -> Any:
    """Inverse of :func:`encode`; refuses unknown tags, naming ``where``."""
    if isinstance(obj, list):
        return [decode(v, where) for v in obj]
    if not isinstance(obj, dict):
        return obj
    tags = [t for t in _TAGS if t in obj]
    if not tags:
        bad = [k for k in obj if isinstance(k, str) and k.startswith("__") and k.endswith("__")]
        if bad:
            raise FlowkitError(f"{where}: unknown tag {bad[0]!r} in stored fields; the file is not a flowkit result")
        return {k: decode(v, where) for k, v in obj.items()}
    tag = tags[0]
    val = obj[tag]
    if tag == "__float__":
        if val not in ("nan", "inf", "-inf"):
            raise FlowkitError(f"{where}: bad non-finite number {val!r}")
        return float(val)
    if tag == "__complex__":
        re, im = (decode(v, where) for v in val)
        return complex(float(re), float(im))
    if tag == "__tuple__":
        return tuple(decode(v, where) for v in val)
    if tag == "__dict__":
        return {_hashable(decode(k, where)): decode(v, where) for k, v in val}
    if tag == "__array__":
        dtype = np.dtype(val["dtype"])
        if dtype.kind not in "biufcU":
            raise FlowkitError(f"{where}: arrays of dtype {dtype} are not stored by flowkit")
        data = [decode(v, where) for v in val["data"]]
        return np.array(data, dtype=dtype).reshape(val["shape"])
    name = val
    if name not in VALUE_TYPES:
        raise FlowkitError(f"{where}: unknown value type {name!r}")
    return VALUE_TYPES[name](**decode(obj["fields"], where))


def _hashable(k):
    return tuple(k) if isinstance(k, list) else k


def plain(obj: Any) -> Any:
    """Report form: numpy values as Python numbers and lists, NaN/inf as ``None``."""
    if isinstance(obj, dict):
        return {str(k): plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return plain(obj.tolist())
    if isinstance(obj, np.generic):
        return plain(obj.item())
    if isinstance(obj, complex):
        return {"real": plain(obj.real), "imag": plain(obj.imag)}
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        if hasattr(obj, "summary"):
            return plain(obj.summary())
        return plain({f.name: getattr(obj, f.name) for f in dataclasses.fields(obj)})
    return obj
