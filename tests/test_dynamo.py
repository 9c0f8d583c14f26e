"""Diffusive kinematic dynamo in the periodic box: operator, growth rates, curves, I/O, CLI.

Outside references: exact identities (free decay at -k^2/Rm; B = u for a Beltrami
flow with |k| = 1; decoupled k_z sectors of a z-independent flow), the exact small-Rm
limit of the Roberts-flow growth rate (second-order perturbation theory, derived
below in ``roberts_small_rm_rate``), the published
dynamo window of the ABC flow A = B = C = 1 (Vestnik Moskov. Univ. Ser. I Mat. Mekh.
1983, no. 3; Geophys. Astrophys. Fluid Dyn. 36, 1986, 53), and scipy.linalg.eig on
a Fourier-Galerkin matrix assembled here by hand from the flow formula.
"""

import json

import numpy as np
import pytest
import scipy.linalg

import flowkit
from flowkit.cli import main
from flowkit.dynamo import (GrowthResult, InductionOperator, KzScan, RmSweep, critical_rm, growth_rate, sweep_kz,
                            sweep_rm)
from flowkit.dynamo.fit import fit_growth
from flowkit.dynamo.induction import Stepper
from flowkit.errors import FlowkitError

RNG = np.random.default_rng(6)


@pytest.fixture(scope="module")
def rest():
    return flowkit.custom_flow(["0", "0", "0"], domain="periodic", name="rest")


# -- exact identities ------------------------------------------------------------------

def test_field_in_fluid_at_rest_decays_at_exactly_minus_k2_over_rm(rest):
    # exact: with u = 0, each Fourier mode obeys dB/dt = -k^2 B / Rm
    rm, t = 3.0, 2.5
    op = InductionOperator(rest, rm, 8)
    c = op.grid.random_field(RNG, slope=10.0)
    out = Stepper(op, 0.1).advance(c, 0.0, 25)
    np.testing.assert_allclose(out, c * np.exp(-op.grid.k2 * t / rm), rtol=1e-13, atol=1e-13 * np.abs(c).max())
    # the slowest mode has |k| = 1: both methods must report -1/Rm with no oscillation
    eig = growth_rate(rest, rm, 8, "eigen", check_resolution=None)
    assert eig.growth_rate == pytest.approx(-1 / rm, abs=1e-10) and eig.frequency < 1e-10
    march = growth_rate(rest, rm, 8, "march", check_resolution=None, t_min=40.0)
    assert march.growth_rate == pytest.approx(-1 / rm, abs=1e-5)  # fit window still holds e^(-t/Rm) of k^2 = 2


@pytest.mark.parametrize("params", [{}, {"A": 0.4, "B": 1.3, "C": -0.7}])
def test_beltrami_flow_with_unit_wavenumber_is_an_eigenmode_with_rate_minus_one_over_rm(params):
    # exact: curl u = u and |k| = 1 give curl(u x u) = 0 and lap u = -u, so L u = -u / Rm
    flow = flowkit.flow("abc", **params)
    op = InductionOperator(flow, 7.0, 16)
    u = op.grid.forward(op.velocity(0.0))
    np.testing.assert_allclose(op.apply(u), -u / 7.0, atol=1e-12 * np.abs(u).max())


def test_z_independent_flow_keeps_vertical_wavenumber_sectors_apart():
    # exact: u(x, y) couples B_k only to B_{k-q} with q_z = 0, so a k_z = 1 field stays k_z = 1
    op = InductionOperator(flowkit.flow("roberts"), 8.0, 16)
    c = op.grid.random_field(RNG, slope=8.0)
    c[:, op.grid.k[2] != 1] = 0.0
    out = Stepper(op, op.stable_dt()).advance(c, 0.0, 60)
    leak = np.sum(np.abs(out[:, op.grid.k[2] != 1]) ** 2) / np.sum(np.abs(out) ** 2)
    assert leak < 1e-26
    assert op.grid.divergence_norm(out) < 1e-14


# -- scipy reference: Fourier-Galerkin matrix built by hand ------------------------------

