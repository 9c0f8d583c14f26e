"""Flow core: presets, Lamb's solution, surface-driven flows, user flows."""

import subprocess
import sys
import warnings

import numpy as np
import pytest
import sympy as sp

import flowkit
from flowkit.errors import FlowDefinitionError, FlowkitError, FlowkitNotice
from flowkit.flows.checks import check_flow
from flowkit.flows.codegen import X, Y, Z
from flowkit.flows.custom import sample_points
from flowkit.flows.harmonics import divergence, solid_harmonic
from flowkit.flows.sphere import all_labels, basis_field

RNG = np.random.default_rng(2026)


def ball_points(n=200):
    v = RNG.normal(size=(n, 3))
    v /= np.linalg.norm(v, axis=1)[:, None]
    return v * RNG.random(n)[:, None] ** (1 / 3)


def stf_closed_form(p, r):
    # J. Fluid Mech. 212 (1990): u = (-8xy, 11x^2 + 3y^2 + z^2 - 3, 2yz) plus rigid rotation r (z, 0, -x).
    x, y, z = p.T
    return np.stack([-8 * x * y + r * z, 11 * x**2 + 3 * y**2 + z**2 - 3, 2 * y * z - r * x], axis=1)


@pytest.mark.parametrize("rotation", [0.0, 0.37, -2.0])
def test_stf_preset_equals_published_closed_form(rotation):
    pts = ball_points()
    f = flowkit.flow("stf", rotation=rotation)
    np.testing.assert_allclose(f.velocity(pts), stf_closed_form(pts, rotation), rtol=0, atol=1e-13)


def test_stf_through_lamb_builder_equals_closed_form():
    # one pressure harmonic of degree 1, toroidal harmonics of degrees 2 and 1
    f = flowkit.lamb_flow({"P1_s1": 30.0, "T2_c1": 5.0 / 3.0, "T1_s1": 0.25})
    pts = ball_points()
    np.testing.assert_allclose(f.velocity(pts), stf_closed_form(pts, 0.25), rtol=0, atol=1e-13)


def test_hill_vortex_matches_classical_stream_function():
    # Hill's vortex (Hydrodynamics, 1932, section 165): Stokes stream function
    # psi = (U/2) s^2 (1 - r^2) inside the sphere; u = curl(psi / s phi-hat).
    U = 1.7
    s2 = X**2 + Y**2
    psi = sp.Rational(1, 2) * U * s2 * (1 - s2 - Z**2)
    A = (-Y * psi / s2, X * psi / s2, 0)
    curl = (sp.diff(A[2], Y) - sp.diff(A[1], Z), sp.diff(A[0], Z) - sp.diff(A[2], X),
            sp.diff(A[1], X) - sp.diff(A[0], Y))
    fn = sp.lambdify((X, Y, Z), [sp.simplify(c) for c in curl], "numpy")
    pts = ball_points()
    ref = np.stack([np.broadcast_to(v, (len(pts),)) for v in fn(*pts.T)], axis=1)
    np.testing.assert_allclose(flowkit.flow("hill", strength=U).velocity(pts), ref, atol=1e-13)


@pytest.mark.parametrize("name,params", [("abc", {}), ("abc", {"A": 0.5, "B": 2.0, "C": -1.0}),
                                         ("roberts", {}), ("circular", {"epsilon": 0.7})])
@pytest.mark.parametrize("t", [0.0, 1.3])
def test_periodic_flows_are_beltrami(name, params, t):
    # ABC, Roberts and the circularly polarized flow all satisfy curl u = u exactly
    # (Nature 356, 1992 for the latter; common practice for ABC).
    f = flowkit.flow(name, **params)
    pts = RNG.random((300, 3)) * 2 * np.pi
    g = f.gradient(pts, t)
    curl = np.stack([g[:, 2, 1] - g[:, 1, 2], g[:, 0, 2] - g[:, 2, 0], g[:, 1, 0] - g[:, 0, 1]], axis=1)
    np.testing.assert_allclose(curl, f.velocity(pts, t), atol=1e-13)


