"""Kinematic dynamo in the unit ball with an insulating exterior (flowkit.dynamo.sphere).

Each check names its outside reference.
"""

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import spherical_jn

import flowkit
from flowkit.dynamo import GrowthResult, critical_rm, growth_rate, sweep_rm
from flowkit.dynamo.sphere.basis import RadialBasis
from flowkit.dynamo.sphere.flows import benchmark_flow
from flowkit.dynamo.sphere.harmonics import normalized_legendre
from flowkit.dynamo.sphere.operator import BallOperator
from flowkit.dynamo.sphere.sparse import sparse_shift_invert
from flowkit.errors import FlowkitError


@pytest.fixture(autouse=True, scope="module")
def one_blas_thread():
    # the reference eigvals calls too: OpenBLAS's second thread spins on the shared 2-core machine
    # (a 264 x 264 eigvals took 3 s with two threads at load 3.7; benchmarks/bench_dynamo_sphere.py)
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        yield


def first_zero(l: int) -> float:
    """First positive zero of the spherical Bessel function j_l (scipy), bracketed on a fine scan."""
    x = np.linspace(0.5, 12, 2000)
    v = spherical_jn(l, x)
    i = int(np.flatnonzero(np.sign(v[:-1]) != np.sign(v[1:]))[0])
    return brentq(lambda s: spherical_jn(l, s), x[i], x[i + 1], xtol=1e-14)


@pytest.fixture(scope="module")
def still():
    return flowkit.custom_flow(["0", "0", "0"], domain="ball", name="still")


@pytest.fixture(scope="module")
def spin_z():
    return flowkit.custom_flow(["-y", "x", "0"], domain="ball", name="spin_z")


def test_normalized_legendre_matches_scipy():
    # scipy.special.lpmv (with the Condon-Shortley phase removed) times the orthonormal factor
    from math import factorial, pi, sqrt

    from scipy.special import lpmv

    x = np.linspace(-0.9, 0.9, 7)
    p = normalized_legendre(6, x)
    for m, l in [(0, 0), (0, 3), (2, 4), (5, 6)]:
        ref = (-1) ** m * lpmv(m, l, x) * sqrt((2 * l + 1) / (4 * pi) * factorial(l - m) / factorial(l + m))
        np.testing.assert_allclose(p[m, l], ref, rtol=1e-12, atol=1e-14)


def test_free_decay_rates_are_bessel_zeros_squared():
    # exact identity: poloidal degree l decays at z^2 with j_{l-1}(z) = 0, toroidal at j_l(z) = 0
    # (pi^2, 20.1907, 33.2175 for the dipole, toroidal l=1 / poloidal l=2, toroidal l=2)
    b = RadialBasis(18, 3)
    for l in (1, 2, 3):
        assert -b.decay_rates(l, "S")[0].real == pytest.approx(first_zero(l - 1) ** 2, abs=1e-8)
        assert -b.decay_rates(l, "T")[0].real == pytest.approx(first_zero(l) ** 2, abs=1e-8)
    assert first_zero(0) ** 2 == pytest.approx(np.pi**2, abs=1e-12)


def test_free_decay_through_the_whole_solver(still):
    # u = 0: the leading mode is the poloidal dipole, rate -pi^2 (exact identity)
    res = growth_rate(still, 1.0, (4, 12), check_resolution=(3, 10))
    assert res.domain == "ball" and res.growth_rate == pytest.approx(-np.pi**2, abs=1e-8)
    assert res.converged and res.diagnostics["m"] in (0, 1)


def test_rigid_rotation_carries_the_free_decay_spectrum_round(spin_z):
    # exact identity: for u = Omega z x x the field turns rigidly: lambda = -z^2 - i m Omega Rm
    rm = 3.0
    zs, zt = first_zero(0) ** 2, first_zero(1) ** 2
    for m in (0, 1, 2):
        vals = np.linalg.eigvals(BallOperator(spin_z, rm, 5, 12, m=m).matrix())
        expected_rate = zs if m <= 1 else first_zero(1) ** 2
        lead = vals[np.argmax(vals.real)]
        assert lead.real == pytest.approx(-expected_rate, abs=1e-8)
        assert lead.imag == pytest.approx(-m * rm, abs=1e-8)
        assert np.min(np.abs(vals - (-zt - 1j * m * rm))) < 1e-8 if m >= 1 else True


