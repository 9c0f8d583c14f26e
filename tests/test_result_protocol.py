"""One battery for every result type: save in every format, reload with flowkit.load, compare, render.

The instances come from the registry in ``result_examples.py``, filled by every
``tests/examples_<area>.py``. Each is built once per session (they are small real
computations) and then saved as ``.npz``, ``.json`` and ``.nc``.
"""

from __future__ import annotations

import dataclasses
import importlib
import json
import math
import pkgutil
from pathlib import Path

import numpy as np
import pytest

import flowkit
from flowkit.errors import FlowkitError
from flowkit.results import KINDS, Result, plain
from result_examples import EXAMPLES

HERE = Path(__file__).resolve().parent
for _path in sorted(HERE.glob("examples_*.py")):
    importlib.import_module(_path.stem)

FORMATS = (".npz", ".json", ".nc")
_BUILT: dict[str, Result] = {}


def _instance(kind: str) -> Result:
    if kind not in _BUILT:
        obj = EXAMPLES[kind]()
        assert type(obj).kind == kind, f"the factory for {kind!r} returned a {type(obj).__name__}"
        _BUILT[kind] = obj
    return _BUILT[kind]


def _import_all_subpackages() -> None:
    """Import every flowkit module that can define a result (kernel templates and entry points aside)."""
    for mod in pkgutil.walk_packages(flowkit.__path__, "flowkit."):
        if mod.name.startswith("flowkit.kernels.") or mod.name in ("flowkit.__main__", "flowkit.cli.__main__"):
            continue
        importlib.import_module(mod.name)


def assert_same(a, b, where: str) -> None:
    """Deep equality of stored values: arrays exactly (NaN = NaN), dtype kind kept, floats exactly."""
    if isinstance(a, Result):
        assert type(b) is type(a), f"{where}: {type(b).__name__} instead of {type(a).__name__}"
        for f in dataclasses.fields(a):
            assert_same(getattr(a, f.name), getattr(b, f.name), f"{where}.{f.name}")
    elif isinstance(a, np.ndarray):
        assert isinstance(b, np.ndarray), f"{where}: not an array after reload"
        assert a.shape == b.shape and a.dtype.kind == b.dtype.kind, f"{where}: {a.shape}/{a.dtype} vs {b.shape}/{b.dtype}"
        if a.dtype.kind in "fc":
            np.testing.assert_array_equal(a, b, err_msg=where)  # NaN in the same places counts as equal
        else:
            assert np.array_equal(a, b), where
    elif isinstance(a, dict):
        assert isinstance(b, dict) and list(a) == list(b), f"{where}: keys {list(a)} vs {list(b) if isinstance(b, dict) else b}"
        for k in a:
            assert_same(a[k], b[k], f"{where}[{k!r}]")
    elif isinstance(a, (list, tuple)):
        assert type(a) is type(b) and len(a) == len(b), f"{where}: {a!r:.80} vs {b!r:.80}"
        for i, (x, y) in enumerate(zip(a, b)):
            assert_same(x, y, f"{where}[{i}]")
    elif dataclasses.is_dataclass(a):
        assert type(a) is type(b), where
        for f in dataclasses.fields(a):
            assert_same(getattr(a, f.name), getattr(b, f.name), f"{where}.{f.name}")
    elif isinstance(a, np.generic):  # numpy scalars come back as the Python number of the same value
        assert_same(a.item(), b.item() if isinstance(b, np.generic) else b, where)
    elif isinstance(a, float) and math.isnan(a):
        assert isinstance(b, float) and math.isnan(b), f"{where}: NaN became {b!r}"
    else:
        assert a == b and type(a) is type(b), f"{where}: {a!r:.80} ({type(a).__name__}) vs {b!r:.80} ({type(b).__name__})"


def test_every_result_kind_has_an_example():
    _import_all_subpackages()
    missing = sorted(k for k in KINDS if k not in EXAMPLES and not k.startswith("_"))
    owners = {k: KINDS[k].__module__ for k in missing}
    assert not missing, ("result kinds without a factory in tests/examples_<area>.py "
                         f"(add one with @example(kind)): {owners}")


@pytest.mark.parametrize("kind", sorted(EXAMPLES))
def test_round_trip_in_every_format(kind, tmp_path):
    obj = _instance(kind)
    for suffix in FORMATS:
        path = obj.save(tmp_path / f"{kind}{suffix}")
        back = flowkit.load(path)
        assert_same(obj, back, f"{kind}{suffix}")
        assert back.provenance == obj.provenance
        assert type(obj).load(path).kind == kind  # the class's own load gives the same type


@pytest.mark.parametrize("kind", sorted(EXAMPLES))
def test_views_render(kind):
    obj = _instance(kind)
    summary = obj.summary()
    assert json.loads(json.dumps(summary, allow_nan=False)) == summary  # plain JSON, what --json prints
    assert plain(summary) == summary
    html = obj._repr_html_()
    assert html.startswith("<table") and type(obj).__name__ in html
    text = str(obj)
    assert text and len(text.splitlines()) <= 40
    rows = obj.headline()
    assert all(len(r) == 3 for r in rows)
    import xarray as xr

    assert isinstance(obj.to_xarray(), xr.Dataset)


@pytest.mark.parametrize("kind", sorted(EXAMPLES))
def test_flow_is_rebuilt_from_the_provenance(kind):
    obj = _instance(kind)
    prov = obj.provenance or {}
    fp = prov.get("flow") if isinstance(prov.get("flow"), dict) else prov
    if not ((fp.get("structure") or {}).get("recipe") or isinstance(fp.get("flow"), str)):
        with pytest.raises(FlowkitError, match="no flow recipe"):  # says so instead of guessing
            obj.flow()
        return
    rebuilt = obj.flow()
    assert rebuilt.name == fp.get("flow", rebuilt.name)
    assert rebuilt.param_dict == {k: float(v) for k, v in (fp.get("parameters") or {}).items()}