def test_lorenz_divergence_is_minus_sigma_plus_one_plus_beta():
    f = flowkit.flow("lorenz")
    g = f.gradient(RNG.normal(size=(50, 3)) * 10)
    np.testing.assert_allclose(np.trace(g, axis1=1, axis2=2), -(10 + 1 + 8 / 3), rtol=1e-15)


@pytest.mark.parametrize("name", flowkit.preset_names())
def test_generated_gradients_agree_with_finite_differences(name):
    f = flowkit.flow(name)
    pts = sample_points(f, 40, RNG)
    t = 0.7
    h = 1e-5
    fd = np.empty((len(pts), 3, 3))
    for j in range(3):
        e = np.zeros(3)
        e[j] = h
        fd[:, :, j] = (f.velocity(pts + e, t) - f.velocity(pts - e, t)) / (2 * h)
    scale = max(1.0, np.abs(fd).max())
    np.testing.assert_allclose(f.gradient(pts, t), fd, atol=1e-8 * scale)


def random_lamb_coefficients(max_degree, rng):
    return {lab: float(rng.normal()) for lab in all_labels(max_degree)}


def test_every_lamb_basis_field_is_solenoidal_and_tangent_exactly():
    # exact identities: div u = 0 everywhere and x.u = 0 on r = 1 (Lamb 1932, section 336)
    r2 = X**2 + Y**2 + Z**2
    for lab in all_labels(4):
        u = basis_field(lab)
        assert sp.expand(divergence(u)) == 0, lab
        xu = sp.expand(X * u[0] + Y * u[1] + Z * u[2])
        assert sp.rem(sp.Poly(xu, X, Y, Z), sp.Poly(r2 - 1, X, Y, Z)).is_zero, lab


def test_solid_harmonics_are_harmonic():
    for n in range(0, 7):
        for m in range(-n, n + 1):
            h = solid_harmonic(n, m)
            assert sp.expand(sum(sp.diff(h, c, 2) for c in (X, Y, Z))) == 0


@pytest.mark.parametrize("flow", [
    flowkit.flow("stf", rotation=0.8),
    flowkit.flow("hill", swirl=0.5),
    flowkit.lamb_flow(random_lamb_coefficients(4, np.random.default_rng(1))),
])
def test_sphere_flows_pass_the_residual_checks(flow):
    res = check_flow(flow, n=1000)
    scale = res["velocity_scale"]
    assert res["divergence_max"] < 1e-12 * scale
    assert res["boundary_normal_max"] < 1e-12 * scale
    assert res["stokes_residual_max"] < 1e-9 * scale


def test_surface_route_recovers_a_known_flow_from_its_own_surface_values():
    coeffs = random_lamb_coefficients(3, np.random.default_rng(7))
    known = flowkit.lamb_flow(coeffs)
    rebuilt = flowkit.surface_flow(lambda p: known.velocity(p), max_degree=4)
    proj = rebuilt.family.structure["projection"]
    assert proj["relative_residual"] < 1e-12
    assert proj["normal_rms"] < 1e-12
    pts = ball_points()
    np.testing.assert_allclose(rebuilt.velocity(pts), known.velocity(pts), atol=1e-10)


def test_surface_route_from_harmonic_coefficients_matches_callable_route():
    # surface field 2 grad_s(Y_2^0) + 0.5 grad_s(Y_1^1) x n : built two independent ways
    flow_a = flowkit.surface_flow({"S2_0": 2.0, "R1_c1": 0.5})
    y20 = sp.lambdify((X, Y, Z), [sp.diff(solid_harmonic(2, 0), c) for c in (X, Y, Z)], "numpy")
    y11 = sp.lambdify((X, Y, Z), [sp.diff(solid_harmonic(1, 1), c) for c in (X, Y, Z)], "numpy")

    def surface(p):
        g2 = np.stack([np.broadcast_to(v, (len(p),)) for v in y20(*p.T)], axis=1)
        g1 = np.stack([np.broadcast_to(v, (len(p),)) for v in y11(*p.T)], axis=1)
        tan = lambda g: g - np.einsum("ij,ij->i", g, p)[:, None] * p  # noqa: E731
        return 2.0 * tan(g2) + 0.5 * np.cross(tan(g1), p)

    flow_b = flowkit.surface_flow(surface, max_degree=3)
    pts = ball_points()
    np.testing.assert_allclose(flow_a.velocity(pts), flow_b.velocity(pts), atol=1e-11)
    # and the boundary value is the prescribed surface field
    s = pts / np.linalg.norm(pts, axis=1)[:, None]
    np.testing.assert_allclose(flow_a.velocity(s), surface(s), atol=1e-11)


