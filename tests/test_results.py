"""The result protocol: lossless storage in every format, and nothing in a file runs code."""

import json
import math
from dataclasses import dataclass, field

import numpy as np
import pytest

import flowkit
from flowkit.errors import FlowkitError
from flowkit.results import Result, decode, encode, value_type


@value_type
@dataclass
class _Rate:
    value: float
    stderr: float


@dataclass
class _Probe(Result):
    _ARRAYS = ("series", "maps", "absent")
    _DIMS = {"series": ("t",)}
    series: np.ndarray
    maps: dict
    absent: object
    rate: _Rate
    window: tuple
    keyed: dict
    provenance: dict = field(default_factory=dict)


def _probe():
    return _Probe(np.linspace(0, 1, 7), {"field": np.arange(6).reshape(2, 3) * (1 + 2j), "names": np.array(["a", "bc"])},
                  None, _Rate(1.5, math.nan), (0.1, 2), {0.5: 1, 2.0: math.inf},
                  {"flow": {"flow": "stf", "parameters": {"rotation": 0.1}, "structure": {"recipe": {"preset": "stf"}}}})


@pytest.mark.parametrize("suffix", [".npz", ".json", ".nc"])
def test_round_trip_every_format(tmp_path, suffix):
    r = _probe()
    back = flowkit.load(r.save(tmp_path / f"probe{suffix}"))
    assert type(back) is _Probe
    assert np.array_equal(back.series, r.series)
    assert np.array_equal(back.maps["field"], r.maps["field"]) and back.maps["field"].dtype == np.complex128
    assert list(back.maps["names"]) == ["a", "bc"]
    assert back.absent is None and back.window == (0.1, 2) and back.keyed == r.keyed
    assert back.rate.value == 1.5 and math.isnan(back.rate.stderr)
    assert back.provenance == r.provenance
    assert "<table" in back._repr_html_() and "rotation=0.1" in back._repr_html_()


def test_encoding_is_exact_identity_on_tagged_values():
    obj = {"t": (1, 2.5), "nan": math.nan, "c": 1 - 2j, "k": {1.5: "x"}, "a": np.array([[1, 2]], dtype=np.int32)}
    back = decode(json.loads(json.dumps(encode(obj))))
    assert back["t"] == (1, 2.5) and math.isnan(back["nan"]) and back["c"] == 1 - 2j and back["k"] == {1.5: "x"}
    assert back["a"].dtype == np.int32 and back["a"].tolist() == [[1, 2]]


def test_unknown_tags_and_kinds_are_refused(tmp_path):
    with pytest.raises(FlowkitError, match="unknown value type"):
        decode({"__value__": "os.system", "fields": {}})
    with pytest.raises(FlowkitError, match="unknown tag"):
        decode({"__reduce__": ["os.system", "true"]})
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({"header": {"kind": "Nothing", "module": "os"}, "fields": {}, "arrays": {}}))
    with pytest.raises(FlowkitError, match="unknown result kind"):
        flowkit.load(bad)


def test_saved_file_gets_the_mode_open_would_give_it(tmp_path):
    # written through a private temporary file (mkstemp: 0600) and renamed; the result must
    # still be readable by whoever the umask allows, as a file made by open() would be
    import os
    import stat

    mask = os.umask(0o027)
    try:
        from flowkit.results import files

        files._umask.cache_clear()
        path = _probe().save(tmp_path / "shared.npz")
        assert stat.S_IMODE(os.stat(path).st_mode) == 0o640
    finally:
        os.umask(mask)
        files._umask.cache_clear()


def test_save_checks_the_path_first(tmp_path):
    with pytest.raises(FlowkitError, match="does not exist"):
        _probe().save(tmp_path / "missing" / "x.npz")
    with pytest.raises(FlowkitError, match="must end in"):
        _probe().save(tmp_path / "x.pickle")
