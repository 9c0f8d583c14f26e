"""Discrete-time maps: images, exact Jacobians, inverses, registry, and exact stretching rates."""

import json
import math
import pickle

import numpy as np
import pytest

import flowkit
from flowkit.cli import main
from flowkit.errors import FlowkitError
from flowkit.flows import custom_map
from flowkit.flows.maps import Map
from flowkit.fields import stretch

RNG = np.random.default_rng(5)
CAT = np.array([[2.0, 1.0], [1.0, 1.0]])
LAMBDA_CAT = (3 + math.sqrt(5)) / 2  # largest eigenvalue of CAT (Ergodic Problems of Classical Mechanics, 1968)


def test_cat_map_image_jacobian_and_inverse_are_exact():
    cat = flowkit.flow("cat-map")
    assert isinstance(cat, Map) and cat.kind == "map" and cat.domain == "torus"
    x = RNG.random((50, 3))
    img = cat.image(x)
    ref = np.column_stack([(x[:, :2] @ CAT.T) % 1.0, x[:, 2]])  # the definition, computed by numpy
    np.testing.assert_allclose(img, ref, atol=1e-15)
    J = cat.jacobian(x)
    np.testing.assert_array_equal(J[0], [[2, 1, 0], [1, 1, 0], [0, 0, 1]])
    np.testing.assert_allclose(cat.inverse(img), x, atol=1e-14)
    # n iterations in one compiled loop equal n single images; negative n iterates the inverse
    y = x.copy()
    for _ in range(7):
        y = cat.image(y)
    np.testing.assert_allclose(cat.step(x, 7), y, atol=1e-12)
    np.testing.assert_allclose(cat.step(cat.step(x, 7), -7), x, atol=1e-9)


@pytest.mark.parametrize("fold", [0.0, 1.0])
def test_sfs_map_is_invertible_and_volume_preserving(fold):
    sfs = flowkit.flow("sfs-map", fold=fold, a=0.3, shear=0.7)
    x = RNG.random((200, 3))
    np.testing.assert_allclose(sfs.inverse(sfs.image(x)), x, atol=1e-13)
    np.testing.assert_allclose(sfs.image(sfs.inverse(x)), x, atol=1e-13)
    # area (volume) preservation: det DF = 1 on both strips (exact identity of the construction)
    np.testing.assert_allclose(np.linalg.det(sfs.jacobian(x)), 1.0, atol=1e-13)
    # the symbolic Jacobian equals central differences of the image away from the cut x = a and wraps
    inner = x[(np.abs(x[:, 0] - 0.3) > 0.01) & (x[:, 0] > 0.01) & (x[:, 0] < 0.99)]
    h = 1e-6
    for j in range(3):
        e = np.zeros(3)
        e[j] = h
        fwd = sfs.kernels  # unwrapped images, so the difference does not jump across z = 1
        a, b = np.empty_like(inner), np.empty_like(inner)
        fwd.velocity_many(inner + e, 0.0, sfs.params, a)
        fwd.velocity_many(inner - e, 0.0, sfs.params, b)
        np.testing.assert_allclose((a - b) / (2 * h), sfs.jacobian(inner)[:, :, j], atol=1e-7)


def test_map_registry_listing_errors_and_pickling(capsys):
    assert {"cat-map", "sfs-map"} <= set(flowkit.preset_names(maps=True))
    assert "cat-map" not in flowkit.preset_names()  # generic flow tools iterate over flows only
    code = main(["flows", "--json"])
    listed = {f["name"]: f for f in json.loads(capsys.readouterr().out)["flows"]}
    assert code == 0 and listed["cat-map"]["kind"] == "map" and listed["sfs-map"]["parameters"]["fold"] == 1.0
    assert listed["stf"]["kind"] == "flow"  # flows untouched
    with pytest.raises(FlowkitError, match="`fold` must be 0"):
        flowkit.flow("sfs-map", fold=0.5)
    with pytest.raises(FlowkitError, match="must lie in"):
        flowkit.flow("sfs-map", a=1.2)
    with pytest.raises(FlowkitError, match="has no parameter 'b'"):
        flowkit.flow("sfs-map", b=0.2)
    with pytest.raises(FlowkitError, match="discrete-time map"):
        flowkit.flow("cat-map").velocity([[0.1, 0.2, 0.3]])
    code = main(["check", "cat-map", "--json"])  # tools for velocity fields refuse maps clearly
    assert code == 2 and "discrete-time map" in json.loads(capsys.readouterr().out)["error"]
    sfs = flowkit.flow("sfs-map", a=0.25)
    again = pickle.loads(pickle.dumps(sfs))
    assert isinstance(again, Map) and again.param_dict == sfs.param_dict