def test_rotation_about_another_axis_gives_the_same_spectrum():
    # rotation invariance: u = Omega x-hat x x couples all m; its leading eigenvalues are -pi^2 with
    # frequencies 0, +-Omega Rm (the dipole triplet), as for the rotation about z
    spin_x = flowkit.custom_flow(["0", "-z", "y"], domain="ball", name="spin_x")
    rm = 2.0
    out = sparse_shift_invert(BallOperator(spin_x, rm, 3, 8), nev=6, shift=0.0)
    vals = np.array([complex(*v) for v in out["eigenvalues"]])
    for freq in (0.0, rm, -rm):
        assert np.min(np.abs(vals - complex(-np.pi**2, freq))) < 1e-7


def test_bad_input_is_refused_with_the_fix(still):
    through = flowkit.custom_flow(["1", "0", "0"], domain="ball", name="through")
    with pytest.raises(FlowkitError, match="u.n = 0"):
        growth_rate(through, 10.0, (6, 8))
    for rm in (-1.0, 0.0):
        with pytest.raises(FlowkitError, match="`rm` must be a positive"):
            growth_rate(still, rm, (6, 8))
    with pytest.raises(FlowkitError, match="too small for flow 'stf'"):
        growth_rate(flowkit.flow("stf"), 1.0, (2, 8))
    free = flowkit.custom_flow(["-y", "x", "0"], domain="unbounded", name="free")
    with pytest.raises(FlowkitError, match="domain='ball'"):
        growth_rate(free, 1.0, (6, 8))
    with pytest.raises(FlowkitError, match=r"\(L, N\)"):
        growth_rate(still, 1.0, "big")
    # tangential (u.n = 0) but not band-limited in angle: the transform grid cannot be sized
    wild = flowkit.custom_flow(["-y*abs(z)", "x*abs(z)", "0"], domain="ball", name="wild")
    with pytest.raises(FlowkitError, match="not band-limited"):
        growth_rate(wild, 1.0, (6, 8))
    with pytest.raises(FlowkitError, match="max_resolution"):
        growth_rate(still, 1.0, "auto", max_resolution=(8, 8))


def test_benchmark_presets_need_no_dynamo_import():
    # t1s1/t2s2 are registered with the other flows: a fresh interpreter builds them without flowkit.dynamo
    import subprocess
    import sys

    code = ("import sys, flowkit; f = flowkit.flow('t2s2'); g = flowkit.flow('t1s1', epsilon=0.2); "
            "assert f.domain == 'ball' and g.params[0] == 0.2; assert 'flowkit.dynamo' not in sys.modules")
    subprocess.run([sys.executable, "-c", code], check=True, timeout=120)


def test_real_form_and_families_keep_the_spectrum():
    # the real cosine/sine form and the split into decoupled families change coordinates only: their
    # eigenvalues are LAPACK's eigenvalues of the complex operator (scipy.linalg.eigvals); stf has the
    # half-turn symmetry about y (u(-x, y, -z) = (-u_x, u_y, -u_z), exact), so it splits in two
    from scipy.linalg import eigvals

    from flowkit.dynamo.sphere.parts import operator_parts, real_blocks

    op = BallOperator(flowkit.flow("stf", rotation=0.3), 40.0, 4, 6)
    parts = operator_parts(op)
    blocks, _ = real_blocks(op, parts)
    assert len(blocks) == 2 and sum(b.shape[0] for _, b in blocks) == op.dof
    ours = np.concatenate([eigvals(b.toarray()) for _, b in blocks])
    ref = eigvals(op.matrix())
    gap = np.abs(ours[:, None] - ref[None, :])
    assert max(gap.min(axis=0).max(), gap.min(axis=1).max()) < 1e-8 * np.abs(ref).max()
    # linearity in Rm (exact): D + Rm K from the parts is the operator rebuilt at another Rm
    other = BallOperator(op.flow, 70.0, 4, 6)
    np.testing.assert_allclose((parts["D"] + 70.0 * parts["K"]).toarray(), other.matrix(), atol=1e-9 * 70)