def galerkin_matrix(uhat: dict, modes: list, eta: float) -> np.ndarray:
    """Induction operator on the solenoidal subspace of ``modes`` (dense, transverse basis).

    dB_k/dt = i k x sum_q u_q x B_{k-q} - eta k^2 B_k, truncated to ``modes``.
    """
    index = {m: i for i, m in enumerate(modes)}
    n = len(modes)
    A = np.zeros((3 * n, 3 * n), dtype=complex)
    for i, k in enumerate(modes):
        kv = np.array(k, dtype=float)
        cross_k = np.array([[0, -kv[2], kv[1]], [kv[2], 0, -kv[0]], [-kv[1], kv[0], 0]])
        A[3 * i:3 * i + 3, 3 * i:3 * i + 3] -= eta * kv @ kv * np.eye(3)
        for q, uq in uhat.items():
            j = index.get(tuple(np.subtract(k, q)))
            if j is None:
                continue
            cross_u = np.array([[0, -uq[2], uq[1]], [uq[2], 0, -uq[0]], [-uq[1], uq[0], 0]])
            A[3 * i:3 * i + 3, 3 * j:3 * j + 3] += 1j * cross_k @ cross_u
    basis = scipy.linalg.block_diag(*[scipy.linalg.null_space(np.array([m], dtype=float)) for m in modes])
    return basis.T @ A @ basis


def abc_fourier(A=1.0, B=1.0, C=1.0) -> dict:
    # u = (A sin z + C cos y, B sin x + A cos z, C sin y + B cos x) written as sum of u_q e^{i q.x}
    s, c = 1 / 2j, 0.5
    return {
        (1, 0, 0): np.array([0, B * s, B * c]), (-1, 0, 0): np.array([0, -B * s, B * c]),
        (0, 1, 0): np.array([C * c, 0, C * s]), (0, -1, 0): np.array([C * c, 0, -C * s]),
        (0, 0, 1): np.array([A * s, A * c, 0]), (0, 0, -1): np.array([-A * s, A * c, 0]),
    }


def leading(matrix):
    w = scipy.linalg.eigvals(matrix)
    return w[np.argmax(w.real)]


def test_abc_eigenvalue_matches_scipy_on_hand_built_galerkin_matrix():
    rm, n = 6.0, 8
    kmax = (n - 1) // 3
    rng = range(-kmax, kmax + 1)
    modes = [(a, b, c) for a in rng for b in rng for c in rng if (a, b, c) != (0, 0, 0)]
    ref = leading(galerkin_matrix(abc_fourier(), modes, 1 / rm))
    res = growth_rate(flowkit.flow("abc"), rm, n, "eigen", check_resolution=None)
    assert res.growth_rate == pytest.approx(ref.real, abs=1e-9)
    assert res.frequency == pytest.approx(abs(ref.imag), abs=1e-9)


def test_roberts_eigenvalue_is_the_best_kz_sector_of_scipy_galerkin_eigenvalues():
    # No published growth rate for this flow at integer k_z in a 2*pi box is used here
    # (none we could cite reliably); the 3-D answer must equal the best k_z sector computed
    # by scipy from matrices built by hand (k_z sectors decouple exactly for u(x, y)).
    rm, n = 8.0, 12
    kmax = (n - 1) // 3
    uhat = {q: v for q, v in abc_fourier(A=0.0).items() if q[2] == 0}
    sectors = {}
    for kz in range(0, kmax + 1):
        modes = [(a, b, kz) for a in range(-kmax, kmax + 1) for b in range(-kmax, kmax + 1)
                 if (a, b, kz) != (0, 0, 0)]
        sectors[kz] = leading(galerkin_matrix(uhat, modes, 1 / rm))
    best = max(sectors.values(), key=lambda z: z.real)
    res = growth_rate(flowkit.flow("roberts"), rm, n, "eigen", check_resolution=None)
    assert res.growth_rate == pytest.approx(best.real, abs=1e-8)
    assert res.frequency == pytest.approx(abs(best.imag), abs=1e-8)
    assert sectors[1].real > 0 > sectors[0].real  # k_z = 1 grows, the 2-D sector cannot (anti-dynamo)
    # the single-kz solver (N^2 grid) reproduces each sector on its own
    for kz in (0, 1, 2):
        one = growth_rate(flowkit.flow("roberts"), rm, n, "eigen", kz=float(kz), check_resolution=None)
        assert one.growth_rate == pytest.approx(sectors[kz].real, abs=1e-8)
        assert one.frequency == pytest.approx(abs(sectors[kz].imag), abs=1e-8)


