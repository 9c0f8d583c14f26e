"""FTLE fields: exact values for linear strain, finite differences of the flow map, I/O, plot, CLI."""

import json

import numpy as np
import pytest
import scipy.linalg

import flowkit
from flowkit.cli import main
from flowkit.errors import FlowkitError
from flowkit.chaos import FTLEField, GridPlane, ftle_field
from flowkit.chaos.ftle import OUTSIDE
from flowkit.integrate.batch import IntegratorSettings, integrate_states

TIGHT = IntegratorSettings(rtol=1e-12, atol=1e-14)
RK4 = IntegratorSettings(method="rk4", step=0.01)


@pytest.fixture(scope="module")
def linear_flow():
    # u = S x with a parameter matrix (one family for every matrix: compiled once)
    names = [f"s{i}{j}" for i in range(3) for j in range(3)]
    return flowkit.custom_flow(
        ["s00*x + s01*y + s02*z", "s10*x + s11*y + s12*z", "s20*x + s21*y + s22*z"],
        params={n: 0.0 for n in names}, name="linear", kind="system",
    )


def with_matrix(flow, S):
    return flow.with_params(**{f"s{i}{j}": float(S[i, j]) for i in range(3) for j in range(3)})


@pytest.fixture(scope="module")
def gyre():
    return flowkit.flow("double-gyre")


GYRE_PLANE = GridPlane.coordinate("z", 0.0, (0.1, 1.9, 0.1, 0.9))
TILTED = GridPlane.through([0.05, -0.1, 0.02], [1.0, 0.3, -0.2], [0.1, 1.0, 0.6], (-0.4, 0.4, -0.3, 0.3))


@pytest.mark.parametrize("settings,tol", [(TIGHT, 1e-9), (RK4, 1e-7)])
def test_linear_strain_gives_its_exact_ftle(linear_flow, settings, tol):
    # u = S x, S symmetric: J = expm(S T), so the forward FTLE is the largest eigenvalue of S
    # and the backward one minus the smallest, at every point (exact identity).
    S = np.array([[0.3, 0.2, 0.0], [0.2, -0.1, 0.15], [0.0, 0.15, -0.2]])
    eig = np.linalg.eigvalsh(S)
    f = with_matrix(linear_flow, S)
    fwd = ftle_field(f, TILTED, (5, 4), 3.0, settings=settings)
    bwd = ftle_field(f, TILTED, (5, 4), 3.0, settings=settings, direction="backward")
    np.testing.assert_allclose(fwd.values, eig[-1], atol=tol)
    np.testing.assert_allclose(bwd.values, -eig[0], atol=tol)


def test_non_normal_linear_flow_matches_scipy_expm(linear_flow):
    # shear plus strain: the FTLE is log of the largest singular value of expm(A T) (scipy reference)
    A = np.array([[0.1, 1.0, 0.0], [0.0, -0.3, 0.5], [0.2, 0.0, 0.2]])
    T = 2.5
    ref = np.log(np.linalg.svd(scipy.linalg.expm(A * T), compute_uv=False)[0]) / T
    field = ftle_field(with_matrix(linear_flow, A), TILTED, (3, 3), T, settings=TIGHT)
    np.testing.assert_allclose(field.values, ref, atol=1e-10)


def flow_map_ftle(flow, pts, T, planar, d=1e-5):
    """FTLE by central differences of the flow map (positions only), SVD by numpy."""
    dims = 2 if planar else 3
    out = np.empty(len(pts))
    for n, x0 in enumerate(pts):
        starts = []
        for j in range(dims):
            e = np.zeros(3)
            e[j] = d
            starts += [x0 + e, x0 - e]
        ends = integrate_states(flow, np.array(starts), 0.0, T, TIGHT).states
        J = np.stack([(ends[2 * j] - ends[2 * j + 1])[:dims] / (2 * d) for j in range(dims)], axis=1)
        out[n] = np.log(np.linalg.svd(J, compute_uv=False)[0]) / T
    return out


def test_planar_ftle_agrees_with_finite_differences_of_the_flow_map(gyre):
    field = ftle_field(gyre, GYRE_PLANE, (4, 3), 10.0, settings=TIGHT)
    fd = flow_map_ftle(gyre, field.points.reshape(-1, 3), 10.0, planar=True)
    np.testing.assert_allclose(field.values.ravel(), fd, atol=1e-6)
    fast = ftle_field(gyre, GYRE_PLANE, (4, 3), 10.0, settings=RK4)  # the fixed-step kernel path
    np.testing.assert_allclose(fast.values.ravel(), fd, atol=1e-5)