def test_auto_resolution_climbs_until_two_agree(t2s2):
    # converged: the reported rate and its check agree within the tolerance, and the finer one agrees
    # with an independent solve two steps up (Proc. R. Soc. Lond. A 425, 1989: onset near Rm = 54)
    res = growth_rate(t2s2, 54.0, "auto", m=1, tolerance=0.05)
    assert res.converged and res.resolution == [16, 16] and res.check["resolution"] == [12, 12]
    assert abs(res.growth_rate - res.check["growth_rate"]) <= 0.05
    finer = growth_rate(t2s2, 54.0, (24, 24), m=1, check_resolution=None)
    assert abs(finer.growth_rate - res.growth_rate) <= 0.05
    # not reached under the cap: converged=False with the reason and the next step
    capped = growth_rate(t2s2, 54.0, "auto", m=1, tolerance=1e-6, max_resolution=(12, 12))
    assert capped.converged is False and capped.resolution == [12, 12]
    assert capped.reason.startswith("not converged") and "(12, 12)" in capped.reason


@pytest.fixture(scope="module")
def t2s2():
    return benchmark_flow("t2s2")


def test_t2s2_onset_near_published_rm(t2s2):
    # Proc. R. Soc. Lond. A 425 (1989) 407-429 (cited from memory): t2s2 (eps = 0.14) has its
    # onset near Rm = 54 with a steady m = 1 mode. At (12, 12) the rate differs from the converged
    # one by about 0.03 (README table), far less than |sigma| at Rm = 45 and 65.
    lo = growth_rate(t2s2, 45.0, (12, 12), check_resolution=None)
    hi = growth_rate(t2s2, 65.0, (12, 12), check_resolution=None)
    assert lo.growth_rate < -1.0 and hi.growth_rate > 1.0
    assert hi.diagnostics["m"] == 1 and hi.frequency < 1e-6


def test_t1s1_onset_is_an_oscillating_m1_mode_near_published_rm():
    # same source (cited from memory): t1s1 (eps = 0.17) onset near Rm = 155, oscillating, m = 1
    f = benchmark_flow("t1s1")
    lo = growth_rate(f, 140.0, (12, 12), m=1, check_resolution=None)
    hi = growth_rate(f, 170.0, (12, 12), m=1, check_resolution=None)
    assert lo.growth_rate < 0 < hi.growth_rate and hi.frequency > 10.0


def test_eigen_propagator_and_march_agree(t2s2):
    # three independent solvers of the same discrete problem (ARPACK/LAPACK on the operator,
    # ARPACK on the time-stepped propagator, time stepping + oscillation fit)
    rates = [growth_rate(t2s2, 54.0, (8, 8), method=meth, m=1, check_resolution=None, **kw).growth_rate
             for meth, kw in (("eigen", {}), ("propagator", {"cfl": 0.5}), ("march", {"cfl": 0.5}))]
    assert rates[1] == pytest.approx(rates[0], abs=2e-5)
    assert rates[2] == pytest.approx(rates[0], abs=2e-4)


def test_ball_result_round_trips_and_plots(t2s2, tmp_path):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.dynamo.plot import plot_mode_slice

    res = growth_rate(t2s2, 60.0, (8, 8), m=1, check_resolution=(6, 6))
    assert res.check["resolution"] == [6, 6] and res.reason
    back = GrowthResult.load(res.save(tmp_path / "ball"))
    np.testing.assert_array_equal(back.mode, res.mode)
    assert back.orders == res.orders and back.domain == "ball"
    again = flowkit.load(res.save(tmp_path / "ball.json"))
    assert again.growth_rate == res.growth_rate
    fig, axes = plt.subplots(1, 2)
    for ax, plane in zip(axes, ("meridional", "equatorial")):
        art = plot_mode_slice(ax, res, plane=plane, resolution=24)
        assert np.isfinite(art["image"].get_array()).any()
    plt.close(fig)


