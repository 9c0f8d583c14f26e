"""Runge–Kutta kernels and the batch driver, against exact solutions and scipy."""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import flowkit
from flowkit.errors import FlowkitError
from flowkit.integrate.batch import IntegratorSettings, integrate_states
from flowkit.integrate.outcomes import Outcome
from flowkit.integrate.tableau import DOP_A, DOP_B, DOP_C, DOP_E3, DOP_E5, work_array


def test_dop853_tableau_order_conditions():
    # Order conditions of the quadrature part (sum b_i c_i^(k-1) = 1/k, k = 1..8) and
    # row sums of A equal c (Solving ODEs I, Springer 1993, section II.1): exact identities.
    for k in range(1, 9):
        assert abs(DOP_B @ DOP_C[:12] ** (k - 1) - 1.0 / k) < 1e-14
    np.testing.assert_allclose(DOP_A[:12, :12].sum(axis=1), DOP_C[:12], atol=1e-14)
    np.testing.assert_allclose(DOP_A[13:, :].sum(axis=1), DOP_C[13:], atol=1e-14)
    # error estimators are differences of two consistent weight sets
    assert abs(DOP_E5.sum()) < 1e-14 and abs(DOP_E3.sum()) < 1e-14


@pytest.fixture(scope="module")
def rotation_flow():
    # rigid rotation u = (-y, x, 0): exact solution is a rotation by angle t
    return flowkit.custom_flow(["-y", "x", "0"])


def exact_rotation(y0, t):
    c, s = np.cos(t), np.sin(t)
    return np.stack([c * y0[:, 0] - s * y0[:, 1], s * y0[:, 0] + c * y0[:, 1], y0[:, 2]], axis=1)


def test_dop853_meets_tolerance_on_exact_rotation(rotation_flow):
    y0 = np.array([[1.0, 0.0, 0.5], [0.3, -0.7, 0.0]])
    res = integrate_states(rotation_flow, y0, 0.0, 20.0, IntegratorSettings(rtol=1e-12, atol=1e-14))
    assert np.all(res.outcome == Outcome.FINISHED)
    np.testing.assert_allclose(res.states, exact_rotation(y0, 20.0), atol=1e-10)
    back = integrate_states(rotation_flow, res.states, 20.0, 0.0, IntegratorSettings(rtol=1e-12, atol=1e-14))
    np.testing.assert_allclose(back.states, y0, atol=1e-10)


def test_rk4_converges_at_fourth_order(rotation_flow):
    y0 = np.array([[1.0, 0.0, 0.0]])
    errs = []
    for h in (0.1, 0.05):
        res = integrate_states(rotation_flow, y0, 0.0, 5.0, IntegratorSettings(method="rk4", step=h))
        errs.append(np.abs(res.states - exact_rotation(y0, 5.0)).max())
    assert 14.0 < errs[0] / errs[1] < 18.0  # 2^4 = 16 (common practice, no source)


def test_dense_output_matches_exact_solution_inside_a_step(rotation_flow):
    k = rotation_flow.kernels
    y = np.array([1.0, 0.0, 0.2])
    W = work_array(3)
    p = rotation_flow.params
    k.rhs(0.0, y, p, W[0])
    status, h, _ = k.dop853_advance(0.0, y, 0.4, p, 1e-13, 1e-15, np.inf, W)
    assert status == 0
    k.dop853_dense_prepare(0.0, h, y, p, W)
    out = np.empty(3)
    for theta in (0.0, 0.25, 0.61, 1.0):
        k.dop853_dense_eval(theta, W, out, 3)
        ref = exact_rotation(np.array([[1.0, 0.0, 0.2]]), theta * h)[0]
        np.testing.assert_allclose(out, ref, atol=1e-12)


