"""Periodic orbits, their types and invariant manifolds of section maps, checked against outside facts."""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq, root

import flowkit
from flowkit.errors import FlowkitError
from flowkit.sections import Plane, Stroboscopic
from flowkit.sections.periodic import find_periodic_orbit
from flowkit.sections.returnmap import ReturnMap

LORENZ_Z = Plane((0, 0, 1), 27.0, "+")  # z = rho - 1 crossed upward: one crossing per loop around a wing


@pytest.fixture(scope="module")
def lorenz_ab():
    return find_periodic_orbit(flowkit.flow("lorenz"), (-13.7, -19.5), LORENZ_Z, period=2)


def test_lorenz_shortest_orbit_period(lorenz_ab):
    # Shortest unstable periodic orbit of Lorenz (10, 28, 8/3), symbol sequence AB: period 1.5586522
    # (Nonlinearity 16, 2003, 1035; cited from memory). Its two crossings are mirror images (x, y) -> (-x, -y).
    o = lorenz_ab
    assert o.converged and o.minimal_period == 2
    assert abs(o.period_time - 1.5586522) < 1e-7
    assert np.allclose(o.xi[1], -o.xi[0], atol=1e-8)  # the Lorenz symmetry maps the orbit onto itself
    assert o.type == "hyperbolic"
    # mean divergence -(sigma + 1 + beta) (exact): det DP^2 = (n.u(x0)/n.u(x1)) exp(-(41/3) T) and n.u returns
    assert o.det == pytest.approx(math.exp(-(41.0 / 3.0) * o.period_time), rel=1e-6)


def _scipy_lorenz_map(xi, k, z0=27.0):
    def rhs(t, s):
        x, y, z = s
        return [10.0 * (y - x), x * (28.0 - z) - y, x * y - 8.0 / 3.0 * z]

    def ev(t, s):
        return s[2] - z0
    ev.direction = 1.0
    sol = solve_ivp(rhs, (0.0, 2.2), [xi[0], xi[1], z0], method="DOP853", rtol=1e-12, atol=1e-12, events=ev)
    t_ev = sol.t_events[0]
    keep = t_ev > 1e-8  # the start itself lies on the plane
    return sol.y_events[0][keep][k - 1][:2], t_ev[keep][k - 1]


def test_newton_agrees_with_scipy_root_on_the_same_return_map(lorenz_ab):
    # Independent solve: scipy's DOP853 with events at rtol 1e-12 and scipy.optimize.root (finite differences).
    sol = root(lambda xi: _scipy_lorenz_map(xi, 2)[0] - xi, lorenz_ab.xi[0] + [2e-3, -1e-3], method="hybr",
               options={"xtol": 1e-13})
    assert sol.success
    assert np.allclose(sol.x, lorenz_ab.xi[0], atol=1e-9, rtol=0)
    assert abs(_scipy_lorenz_map(sol.x, 2)[1] - lorenz_ab.period_time) < 1e-9


def test_jacobian_is_the_derivative_of_the_map_and_preserves_flux():
    # An incompressible steady flow's section map preserves |u.n| dA: det DP = (n.u)(x0) / (n.u)(P x0) (exact).
    f = flowkit.flow("hill", strength=1.0, swirl=1.0)
    pl = Plane((1, 1, 0), 0.1, "+")  # an oblique plane off the axis: n.u varies along the orbit
    rm = ReturnMap(f, pl)
    xi = np.array([[0.35, 0.2], [-0.3, -0.3], [0.2, 0.55]])
    r = rm.apply(xi, 1)
    nu0 = f.velocity(rm.embed(xi)) @ pl.n
    nu1 = f.velocity(r.points) @ pl.n
    assert np.allclose(np.linalg.det(r.jacobian), nu0 / nu1, rtol=1e-8)
    h = 1e-6  # central differences of the map itself
    for j in range(2):
        d = np.zeros(2)
        d[j] = h
        fd = (rm.apply(xi + d, 1, jacobian=False).xi - rm.apply(xi - d, 1, jacobian=False).xi) / (2 * h)
        assert np.allclose(fd, r.jacobian[:, :, j], atol=1e-6 * np.abs(r.jacobian).max())


def _tmp(name):
    import tempfile
    from pathlib import Path

    return Path(tempfile.mkdtemp()) / name


# Hill's spherical vortex with swirl: psi = (U/2) s^2 (1 - r^2) is conserved, the swirl turns every meridian
# plane rigidly (return time 2 pi / Omega exactly), and the core circle s^2 = 1/2, z = 0 is a periodic orbit
# whose poloidal linearization is a rotation at rate sqrt(2) U (exact, from the stream function).
U_HILL, OMEGA = 1.0, 1.0


