"""Lyapunov spectra and the per-orbit chaos indicator, against published values and exact identities."""

import json
import math

import numpy as np
import pytest

import flowkit
from flowkit.chaos import chaotic_fraction, default_threshold, orbit_ftle, orbit_indicator
from flowkit.cli import main
from flowkit.errors import FlowkitError, FlowkitNotice
from flowkit.integrate.batch import IntegratorSettings
from flowkit.chaos import Spectrum, lyapunov_spectrum


@pytest.fixture(scope="module")
def quad():
    # One family covers every synthetic check (a linear part A x plus a height-dependent
    # strain c (z x, -z y, 0)), so the kernels are compiled once for all of them.
    names = [f"a{i}{j}" for i in range(3) for j in range(3)] + ["c"]
    return flowkit.custom_flow(
        ["a00*x + a01*y + a02*z + c*z*x", "a10*x + a11*y + a12*z - c*z*y", "a20*x + a21*y + a22*z"],
        params={n: 0.0 for n in names}, name="linear-plus-strain", kind="system",
    )


def linear(quad, A):
    return quad.with_params(**{f"a{i}{j}": float(A[i][j]) for i in range(3) for j in range(3)})


@pytest.fixture(scope="module")
def lorenz_spectrum():
    return lyapunov_spectrum(flowkit.flow("lorenz"), [1.0, 1.0, 20.0], 2000.0, transient=100.0)


def test_lorenz_spectrum_matches_published_values(lorenz_spectrum):
    # sigma = 10, rho = 28, beta = 8/3: lambda = 0.9056, 0, -14.5723 (Chaos and Time-Series Analysis,
    # Oxford University Press, 2003, appendix A; values cited from memory).
    s = lorenz_spectrum
    assert s.converged, s.reason
    ref = np.array([0.9056, 0.0, -14.5723])
    assert np.all(s.stderr < 0.01)
    assert np.all(np.abs(s.exponents - ref) < 4 * s.stderr + 0.01), (s.exponents, s.stderr)


def test_lorenz_sum_equals_minus_sigma_plus_one_plus_beta(lorenz_spectrum):
    # the divergence of the Lorenz field is the constant -(sigma + 1 + beta): exact identity
    s = lorenz_spectrum
    assert abs(s.sum - (-(10 + 1 + 8 / 3))) < 1e-8
    assert abs(s.mean_divergence - (-(10 + 1 + 8 / 3))) < 1e-10


def test_lorenz_at_the_other_published_parameters():
    # sigma = 16, R = 45.92, b = 4: lambda_1 = 2.16 and lambda_3 = -32.4 bits per second, i.e.
    # 1.50 and -22.46 per unit time (Physica D 16, 1985, 285-317, table 1; cited from memory).
    f = flowkit.flow("lorenz", sigma=16.0, rho=45.92, beta=4.0)
    s = lyapunov_spectrum(f, [1.0, 1.0, 30.0], 1000.0)
    bits = s.exponents / math.log(2.0)
    assert abs(bits[0] - 2.16) < 0.05 and abs(s.exponents[1]) < 0.03 and abs(bits[2] - (-32.4)) < 0.1
    assert abs(s.sum + 21.0) < 1e-8  # -(sigma + 1 + b), exact


def test_rossler_spectrum_and_a_divergence_that_varies_along_the_orbit():
    # a = b = 0.2, c = 5.7: lambda = 0.0714, 0, -5.3943 (Chaos and Time-Series Analysis, Oxford
    # University Press, 2003, appendix A; cited from memory). div u = a + x - c varies along the
    # orbit, so the sum must match the separately integrated mean divergence, not a constant.
    s = lyapunov_spectrum(flowkit.flow("rossler"), [1.0, 1.0, 0.0], 3000.0, transient=200.0)
    ref = np.array([0.0714, 0.0, -5.3943])
    assert np.all(np.abs(s.exponents - ref) < 4 * s.stderr + 0.005), (s.exponents, s.stderr)
    assert abs(s.sum - s.mean_divergence) < 1e-5 and abs(s.mean_divergence - ref.sum()) < 0.02
    # lambda_1 is small and slow to settle: at T = 3000 its error is still above 1 %, and the verdict says so
    assert not s.converged and "exponent 1" in s.reason


def test_linear_flow_exponents_are_real_parts_of_the_eigenvalues(quad):
    # For dx/dt = A x every orbit has the exponents Re(eig(A)) (common practice, no source);
    # numpy's LAPACK eigenvalues are the reference. A is non-normal and compressible.
    A = np.array([[0.5, 1.5, 0.0], [0.0, -0.2, 0.4], [0.05, 0.0, -1.2]])  # real, well-separated eigenvalues
    ref = np.sort(np.linalg.eigvals(A).real)[::-1]
    s = lyapunov_spectrum(linear(quad, A), [0.3, -0.2, 0.5], 40.0, transient=40.0, intervals=200)
    np.testing.assert_allclose(s.exponents, ref, atol=1e-7)
    assert abs(s.mean_divergence - np.trace(A)) < 1e-9 and s.converged, s.reason