@pytest.mark.parametrize("n", [3, 6])
def test_unrolled_step_is_bitwise_the_generic_formula(n):
    # The unrolled steps (generated straight-line code for 3 components, a compact loop for 6) must give
    # exactly the numbers of the generic loops: reference = the same sums in the same order,
    # written out here in Python floats (IEEE double, like the kernel) from the stage rows
    # the generic loop produces.
    flow = flowkit.flow("stf", rotation=0.37)
    k, p = flow.kernels, flow.params
    y = np.array([0.31, -0.22, 0.45, 0.6, -0.8, 0.1, 0.2, 0.9, -0.3, -0.5, 0.05, 0.7])[:n]
    h, rtol, atol = 0.173, 1e-9, 1e-12
    W = work_array(n)
    k.rhs(0.0, y, p, W[0])
    err = k.dop853_try(0.0, y, h, p, rtol, atol, W)  # 3 or 6 components: the unrolled copy
    R = work_array(n)
    R[0] = W[0]
    k.dop853_stages(0.0, y, h, p, R, 1, 12)  # the generic stage loop
    np.testing.assert_array_equal(W[1:12], R[1:12])
    ynew = [y[i] + h * sum_in_order(DOP_B[:12], R[:12, i]) for i in range(n)]
    np.testing.assert_array_equal(W[16], ynew)
    k.rhs(h, np.array(ynew), p, R[12])
    np.testing.assert_array_equal(W[12], R[12])
    e5 = e3 = 0.0
    for i in range(n):
        sc = atol + rtol * max(abs(y[i]), abs(ynew[i]))
        e5 += (sum_in_order(DOP_E5, R[:13, i]) / sc) ** 2
        e3 += (sum_in_order(DOP_E3, R[:13, i]) / sc) ** 2
    assert err == abs(h) * e5 / np.sqrt((e5 + 0.01 * e3) * n)


def sum_in_order(coeffs, values) -> float:
    acc = 0.0
    for c, v in zip(coeffs, values):
        acc += float(c) * float(v)
    return acc


def test_stf_trajectories_agree_with_scipy_dop853():
    f = flowkit.flow("stf", rotation=0.3)
    y0 = np.array([[0.1, 0.2, 0.3], [0.5, 0.1, -0.2], [-0.4, 0.3, 0.6]])
    res = integrate_states(f, y0, 0.0, 5.0, IntegratorSettings(rtol=1e-12, atol=1e-14))
    for i, seed in enumerate(y0):
        ref = solve_ivp(lambda t, y: f.velocity(y[None])[0], (0, 5), seed, method="DOP853", rtol=1e-13, atol=1e-15)
        np.testing.assert_allclose(res.states[i], ref.y[:, -1], atol=1e-9)


def test_tangent_vectors_match_finite_differences_and_keep_volume():
    f = flowkit.flow("abc")
    x0 = np.array([1.0, 2.0, 3.0])
    state = np.concatenate([x0, np.eye(3).T.ravel()])  # columns of the identity
    T = 3.0
    st = IntegratorSettings(rtol=1e-12, atol=1e-14)
    J = integrate_states(f, state[None], 0.0, T, st).states[0, 3:].reshape(3, 3).T
    d = 1e-5
    fd = np.empty((3, 3))
    for j in range(3):
        e = np.zeros(3)
        e[j] = d
        ends = integrate_states(f, np.array([x0 + e, x0 - e]), 0.0, T, st).states
        fd[:, j] = (ends[0] - ends[1]) / (2 * d)
    np.testing.assert_allclose(J, fd, atol=1e-6 * np.abs(J).max())
    # Liouville: det of the deformation gradient of a divergence-free flow is 1 (exact identity)
    assert abs(np.linalg.det(J) - 1.0) < 1e-9


def test_failed_trajectories_are_reported_and_the_rest_kept():
    blow = flowkit.custom_flow(["x**2", "0", "0"], kind="system")  # x(t) = 1/(1 - t) from x=1
    res = integrate_states(blow, np.array([[1.0, 0, 0], [-1.0, 0, 0]]), 0.0, 2.0)
    assert res.outcome[0] in (Outcome.STEP_UNDERFLOW, Outcome.NON_FINITE)
    assert res.outcome[1] == Outcome.FINISHED
    assert abs(res.states[1, 0] - (-1.0 / 3.0)) < 1e-9  # x = -1/(1 + t) at t = 2
    out = flowkit.custom_flow(["x", "y", "-2*z"], domain="ball")  # pushes orbits through r = 1
    res = integrate_states(out, np.array([[0.5, 0, 0], [0, 0, 0.5]]), 0.0, 3.0)
    assert res.outcome[0] == Outcome.LEFT_DOMAIN and res.outcome[1] == Outcome.FINISHED


def test_results_do_not_depend_on_thread_count():
    f = flowkit.flow("stf", rotation=0.5)
    rng = np.random.default_rng(3)
    seeds = rng.uniform(-0.5, 0.5, size=(16, 3))
    a = integrate_states(f, seeds, 0.0, 4.0, threads=1)
    b = integrate_states(f, seeds, 0.0, 4.0, threads=2)
    assert np.array_equal(a.states, b.states) and np.array_equal(a.steps, b.steps)