def _psi(x, z):
    return 0.5 * U_HILL * x**2 * (1 - x**2 - z**2)


def _poloidal_period(s0):
    """Period of the meridional orbit through (s0, 0), from the stream function alone (scipy)."""
    def rhs(t, q):
        s, z = q
        return [U_HILL * s * z, U_HILL * (1 - 2 * s * s - z * z)]

    def ev(t, q):
        return q[1]
    ev.direction = 1.0 if s0 < math.sqrt(0.5) else -1.0
    sol = solve_ivp(rhs, (0, 60), [s0, 0.0], method="DOP853", rtol=1e-12, atol=1e-12, events=ev)
    return [t for t in sol.t_events[0] if t > 1e-6][0]


def test_integrable_hill_vortex_core_is_elliptic_and_resonant_torus_parabolic():
    f = flowkit.flow("hill", strength=U_HILL, swirl=OMEGA)
    pl = Plane((0, 1, 0), 0.0, "+")  # in-plane (x, -z)
    core = find_periodic_orbit(f, (0.69, 0.02), pl)
    assert core.converged and core.type == "elliptic" and abs(core.det - 1.0) < 1e-9
    assert np.allclose(core.xi[0], [math.sqrt(0.5), 0.0], atol=1e-8)
    assert core.period_time == pytest.approx(2 * math.pi / OMEGA, rel=1e-10)
    assert core.trace == pytest.approx(2 * math.cos(math.sqrt(2) * U_HILL * 2 * math.pi / OMEGA), abs=1e-8)
    # resonant torus: poloidal period = return time 2 pi / Omega (found with scipy from psi alone)
    s_res = brentq(lambda s: _poloidal_period(s) - 2 * math.pi / OMEGA, 0.72, 0.99, xtol=1e-13)
    torus = find_periodic_orbit(f, (s_res + 0.01, 0.0), pl)
    assert torus.converged and torus.type == "parabolic"
    back = flowkit.load(torus.save(_tmp("orbit.json")))
    assert back.period_time == torus.period_time and np.array_equal(back.xi, torus.xi)
    assert abs(torus.trace - 2.0) < 1e-6 and abs(torus.det - 1.0) < 1e-9
    x, mz = torus.xi[0]
    assert _psi(x, -mz) == pytest.approx(_psi(s_res, 0.0), rel=1e-7)  # on the known invariant surface


def test_bad_input_and_failures_are_clear():
    f = flowkit.flow("hill", strength=1.0, swirl=1.0)
    pl = Plane((0, 1, 0), 0.0, "+")
    with pytest.raises(FlowkitError, match="outside the domain"):
        find_periodic_orbit(f, (1.2, 0.3), pl)
    with pytest.raises(FlowkitError, match="period"):
        find_periodic_orbit(f, (0.7, 0.0), pl, period=0)
    with pytest.raises(FlowkitError, match="Stroboscopic"):
        ReturnMap(flowkit.flow("double-gyre"), Plane((1, 0, 0), 1.0))
    lost = find_periodic_orbit(f, (0.9, 0.3), pl, period=3, max_iter=1)
    assert not lost.converged and lost.type == "" and "residual" in lost.message
    assert lost.summary()["converged"] is False
    # no swirl: nothing crosses the meridian plane y = 0, so there is no return
    none = find_periodic_orbit(flowkit.flow("hill", swirl=0.0), (0.5, 0.1), pl, max_time=5.0)
    assert not none.converged and "did not return" in none.message


@pytest.fixture(scope="module")
def stf_saddle():
    # the stirred droplet (stf, rotation 1) on the plane y = 0: a period-2 saddle near the wall
    return find_periodic_orbit(flowkit.flow("stf", rotation=1.0), (-0.93, 0.0), Plane((0, 1, 0), 0.0, "+"), period=2)


def test_saddle_of_incompressible_flow_has_unit_determinant(stf_saddle):
    o = stf_saddle
    assert o.converged and o.type == "hyperbolic" and o.trace > 2
    assert abs(o.det - 1.0) < 1e-9  # flux measure preserved and the point returns to itself
    lam = o.eigenvalues.real
    assert lam[0] * lam[1] == pytest.approx(1.0, abs=1e-9) and o.residue < 0  # reciprocal pair, R < 0


def test_manifold_points_map_onto_the_manifold(stf_saddle):
    from flowkit.sections.manifolds import invariant_manifolds, map_for, polyline_distance

    man = invariant_manifolds(stf_saddle, length=0.8, max_points=1500)
    rm = map_for(stf_saddle)
    assert man.n_branches == 4 and man.intersections.shape[1] == 2
    for i in range(man.n_branches):
        c, lev = man.curve(i), man.level[man.branch == i]
        inner = (lev[:-1] >= 0) & (lev[1:] >= 0) & (lev[1:] < lev.max())
        mid = 0.5 * (c[:-1][inner] + c[1:][inner])  # points of the drawn curve between computed ones
        img = rm.apply(mid, 2, backward=man.branch_kind[i] == "stable", jacobian=False)
        assert img.ok.all()
        assert polyline_distance(img.xi, c).max() < 1e-3
    back = flowkit.load(man.save(_tmp("manifold.npz")))
    assert np.array_equal(back.xi, man.xi, equal_nan=True)