# -- one vertical wavenumber of a z-independent flow --------------------------------------

def roberts_small_rm_rate(rm: float, kz: float) -> float:
    """Growth rate of the field ``~ exp(i kz z)`` in the Roberts flow ``u = (cos y, sin x, sin y + cos x)``
    to second order in ``Rm`` (exact limit; derived here, no number taken from a paper).

    With ``eta = 1/Rm`` large, the unperturbed mode is the uniform-in-(x, y) field
    ``B0 = (b1, b2, 0) exp(i kz z)`` decaying at ``-eta kz^2``. The flow's Fourier modes all
    have horizontal ``|q| = 1``, so the field they induce decays at ``-eta (1 + kz^2)``: the
    energy gap is exactly ``eta`` and ``b = [(B0 . grad) u - (u . grad) B0] / eta``. Its mean
    electromotive force ``<u x b>`` uses ``<u x d_x u> = (-1, 0, 0)``, ``<u x d_y u> = (0, -1, 0)``
    and ``<u_z u> = (0, 0, 1)``, giving ``curl <u x b> = (Rm) [[-kz^2, i kz], [-i kz, -kz^2]] B0``
    with eigenvalues ``Rm (±kz - kz^2)`` (an alpha effect ``-Rm`` and an added diffusivity
    ``Rm``). Third order vanishes (three horizontal unit wavevectors cannot sum to zero), so
    the error is ``O(Rm^3)``.
    """
    return -kz**2 / rm + rm * (kz - kz**2)


@pytest.mark.parametrize("kz", [0.1, 1.0, 2.0])
def test_roberts_small_rm_growth_matches_second_order_perturbation_theory(kz):
    roberts = flowkit.flow("roberts")
    errors = []
    for rm in (0.2, 0.1):
        res = growth_rate(roberts, rm, 12, "eigen", kz=kz, check_resolution=None)
        assert res.frequency < 1e-9
        errors.append(res.growth_rate - roberts_small_rm_rate(rm, kz))
    # the remainder is O(Rm^3): small, and 8 times smaller when Rm halves
    assert abs(errors[0]) < 2 * 0.2**3
    assert 6.0 < errors[0] / errors[1] < 10.0


def test_roberts_flow_is_a_dynamo_at_small_rm_for_a_large_enough_scale():
    # Roberts-flow dynamo action at any Rm for long enough vertical scales (Phil. Trans. R. Soc.
    # A 271, 411, 1972; a qualitative result, no number from the paper is used); the limit
    # above puts the edge at kz = Rm^2 / (1 + Rm^2) = 0.138 for Rm = 0.4.
    scan = sweep_kz(flowkit.flow("roberts"), 0.4, [0.05, 0.1, 0.2], resolution=12, progress=False)
    assert scan.growth_rate[0] > 0 and scan.growth_rate[1] > 0 > scan.growth_rate[2]
    assert scan.fastest[0] == 0.05
    assert all(scan.converged) and np.all(scan.error_estimate < 1e-6)


def test_single_kz_mode_is_solenoidal_and_floquet_agrees_with_march():
    # time-periodic z-independent flow: Floquet multiplier and stroboscopic march on one kz
    f = flowkit.flow("circular")
    eig = growth_rate(f, 8.0, 12, "eigen", kz=0.57, check_resolution=None)
    march = growth_rate(f, 8.0, 12, "march", kz=0.57, check_resolution=None)
    assert march.growth_rate == pytest.approx(eig.growth_rate, abs=1e-6)
    assert march.frequency == pytest.approx(eig.frequency, abs=1e-5)
    assert eig.kz == 0.57 and eig.provenance["method_settings"]["kz"] == 0.57
    # the mode on the box is Re/Im of b(x, y) exp(i kz z): divergence-free (exact derivative in z)
    mode = eig.mode
    assert mode.shape == (2, 3, 12, 12, 12)
    k = np.fft.fftfreq(12, 1 / 12)
    whole = mode[0] + 1j * mode[1]
    b = whole[..., 0]  # z = 0 plane
    hat = np.fft.fft2(b, axes=(1, 2))
    div = 1j * (k[:, None] * hat[0] + k[None, :] * hat[1]) + 1j * 0.57 * hat[2]
    assert np.abs(div).max() < 1e-10 * np.abs(hat).max()
    np.testing.assert_allclose(whole[..., 5], b * np.exp(1j * 0.57 * 2 * np.pi * 5 / 12), atol=1e-12)


