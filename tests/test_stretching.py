"""Frozen-in field vectors: closed forms, scipy, the Lyapunov module, Hoelder/Jensen, faults, CLI."""

import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.linalg import expm
from scipy.special import logsumexp

import flowkit
import flowkit.fields.vectors as stretching
from flowkit.cli import main
from flowkit.errors import FlowkitError
from flowkit.integrate.batch import IntegratorSettings
from flowkit.fields import StretchResult, fit_slope, stretch

G_NAMES = [f"g{i}{j}" for i in range(1, 4) for j in range(1, 4)]
LINEAR = [" + ".join(f"g{i}{j}*{c}" for j, c in zip(range(1, 4), "xyz")) for i in range(1, 4)]


def linear_flow(domain="unbounded", **g):
    """u = G x (one compiled family for every constant velocity gradient G)."""
    f = flowkit.custom_flow(LINEAR, params={n: 0.0 for n in G_NAMES}, domain=domain, name="linear")
    return f.with_params(**g)


def gradient_matrix(g):
    return np.array([[g.get(f"g{i}{j}", 0.0) for j in range(1, 4)] for i in range(1, 4)])


@pytest.mark.parametrize("g", [
    {"g11": 0.5, "g22": -0.2, "g33": -0.3},     # uniform strain
    {"g12": 1.5},                                # simple shear
    {"g11": 0.3, "g22": -0.3, "g12": 0.8, "g21": -0.4},  # strain + rotation
])
def test_linear_flows_follow_the_matrix_exponential(g):
    # For u = G x the deformation gradient is expm(G t) exactly (scipy.linalg.expm as the reference):
    # ln|B(t)| = ln|expm(G t) B0| for every particle and checkpoint.
    flow = linear_flow(**g)
    G = gradient_matrix(g)
    res = stretch(flow, 40, 8.0, samples=16, keep_series=True, p=(0.5, 3.0),
                  settings=IntegratorSettings(rtol=1e-11, atol=1e-13))
    exact = np.array([[np.log(np.linalg.norm(expm(G * t) @ b)) for t in res.times] for b in res.initial_field])
    np.testing.assert_allclose(res.series, exact, atol=1e-8)
    # fitted rates are the same linear functionals of the exact series
    mask = (res.times >= 2.0) & (res.times <= 8.0)
    assert abs(res.lyapunov.value - np.mean(fit_slope(res.times[mask], exact[:, mask]))) < 1e-8
    for p in res.p:
        logm = logsumexp(p * exact, axis=0) - math.log(len(exact))
        assert abs(res.rate(p).value - fit_slope(res.times[mask], logm[mask])) < 1e-7


def test_field_vectors_agree_with_scipy_on_stf():
    f = flowkit.flow("stf", rotation=0.3)
    seeds = np.array([[0.1, 0.2, 0.3], [0.5, 0.1, -0.2], [-0.4, 0.3, 0.6]])
    B0 = np.array([[1.0, 0.0, 0.0], [0.0, 0.6, 0.8], [0.0, 0.0, 1.0]])
    res = stretch(f, seeds=seeds, time=5.0, field=B0, samples=5, settings=IntegratorSettings(rtol=1e-12, atol=1e-14))

    def rhs(t, s):
        return np.concatenate([f.velocity(s[None, :3])[0], f.gradient(s[None, :3])[0] @ s[3:]])

    for i in range(3):
        ref = solve_ivp(rhs, (0, 5), np.concatenate([seeds[i], B0[i]]), method="DOP853", rtol=1e-13, atol=1e-15)
        assert abs(res.final_log_field[i] - math.log(np.linalg.norm(ref.y[3:, -1]))) < 1e-8
        np.testing.assert_allclose(res.final_positions[i], ref.y[:3, -1], atol=1e-9)


@pytest.fixture(scope="module")
def lorenz_run():
    lor = flowkit.flow("lorenz")
    seeds = np.array([1.0, 1.0, 20.0]) + np.random.default_rng(1).normal(size=(48, 3))
    return lor, stretch(lor, seeds=seeds, time=40.0, transient=10.0, samples=80, seed=2)


def test_mean_log_stretching_matches_the_lyapunov_module_and_published_value(lorenz_run):
    from flowkit.chaos import lyapunov_spectrum

    lor, res = lorenz_run
    spec = lyapunov_spectrum(lor, [1.0, 1.0, 20.0], 400.0, transient=10.0)
    err = math.hypot(res.lyapunov.stderr, spec.stderr[0])
    assert abs(res.lyapunov.value - spec.exponents[0]) < 3 * err + 0.01
    # largest Lorenz exponent 0.9056 for sigma=10, rho=28, beta=8/3
    # (Chaos and Time-Series Analysis, Oxford University Press 2003; value quoted from memory)
    assert abs(res.lyapunov.value - 0.9056) < 3 * res.lyapunov.stderr + 0.01