def test_continuation_follows_the_exact_trace_of_the_hill_core():
    # core trace 2 cos(2 pi sqrt(2) U / Omega) (exact, from the stream function); it only touches -2 at
    # Omega = 2 sqrt(2) U (an integrable 1:2 resonance), which is no crossing and must not be reported
    from flowkit.sections.continuation import continue_orbit

    f = flowkit.flow("hill", strength=U_HILL, swirl=2.5)
    curve = continue_orbit(f, (0.7, 0.0), "swirl", np.linspace(2.5, 3.1, 4), Plane((0, 1, 0), 0.0, "+"))
    assert curve.converged.all() and set(curve.type) == {"elliptic"}
    assert np.allclose(curve.trace, 2 * np.cos(2 * np.pi * math.sqrt(2) * U_HILL / curve.values), atol=1e-8)
    assert np.allclose(curve.xi, [[math.sqrt(0.5), 0.0]] * 4, atol=1e-8)
    assert curve.bifurcations == []


def test_continuation_detects_where_the_saddle_turns_elliptic():
    from flowkit.sections.continuation import continue_orbit

    f = flowkit.flow("stf", rotation=2.6)
    curve = continue_orbit(f, (-0.81, 0.0), "rotation", [2.6, 2.8, 3.0], Plane((0, 1, 0), 0.0, "+"), period=2)
    assert list(curve.type) == ["hyperbolic", "hyperbolic", "elliptic"]
    (bif,) = curve.bifurcations
    assert bif["kind"].startswith("tangent") and 2.8 < bif["parameter"] < 3.0
    assert abs(bif["trace"] - 2.0) < 1e-3  # DP - I is singular there, so the orbit is only known to ~sqrt(tol)


def test_rotation_profile_matches_poloidal_periods_of_hill_vortex():
    # rotation per return = (2 pi / Omega) / T_p(psi) modulo 1, T_p from the stream function (scipy)
    from flowkit.sections.rotation import rotation_profile

    f = flowkit.flow("hill", strength=U_HILL, swirl=OMEGA)
    prof = rotation_profile(f, (math.sqrt(0.5), 0.0), Plane((0, 1, 0), 0.0, "+"), radius=0.2, seeds=4,
                            iterations=150)
    for d, r in zip(prof.distance, prof.rotation):
        w = (2 * math.pi / OMEGA) / _poloidal_period(math.sqrt(0.5) + d)
        w = w - round(w)
        assert min(abs(r - w), abs(r + w)) < 2e-3