def test_3d_ftle_on_a_tilted_plane_agrees_with_finite_differences():
    f = flowkit.flow("stf", rotation=0.3)
    field = ftle_field(f, TILTED, (3, 3), 3.0, settings=TIGHT)
    fd = flow_map_ftle(f, field.points.reshape(-1, 3), 3.0, planar=False)
    np.testing.assert_allclose(field.values.ravel(), fd, atol=1e-6)
    fast = ftle_field(f, TILTED, (3, 3), 3.0, settings=RK4)
    np.testing.assert_allclose(fast.values.ravel(), fd, atol=1e-5)


@pytest.mark.filterwarnings("ignore::flowkit.errors.FlowkitNotice")
def test_ball_grid_marks_points_outside_and_does_not_depend_on_threads():
    f = flowkit.flow("stf", rotation=0.3)
    plane = GridPlane.coordinate("y", 0.0, None)  # span filled from the unit ball
    one = ftle_field(f, plane, (9, 9), 1.0, settings=RK4, threads=1)
    two = ftle_field(f, plane, (9, 9), 1.0, settings=RK4, threads=2)
    np.testing.assert_array_equal(one.values, two.values)
    r = np.linalg.norm(one.points, axis=-1)
    assert np.all(one.outcome[r > 1 + 1e-12] == OUTSIDE) and np.all(np.isnan(one.values[r > 1 + 1e-12]))
    # points strictly inside finish; points on the sphere itself may be nudged out by round-off and are
    # then reported as "left domain" (never silently)
    assert np.all(one.outcome[r < 0.99] == 0) and np.all(np.isfinite(one.values[r < 0.99]))
    assert set(np.unique(one.outcome[np.abs(r - 1) < 1e-12])) <= {0, 1}
    assert one.outcomes["outside the domain"] == int(np.sum(r > 1 + 1e-12))


def test_field_round_trips_and_converts_to_xarray(gyre, tmp_path):
    field = ftle_field(gyre, GYRE_PLANE, (6, 4), 2.0, settings=RK4)
    ds = field.to_xarray()
    assert ds["ftle"].dims == ("r", "s") and ds.sizes == {"r": 4, "s": 6}
    np.testing.assert_array_equal(ds["x"].values, field.points[..., 0])
    for name in ("f.npz", "f.nc"):
        back = FTLEField.load(field.save(tmp_path / name))
        np.testing.assert_array_equal(back.values, field.values)
        np.testing.assert_array_equal(back.points, field.points)
        assert back.provenance["flow"] == "double-gyre" and back.plane == field.plane
        assert back.provenance["method"]["integrator"]["method"] == "rk4"


def test_plot_shows_the_field_values_with_a_colorbar(gyre):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.plot import plot_ftle

    field = ftle_field(gyre, GYRE_PLANE, (6, 4), 2.0, settings=RK4)
    fig, ax = plt.subplots()
    art = plot_ftle(ax, field)
    np.testing.assert_array_equal(np.asarray(art["image"].get_array()), field.values)
    assert art["colorbar"] is not None and ax.get_xlabel() == "x" and ax.get_ylabel() == "y"
    assert art["image"].get_extent()[0] < 0.1 < 1.9 < art["image"].get_extent()[1]
    plt.close(fig)


def test_bad_input_gets_clear_errors(gyre, linear_flow):
    with pytest.raises(FlowkitError, match="`time` must be a positive"):
        ftle_field(gyre, GYRE_PLANE, (4, 4), 0.0)
    with pytest.raises(FlowkitError, match="`time` must be a positive"):
        ftle_field(gyre, GYRE_PLANE, (4, 4), -3.0)
    with pytest.raises(FlowkitError, match="`resolution` must be an integer >= 1"):
        ftle_field(gyre, GYRE_PLANE, (0, 4), 1.0)
    with pytest.raises(FlowkitError, match="planar: the grid must lie in the x-y plane"):
        ftle_field(gyre, TILTED, (4, 4), 1.0)
    with pytest.raises(FlowkitError, match="must be a flowkit Flow"):
        ftle_field(np.sin, GYRE_PLANE, (4, 4), 1.0)
    with pytest.raises(FlowkitError, match="give the grid's `span`"):
        ftle_field(linear_flow, GridPlane.coordinate("z", 0.0, None), (4, 4), 1.0)
    with pytest.raises(FlowkitError, match="no grid point lies inside"):
        ftle_field(flowkit.flow("stf"), GridPlane.coordinate("z", 3.0, None), (4, 4), 1.0)
    with pytest.raises(FlowkitError, match="are parallel"):
        GridPlane.through([0, 0, 0], [1, 0, 0], [2, 0, 0], (0, 1, 0, 1))
    with pytest.raises(FlowkitError, match="`direction` must be"):
        ftle_field(gyre, GYRE_PLANE, (4, 4), 1.0, direction="sideways")