def test_time_periodic_box_mode_is_the_best_single_kz_floquet_mode():
    # exact: a z-independent flow couples no two k_z, so the box's Floquet exponent is the
    # largest of the single-kz ones at the box's integer k_z (here |k_z| <= 2 at N = 8)
    f = flowkit.flow("circular")
    box = growth_rate(f, 5.0, 8, "eigen", check_resolution=None, keep_mode=False)
    sectors = [growth_rate(f, 5.0, 8, "eigen", kz=kz, check_resolution=None, keep_mode=False)
               for kz in (0.0, 1.0, 2.0)]
    best = max(sectors, key=lambda r: r.growth_rate)
    assert box.growth_rate == pytest.approx(best.growth_rate, abs=1e-9)
    assert box.frequency == pytest.approx(best.frequency, abs=1e-9)


def test_kz_scan_saves_plots_and_bad_kz_is_refused(tmp_path):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.dynamo.plot import plot_growth_curve

    scan = sweep_kz(flowkit.flow("roberts"), 8.0, [0.5, 1.0], resolution=8, check_resolution=None,
                    progress=False, save_to=tmp_path / "scan")
    back = KzScan.load(tmp_path / "scan.npz")
    np.testing.assert_array_equal(back.kz, [0.5, 1.0])
    np.testing.assert_array_equal(back.growth_rate, scan.growth_rate)
    assert back.rm == 8.0 and "kz" in scan.to_xarray().coords
    fig, ax = plt.subplots()
    assert plot_growth_curve(ax, scan)["line"] is not None and ax.get_xlabel().startswith("vertical")
    plt.close(fig)
    with pytest.raises(FlowkitError, match="`kz` needs a flow independent of z.*'abc'"):
        growth_rate(flowkit.flow("abc"), 8.0, 8, kz=1.0)
    with pytest.raises(FlowkitError, match="`kz` must be a finite number >= 0"):
        growth_rate(flowkit.flow("roberts"), 8.0, 8, kz=-1.0)
    with pytest.raises(FlowkitError, match="`kz_list`"):
        sweep_kz(flowkit.flow("roberts"), 8.0, [], resolution=8)


# -- published values ------------------------------------------------------------------

@pytest.mark.parametrize("rm,sign", [(7.0, -1), (12.0, +1)])
def test_abc_111_dynamo_window(rm, sign):
    # Published (from memory): the ABC flow A = B = C = 1 in the 2*pi box is a dynamo for
    # 8.9 < Rm < 17.5 (Vestnik Moskov. Univ. 1983; Geophys. Astrophys. Fluid Dyn. 36, 1986,
    # 53-83). At Rm = 7 and 12, 16^3 agrees with 24^3 to 2e-5 (benchmarks/bench_dynamo.py);
    # the upper edge is not tested here: near Rm = 19 16^3 is not converged.
    res = growth_rate(flowkit.flow("abc"), rm, 16, "eigen", check_resolution=None)
    assert np.sign(res.growth_rate) == sign
    assert abs(res.growth_rate) > 1e-3  # clear of the resolution error


def test_abc_critical_rm_near_published_8_9():
    # Published (from memory) onset Rm ~ 8.9 (same sources as above); 16^3 is converged to
    # ~0.05 in Rm (benchmark), hence the tolerance.
    res = critical_rm(flowkit.flow("abc"), rm_list=[8.0, 10.0], resolution=16, xtol=5e-3,
                      check_resolution=None, progress=False)
    assert res.bracket == [8.0, 10.0]
    assert res.rm_critical == pytest.approx(8.9, abs=0.2)
    assert res.slope > 0 and res.uncertainty > 0
    assert abs(np.interp(res.rm_critical, *np.array(res.evaluations)[:, :2].T)) < 1e-3


# -- the two methods agree -------------------------------------------------------------

def test_eigen_and_march_agree_for_steady_abc():
    f = flowkit.flow("abc")
    # same truncation for both (12^3), so they must agree whether or not 12^3 is resolved
    eig = growth_rate(f, 12.0, 12, "eigen", check_resolution=None)
    march = growth_rate(f, 12.0, 12, "march", check_resolution=None)
    assert march.diagnostics["converged"] and march.diagnostics["window"][0] > 0
    assert march.growth_rate == pytest.approx(eig.growth_rate, abs=1e-4)
    assert march.frequency == pytest.approx(eig.frequency, abs=1e-3)
    assert eig.diagnostics["residual"] < 1e-8


