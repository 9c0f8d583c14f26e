"""Poincaré sections: crossing location against scipy and exact solutions, outcomes, files, plots, CLI."""

import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import flowkit
from flowkit import seeding
from flowkit.cli import main
from flowkit.errors import FlowkitError
from flowkit.integrate.batch import IntegratorSettings, integrate_states
from flowkit.integrate.outcomes import Outcome
from flowkit.sections import Plane, Section, Stroboscopic, poincare_section, tolerance_check, warm_sections

TIGHT = {"rtol": 1e-13, "atol": 1e-15}


def scipy_events(flow, seed, T, event, direction, n_skip_t0=True):
    """Event locations of scipy's DOP853 (the outside reference), rtol 1e-13."""
    event.direction = direction
    sol = solve_ivp(lambda t, y: flow.velocity(y[None], t)[0], (0.0, T), seed, method="DOP853",
                    events=event, **TIGHT)
    t, y = sol.t_events[0], sol.y_events[0]
    keep = t > 0.0 if n_skip_t0 else np.ones(len(t), bool)
    return t[keep], y[keep]


@pytest.fixture(scope="module")
def rotation():
    # u = (-y, x, a z^2): for a = 0 a rigid rotation about z (exact solution: circles);
    # for a = 1 and z0 > 0, z = z0 / (1 - z0 t) blows up at t = 1/z0.
    return flowkit.custom_flow(["-y", "x", "a*z**2"], params={"a": 0.0}, kind="system", name="rotation-sec")



#: (flow, seeds, plane, crossings, t_max, bounded, expected outcomes): a chaotic ball flow; a blow-up
#: beside a finished orbit with both crossing directions (each case compiles the flow's own kernel)
GENERIC_CASES = {
    "stf-ball": (lambda rot: flowkit.flow("stf", rotation=0.3), [[0.1, 0.0, 0.2], [0.3, 0.0, -0.4]],
                 Plane((0, 1, 0), 0.0, "+"), 300, math.inf, True, [Outcome.CROSSING_BUDGET] * 2),
    "blow-up-both-directions": (lambda rot: rot.with_params(a=1.0), [[1.0, 0.0, 0.5], [1.0, 0.0, -0.5]],
                                Plane((1, 0, 0), 0.0, "both"), 40, math.inf, False,
                                [(Outcome.STEP_UNDERFLOW, Outcome.NON_FINITE), Outcome.CROSSING_BUDGET]),
}


@pytest.mark.parametrize("case", list(GENERIC_CASES))
def test_generic_kernel_gives_the_family_kernels_crossings_bit_for_bit(case, rotation):
    """The generic section kernel (the flow's functions called through pointers, compiled once for all
    flows) runs the same arithmetic in the same order as the family's own kernel: exact identity, on
    orbits that finish, fill their crossing budget or blow up. The rest of the suite runs sections on the generic kernel (tests/conftest.py)."""
    from flowkit.kernels import generic
    from flowkit.sections.compute import _call_kernel, _plane_vector

    make, seeds, plane, K, t_max, bounded, expected = GENERIC_CASES[case]
    f = make(rotation)
    seeds = np.array(seeds)
    n = len(seeds)
    pvec, _ = _plane_vector(f, plane)
    opts = (1e-10, 1e-12, math.inf, 10**6, 0.0, 2)
    runs = []
    for kernel, params in ((f.kernels.sec_batch_dop853, f.params),
                           (generic.generic_kernels().sec_batch_dop853, generic.pointer_params(f))):
        out = (np.empty((n, K, 3)), np.empty((n, K)), np.empty((n, K)), np.zeros(n, dtype=np.int64),
               np.zeros(n, dtype=np.int8), np.zeros(n), np.zeros(n, dtype=np.int64))
        _call_kernel(kernel, params, 0, seeds, 0.0, t_max, pvec, opts, bounded, out)
        runs.append(out)
    for oc, want in zip(runs[0][4], expected):
        assert oc in (want if isinstance(want, tuple) else (want,))
    assert runs[0][3].sum() > 0  # crossings were found
    for a, b in zip(*runs):
        c = runs[0][3]
        if a.ndim > 1:  # the crossing arrays: only the filled part is defined
            a = np.concatenate([a[i, :c[i]].ravel() for i in range(n)])
            b = np.concatenate([b[i, :c[i]].ravel() for i in range(n)])
        assert np.array_equal(a, b)