def test_cli_ftle_json_writes_file_and_plot(capsys, tmp_path):
    out, png = tmp_path / "g.npz", tmp_path / "g.png"
    code = main(["ftle", "double-gyre", "--plane", "z=0", "--span", "0,2,0,1", "--resolution", "8x4",
                 "--time", "5", "--backward", "--out", str(out), "--plot", str(png), "--json"])
    res = json.loads(capsys.readouterr().out)
    assert code == 0, res
    assert res["direction"] == "backward" and res["resolution"] == [8, 4] and res["outcomes"]["finished"] == 32
    back = FTLEField.load(out)
    assert abs(res["ftle_max"] - np.nanmax(back.values)) < 1e-15 and png.stat().st_size > 1000
    code = main(["ftle", "double-gyre", "--plane", "z=0", "--span", "0,2,0,1", "--resolution", "0x4",
                 "--time", "5", "--json"])
    res = json.loads(capsys.readouterr().out)
    assert code == 2 and "--resolution" in res["error"]
    code = main(["ftle", "abc", "--plane", "0,0,0;1,0,0", "--time", "1", "--json"])
    res = json.loads(capsys.readouterr().out)
    assert code == 2 and "POINT;U;V" in res["error"]


def test_interrupted_field_keeps_finished_chunks(gyre, monkeypatch):
    import flowkit.chaos.ftle as ftle_mod

    real, calls = ftle_mod._run_chunk, []

    def interrupted_on_second_chunk(*args, **kwargs):
        calls.append(1)
        if len(calls) == 2:
            raise KeyboardInterrupt
        return real(*args, **kwargs)

    monkeypatch.setattr(ftle_mod, "_run_chunk", interrupted_on_second_chunk)
    with pytest.warns(flowkit.FlowkitNotice, match="interrupted: 12 grid points not computed"):
        field = ftle_field(gyre, GYRE_PLANE, (6, 4), 2.0, settings=RK4, chunk=12)
    flat = field.outcome.ravel()
    assert np.all(flat[:12] == 0) and np.all(flat[12:] == ftle_mod.NOT_RUN)
    assert np.all(np.isfinite(field.values.ravel()[:12])) and not field.complete


# -- the FTLE kernels (flowkit/kernels/ftle_dop*.py) against the generic batch driver ----------------
def _initial_states(points, planar):
    k = 2 if planar else 3
    Y = np.zeros((len(points), 3 + 3 * k))
    Y[:, :3] = points
    for c in range(k):
        Y[:, 3 + 4 * c] = 1.0
    return Y


@pytest.mark.parametrize("name,plane", [("double-gyre", GYRE_PLANE), ("stf", TILTED)])
def test_ftle_kernel_takes_the_steps_of_the_generic_driver(name, plane):
    # with the full error norm the FTLE kernel is the generic DOP853 driver (tested against scipy and the
    # order conditions in test_steppers.py) on the same state: the same accepted steps, the same end states
    # up to round-off (fused velocity_gradient, contracted multiply-adds)
    f = flowkit.flow(name)
    planar = f.kind == "planar"
    pts = plane.grid((7, 5))[2].reshape(-1, 3)
    a, b = _initial_states(pts, planar), _initial_states(pts, planar)
    n = len(pts)
    out_a = [np.zeros(n, np.int8), np.zeros(n), np.zeros(n, np.int64)]
    out_b = [np.zeros(n, np.int8), np.zeros(n), np.zeros(n, np.int64)]
    f.kernels.ftle_dop853_batch(a, 0.0, 6.0, f.params, 1e-9, 1e-11, np.inf, 10**6, f.domain == "ball", planar,
                                False, *out_a)
    f.kernels.batch_solve(b, 0.0, 6.0, f.params, 0, 1e-9, 1e-11, np.inf, 10**6, 1, f.domain == "ball", *out_b)
    np.testing.assert_array_equal(out_a[0], out_b[0])
    np.testing.assert_array_equal(out_a[2], out_b[2])
    np.testing.assert_allclose(a, b, rtol=1e-10, atol=1e-10 * np.abs(b).max())


