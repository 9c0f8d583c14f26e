"""Volume-preserving splitting scheme: sub-fields, order, and det of the step map's Jacobian."""

import warnings

import numpy as np
import pytest
import sympy as sp
from scipy.integrate import solve_ivp

import flowkit
from flowkit.errors import FlowkitError, FlowkitNotice
from flowkit.flows.codegen import X, Y, Z, split_fields
from flowkit.integrate.batch import IntegratorSettings, integrate_states
from flowkit.integrate.splitting import SplittingSettings, integrate_split

IDENTITY_COLUMNS = np.eye(3).T.ravel()


def with_tangent(x0):
    return np.concatenate([x0, IDENTITY_COLUMNS])[None]


def jacobian(state_row):
    return state_row[3:].reshape(3, 3).T  # columns were stored one after another


@pytest.mark.parametrize("name", ["stf", "hill", "abc", "circular"])
def test_sub_fields_sum_to_the_flow_and_are_planar_divergence_free(name):
    # Exact identities (Numer. Math. 71, 1995): a + b = f, a has no z-component and
    # d a1/dx + d a2/dy = 0; b has no x-component and d b2/dy + d b3/dz = 0.
    fam = flowkit.flows.registry.family(name)
    (a1, a2), (b2, b3) = split_fields(fam.exprs)
    f1, f2, f3 = fam.exprs
    assert sp.simplify(a1 - f1) == 0 and sp.simplify(a2 + b2 - f2) == 0 and sp.simplify(b3 - f3) == 0
    assert sp.simplify(sp.diff(a1, X) + sp.diff(a2, Y)) == 0
    assert sp.simplify(sp.diff(b2, Y) + sp.diff(b3, Z)) == 0


def scipy_endpoint(flow, x0, T):
    # outside reference: scipy's DOP853 at tolerances far below the splitting error
    sol = solve_ivp(lambda t, y: flow.velocity(y[None], t)[0], (0, T), x0, method="DOP853", rtol=1e-13, atol=1e-14)
    return sol.y[:, -1]


@pytest.mark.parametrize("name,params,x0", [
    ("stf", {"rotation": 0.3}, [0.3, 0.2, 0.1]),
    ("circular", {"epsilon": 0.8}, [1.0, 2.0, 0.5]),  # time-periodic: time frozen at sub-step midpoints
])
def test_strang_is_second_order_and_triple_jump_fourth_order(name, params, x0):
    f = flowkit.flow(name, **params)
    x0 = np.array(x0)
    ref = scipy_endpoint(f, x0, 1.0)
    for order, expected in ((2, 4.0), (4, 16.0)):
        errs = [np.abs(integrate_split(f, x0[None], 0.0, 1.0, SplittingSettings(step=h, order=order)).states[0] - ref).max()
                for h in (0.05, 0.025)]
        # halving the step divides the error by 2^order (common practice, no source)
        assert 0.8 * expected < errs[0] / errs[1] < 1.25 * expected, (order, errs)


def test_tangent_is_the_derivative_of_the_numerical_map():
    f = flowkit.flow("stf", rotation=0.3)
    x0 = np.array([0.3, 0.2, 0.1])
    st = SplittingSettings(step=0.1)
    J = jacobian(integrate_split(f, with_tangent(x0), 0.0, 1.0, st).states[0])
    d = 1e-6
    fd = np.empty((3, 3))
    for j in range(3):
        e = np.zeros(3)
        e[j] = d
        ends = integrate_split(f, np.array([x0 + e, x0 - e]), 0.0, 1.0, st).states
        fd[:, j] = (ends[0] - ends[1]) / (2 * d)
    np.testing.assert_allclose(J, fd, atol=1e-8 * np.abs(J).max())


@pytest.mark.parametrize("name,params,x0", [
    ("stf", {"rotation": 0.3}, [0.3, 0.2, 0.1]),
    ("abc", {}, [1.0, 2.0, 3.0]),
    ("circular", {"epsilon": 0.8}, [1.0, 2.0, 0.5]),
])
def test_splitting_keeps_det_one_to_round_off_where_rk4_drifts(name, params, x0):
    # Liouville's theorem: the exact flow map of a divergence-free field has det J = 1.
    # The splitting map keeps it to round-off; RK4 at the same step does not.
    f = flowkit.flow(name, **params)
    x0 = np.array(x0)
    h = 0.1
    one_split = jacobian(integrate_split(f, with_tangent(x0), 0.0, h, SplittingSettings(step=h)).states[0])
    one_rk4 = jacobian(integrate_states(f, with_tangent(x0), 0.0, h, IntegratorSettings(method="rk4", step=h)).states[0])
    assert abs(np.linalg.det(one_split) - 1.0) < 1e-14
    assert abs(np.linalg.det(one_rk4) - 1.0) > 1e-9
    # over 200 steps: round-off of the product only (scaled by the size of J), versus RK4's drift
    T = 200 * h
    J = jacobian(integrate_split(f, with_tangent(x0), 0.0, T, SplittingSettings(step=h)).states[0])
    R = jacobian(integrate_states(f, with_tangent(x0), 0.0, T, IntegratorSettings(method="rk4", step=h)).states[0])
    round_off = 1e-15 * np.abs(J).max() ** 2
    assert abs(np.linalg.det(J) - 1.0) < max(1e-13, round_off)
    assert abs(np.linalg.det(R) - 1.0) > 1e3 * max(1e-13, round_off)


def test_flows_that_cannot_be_split_are_refused_clearly():
    with pytest.raises(FlowkitError, match="not divergence-free"):
        integrate_split(flowkit.flow("lorenz"), np.zeros((1, 3)), 0.0, 1.0, SplittingSettings(step=0.1))

    def swirl(x, y, z, t, p):  # a branch on x: cannot be traced with sympy symbols
        if x > 0.0:
            return (-y, x, 0.0)
        return (-y, x, 0.0)

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FlowkitNotice)
        user = flowkit.custom_flow(swirl, name="swirl-python")
    with pytest.raises(FlowkitError, match="compiled Python function"):
        integrate_split(user, np.zeros((1, 3)), 0.0, 1.0, SplittingSettings(step=0.1))
    # the family's other kernels still work
    assert np.allclose(user.velocity([[1.0, 0.0, 0.0]]), [[0.0, 1.0, 0.0]])


def test_bad_splitting_settings_are_refused():
    with pytest.raises(FlowkitError, match="`step` must be a positive number"):
        SplittingSettings(step=0.0)
    with pytest.raises(FlowkitError, match="`order` must be 2 or 4"):
        SplittingSettings(step=0.1, order=3)