def test_floquet_multiplier_and_stroboscopic_march_agree_for_time_periodic_flow():
    f = flowkit.flow("circular")
    eig = growth_rate(f, 5.0, 12, "eigen", check_resolution=None)
    march = growth_rate(f, 5.0, 12, "march", check_resolution=None)
    assert march.growth_rate == pytest.approx(eig.growth_rate, abs=1e-5)
    assert march.frequency == pytest.approx(eig.frequency, abs=1e-4)
    assert eig.frequency <= np.pi / f.period + 1e-12  # defined modulo 2 pi / period


def test_fit_recovers_oscillating_growth_under_a_decaying_transient():
    # synthetic signal: exact exponential-times-cosine plus a faster-decaying mode
    t = np.linspace(0, 60, 601)
    sig = np.exp(0.013 * t)[:, None] * np.cos(0.7 * t[:, None] + [0.0, 1.0, 2.0]) \
        + np.exp(-0.2 * t)[:, None] * [1.0, -2.0, 0.5]
    scale = 0.013 * t  # rows divided by exp(scale), as a renormalized run stores them
    fit = fit_growth(t, sig / np.exp(scale)[:, None], scale, (30.0, 60.0))
    assert fit["growth_rate"] == pytest.approx(0.013, abs=1e-4)
    assert fit["frequency"] == pytest.approx(0.7, abs=1e-4)


# -- bad input ---------------------------------------------------------------------------

def test_bad_input_gets_errors_naming_the_fix(rest):
    abc = flowkit.flow("abc")
    with pytest.raises(FlowkitError, match="`rm` must be a positive"):
        growth_rate(abc, 0.0, 16)
    # a ball flow goes to the sphere solver; the box operator itself refuses it (no shared code path)
    with pytest.raises(FlowkitError, match="periodic box.*domain 'ball'"):
        InductionOperator(flowkit.flow("stf"), 10.0, 16)
    with pytest.raises(FlowkitError, match="no vertical wavenumber"):
        growth_rate(flowkit.flow("stf"), 10.0, 16, kz=1.0)
    with pytest.raises(FlowkitError, match="`resolution` must be at least 8"):
        growth_rate(abc, 10.0, 4)
    fine = flowkit.custom_flow(["sin(5*z)", "sin(5*x)", "sin(5*y)"], domain="periodic", name="fine")
    with pytest.raises(FlowkitError, match="too small for flow 'fine'.*resolution >= 16"):
        growth_rate(fine, 10.0, 12)
    aperiodic = flowkit.custom_flow(["sin(z/2)", "0", "0"], domain="periodic", name="half")
    with pytest.raises(FlowkitError, match="2\\*pi-periodic"):
        growth_rate(aperiodic, 10.0, 16)
    with pytest.raises(FlowkitError, match="`method`"):
        growth_rate(abc, 10.0, 16, method="power")


# -- results, curves, plots, CLI --------------------------------------------------------------

@pytest.fixture(scope="module")
def abc_result():
    return growth_rate(flowkit.flow("abc"), 10.0, 12, "eigen", check_resolution=8)


def test_result_saves_and_reloads_without_pickle_and_as_netcdf(abc_result, tmp_path):
    res = abc_result
    assert res.mode.shape == (2, 3, 12, 12, 12) and res.check["resolution"] == 8
    assert res.error_estimate == pytest.approx(abs(res.growth_rate - res.check["growth_rate"]))
    back = GrowthResult.load(res.save(tmp_path / "mode"))
    np.testing.assert_array_equal(back.mode, res.mode)
    assert back.summary() == res.summary()
    assert back.provenance["flow"] == "abc" and back.provenance["method_settings"]["method"] == "eigen"
    import xarray as xr

    path = tmp_path / "mode.nc"
    res.to_xarray().to_netcdf(path, engine="scipy")  # netCDF3 through scipy: no extra dependency
    ds = xr.load_dataset(path, engine="scipy")
    np.testing.assert_array_equal(ds["B"].values, res.mode)
    assert json.loads(ds.attrs["metadata_json"])["growth_rate"] == res.growth_rate