def test_unrolled_planar_attempt_equals_the_loop_attempt():
    # ftle_dop_planar.py (generated, stages in locals) against the loop version in ftle_dop.py
    from flowkit.integrate.tableau import W_ROWS, W_YNEW

    f = flowkit.flow("double-gyre")
    k = f.kernels
    rng = np.random.default_rng(7)
    for nerr in (3, 9):
        for _ in range(5):
            y = np.zeros(9)
            y[[0, 1, 3, 4, 6, 7]] = rng.uniform(0.1, 1.9, 6)
            Wa, Wb = np.zeros((W_ROWS, 9)), np.zeros((W_ROWS, 9))
            k._ftle_rate(0.3, y, f.params, Wa, 0, True)
            Wb[0] = Wa[0]
            ea = k._ftle_try2(0.3, y, 0.2, f.params, 1e-8, 1e-10, Wa, nerr)
            eb = k.ftle_try2_unrolled(0.3, y, 0.2, f.params, 1e-8, 1e-10, Wb, nerr)
            assert abs(ea - eb) <= 1e-6 * abs(ea)   # an estimate from cancelling sums: round-off shows
            np.testing.assert_allclose(Wb[:13], Wa[:13], rtol=1e-13, atol=1e-15)
            np.testing.assert_allclose(Wb[W_YNEW], Wa[W_YNEW], rtol=1e-14, atol=1e-16)


def test_generated_planar_template_is_up_to_date():
    from flowkit.kernels import _ftle_unroll

    assert _ftle_unroll.TARGET.read_text() == _ftle_unroll.template_text(), \
        "run python -m flowkit.kernels._ftle_unroll and commit flowkit/kernels/ftle_dop_planar.py"


def test_position_only_error_norm_stays_close_to_the_full_norm(gyre):
    # Stated tolerance (rtol 1e-8, the double gyre over 1.5 periods): 2e-6 wherever the orbit moves. At the
    # corners (stagnation points) the position error vanishes, the step grows to max_step and J goes
    # uncontrolled: there the gap is large unless max_step bounds the step (documented in ftle_field).
    plane = GridPlane.coordinate("z", 0.0, (0.0, 2.0, 0.0, 1.0))
    loose = IntegratorSettings(rtol=1e-8, atol=1e-10)
    full = ftle_field(gyre, plane, (41, 21), 15.0, settings=loose)
    pos = ftle_field(gyre, plane, (41, 21), 15.0, settings=loose, error_norm="position")
    gap = np.abs(pos.values - full.values)
    assert gap[1:-1, 1:-1].max() < 2e-6
    assert gap[0, 0] > 1e-3                        # the corner: why the norm is not the default
    capped = IntegratorSettings(rtol=1e-8, atol=1e-10, max_step=1.0)
    gap = np.abs(ftle_field(gyre, plane, (41, 21), 15.0, settings=capped, error_norm="position").values
                 - ftle_field(gyre, plane, (41, 21), 15.0, settings=capped).values)
    assert gap.max() < 2e-6
    assert pos.provenance["method"]["error_norm"] == "position"
    # 3-D (12 components): stf through the ball, no stagnation point on the plane's interior grid
    f = flowkit.flow("stf", rotation=0.3)
    a = ftle_field(f, TILTED, (9, 9), 3.0, settings=loose)
    b = ftle_field(f, TILTED, (9, 9), 3.0, settings=loose, error_norm="position")
    assert np.nanmax(np.abs(a.values - b.values)) < 1e-5
    with pytest.raises(FlowkitError, match="error_norm"):
        ftle_field(gyre, GYRE_PLANE, (4, 4), 1.0, error_norm="jacobian")


def test_cli_error_norm_position_matches_the_api(capsys, tmp_path):
    out = tmp_path / "p.npz"
    code = main(["ftle", "double-gyre", "--plane", "z=0", "--span", "0.1,1.9,0.1,0.9", "--resolution", "8x4",
                 "--time", "5", "--error-norm", "position", "--out", str(out), "--json"])
    res = json.loads(capsys.readouterr().out)
    assert code == 0, res
    back = FTLEField.load(out)
    api = ftle_field(flowkit.flow("double-gyre"), GYRE_PLANE, (8, 4), 5.0, error_norm="position",
                     settings=IntegratorSettings(rtol=1e-9, atol=1e-11))
    np.testing.assert_array_equal(back.values, api.values)
    assert back.provenance["method"]["error_norm"] == "position"


@pytest.mark.filterwarnings("ignore::flowkit.errors.FlowkitNotice")
def test_family_without_fused_function_uses_the_fallback():
    # an untraceable Python function (finite-difference gradient, no generated velocity_gradient): the FTLE
    # kernel falls back to calling velocity and gradient. Hyperbolic strain u = (x, -y, 0): J = diag(e^T,
    # e^-T, 1), so the FTLE is exactly 1 (exact identity), to the finite-difference gradient's accuracy.
    def strain(x, y, z, t, p):
        if x > 1e300:                      # a branch on a coordinate: sympy cannot trace it
            return (0.0, 0.0, 0.0)
        return (x, -y, 0.0)

    f = flowkit.custom_flow(strain, name="strain_fd", kind="system")
    assert "differences" in f.family.gradient_method
    field = ftle_field(f, TILTED, (3, 3), 2.0, settings=TIGHT)
    np.testing.assert_allclose(field.values, 1.0, atol=1e-8)
