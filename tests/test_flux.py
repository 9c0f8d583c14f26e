"""Net and unsigned flux through a fixed surface: closed forms, maps, exact identities, faults."""

import math

import numpy as np
import pytest

import flowkit
import flowkit.fields.flux as fluxmod
from flowkit.errors import FlowkitError
from flowkit.fields import FluxResult, disc, flux_growth, patch
from flowkit.integrate.batch import IntegratorSettings

G_NAMES = [f"g{i}{j}" for i in range(1, 4) for j in range(1, 4)]
LINEAR = [" + ".join(f"g{i}{j}*{c}" for j, c in zip(range(1, 4), "xyz")) for i in range(1, 4)]
TIGHT = IntegratorSettings(rtol=1e-11, atol=1e-13)


def linear_flow(domain="unbounded", **g):
    """u = G x (the same compiled family as in test_stretching)."""
    f = flowkit.custom_flow(LINEAR, params={n: 0.0 for n in G_NAMES}, domain=domain, name="linear")
    return f.with_params(**g)


def test_uniform_strain_flux_grows_exponentially_without_cancellation():
    # B = J B0 = e^{s t} x-hat for u = (s x, -s y, 0), B0 = x-hat: flux through any disc with normal
    # x-hat is e^{s t} pi R^2 (closed form); net and unsigned fluxes coincide.
    s, R = 0.7, 0.4
    res = flux_growth(linear_flow(g11=s, g22=-s), 4.0, disc((0.2, -0.1, 0.3), (1, 0, 0), R), samples=64,
                      checkpoints=8, settings=TIGHT)
    np.testing.assert_allclose(res.net, math.pi * R**2 * np.exp(s * res.times), rtol=1e-8)
    np.testing.assert_allclose(res.ratio, 1.0, atol=1e-12)
    assert abs(res.flux_rate.value - s) < 1e-8 and abs(res.unsigned_rate.value - s) < 1e-8


def test_simple_shear_flux_grows_linearly():
    # u = (g y, 0, 0), B0 = y-hat: B = (g t, 1, 0), so the flux through a disc with normal x-hat is
    # g t pi R^2 (closed form), although no flux crossed it at t = 0.
    g, R = 1.5, 0.5
    res = flux_growth(linear_flow(g12=g), 3.0, disc((0, 0, 0), (1, 0, 0), R), field=[0.0, 1.0, 0.0], samples=32,
                      checkpoints=6, settings=TIGHT)
    np.testing.assert_allclose(res.net[1:], g * res.times[1:] * math.pi * R**2, rtol=1e-8)


def test_cat_map_flux_is_fibonacci():
    # B_n = A^n x-hat with A = [[2,1],[1,1]]: flux through the full cross-section x = c is
    # (A^n)_11 = F(2n+1) (Fibonacci identity for the powers of A, common practice, no source)
    res = flux_growth(flowkit.flow("cat-map"), 15, samples=50, window=(6, 15))
    fib = [0, 1]
    while len(fib) < 40:
        fib.append(fib[-1] + fib[-2])
    np.testing.assert_allclose(res.net, [fib[2 * n + 1] for n in res.times.astype(int)], rtol=1e-9)
    assert abs(res.flux_rate.value - math.log((3 + math.sqrt(5)) / 2)) < 1e-6


def test_sfs_map_flux_doubles_when_stacked_and_cancels_when_folded():
    # Through the full cross-section x = c: stacking adds the two strips' fluxes (2^n); folding reverses
    # the second strip's field, so the net flux is exactly 0 after one iteration (derived by hand from the
    # map; the unsigned flux still doubles). Monte Carlo: compare within the reported standard errors.
    stacked = flux_growth(flowkit.flow("sfs-map", fold=0.0), 8, samples=3000)
    assert np.all(np.abs(stacked.net - 2.0 ** stacked.times) <= 4 * stacked.net_stderr + 1e-12)
    assert abs(stacked.flux_rate.value - math.log(2)) < 4 * stacked.flux_rate.stderr + 1e-3
    folded = flux_growth(flowkit.flow("sfs-map"), 8, samples=3000)
    assert np.all(np.abs(folded.net[1:]) <= 4 * folded.net_stderr[1:])
    assert abs(folded.unsigned_rate.value - math.log(2)) < 4 * folded.unsigned_rate.stderr + 1e-3
    assert math.isnan(folded.flux_rate.value) and any("cancellation" in n for n in folded.notes)


def test_flux_through_a_full_cross_section_of_a_periodic_box_is_conserved():
    # d<B>/dt = <curl(u x B)> = 0 for periodic fields, so the flux of B through a whole cross-section of
    # the 2 pi box never changes (exact identity), while the unsigned flux grows by stretching.
    L = 2 * math.pi
    res = flux_growth(flowkit.flow("abc"), 5.0, patch((1.0, 0, 0), (0, L, 0), (0, 0, L)), samples=3000,
                      checkpoints=5)
    assert np.all(np.abs(res.net - L**2) <= 4 * res.net_stderr + 1e-9)
    assert res.log_unsigned[-1] > res.log_unsigned[0] + 1.0


def test_single_backward_sweep_equals_one_integration_per_checkpoint(monkeypatch):
    # For a steady flow phi_{t->0} = phi_{0->-t}: the one-sweep shortcut must reproduce separate backward
    # integrations from each checkpoint (exact identity of time-shift invariance).
    f = flowkit.flow("stf", rotation=0.3)
    one = flux_growth(f, 2.0, samples=40, checkpoints=4, settings=TIGHT)
    monkeypatch.setattr(fluxmod, "_time_shift_invariant", lambda system, marks: False)
    many = flux_growth(f, 2.0, samples=40, checkpoints=4, settings=TIGHT)
    np.testing.assert_allclose(many.log_unsigned, one.log_unsigned, atol=1e-7)
    np.testing.assert_allclose(many.ratio, one.ratio, atol=1e-7)


def test_bad_input_and_saving(tmp_path):
    f = flowkit.flow("stf", rotation=0.3)
    with pytest.raises(FlowkitError, match="inside the domain"):
        flux_growth(f, 1.0, disc((0, 0, 0), (0, 0, 1), 1.5))
    with pytest.raises(FlowkitError, match="`time` must be a positive"):
        flux_growth(f, -2.0)
    with pytest.raises(FlowkitError, match="not parallel"):
        patch((0, 0, 0), (1, 0, 0), (2, 0, 0))
    from flowkit.flows import custom_map

    with pytest.raises(FlowkitError, match="has no inverse"):
        flux_growth(custom_map(["2*x", "y/2", "z"], periods=(1, 1, 1)), 3)
    res = flux_growth(flowkit.flow("cat-map"), 5, samples=20)
    back = FluxResult.load(res.save(tmp_path / "flux.npz"))
    np.testing.assert_array_equal(back.ratio, res.ratio)
    assert back.flux_rate.value == res.flux_rate.value and back.surface == res.surface


def test_interrupted_flux_run_keeps_finished_checkpoints(monkeypatch):
    calls = {"n": 0}
    real = fluxmod.run_frames

    def flaky(*args, **kwargs):
        calls["n"] += 1
        if calls["n"] == 7:
            raise KeyboardInterrupt
        return real(*args, **kwargs)

    monkeypatch.setattr(fluxmod, "run_frames", flaky)
    res = flux_growth(flowkit.flow("cat-map"), 12, samples=30)
    assert res.partial and len(res.times) == 7 and any("interrupted" in n for n in res.notes)
    assert abs(res.net[-1] - 233.0) < 1e-9  # F(13): the checkpoints kept are exact