# ---------------------------------------------------------------------------------------------
# accuracy against outside references
# ---------------------------------------------------------------------------------------------
def test_first_200_crossings_of_a_chaotic_stf_orbit_match_scipy_event_location():
    # Why this orbit: at rotation 0.05 the stf flow (J. Fluid Mech. 212, 1990) has a chaotic
    # sea with a small Lyapunov exponent. This seed lies in it: its finite-time exponent
    # ln|J(T)|/T stays near 0.056 for T = 150, 600 and 2000 (our measurement), so round-off
    # differences of 1e-15 grow by about e^(0.056 * 125) ~ 1e3 over the 200 crossings of the
    # plane y = 0 (both directions, t ~ 125): a chaotic orbit on which two independent
    # integrators at rtol 1e-13 can still be compared crossing by crossing to 1e-8.
    f = flowkit.flow("stf", rotation=0.05)
    seed = np.array([-0.216, 0.0, 0.103])
    T = 400.0
    J = integrate_states(f, np.concatenate([seed, np.eye(3).ravel()])[None], 0.0, T,
                         IntegratorSettings(rtol=1e-11, atol=1e-13)).states[0, 3:].reshape(3, 3)
    assert math.log(np.linalg.norm(J, 2)) / T > 0.03  # exponential stretching: a chaotic orbit
    # (a regular orbit's stretching grows linearly: ln(c T)/T ~ 0.02 at T = 400)

    sec = poincare_section(f, seed[None], Plane((0, 1, 0), 0.0, "both"), crossings=200, **TIGHT)
    assert sec.counts[0] == 200 and sec.outcome[0] == Outcome.CROSSING_BUDGET
    t_ref, y_ref = scipy_events(f, seed, sec.time[-1] + 0.5, lambda t, y: y[1], 0)
    assert len(t_ref) >= 200
    np.testing.assert_allclose(sec.points, y_ref[:200], rtol=0, atol=1e-8)
    np.testing.assert_allclose(sec.time, t_ref[:200], rtol=0, atol=1e-8)
    # crossing direction is the sign of n.u at the crossing
    vy = f.velocity(sec.points)[:, 1]
    assert np.array_equal(sec.crossing_direction, np.sign(vy).astype(np.int8))


def test_hill_vortex_stream_function_is_constant_over_10000_crossings():
    # Hill's vortex (Hydrodynamics, 1932, section 165): psi = (U/2) s^2 (1 - r^2) is constant
    # along streamlines; the rigid swirl about z does not change psi either (exact identity).
    U = 1.0
    f = flowkit.flow("hill", strength=U, swirl=0.5)
    seeds = np.array([[0.3, 0.0, 0.0], [0.55, 0.1, 0.0]])
    sec = poincare_section(f, seeds, Plane((0, 0, 1), 0.0, "+"), crossings=10_000, **TIGHT)
    assert np.all(sec.counts == 10_000)

    def psi(p):
        s2 = p[:, 0] ** 2 + p[:, 1] ** 2
        return 0.5 * U * s2 * (1.0 - s2 - p[:, 2] ** 2)

    drift = psi(sec.points) - psi(seeds)[sec.orbit]
    assert np.abs(drift).max() < 1e-9