def test_mode_is_a_real_solenoidal_field(abc_result):
    # spectral divergence of both parts of the saved mode is round-off
    k = np.fft.fftfreq(12, 1 / 12)
    for part in abc_result.mode:
        hat = np.fft.fftn(part, axes=(1, 2, 3))
        div = k[:, None, None] * hat[0] + k[None, :, None] * hat[1] + k[None, None, :] * hat[2]
        assert np.abs(div).max() < 1e-10 * np.abs(hat).max()


def test_sweep_keeps_order_and_round_trips(tmp_path):
    sweep = sweep_rm(flowkit.flow("abc"), [4.0, 2.0], resolution=8, check_resolution=None, progress=False,
                     save_to=tmp_path / "sweep")
    assert list(sweep.rm) == [4.0, 2.0]
    back = RmSweep.load(tmp_path / "sweep.npz")
    np.testing.assert_array_equal(back.growth_rate, sweep.growth_rate)
    assert sweep.growth_rate[1] < sweep.growth_rate[0] < 0  # both below onset; more diffusion decays faster
    assert set(sweep.to_xarray().data_vars) >= {"growth_rate", "frequency"}


def test_plot_slice_shows_field_magnitude_and_lines(abc_result):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.dynamo.plot import plot_growth_curve, plot_mode_slice

    fig, (a1, a2) = plt.subplots(1, 2)
    art = plot_mode_slice(a1, abc_result, axis="y", position=0.0)
    # reference built another way: |B| on the plane y = 0 straight from the array
    ref = np.linalg.norm(abc_result.mode[0][:, :, 0, :], axis=0).T
    np.testing.assert_allclose(np.asarray(art["image"].get_array()), ref)
    assert len(art["lines"].lines.get_segments()) > 0
    sweep = RmSweep(rm=np.array([5.0, 10.0]), growth_rate=np.array([-0.01, 0.01]), frequency=np.zeros(2),
                    error_estimate=np.array([1e-4, 1e-4]), converged=[True, True])
    assert plot_growth_curve(a2, sweep)["line"] is not None
    plt.close(fig)


def test_cli_json_has_the_promised_fields(capsys):
    code = main(["dynamo", "abc", "--rm", "6", "--resolution", "8", "--check-resolution", "none", "--json"])
    out = json.loads(capsys.readouterr().out)
    assert code == 0
    assert {"growth_rate", "frequency", "resolution", "converged", "seconds"} <= set(out)
    assert out["resolution"] == 8 and out["converged"] is None
    code = main(["dynamo", "abc", "--rm", "-2", "--json"])
    assert code == 2 and "`rm` must be a positive" in json.loads(capsys.readouterr().out)["error"]


def test_cli_sweep_and_critical_report_or_explain(capsys, tmp_path):
    code = main(["dynamo", "abc", "--rm-list", "2,4", "--resolution", "8", "--check-resolution", "none",
                 "--no-progress", "--save", str(tmp_path / "curve.npz"), "--json"])  # the CLI checks the suffix first
    out = json.loads(capsys.readouterr().out)
    assert code == 0 and list(out["rm"]) == [2.0, 4.0] and len(out["points"]) == 2
    assert RmSweep.load(out["saved"]).growth_rate.tolist() == out["growth_rate"]
    # both values decay (well below onset): no bracket, and the message says how to widen it
    code = main(["dynamo", "abc", "--critical", "--rm-list", "1,2", "--resolution", "8", "--no-progress", "--json"])
    assert code == 2 and "widen the list" in json.loads(capsys.readouterr().out)["error"]


def test_cli_kz_scan_reports_the_fastest_wavenumber(capsys):
    code = main(["dynamo", "roberts", "--rm", "0.4", "--kz-list", "0.05,0.2", "--resolution", "8",
                 "--check-resolution", "none", "--no-progress", "--json"])
    out = json.loads(capsys.readouterr().out)
    assert code == 0 and out["kz"] == [0.05, 0.2] and out["fastest"]["kz"] == 0.05
    assert out["growth_rate"][0] > 0 > out["growth_rate"][1]  # see the small-Rm limit above
    code = main(["dynamo", "roberts", "--kz-list", "0.1", "--json"])
    assert code == 2 and "add --rm" in json.loads(capsys.readouterr().out)["error"]