def test_bad_settings_are_refused():
    with pytest.raises(FlowkitError, match="`rtol` must be a positive number"):
        IntegratorSettings(rtol=0.0)
    with pytest.raises(FlowkitError, match="`method` must be one of"):
        IntegratorSettings(method="euler")
    with pytest.raises(FlowkitError, match="`step` must be a positive number when method='rk4'"):
        IntegratorSettings(method="rk4")


def test_singular_velocity_is_reported_as_non_finite():
    # u = 1/x is infinite at x = 0 (numpy error model: inf, not an exception); x = -sqrt(x0^2 + 2t) otherwise
    f = flowkit.custom_flow(["1/x", "0", "0"], kind="system")
    res = integrate_states(f, np.array([[0.0, 0, 0], [-1e-3, 0, 0]]), 0.0, 1.0)
    assert res.outcome[0] == Outcome.NON_FINITE
    assert res.outcome[1] == Outcome.FINISHED and abs(res.states[1, 0] + np.sqrt(1e-6 + 2.0)) < 1e-8


# -- the 12-component path (position + deformation gradient: batch_solve_12) --------------------
def _frame(x0):
    """State rows: positions, then the columns of the identity (J(0) = I)."""
    x0 = np.atleast_2d(x0)
    return np.concatenate([x0, np.tile(np.eye(3).T.ravel(), (x0.shape[0], 1))], axis=1)


def test_twelve_components_match_the_matrix_exponential_of_a_linear_flow(rotation_flow):
    # u = A x (the rigid rotation of the fixture, A = [[0, -1, 0], [1, 0, 0], [0, 0, 0]]; its
    # family is compiled for the tests above, so this adds only the 12-component kernel):
    # x(t) = expm(A t) x0 and the deformation gradient J(t) = expm(A t) exactly (scipy.linalg.expm
    # as the reference; at t = 4 expm is not symmetric, so a transposed J would fail).
    from scipy.linalg import expm

    A = np.array([[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 0.0]])
    x0 = np.array([[0.3, -0.2, 0.5], [1.0, 0.4, -0.7]])
    T = 4.0
    res = integrate_states(rotation_flow, _frame(x0), 0.0, T, IntegratorSettings(rtol=1e-12, atol=1e-14))
    assert np.all(res.outcome == Outcome.FINISHED)
    E = expm(A * T)
    np.testing.assert_allclose(res.states[:, :3], x0 @ E.T, rtol=0, atol=1e-10)
    for row in res.states:
        np.testing.assert_allclose(row[3:].reshape(3, 3).T, E, rtol=0, atol=1e-10)


def test_twelve_components_match_scipy_dop853_and_the_generic_loops():
    # stf with the variational equation dJ/dt = (grad u) J, against scipy's solve_ivp(DOP853) on
    # the same 12 equations (a plain Python right-hand side), and against the generic loops of
    # batch_solve: the 12-component kernel differs from them at round-off only (contracted
    # multiply-adds, fused velocity_gradient) and takes the same steps over a short run.
    f = flowkit.flow("stf", rotation=0.3)
    x0 = np.array([[0.1, 0.2, 0.3], [0.5, 0.1, -0.2]])
    T = 5.0
    st = IntegratorSettings(rtol=1e-12, atol=1e-14)
    res = integrate_states(f, _frame(x0), 0.0, T, st)

    def rate(t, y):
        g = f.gradient(y[None, :3])[0]
        J = y[3:].reshape(3, 3).T
        return np.concatenate([f.velocity(y[None, :3])[0], (g @ J).T.ravel()])

    for i, row in enumerate(_frame(x0)):
        ref = solve_ivp(rate, (0, T), row, method="DOP853", rtol=1e-13, atol=1e-15).y[:, -1]
        np.testing.assert_allclose(res.states[i], ref, rtol=0, atol=1e-8 * np.abs(ref).max())
    Y = _frame(x0)
    out = (np.zeros(2, np.int8), np.zeros(2), np.zeros(2, np.int64))
    f.kernels.batch_solve(Y, 0.0, T, f.params, 0, st.rtol, st.atol, np.inf, st.max_steps, 1, True, *out)
    assert np.array_equal(out[2], res.steps)
    assert np.abs(res.states - Y).max() <= 1e-12 * np.abs(Y).max()