def test_a_pair_of_crossings_inside_one_step_is_caught(rotation):
    # Rigid rotation, orbit of radius 1, plane x = 0.999: each turn crosses it twice,
    # 2 acos(0.999) = 0.089 apart in time, while DOP853 takes far longer steps on this
    # flow. Exact crossing times: t = +-acos(0.999) + 2 pi k (exact solution).
    c = 0.999
    turns = 30
    sec = poincare_section(rotation, [[1.0, 0.0, 0.0]], Plane((1, 0, 0), c, "both"), crossings=2 * turns)
    steps_per_turn = sec.steps[0] / turns
    assert 2 * math.pi / steps_per_turn > 2 * math.acos(c)  # steps longer than the pair's spacing
    k = np.arange(1, turns + 1)
    exact = np.sort(np.concatenate([2 * math.pi * k - math.acos(c), 2 * math.pi * (k - 1) + math.acos(c)]))
    np.testing.assert_allclose(sec.time, exact[: sec.counts[0]], atol=1e-9)
    assert np.array_equal(sec.crossing_direction[:2], [-1, 1])  # leaving x > c, then returning
    # The fixed-step path checks the extremum of a cubic model of S and locates a confirmed pair
    # from both ends. RK4 shrinks this circle by h^6/144 per step (|R(ih)| for the rotation), so
    # h = 0.15 keeps the radius above 0.999 for 30 turns while many pairs fall inside one step.
    h = 0.15
    fixed = poincare_section(rotation, [[1.0, 0.0, 0.0]], Plane((1, 0, 0), c, "both"), crossings=2 * turns,
                             method="rk4", step=h)
    assert fixed.counts[0] == 2 * turns
    step_index = np.floor(fixed.time / h)
    assert np.sum(step_index[1:-1:2] == step_index[2::2]) > 5  # pairs (up, down) hidden inside one step
    np.testing.assert_allclose(fixed.points[:, 0], c, atol=1e-14)
    # each crossing is the right one (RK4's shrinking radius shifts times near the tangency)
    np.testing.assert_allclose(fixed.time, exact, atol=0.03)
    assert np.array_equal(fixed.crossing_direction, sec.crossing_direction)


def test_grazing_planes_never_crash(rotation):
    for c in (1.0, 1.0 - 1e-13, 1.0 + 1e-13):  # tangent, barely cut, barely missed
        sec = poincare_section(rotation, [[1.0, 0.0, 0.0]], Plane((1, 0, 0), c, "both"), crossings=10, t_max=60.0)
        assert sec.outcome[0] in (Outcome.FINISHED, Outcome.CROSSING_BUDGET)
        assert np.all(np.isfinite(sec.points))


def test_oblique_plane_crossings_lie_on_the_plane_and_in_plane_coords_are_exact():
    f = flowkit.flow("stf", rotation=0.3)
    plane = Plane((1.0, 2.0, -2.0), 0.1, "both")
    seeds = seeding.line_in_plane(plane, (-0.5, 0.0), (0.5, 0.2), 4, flow=f)
    both = poincare_section(f, seeds, plane, crossings=300)
    n = plane.n
    np.testing.assert_allclose(both.points @ n, 0.1, atol=1e-14)
    np.testing.assert_allclose(plane.point(both.coords[:, 0], both.coords[:, 1]), both.points, atol=1e-14)
    e1, e2 = plane.basis  # orthonormal and right-handed with n (exact identities)
    np.testing.assert_allclose([e1 @ e1, e2 @ e2, e1 @ e2, e1 @ n], [1, 1, 0, 0], atol=1e-15)
    np.testing.assert_allclose(np.cross(e1, e2), n, atol=1e-15)
    up = poincare_section(f, seeds, Plane(plane.normal, 0.1, "+"), crossings=100)
    for i in range(len(seeds)):
        mine = both.points[both.orbit_slice(i)][both.crossing_direction[both.orbit_slice(i)] == 1]
        np.testing.assert_allclose(up.points[up.orbit_slice(i)], mine[:100], atol=1e-12)


def test_periodic_domain_counts_every_cell_against_scipy():
    # ABC flow integrated unwrapped: the plane z = 1 repeats at z = 1 + 2 pi k. scipy's events on
    # sin((z - 1)/2), whose zeros are exactly those planes, are the outside reference.
    f = flowkit.flow("abc")
    seed = np.array([1.0, 2.0, 3.0])
    sec = poincare_section(f, seed[None], Plane((0, 0, 1), 1.0, "both"), crossings=30, **TIGHT)
    t_ref, y_ref = scipy_events(f, seed, sec.time[-1] + 0.1, lambda t, y: math.sin((y[2] - 1.0) / 2), 0)
    np.testing.assert_allclose(sec.points, y_ref[:30], atol=1e-8)
    assert len(np.unique(np.round((sec.points[:, 2] - 1) / (2 * math.pi)))) > 2  # several cells
    uv = sec.display_coords()
    assert uv.min() >= 0.0 and uv.max() < 2 * math.pi
    with pytest.raises(FlowkitError, match="not parallel to a small integer vector"):
        poincare_section(f, seed[None], Plane((1.0, math.sqrt(2), 0.0)), crossings=3)