def test_surface_route_reports_what_it_cannot_represent():
    # a wall-normal component and degree-5 content beyond max_degree=2
    def surface(p):
        x, y, z = p.T
        tang = np.cross(p, [0.0, 0.0, 1.0]) * (x**5)[:, None]
        return tang + 0.3 * p

    f = flowkit.surface_flow(surface, max_degree=2)
    proj = f.family.structure["projection"]
    assert proj["relative_residual"] > 0.05
    assert abs(proj["normal_rms"] - 0.3) < 1e-10


def test_parameter_change_does_not_recompile():
    f = flowkit.flow("stf", rotation=0.1)
    f.velocity([[0.1, 0.2, 0.3]])
    n_sigs = len(f.kernels.velocity_many.signatures)
    g = f.with_params(rotation=0.9)
    assert g.kernels is f.kernels
    g.velocity([[0.1, 0.2, 0.3]])
    assert len(g.kernels.velocity_many.signatures) == n_sigs


def test_import_is_light():
    code = "import sys, flowkit; print('sympy' in sys.modules, 'numba' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["False", "False"]


# ---- user flows ------------------------------------------------------------
def test_custom_flow_from_sympy_expressions_has_exact_gradient():
    x, y, z, a = sp.symbols("x y z a")
    f = flowkit.custom_flow((a * y, -a * x, sp.Integer(0)), params={"a": 2.0})
    assert f.family.gradient_method.startswith("exact")
    np.testing.assert_allclose(f.gradient([[0.3, 0.4, 0.5]])[0], [[0, 2, 0], [-2, 0, 0], [0, 0, 0]])


def test_custom_flow_from_strings_matches_abc_preset():
    f = flowkit.custom_flow(["sin(z) + cos(y)", "sin(x) + cos(z)", "sin(y) + cos(x)"], domain="periodic")
    pts = RNG.random((20, 3)) * 6
    np.testing.assert_allclose(f.velocity(pts), flowkit.flow("abc").velocity(pts), atol=1e-15)


def test_traceable_python_function_gets_exact_gradient():
    import math

    def vel(x, y, z, t, p):
        return (p[0] * math.sin(z) + math.cos(y), math.sin(x) + p[0] * math.cos(z), math.sin(y) + math.cos(x))

    f = flowkit.custom_flow(vel, params={"A": 1.0}, domain="periodic")
    assert f.family.gradient_method.startswith("exact")
    pts = RNG.random((20, 3)) * 6
    np.testing.assert_allclose(f.gradient(pts), flowkit.flow("abc").gradient(pts), atol=1e-15)


def test_untraceable_python_function_uses_finite_differences_and_says_so():
    def vel(x, y, z, t, p):
        s = 0.0
        for k in range(3):  # a loop over values cannot be traced with symbols
            if x > -100.0:
                s += 1.0
        return (s * y, -s * x, 0.0)

    with pytest.warns(FlowkitNotice, match="finite differences"):
        f = flowkit.custom_flow(vel)
    assert "central differences" in f.family.gradient_method
    np.testing.assert_allclose(f.gradient([[0.1, 0.2, 0.3]])[0], [[0, 3, 0], [-3, 0, 0], [0, 0, 0]], atol=1e-10)


