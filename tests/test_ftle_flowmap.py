"""ftle_field(method="flowmap"): flow map + centred finite differences against the variational field.

Reference: centred differences have truncation error O(h^2) (common practice, no source), so
at a fixed point of a smooth FTLE field the gap to the exact-gradient (variational) value
falls fourfold per halving of the grid spacing.
"""

import warnings

import numpy as np
import pytest

import flowkit
from flowkit.errors import FlowkitError
from flowkit.integrate.batch import IntegratorSettings

TIGHT = IntegratorSettings(rtol=1e-11, atol=1e-13)


def _pair(flow, plane, n, time):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        a = flowkit.ftle_field(flow, plane, (n, n), time=time, settings=TIGHT, progress=False)
        b = flowkit.ftle_field(flow, plane, (n, n), time=time, settings=TIGHT, method="flowmap", progress=False)
    return a, b


def test_planar_flowmap_converges_at_second_order():
    f = flowkit.flow("double-gyre")
    plane = flowkit.GridPlane.coordinate("z", 0.0, (0.2, 0.8, 0.2, 0.8))
    gaps = []
    for n in (9, 17, 33):
        a, b = _pair(f, plane, n, 2.0)
        gaps.append(abs(a.values[n // 2, n // 2] - b.values[n // 2, n // 2]))   # the point (0.5, 0.5)
    assert gaps[-1] < 2e-4
    for g0, g1 in zip(gaps, gaps[1:]):
        assert 3.5 < g0 / g1 < 4.5


def test_3d_flowmap_uses_the_normal_direction_too():
    f = flowkit.flow("stf")
    plane = flowkit.GridPlane.coordinate("z", 0.0, (-0.5, 0.5, -0.5, 0.5))
    a, b = _pair(f, plane, 33, 1.0)
    i, j = 24, 8                                   # (x, y) = (-0.25, 0.25): a smooth part of the field
    assert abs(a.values[i, j] - b.values[i, j]) < 1e-3
    assert b.provenance["method"]["ftle_method"] == "flowmap"
    assert np.isfinite(b.values).mean() > 0.9


def test_method_is_checked():
    with pytest.raises(FlowkitError, match="method"):
        flowkit.ftle_field(flowkit.flow("double-gyre"), flowkit.GridPlane.coordinate("z", 0.0, (0, 2, 0, 1)),
                           (8, 4), time=1.0, method="finite")


def test_cli_gradient_flowmap_reaches_ftle_field(tmp_path, capsys):
    import json

    from flowkit.cli import main

    out = tmp_path / "fm.npz"
    code = main(["ftle", "double-gyre", "--plane", "z=0", "--span", "0.2,0.8,0.2,0.8", "--resolution", "9x9",
                 "--time", "2", "--gradient", "flowmap", "--out", str(out), "--json"])
    res = json.loads(capsys.readouterr().out)
    assert code == 0, res
    back = flowkit.load(out)
    assert back.provenance["method"]["ftle_method"] == "flowmap"
    # the same field as the API call with method="flowmap" at the CLI's tolerance
    api = flowkit.ftle_field(flowkit.flow("double-gyre"), flowkit.GridPlane.coordinate("z", 0.0, (0.2, 0.8, 0.2, 0.8)),
                             (9, 9), time=2.0, settings=IntegratorSettings(rtol=1e-9, atol=1e-11), method="flowmap",
                             progress=False)
    np.testing.assert_array_equal(back.values, api.values)