def test_stroboscopic_section_matches_scipy_at_multiples_of_the_period():
    f = flowkit.flow("circular", epsilon=0.8)
    seed = np.array([1.0, 2.0, 0.5])
    T = f.period
    sec = poincare_section(f, seed[None], Stroboscopic(), crossings=8, **TIGHT)
    ref = solve_ivp(lambda t, y: f.velocity(y[None], t)[0], (0, 8 * T), seed, method="DOP853",
                    t_eval=T * np.arange(1, 9), **TIGHT)
    np.testing.assert_allclose(sec.time, T * np.arange(1, 9), rtol=1e-15)
    np.testing.assert_allclose(sec.points, ref.y.T, atol=1e-8)
    with pytest.raises(FlowkitError, match="needs a period"):
        poincare_section(flowkit.flow("abc"), seed[None], Stroboscopic(), crossings=2)


def test_fixed_step_sections_with_henon_location():
    f = flowkit.flow("hill", strength=1.0, swirl=0.5)
    seeds = np.array([[0.3, 0.0, 0.0], [0.8, 0.0, 0.0]])
    ref = poincare_section(f, seeds, Plane((0, 0, 1), 0.0, "+"), crossings=20, **TIGHT)
    for method, h, tol in (("rk4", 0.01, 1e-7), ("splitting", 0.005, 5e-4)):
        sec = poincare_section(f, seeds, Plane((0, 0, 1), 0.0, "+"), crossings=20, method=method, step=h)
        np.testing.assert_allclose(sec.points[:, 2], 0.0, atol=1e-15)  # Hénon's step lands on the plane
        np.testing.assert_allclose(sec.points, ref.points, atol=tol)  # within the method's own error
        assert sec.provenance["integrator"]["method"] == method


# ---------------------------------------------------------------------------------------------
# batch behaviour and outcomes
# ---------------------------------------------------------------------------------------------
def test_results_do_not_depend_on_thread_count():
    f = flowkit.flow("stf", rotation=0.3)
    seeds = seeding.random_in_domain(f, 8, seed=5) * 0.8
    a = poincare_section(f, seeds, Plane((0, 1, 0)), crossings=50, threads=1)
    b = poincare_section(f, seeds, Plane((0, 1, 0)), crossings=50, threads=2)
    assert np.array_equal(a.points, b.points) and np.array_equal(a.steps, b.steps)


def test_blow_up_and_escape_are_outcomes_and_the_rest_of_the_batch_is_kept(rotation):
    blow = rotation.with_params(a=1.0)  # same compiled kernels, new parameter
    sec = poincare_section(blow, [[1.0, 0.0, 0.5], [1.0, 0.0, -0.5]], Plane((1, 0, 0), 0.0, "+"), crossings=5)
    assert sec.outcome[0] in (Outcome.STEP_UNDERFLOW, Outcome.NON_FINITE)
    assert sec.outcome[1] == Outcome.CROSSING_BUDGET and sec.counts[1] == 5
    assert sec.t_end[0] < 2.0 + 1e-6  # z = 0.5 / (1 - 0.5 t) blows up at t = 2
    assert np.all(np.isfinite(sec.points))
    out = flowkit.custom_flow(["x", "y", "-2*z"], domain="ball")  # pushes orbits through r = 1
    sec = poincare_section(out, [[0.5, 0.0, 0.0], [0.0, 0.0, 0.5]], Plane((1, 0, 0), 0.6, "+"), crossings=5, t_max=5.0)
    assert sec.outcome[0] == Outcome.LEFT_DOMAIN and sec.counts[0] == 1
    assert abs(sec.time[0] - math.log(1.2)) < 1e-9  # x = 0.5 e^t reaches 0.6 (exact solution)
    assert sec.outcome[1] == Outcome.FINISHED and sec.counts[1] == 0