def test_kernel_functions_never_inherit_a_callers_contraction():
    # numba gives a function with no fastmath flags of its own those of the first caller that
    # compiles it; kernel modules state them (flowkit/kernels/__init__.py), so a plain multiply-add
    # first compiled for a contracting caller stays unfused for every caller. Exact IEEE identity:
    # a = 1 + 2^-30, b = 1 - 2^-30, a*b = 1 - 2^-60 rounds to 1, so a*b - 1 is 0 unfused and
    # -2^-60 as one fused multiply-add (common practice, no source).
    from flowkit.kernels import build_module

    code = (
        "@njit(cache=CACHE)\ndef order_madd(a, b, c):\n    return a * b + c\n\n"
        "@njit(cache=CACHE, fastmath={'contract'})\ndef order_fused_caller(a, b, c):\n"
        "    return order_madd(a, b, c)\n\n"
        "@njit(cache=CACHE)\ndef order_plain_caller(a, b, c):\n    return order_madd(a, b, c)\n"
    )
    mod = build_module("compile-order", code)
    a, b = 1.0 + 2.0**-30, 1.0 - 2.0**-30
    assert mod.order_fused_caller(a, b, -1.0) == 0.0  # compiles order_madd first, for the contracting caller
    assert mod.order_plain_caller(a, b, -1.0) == 0.0
    assert mod.order_madd(a, b, -1.0) == 0.0


#: three stf starting points for the generic-against-own kernel checks
KERNEL_SEEDS = np.array([[0.1, 0.0, 0.2], [0.3, 0.05, -0.4], [-0.5, 0.2, 0.1]])


def _kernel_runs(name: str, f, kernel, params):
    """Outputs of one call of the kernel ``name`` (own or generic) on the KERNEL_SEEDS orbits of stf."""
    import math

    from flowkit.sections import Plane
    from flowkit.sections.compute import _plane_vector

    n = len(KERNEL_SEEDS)
    Y = np.zeros((n, 6))
    Y[:, :3] = KERNEL_SEEDS
    Y[:, 3] = 1.0  # one tangent vector (orthonormal, as tangent_batch requires)
    codes = (np.zeros(n, dtype=np.int8), np.zeros(n), np.zeros(n, dtype=np.int64))
    if name == "batch_solve":
        kernel(Y, 0.0, 20.0, params, 0, 1e-10, 1e-12, math.inf, 10**6, 1, True, *codes)
        return Y, *codes
    if name == "tangent_batch":
        logs, div = np.full((n, 4, 1), np.nan), np.full((n, 4), np.nan)
        kernel(Y, np.linspace(0.0, 20.0, 5), params, 1e-10, 1e-12, math.inf, 10**6, True, logs, div, *codes)
        return Y, logs, div, *codes
    plane, _ = _plane_vector(f, Plane((0, 1, 0), 0.0, "+"))
    t_out, outcome, steps = np.zeros(n), np.zeros(n, dtype=np.int8), np.zeros(n, dtype=np.int64)
    kernel(Y, 0.0, 1.0, 3, np.full(n, 100.0), params, 1e-10, 1e-12, math.inf, 10**6, True, plane, t_out, outcome, steps)
    return Y, t_out, outcome - 4, steps  # outcome 4: the return was found


@pytest.mark.parametrize("name", ["batch_solve", "tangent_batch", "rm_batch"])
def test_generic_kernels_give_the_family_kernels_numbers_bit_for_bit(name):
    """The generic kernels (the flow's velocity and gradient called through pointers, compiled once
    for every flow; tests/conftest.py runs the suite on them) do the family kernels' arithmetic in the
    same order: exact identity of every output."""
    from flowkit.kernels import generic

    f = flowkit.flow("stf", rotation=0.3)
    own = _kernel_runs(name, f, getattr(f.kernels, name), f.params)
    shared = _kernel_runs(name, f, getattr(generic.generic_kernels(), name), generic.pointer_params(f))
    assert np.all(own[-3 if name != "rm_batch" else -2] == 0)  # every orbit finished (rm_batch: 3rd return found)
    assert np.all(np.isfinite(own[0])) and np.all(np.any(own[0][:, :3] != KERNEL_SEEDS, axis=1))  # every orbit moved
    for a, b in zip(own, shared):
        assert np.array_equal(a, b, equal_nan=True)