def test_compressible_field_carries_the_density_factor(lorenz_run):
    # Lorenz has div u = -(sigma + 1 + beta) everywhere, so rho/rho0 = exp((sigma+1+beta) t) and the field
    # of dB/dt = (B.grad)u - B div u grows faster than the line element by exactly sigma + 1 + beta.
    _, res = lorenz_run
    c = 10 + 1 + 8 / 3
    assert abs(res.mean_divergence + c) < 1e-8
    assert abs(res.field_rate.value - res.lyapunov.value - c) < 1e-6
    line = stretch(flowkit.flow("lorenz"), seeds=res.seeds[:8], time=5.0, transient=10.0, quantity="line",
                   samples=10)
    assert abs(line.rate(1.0).value) < 5  # no density factor in the line-element moments


def test_moment_orders_obey_hoelder_and_jensen():
    res = stretch(flowkit.flow("stf", rotation=0.3), 300, 8.0, p=(-1.0, 0.05, 0.5, 3.0), samples=40)
    p = res.p
    lm = res.log_moments[1:]  # (K, P); at t = 0 all |B| = 1
    # exact for any ensemble: (1/p) ln<|B|^p> non-decreasing in p (power means), ln<|B|^p> convex in p
    assert np.all(np.diff(lm / p, axis=1) >= -1e-12)
    slopes = np.diff(lm, axis=1) / np.diff(p)
    assert np.all(np.diff(slopes, axis=1) >= -1e-10)
    # fitted rates inherit the ordering within their error bars
    L = np.array([res.rate(q).value for q in p])
    E = np.array([res.rate(q).stderr for q in p])
    assert np.all(np.diff(L / p) >= -3 * (E[1:] / np.abs(p[1:]) + E[:-1] / np.abs(p[:-1])))
    # L'(0) = mean log-stretching rate
    assert abs(res.rate(0.05).value / 0.05 - res.lyapunov.value) < 3 * (res.rate(0.05).stderr / 0.05
                                                                        + res.lyapunov.stderr) + 0.01


def test_mean_field_in_a_periodic_box_is_conserved_while_the_field_grows():
    # For a flow on the torus phi(X) - X is periodic, so the box average of J = grad phi is the identity:
    # <J B0> = B0 exactly (exact identity), while <|J B0|> grows: cancellation of the mean field.
    res = stretch(flowkit.flow("abc"), 2000, 4.0, field=[1.0, 0.0, 0.0], samples=8, seed=4)
    B = res.final_field
    mean, se = B.mean(axis=0), B.std(axis=0, ddof=1) / math.sqrt(len(B))
    assert np.all(np.abs(mean - [1.0, 0.0, 0.0]) < 4 * se)
    assert np.mean(np.linalg.norm(B, axis=1)) > 3.0


def test_bad_input_gets_clear_errors():
    f = flowkit.flow("stf", rotation=0.3)
    with pytest.raises(FlowkitError, match="`particles` must be at least 1"):
        stretch(f, 0, 5.0)
    with pytest.raises(FlowkitError, match="`time` must be a positive"):
        stretch(f, 10, -1.0)
    with pytest.raises(FlowkitError, match="`time` is required"):
        stretch(f, 10)
    with pytest.raises(FlowkitError, match="non-zero"):
        stretch(f, 10, 1.0, p=(0.0,))
    with pytest.raises(FlowkitError, match="outside the domain"):
        stretch(f, seeds=[[0.9, 0.9, 0.9]], time=1.0)
    with pytest.raises(FlowkitError, match="`window`"):
        stretch(f, 10, 1.0, window=(0.5, 3.0))
    with pytest.raises(FlowkitError, match="DOP853"):
        stretch(f, 10, 1.0, settings=IntegratorSettings(method="rk4", step=0.01))
    with pytest.raises(FlowkitError, match="must be a flowkit flow or map"):
        stretch(lambda x: x, 10, 1.0)


def test_particles_leaving_the_domain_are_outcomes_not_errors():
    f = linear_flow("ball", g11=1.0, g22=1.0, g33=-2.0)  # pushes everything but the z-axis out of r = 1
    seeds = np.array([[0.0, 0.0, 0.5], [0.0, 0.0, -0.3], [0.4, 0.0, 0.1], [0.0, 0.3, 0.0]])
    res = stretch(f, seeds=seeds, time=3.0, field=[0.0, 0.0, 1.0], samples=6)
    assert res.outcomes["left domain"] == 2 and res.n_used == 2
    assert np.isnan(res.particle_rates[2:]).all()
    assert any("did not finish" in n for n in res.notes)
    assert abs(res.lyapunov.value + 2.0) < 1e-6  # the survivors' field shrinks like exp(-2t) (closed form)


def test_interrupted_run_keeps_finished_chunks(monkeypatch):
    calls = {"n": 0}
    real = stretching.run_frames

    def flaky(*args, **kwargs):
        calls["n"] += 1
        if calls["n"] == 3:
            raise KeyboardInterrupt
        return real(*args, **kwargs)

    monkeypatch.setattr(stretching, "run_frames", flaky)
    res = stretch(flowkit.flow("cat-map"), 100, 10, chunk=20, field=[1.0, 0.0, 0.0])
    assert res.partial and res.n_run == 40 and res.n_used == 40
    assert np.all(res.outcome[40:] == -1) and any("interrupted" in n for n in res.notes)
    assert abs(res.lyapunov.value - math.log((3 + math.sqrt(5)) / 2)) < 1e-6
    calls["n"] = 2
    with pytest.raises(KeyboardInterrupt):  # nothing finished: nothing to keep
        stretch(flowkit.flow("cat-map"), 100, 10, chunk=20)