def test_bad_input_gets_clear_errors():
    f = flowkit.flow("stf")
    ok = [[0.1, 0.0, 0.2]]
    with pytest.raises(FlowkitError, match="outside the domain"):
        poincare_section(f, [[0.9, 0.9, 0.0]], crossings=3)
    with pytest.raises(FlowkitError, match="zero vector"):
        Plane((0, 0, 0))
    with pytest.raises(FlowkitError, match="`rtol` must be a positive number"):
        poincare_section(f, ok, crossings=3, rtol=0.0)
    with pytest.raises(FlowkitError, match="`crossings` must be a positive integer"):
        poincare_section(f, ok, crossings=0)
    with pytest.raises(FlowkitError, match="`direction` must be"):
        Plane((0, 0, 1), 0.0, "up")
    with pytest.raises(FlowkitError, match="`t_max` must be later"):
        poincare_section(f, ok, crossings=3, t_max=0.0)
    with pytest.raises(FlowkitError, match="`step` must be a positive number when method='splitting'"):
        poincare_section(f, ok, crossings=3, method="splitting")


def test_parameter_change_reuses_the_compiled_kernel():
    f = flowkit.flow("stf", rotation=0.3)
    warm_sections(f, wait=True)  # the family's own kernel now (a cold first section may run the generic one)
    poincare_section(f, [[0.1, 0.0, 0.2]], crossings=2)
    kernel = f.kernels.sec_batch_dop853
    n_sigs = len(kernel.signatures)
    sec = poincare_section(f.with_params(rotation=0.7), [[0.1, 0.0, 0.2]], crossings=2)
    assert len(kernel.signatures) == n_sigs and sec.provenance["parameters"] == {"rotation": 0.7}


# ---------------------------------------------------------------------------------------------
# result object, files, plots, seeding, tolerance check, CLI
# ---------------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def small_section():
    f = flowkit.flow("stf", rotation=0.3)
    sec = poincare_section(f, seeding.across_domain(f, Plane((0, 1, 0)), 5), Plane((0, 1, 0), 0.0, "both"), crossings=40)
    return sec.attach("indicator", np.linspace(0.0, 1.0, sec.n_orbits))


def assert_same_section(a: Section, b: Section):
    for name in ("points", "coords", "time", "orbit", "crossing_direction", "seeds", "outcome", "t_end", "steps", "counts"):
        np.testing.assert_array_equal(getattr(a, name), getattr(b, name))
    assert a.geometry == b.geometry and a.provenance["parameters"] == b.provenance["parameters"]
    np.testing.assert_array_equal(a.orbit_values["indicator"], b.orbit_values["indicator"])


def test_npz_and_netcdf_round_trip_without_pickle(small_section, tmp_path):
    path = small_section.save(tmp_path / "sec.npz")
    with np.load(path, allow_pickle=False) as raw:  # plain arrays and one JSON string only
        prov = json.loads(str(raw["__flowkit__"]))["fields"]["provenance"]
        assert raw["points"].shape == (small_section.crossings_total, 3)
    assert prov["flow"] == "stf" and prov["integrator"]["rtol"] == 1e-10 and len(prov["seeds"]) == 5
    assert "flowkit_version" in prov and "created" in prov
    assert_same_section(Section.load(path), small_section)
    nc = small_section.to_netcdf(tmp_path / "sec.nc")
    assert_same_section(Section.load_netcdf(nc), small_section)
    with pytest.raises(FlowkitError, match="one entry per orbit"):
        small_section.attach("bad", [1.0, 2.0])


def test_plot_section_rasterizes_points_and_colours_by_orbit_value(small_section):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.plot import plot_section

    fig, (ax1, ax2) = plt.subplots(1, 2)
    arts = plot_section(ax1, small_section)
    assert arts[0].get_rasterized() and np.allclose(arts[0].get_offsets(), small_section.display_coords())
    arts = plot_section(ax2, small_section, color_by="indicator")
    np.testing.assert_allclose(arts[0].get_array(), small_section.orbit_values["indicator"][small_section.orbit])
    circle = arts[1].get_xydata()  # the unit ball's trace in y = 0 is the unit circle
    np.testing.assert_allclose(np.hypot(circle[:, 0], circle[:, 1]), 1.0, atol=1e-12)
    with pytest.raises(FlowkitError, match="not an attached per-orbit value"):
        plot_section(ax2, small_section, color_by="nope")
    plt.close(fig)