@pytest.mark.parametrize("name,params,point", [("abc", {}, [0.528, 5.232, 4.945]), ("stf", {"rotation": 0.3}, [0.1, 0.2, 0.3])])
def test_incompressible_flows_sum_to_zero_within_the_stated_error(name, params, point):
    # div u = 0 exactly for ABC (Beltrami) and the Stokes flow, so the exponents sum to zero
    s = lyapunov_spectrum(flowkit.flow(name, **params), point, 300.0)
    assert abs(s.mean_divergence) < 1e-12
    assert abs(s.sum) <= 3 * s.sum_stderr + 1e-8
    assert s.exponents[0] > 0.02  # these orbits are chaotic: the check is not on a trivial orbit
    # a steady flow has a zero exponent along the flow direction (Meccanica 15, 1980)
    assert abs(s.exponents[1]) < 4 * s.stderr[1] + 0.01


def test_integrable_flow_largest_exponent_decays_to_zero():
    # Hill's spherical vortex is integrable (stream function, Hydrodynamics 1932, section 165): tangent
    # vectors grow linearly, so the running estimate decays like log(t)/t instead of settling.
    s = lyapunov_spectrum(flowkit.flow("hill"), [0.3, 0.2, 0.3], 2000.0, transient=0.0)
    t = s.times
    early = s.running[np.searchsorted(t, 100.0), 0]
    late = s.running[-1, 0]
    assert late < 0.25 * early and late < 2 * math.log(t[-1]) / t[-1]


def test_failed_orbit_keeps_finished_work_and_is_not_converged(quad):
    # the linear flow x' = x leaves the unit ball; use it on a ball domain through a custom flow
    out = flowkit.custom_flow(["x", "y", "-2*z"], domain="ball", name="outward")
    s = lyapunov_spectrum(out, [0.01, 0.0, 0.0], 10.0, transient=0.0, blocks=4, intervals=40)
    assert not s.converged and "left domain" in s.reason and s.outcome == "left domain"
    assert len(s.running) > 0 and np.all(np.isfinite(s.running))


def test_spectrum_round_trips_through_npz_and_json(lorenz_spectrum, tmp_path):
    for suffix in (".npz", ".json"):
        path = lorenz_spectrum.save(tmp_path / f"spec{suffix}")
        back = Spectrum.load(path)
        np.testing.assert_array_equal(back.exponents, lorenz_spectrum.exponents)
        np.testing.assert_array_equal(back.running, lorenz_spectrum.running)
        assert back.provenance["flow"] == "lorenz" and back.converged == lorenz_spectrum.converged
    ds = lorenz_spectrum.to_xarray()
    assert ds["running"].dims == ("time", "exponent") and ds.sizes["exponent"] == 3


def test_bad_input_gets_clear_errors():
    f = flowkit.flow("stf")
    with pytest.raises(FlowkitError, match="`time` must be a positive"):
        lyapunov_spectrum(f, [0.1, 0.1, 0.1], 0.0)
    with pytest.raises(FlowkitError, match="`time` must be a positive"):
        lyapunov_spectrum(f, [0.1, 0.1, 0.1], -5.0)
    with pytest.raises(FlowkitError, match="outside the domain"):
        lyapunov_spectrum(f, [1.0, 1.0, 0.0], 10.0)
    with pytest.raises(FlowkitError, match="must be a flowkit Flow.*custom_flow"):
        lyapunov_spectrum(lambda x, y, z, t, p: (x, y, z), [0.1, 0.1, 0.1], 10.0)
    with pytest.raises(FlowkitError, match="uses adaptive DOP853"):
        lyapunov_spectrum(f, [0.1, 0.1, 0.1], 10.0, settings=IntegratorSettings(method="rk4", step=0.1))
    with pytest.raises(FlowkitError, match="`blocks` must be an integer >= 4"):
        lyapunov_spectrum(f, [0.1, 0.1, 0.1], 10.0, blocks=1)


def test_orbit_indicator_separates_regular_from_chaotic(quad):
    # linear hyperbolic flow: every orbit has finite-time exponent -> 0.5 (exact rate, common practice)
    hyper = linear(quad, np.diag([0.5, -0.5, 0.0]))
    seeds = np.array([[0.1, 0.2, 0.3], [-0.4, 0.1, 0.0]])
    vals = orbit_indicator(hyper, seeds, 200.0)
    np.testing.assert_allclose(vals, 0.5, atol=0.01)
    # integrable Hill vortex: every orbit below the stated threshold 2 log(T)/T
    hill = flowkit.flow("hill")
    res = orbit_ftle(hill, [[0.3, 0.2, 0.3], [0.5, -0.1, 0.2], [0.1, 0.1, -0.6]], 400.0)
    assert res.threshold == pytest.approx(2 * math.log(400.0) / 400.0)
    assert not res.chaotic.any() and np.all(res.values < res.half)