def test_results_save_and_reload_without_pickle(tmp_path):
    res = stretch(flowkit.flow("cat-map"), 50, 8, p=(0.5,), keep_series=True)
    back = StretchResult.load(res.save(tmp_path / "s.npz"))
    np.testing.assert_array_equal(back.log_moments, res.log_moments)
    np.testing.assert_array_equal(back.series, res.series)
    assert back.rate(0.5).value == res.rate(0.5).value and back.provenance["flow"] == "cat-map"
    ds = res.to_xarray()
    assert ds["log_moments"].shape == (len(res.times), 3)
    assert ds["log_moments"].dims == ("time", "p") and ds.attrs["flowkit_kind"] == "StretchResult"
    assert json.loads(json.dumps(res.summary()))["moment_rates"]["0.5"]["value"] == res.rate(0.5).value


def run_json(capsys, *argv):
    code = main(list(argv) + ["--json"])
    return code, json.loads(capsys.readouterr().out)


def test_cli_reports_all_rates_with_error_bars(capsys):
    code, res = run_json(capsys, "stretch", "cat-map", "--particles", "40", "--time", "12", "--p", "0.5",
                         "--line-points", "20000", "--flux-samples", "200")
    assert code == 0
    lam = math.log((3 + math.sqrt(5)) / 2)
    for key in ("lyapunov", "line_stretching", "flux_rate"):
        assert set(res[key]) >= {"value", "stderr"}
    assert set(res["moment_rates"]) == {"0.5", "1", "2"}
    assert abs(res["moment_rates"]["2"]["value"] - 2 * lam) < 0.01  # random directions: small transient
    assert abs(res["line_stretching"]["value"] - lam) < 1e-3
    assert abs(res["flux_rate"]["value"] - lam) < 1e-3
    assert res["units"] == "per iteration"
    code, res = run_json(capsys, "stretch", "stf", "--particles", "0")
    assert code == 2 and "--particles" in res["error"]
    code, res = run_json(capsys, "stretch", "stf", "--time", "-1")
    assert code == 2 and "--time" in res["error"]


def test_growth_plot_draws_curves_bands_and_fitted_slopes():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.plot import plot_growth

    res = stretch(flowkit.flow("sfs-map", shear=0.0), 400, 10, field=[1.0, 0.0, 0.0], p=(0.5,))
    fig, ax = plt.subplots()
    artists = plot_growth(ax, res, p=(1.0, 2.0))
    lines = [a for a in artists if isinstance(a, matplotlib.lines.Line2D)]
    curves = [ln for ln in lines if ln.get_linestyle() == "-"]
    fitted = [ln for ln in lines if ln.get_linestyle() == "--"]
    assert len(curves) == 3 and len(fitted) == 3  # <ln|B|>, p = 1, p = 2
    np.testing.assert_array_equal(curves[1].get_ydata(), res.log_moments[:, list(res.p).index(1.0)])
    for ln, rate in zip(fitted, (res.field_rate, res.rate(1.0), res.rate(2.0))):
        x, y = ln.get_data()
        assert abs((y[-1] - y[0]) / (x[-1] - x[0]) - rate.value) < 1e-12
    with pytest.raises(FlowkitError, match="no moment of order 7"):
        plot_growth(ax, res, p=7)
    plt.close(fig)


def test_log_sum_exp_matches_scipy_including_infinite_and_nan_rows():
    # Reference library: scipy.special.logsumexp.
    from flowkit.fields.rates import log_sum_exp

    rng = np.random.default_rng(3)
    a = rng.normal(scale=400.0, size=(7, 5, 3))   # exp overflows without the shift
    a[:, 0, 0] = -np.inf                          # an empty group
    a[2, 1, 1] = np.nan
    a[:, 2, 2] = 1e308
    ours = log_sum_exp(a, axis=0)
    ref = logsumexp(a, axis=0)
    assert np.array_equal(np.isnan(ours), np.isnan(ref))
    np.testing.assert_allclose(ours[~np.isnan(ref)], ref[~np.isnan(ref)], rtol=1e-14, atol=0)


def test_grouped_log_sum_exp_matches_scipy_group_by_group():
    # Reference library: scipy.special.logsumexp on each group's rows.
    from flowkit.fields.rates import group_log_sum_exp

    rng = np.random.default_rng(4)
    a = rng.normal(scale=300.0, size=(40, 6, 2))
    group = rng.integers(0, 7, size=40)
    group[group == 3] = 5                     # group 3 stays empty
    lse, count = group_log_sum_exp(a, group, 8)
    for g in range(8):
        assert count[g] == np.sum(group == g)
        if count[g] == 0:
            assert np.all(lse[g] == -np.inf)
        else:
            np.testing.assert_allclose(lse[g], logsumexp(a[group == g], axis=0), rtol=1e-14, atol=0)