def test_sweep_and_critical_rm_for_a_ball_flow(t2s2):
    sweep = sweep_rm(t2s2, [45.0, 65.0], resolution=(8, 8), check_resolution=None, progress=False, m=1)
    assert sweep.growth_rate[0] < 0 < sweep.growth_rate[1]
    crit = critical_rm(t2s2, [45.0, 65.0], resolution=(8, 8), progress=False, xtol=1e-2, m=1,
                       check_resolution=(6, 6))
    assert 45.0 < crit.rm_critical < 65.0 and crit.uncertainty > 0


def test_dynamo_explorer_shows_a_ball_mode_in_the_meridional_disk(t2s2):
    # the explorer's full result is the API's number at (L, N) = (N, N); the image is the y = 0 disk
    from flowkit.lab import DynamoExplorer

    ex = DynamoExplorer(t2s2, rm=60.0, resolution=8, preview_resolution=8)
    ex.update()
    assert ex.flush() or ex.showing == "full"
    api = growth_rate(t2s2, 60.0, (8, 8), check_resolution=None)
    assert ex.result.domain == "ball" and ex.result.growth_rate == pytest.approx(api.growth_rate, rel=1e-10)
    assert tuple(ex.image.get_extent()) == (-1, 1, -1, 1) and ex.image.get_array().max() > 0
    ex.close()


def test_warm_start_finds_the_leading_eigenvalue_at_the_next_rm(t2s2, monkeypatch):
    # a warm solve (shift-invert around the last leading eigenvalue, started from its eigenvector)
    # gives LAPACK's leading eigenvalue of the operator at the new Rm (scipy.linalg.eigvals)
    from scipy.linalg import eigvals

    from flowkit.dynamo.sphere import eigen
    from flowkit.dynamo.sphere.parts import operator_parts
    from flowkit.dynamo.sphere.warm import WarmStart

    def leading(rm):
        parts = operator_parts(BallOperator(t2s2, rm, 12, 12, m=1))
        return eigvals(parts["D"].toarray() + rm * parts["K"]).real.max()

    warm = WarmStart()
    kw = dict(m=1, check_resolution=None, warm_start=warm, keep_mode=False)
    growth_rate(t2s2, 54.0, (12, 12), **kw)
    res = growth_rate(t2s2, 56.0, (12, 12), **kw)
    assert warm.warm_solves == 1 and warm.fallbacks == 0
    assert res.growth_rate == pytest.approx(leading(56.0), abs=1e-8)
    # a warm solve that fails (ARPACK reports no convergence) falls back to the ordinary path
    monkeypatch.setattr(eigen, "arpack_near", lambda *a, **k: (np.array([complex("nan")]), None, False, "failed"))
    again = growth_rate(t2s2, 57.0, (12, 12), **kw)
    assert warm.fallbacks == 1 and again.growth_rate == pytest.approx(leading(57.0), abs=1e-8)
    # far in Rm the last pair is not used: the ordinary path again
    growth_rate(t2s2, 80.0, (12, 12), **kw)
    assert warm.warm_solves == 2


def test_blas_threads_are_limited_only_inside_the_eigen_work():
    # threadpoolctl's own report of the BLAS libraries numpy and scipy loaded: one thread inside the
    # block, the count before it afterwards; a block on a worker thread (lab explorers) changes nothing,
    # also while it overlaps one on the main thread
    from threadpoolctl import threadpool_info, threadpool_limits

    from flowkit.dynamo.sphere.threads import eigen_threads

    def counts():
        return [i["num_threads"] for i in threadpool_info() if i["user_api"] == "blas"]

    with threadpool_limits(limits=2, user_api="blas"):  # this module's tests run with one thread
        check_blas_limit(counts, eigen_threads)


def check_blas_limit(counts, eigen_threads):
    import threading

    before = counts()
    assert set(before) == {2}
    with eigen_threads():
        with eigen_threads():
            inside = counts()
        still = counts()
    assert set(inside) == {1} and set(still) == {1} and counts() == before
    seen, entered, leave = [], threading.Event(), threading.Event()

    def other():
        with eigen_threads():
            seen.append(counts())
            entered.set()
            leave.wait(10)

    worker = threading.Thread(target=other)
    worker.start()
    entered.wait(10)
    assert seen == [before]
    with eigen_threads():
        assert set(counts()) == {1}
        leave.set()
        worker.join(10)
    assert counts() == before