def test_chaotic_fraction_with_binomial_error(quad):
    # u = (z x, -z y, 0): the orbit at height z has largest exponent exactly z, so with
    # threshold 0.5 and z uniform in [0, 1] the chaotic fraction is 1/2 (exact identity);
    # finite time shifts the boundary by about log(T)/T.
    f = quad.with_params(c=1.0)
    res = chaotic_fraction(f, 400, 100.0, threshold=0.5, bounds=[(-1, 1), (-1, 1), (0, 1)], seed=1)
    assert res.stderr == pytest.approx(math.sqrt(res.fraction * (1 - res.fraction) / res.n_used))
    assert abs(res.fraction - 0.5) < 3 * res.stderr + 0.05
    z = res.orbits.seeds[:, 2]
    assert np.all(res.orbits.chaotic[z > 0.6]) and not np.any(res.orbits.chaotic[z < 0.4])


def test_integrable_stokes_flow_has_no_chaotic_fraction_and_rotation_makes_it_chaotic():
    # stf without rotation is integrable (J. Fluid Mech. 212, 1990): every orbit must fall below the
    # stated threshold; with rotation 0.3 the same test seeds are chaotic (checks the threshold is not vacuous)
    still = chaotic_fraction(flowkit.flow("stf", rotation=0.0), 40, 200.0, seed=2)
    assert still.n_chaotic == 0 and still.n_failed == 0 and still.stderr == 0.0
    stirred = chaotic_fraction(flowkit.flow("stf", rotation=0.3), 40, 200.0, seed=2)
    assert stirred.fraction > 0.9


def test_section_orbits_get_the_indicator_attached():
    # integrable stf (rotation 0) vs stirred (rotation 0.3) on the same seeds, through a real section
    from flowkit.chaos import attach_indicator
    from flowkit.sections import poincare_section

    seeds = [[0.1, 0.2, 0.3], [0.4, -0.1, 0.2]]
    for rotation, expect in ((0.0, 0), (0.3, 1)):
        f = flowkit.flow("stf", rotation=rotation)
        sec = attach_indicator(poincare_section(f, seeds, crossings=5), f, 200.0)
        assert sec.orbit_values["ftle"].shape == (2,) and np.all(sec.orbit_values["ftle_chaotic"] == expect)
        assert sec.provenance["indicator"]["threshold"] == pytest.approx(default_threshold(200.0))


def test_chaotic_fraction_needs_bounds_on_unbounded_domains(quad):
    with pytest.raises(FlowkitError, match="pass `bounds`"):
        chaotic_fraction(quad, 10, 10.0)
    with pytest.raises(FlowkitError, match="`time` must be a positive"):
        default_threshold(0.0)


def test_failed_orbits_give_nan_and_a_notice():
    out = flowkit.custom_flow(["x", "y", "-2*z"], domain="ball", name="outward")
    with pytest.warns(FlowkitNotice, match="1 of 2 orbits did not finish"):
        vals = orbit_indicator(out, [[0.5, 0.0, 0.0], [0.0, 0.0, 0.5]], 5.0)
    assert np.isnan(vals[0]) and np.isfinite(vals[1])


def test_cli_lyapunov_json(capsys):
    code = main(["lyapunov", "lorenz", "--point", "1,1,20", "--time", "200", "--json"])
    res = json.loads(capsys.readouterr().out)
    assert code == 0
    assert {"exponents", "stderr", "converged", "seconds"} <= set(res)
    assert res["exponents"][0] > res["exponents"][1] > res["exponents"][2]
    assert abs(sum(res["exponents"]) + 13.0 + 2.0 / 3.0) < 1e-8
    code = main(["lyapunov", "stf", "--point", "2,0,0", "--time", "10", "--json"])
    res = json.loads(capsys.readouterr().out)
    assert code == 2 and "outside the domain" in res["error"]


def test_interrupted_spectrum_keeps_the_finished_blocks(monkeypatch):
    import flowkit.chaos.spectrum as lyap

    real, calls = lyap.run_tangent, []

    def interrupted_on_fourth_piece(*args, **kwargs):  # transient, block 1, block 2, then Ctrl-C
        calls.append(1)
        if len(calls) == 4:
            raise KeyboardInterrupt
        return real(*args, **kwargs)

    monkeypatch.setattr(lyap, "run_tangent", interrupted_on_fourth_piece)
    s = lyap.lyapunov_spectrum(flowkit.flow("lorenz"), [1.0, 1.0, 20.0], 100.0, blocks=10)
    assert not s.converged and s.reason.startswith("interrupted") and len(s.running) == 200
    assert abs(s.sum + 13.0 + 2.0 / 3.0) < 1e-8 and s.exponents[0] > 0.5  # two finished blocks used