def test_custom_map_with_inverse_matches_matrix_powers():
    # a linear hyperbolic map of the torus, written by the user, with its inverse
    m = custom_map(["x + k*y", "x + (k + 1)*y", "z"], {"k": 2.0}, inverse=["(k + 1)*x - k*y", "y - x", "z"],
                   periods=(1, 1, 1))
    A = np.array([[1.0, 2.0], [1.0, 3.0]])
    x = RNG.random((20, 3))
    ref = np.column_stack([(x[:, :2] @ np.linalg.matrix_power(A, 4).T) % 1.0, x[:, 2]])
    np.testing.assert_allclose(m.step(x, 4), ref, atol=1e-11)
    np.testing.assert_allclose(m.step(m.step(x, 4), -4), x, atol=1e-10)
    again = pickle.loads(pickle.dumps(m))
    np.testing.assert_allclose(again.image(x), m.image(x), atol=0)
    with pytest.raises(FlowkitError, match="has no inverse"):
        custom_map(["2*x", "y/2", "z"]).step(x, -1)
    with pytest.raises(FlowkitError, match="must not depend on t"):
        custom_map(["x + t", "y", "z"])


def test_cat_map_field_growth_is_exactly_ln_lambda():
    # Every field vector off the stable direction grows like LAMBDA_CAT^n: the Lyapunov exponent and
    # all moment rates L(p) = p ln(LAMBDA_CAT) per iteration (exact; the fit window skips alignment).
    res = stretch(flowkit.flow("cat-map"), 64, 30, field=[1.0, 0.0, 0.0], p=(0.5, 3.0), window=(10, 30))
    lam = math.log(LAMBDA_CAT)
    assert abs(res.lyapunov.value - lam) < 1e-9
    for p in (0.5, 1.0, 2.0, 3.0):
        assert abs(res.rate(p).value - p * lam) < 1e-9
    assert res.units == "per iteration" and res.mean_divergence == 0.0  # det DF = 1


def test_sfs_map_moment_rates_match_the_baker_formula():
    # x-directed fields: each iteration multiplies |B| by 1/a (probability a) or 1/b (probability b), so
    # <|B_n|^p> = (a^(1-p) + b^(1-p))^n exactly and the Lyapunov exponent is -a ln a - b ln b
    # (generalized baker's map; derived here, textbook example in Chaos in Dynamical Systems, 2002).
    a, b = 0.3, 0.7
    res = stretch(flowkit.flow("sfs-map", a=a, shear=0.0), 6000, 12, field=[1.0, 0.0, 0.0], p=(0.5, -0.5),
                  window=(2, 12), seed=3)
    exact = {p: math.log(a ** (1 - p) + b ** (1 - p)) for p in (-0.5, 0.5, 1.0, 2.0)}
    for p, val in exact.items():
        est = res.rate(p)
        assert abs(est.value - val) < 4 * est.stderr + 1e-3, (p, est, val)
    lam = -a * math.log(a) - b * math.log(b)
    assert abs(res.lyapunov.value - lam) < 4 * res.lyapunov.stderr
    assert abs(exact[1.0] - math.log(2)) < 1e-15  # L(1) = ln 2: line stretching of the two-strip map


def test_map_bad_input_is_refused():
    cat = flowkit.flow("cat-map")
    with pytest.raises(FlowkitError, match="number of iterations"):
        stretch(cat, 10, 2.5)
    with pytest.raises(FlowkitError, match="positive integer"):
        stretch(cat, 10, -3)
    with pytest.raises(FlowkitError, match="outside the cell"):
        stretch(flowkit.flow("sfs-map"), seeds=[[1.5, 0.2, 0.2]], time=3)


def test_map_kernel_results_do_not_depend_on_thread_count():
    sfs = flowkit.flow("sfs-map", a=0.4)
    one = stretch(sfs, 300, 15, threads=1, keep_series=True)
    two = stretch(sfs, 300, 15, threads=2, keep_series=True)
    np.testing.assert_array_equal(one.series, two.series)
    np.testing.assert_array_equal(one.final_positions, two.final_positions)