def test_cli_periodic_json(capsys, tmp_path):
    import json

    from flowkit.cli import main

    assert main(["periodic", "hill", "--set", "swirl=1", "--start", "0.69,0.02", "--out", str(tmp_path / "o.json"),
                 "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["orbit"]["converged"] and out["orbit"]["type"] == "elliptic"
    assert out["orbit"]["period_time"] == pytest.approx(2 * math.pi, rel=1e-10)  # return time 2 pi / Omega
    assert flowkit.load(out["out"]).type == "elliptic"
    assert main(["periodic", "hill", "--set", "swirl=1", "--start", "1.3,0", "--json"]) == 2
    assert "outside the domain" in json.loads(capsys.readouterr().out)["error"]


def test_shooting_finds_the_lorenz_orbit_with_a_unit_multiplier(lorenz_ab):
    from flowkit.sections.shooting import shoot_periodic_orbit

    # period unknown: start from a rough guess; same published period (Nonlinearity 16, 2003, 1035)
    sh = shoot_periodic_orbit(flowkit.flow("lorenz"), (-13.7, -19.5), 1.5, LORENZ_Z)
    assert sh.converged and abs(sh.period - 1.5586522) < 1e-7
    assert np.min(np.abs(sh.multipliers - 1.0)) < 1e-7  # the direction along the flow (exact)
    assert np.prod(np.abs(sh.multipliers)) == pytest.approx(math.exp(-(41 / 3) * sh.period), rel=1e-6)


def test_lab_skeleton_marks_follow_the_parameter():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.lab.skeleton import SkeletonMarks

    marks = SkeletonMarks(widgets=False)
    fig, ax = plt.subplots()
    marks.attach(ax)
    pl = Plane((0, 1, 0), 0.0, "+")
    msg = marks.click(flowkit.flow("hill", strength=U_HILL, swirl=1.0), pl, (0.69, 0.02))
    assert msg.startswith("elliptic orbit of period 1")
    assert np.allclose(marks._marks["elliptic"].get_xydata(), [[math.sqrt(0.5), 0.0]], atol=1e-8)
    note = marks.follow(flowkit.flow("hill", strength=U_HILL, swirl=1.1), pl)  # the slider moved
    assert note == "followed 1 periodic orbit(s)"
    assert marks.orbits[0].trace == pytest.approx(2 * math.cos(2 * math.pi * math.sqrt(2) * U_HILL / 1.1), abs=1e-8)
    assert "no periodic orbit" in marks.click(flowkit.flow("hill", swirl=0.0), pl, (0.5, 0.1), period=1)
    plt.close(fig)


def test_section_explorer_click_finds_a_periodic_orbit_in_orbit_mode():
    import types

    from flowkit.lab import SectionExplorer

    ex = SectionExplorer("hill", params={"strength": U_HILL, "swirl": 1.0}, normal="y", n_seeds=2, crossings=10,
                         preview_crossings=4)
    ex.update()
    ex.skeleton.toggle.value = True
    ex.skeleton.period_box.value = 2  # every crossing is kept: the core circle meets y = 0 twice per turn
    ex._on_click(types.SimpleNamespace(inaxes=ex.ax, button=1, xdata=0.69, ydata=0.02))
    (orbit,) = ex.skeleton.orbits
    assert orbit.type == "elliptic" and np.allclose(np.abs(orbit.xi[:, 0]), math.sqrt(0.5), atol=1e-8)
    assert len(ex.seeds) == 2  # the click did not seed an orbit
    ex.close()


def test_stroboscopic_map_of_the_double_gyre():
    # steady double gyre (epsilon = 0): the gyre centre (1/2, 1/2) is a fixed point of the period map with
    # rotation rate A pi^2 (linearization of psi = A sin(pi x) sin(pi y), exact): tr = 2 cos(A pi^2 T)
    f = flowkit.flow("double-gyre", epsilon=0.0)
    o = find_periodic_orbit(f, (0.45, 0.52), Stroboscopic())
    assert o.converged and o.xi.shape == (1, 2)  # w = 0 and nothing depends on z: a map of the plane
    assert np.allclose(o.xi[0], [0.5, 0.5], atol=1e-9)
    T = 2 * math.pi / f.param_dict["omega"]
    assert o.trace == pytest.approx(2 * math.cos(f.param_dict["A"] * math.pi**2 * T), abs=1e-8)
    # forced (epsilon = 0.25): the map stays area-preserving, so det DP = 1 at its periodic points
    g = flowkit.flow("double-gyre")
    og = find_periodic_orbit(g, o.xi[0], Stroboscopic())
    assert og.converged and abs(og.det - 1.0) < 1e-9 and og.type in ("elliptic", "hyperbolic")


def test_box_flow_orbit_returns_modulo_the_lattice():
    # Roberts flow u = (C cos y, B sin x, psi) with psi = C sin y + B cos x (exact): w = psi along each cell
    # streamline, so the cell centre (0, pi/2) rises at B + C and meets z = 2 pi after 2 pi/(B + C); around
    # it the (x, y) motion turns at sqrt(B C) (Hessian of psi), so tr DP = 2 cos(2 pi sqrt(B C)/(B + C)).
    B, C = 1.0, 0.5
    f = flowkit.flow("roberts", B=B, C=C)
    o = find_periodic_orbit(f, (0.1, 1.5), Plane((0, 0, 1), 0.0, "+"))
    assert o.converged and np.allclose(o.xi[0], [0.0, math.pi / 2], atol=1e-9)
    assert np.allclose(o.shift, [0.0, 0.0, 2 * math.pi])  # one lattice cell up
    assert o.period_time == pytest.approx(2 * math.pi / (B + C), rel=1e-10)
    assert o.trace == pytest.approx(2 * math.cos(2 * math.pi * math.sqrt(B * C) / (B + C)), abs=1e-8)


def test_an_orbit_that_leaves_the_domain_is_an_outcome_not_an_orbit():
    # a leaky swirl in the ball: it spirals out (radius x e^(0.3 * 2 pi) per turn) before it can return
    from flowkit.errors import FlowkitNotice

    with pytest.warns(FlowkitNotice, match="not divergence-free"):
        leaky = flowkit.custom_flow(["-y + 0.3*x", "x + 0.3*y", "0"], domain="ball", name="leaky-swirl")
    o = find_periodic_orbit(leaky, (0.5, 0.0), Plane((0, 1, 0), 0.0, "+"))
    assert not o.converged and "left the domain" in o.message