def test_seeding_helpers(tmp_path):
    f = flowkit.flow("stf")
    plane = Plane((0, 0, 1), 0.2)
    pts = seeding.grid_in_plane(plane, (-1, 1), (-1, 1), 9, 9, flow=f)
    assert np.all(f.contains(pts)) and np.allclose(pts[:, 2], 0.2) and 0 < len(pts) < 81
    line = seeding.line_in_plane(plane, (0.0, -0.5), (0.0, 0.5), 5)
    np.testing.assert_allclose(plane.coords(line), np.c_[np.zeros(5), np.linspace(-0.5, 0.5, 5)], atol=1e-15)
    rnd = seeding.random_in_domain(f, 100, seed=1)
    assert np.all(np.linalg.norm(rnd, axis=1) < 1)
    path = seeding.write_seed_file(tmp_path / "seeds.txt", rnd[:4])
    np.testing.assert_array_equal(seeding.read_seed_file(path), rnd[:4])
    (tmp_path / "bad.txt").write_text("# x y z\n0.1 0.2 0.3\n0.1 0.2\n")
    with pytest.raises(FlowkitError, match="line 3"):
        seeding.read_seed_file(tmp_path / "bad.txt")


def test_tolerance_check_reports_the_largest_displacement():
    f = flowkit.flow("hill", strength=1.0, swirl=0.5)
    chk = tolerance_check(f, [[0.3, 0.0, 0.0], [0.7, 0.0, 0.0]], Plane((0, 0, 1), 0.0, "+"), crossings=50, rtol=1e-8)
    assert chk.compared == 100 and chk.mismatched_counts == 0
    direct = max(np.linalg.norm(chk.loose.points - chk.tight.points, axis=1))
    assert chk.max_displacement == pytest.approx(direct) and 0 < chk.max_displacement < 1e-4


def test_cli_section_writes_npz_and_reports_json(tmp_path, capsys):
    out = tmp_path / "s.npz"
    png = tmp_path / "s.png"
    code = main(["section", "stf", "--set", "rotation=0.3", "--crossings", "30", "--seeds", "3",
                 "--out", str(out), "--plot", str(png), "--json"])
    res = json.loads(capsys.readouterr().out)
    assert code == 0 and res["crossings_total"] == 90 and res["orbits"] == 3
    assert res["outcomes"]["crossing budget"] == 3 and {"seconds", "compile_seconds"} <= set(res)
    assert res["plane_residual_max"] < 1e-14 and png.stat().st_size > 0
    with np.load(out, allow_pickle=False) as raw:
        assert raw["points"].shape == (90, 3) and raw["time"].shape == (90,) and raw["orbit"].shape == (90,)
        assert json.loads(str(raw["__flowkit__"]))["fields"]["provenance"]["parameters"] == {"rotation": 0.3}
    seeds = tmp_path / "seeds.txt"
    seeds.write_text("0.1 0 0.2\n0.3 0 -0.1\n")
    code = main(["section", "stf", "--seed-file", str(seeds), "--crossings", "5", "--direction", "both", "--json"])
    assert code == 0 and json.loads(capsys.readouterr().out)["orbits"] == 2
    for argv, msg in ((["--normal", "0,0,0"], "zero vector"), (["--rtol", "-1"], "--rtol"),
                      (["--crossings", "0"], "--crossings")):
        args = ["section", "stf", "--crossings", "5", *argv, "--json"]
        code = main(args)
        assert code == 2 and msg in json.loads(capsys.readouterr().out)["error"]


def test_cli_section_draws_y_plane_in_x_and_z(tmp_path, capsys):
    # y = 0 is drawn with x to the right and z upwards (as in the lab), not (x, -z)
    import matplotlib.pyplot as plt

    from flowkit.cli import main

    captured = {}
    real_close = plt.close
    plt.close = lambda fig=None: captured.setdefault("fig", fig)  # keep the figure to read its labels
    try:
        assert main(["section", "abc", "--crossings", "3", "--seeds", "2", "--plot", str(tmp_path / "s.png"), "--json"]) == 0
    finally:
        plt.close = real_close
    out = json.loads(capsys.readouterr().out)
    ax = captured["fig"].axes[0]
    assert (ax.get_xlabel(), ax.get_ylabel()) == ("u along x", "v along z")
    assert out["section"]["e1"] == [1.0, 0.0, 0.0] and out["section"]["e2"] == [0.0, 0.0, 1.0]
    real_close(captured["fig"])