def test_non_solenoidal_user_flow_warns_with_its_divergence():
    with pytest.warns(FlowkitNotice, match=r"not divergence-free: max \|div u\| = 3"):
        flowkit.custom_flow(["x", "y", "z"])


def test_polynomial_divergence_is_summed_exactly_without_compiling():
    from flowkit.flows.custom import _parse_strings, _polynomial_divergence, sample_points

    items = ["x**2 + a*y", "y*z + t*x", "-3*z"]
    with pytest.warns(FlowkitNotice, match="not divergence-free"):
        f = flowkit.custom_flow(items, params={"a": 1.5})
    pts = sample_points(f, 64, np.random.default_rng(3))
    div, scale = _polynomial_divergence(f, _parse_strings(items, ["a"]), pts)
    # exact identity: div (x^2 + a y, y z + t x, -3 z) = 2 x + z - 3
    np.testing.assert_allclose(div, np.abs(2 * pts[:, 0] + pts[:, 2] - 3), rtol=0, atol=1e-14)
    np.testing.assert_allclose(div, np.abs(np.trace(f.gradient(pts), axis1=1, axis2=2)), rtol=0, atol=1e-13)
    assert scale == pytest.approx(max(1.0, np.abs(f.gradient(pts)).max()))
    # a solenoidal polynomial sums to exactly zero; anything else goes to the compiled gradient
    solenoidal = ["2*z - 8*x*y", "11*x**2 + 3*y**2 + z**2 - 3", "-2*x + 2*y*z"]
    g = flowkit.custom_flow(solenoidal, domain="ball")
    assert g.family.structure["divergence_max"] == 0.0
    assert g.kernels.gradient_many.signatures == []                  # nothing compiled for the check
    assert _polynomial_divergence(g, _parse_strings(["sin(y)", "z", "x"], []), pts) is None


# ---- bad input ---------------------------------------------------------------
def test_unknown_flow_lists_what_exists():
    with pytest.raises(FlowkitError, match="unknown flow 'stff'.*Did you mean 'stf'.*abc"):
        flowkit.flow("stff")


def test_unknown_parameter_lists_known_ones():
    with pytest.raises(FlowkitError, match="no parameter 'rot'.*rotation"):
        flowkit.flow("stf", rot=1.0)


def test_non_finite_parameter_is_refused():
    with pytest.raises(FlowkitError, match="'rotation' must be finite"):
        flowkit.flow("stf", rotation=float("nan"))


def test_wrong_point_shape_is_refused():
    with pytest.raises(FlowkitError, match=r"`points` must have shape \(N, 3\)"):
        flowkit.flow("stf").velocity(np.zeros((4, 2)))


def test_degree_beyond_supported_is_refused():
    with pytest.raises(FlowkitError, match="supported degrees are 1 to 6"):
        flowkit.lamb_flow({"P7_0": 1.0})
    with pytest.raises(FlowkitError, match="order 3 exceeds the degree 2"):
        flowkit.lamb_flow({"T2_c3": 1.0})
    with pytest.raises(FlowkitError, match="`max_degree` must be an integer from 1 to 6"):
        flowkit.surface_flow(lambda p: p, max_degree=9)


def test_callable_numba_cannot_compile_is_refused():
    def vel(x, y, z, t, p):
        if x > 1e9:
            return {"not": "numbers"}
        return (x, y, z)

    with pytest.raises(FlowDefinitionError, match="numba could not compile `velocity`"):
        flowkit.custom_flow(vel)


def test_unknown_symbol_in_formula_is_refused():
    with pytest.raises(FlowDefinitionError, match="unknown symbol"):
        flowkit.custom_flow(["q*y", "x", "0"])


# -- generated code: divisions, the fused velocity_gradient, large formulas ---------------
def _sympy_reference(exprs, pts):
    """Velocity and gradient of sympy expressions evaluated by sympy itself (lambdify on numpy)."""
    u = sp.lambdify((X, Y, Z), list(exprs), "numpy")
    g = sp.lambdify((X, Y, Z), [sp.diff(e, c) for e in exprs for c in (X, Y, Z)], "numpy")
    vel = np.stack([np.broadcast_to(np.asarray(c, float), len(pts)) for c in u(*pts.T)], axis=1)
    grad = np.stack([np.broadcast_to(np.asarray(c, float), len(pts)) for c in g(*pts.T)], axis=1)
    return vel, grad.reshape(-1, 3, 3)


def test_divisions_by_squares_and_cubes_compile_as_written():
    # sympy printed a/b**2 as "a/b*b" once the small powers became products (that is a, not a/b^2)
    exprs = [X / (2 + Y) ** 2, Y ** 2 / (2 + X) ** 3, 3 / (3 + Z) ** 4 - X * Y / (X + 3) ** 2]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FlowkitNotice)
        f = flowkit.custom_flow(exprs, name="divisions")
    pts = RNG.uniform(-1, 1, size=(50, 3))
    vel, grad = _sympy_reference(exprs, pts)
    np.testing.assert_allclose(f.velocity(pts), vel, rtol=1e-13, atol=1e-14)
    np.testing.assert_allclose(f.gradient(pts), grad, rtol=1e-13, atol=1e-14)


@pytest.mark.parametrize("name", ["abc", "double-gyre", "stf", "hill", "lorenz"])
def test_fused_velocity_gradient_equals_velocity_and_gradient(name):
    # one function computing both (shared pieces, chain rule) against the two separate ones
    f = flowkit.flow(name)
    pts = ball_points(20)
    for t in (0.0, 1.3):
        vg = np.array([f.kernels.velocity_gradient(*p, t, f.params) for p in pts])
        scale = 1.0 + np.abs(vg).max()
        np.testing.assert_allclose(vg[:, :3], f.velocity(pts, t), rtol=0, atol=1e-14 * scale)
        np.testing.assert_allclose(vg[:, 3:], f.gradient(pts, t).reshape(-1, 9), rtol=0, atol=1e-14 * scale)


def sphere_benchmark_t2s2(eps=sp.Rational(14, 100)):
    """The t2s2 flow of Proc. R. Soc. Lond. A 425 (1989) 407-429 in Cartesian sympy, as a user writes it.

    Toroidal part curl(T x) and poloidal part curl curl(T x), T = r sin(pi r) P2(cos theta),
    x the position vector, unsimplified (sqrt(x^2 + y^2 + z^2) everywhere).
    """
    r = sp.sqrt(X**2 + Y**2 + Z**2)
    T = r * sp.sin(sp.pi * r) * (3 * Z**2 / r**2 - 1) / 2
    pos = sp.Matrix([X, Y, Z])

    def curl(V):
        return sp.Matrix([sp.diff(V[2], Y) - sp.diff(V[1], Z), sp.diff(V[0], Z) - sp.diff(V[2], X),
                          sp.diff(V[1], X) - sp.diff(V[0], Y)])

    tor = sp.Matrix([sp.diff(T, c) for c in (X, Y, Z)]).cross(pos)
    return list(tor + eps * curl(tor))


def test_large_unsimplified_formula_gets_its_gradient_by_the_chain_rule():
    exprs = sphere_benchmark_t2s2()
    with warnings.catch_warnings():
        warnings.simplefilter("error", FlowkitNotice)   # it is divergence-free: no warning may come
        f = flowkit.custom_flow(exprs, domain="ball", name="t2s2")
    pts = ball_points(6) * 0.9 + 0.05                  # away from r = 0, where sqrt(r^2) is not smooth
    vel, grad = _sympy_reference(exprs, pts)
    np.testing.assert_allclose(f.velocity(pts), vel, rtol=0, atol=1e-12)
    np.testing.assert_allclose(f.gradient(pts), grad, rtol=0, atol=1e-11)
    # exact identity: a curl has zero divergence
    assert np.abs(np.trace(f.gradient(pts), axis1=1, axis2=2)).max() < 1e-12
    assert "too large" in f.kernels.SPLIT_STATUS
