"""Parameter sweeps: identical across backends, resumable after a real kill, safe stores."""

import json
import os
import signal
import subprocess
import sys
import time

import numpy as np
import pytest

import flowkit
from flowkit.errors import FlowkitError
from flowkit.sweep import SweepSpec, open_results, run_sweep
from flowkit.sweep.measures import mean_ftle

SMALL = {"mean_ftle": {"particles": 8, "time": 3.0}}


def small_spec(**kw):
    args = dict(flow={"preset": "stf"}, axes={"rotation": [0.0, 0.4, 0.8]}, measures=["mean_ftle"], options=SMALL)
    args.update(kw)
    return SweepSpec(**args)


def values(out):
    return [(r["params"], r["measures"]["mean_ftle"]["value"], r["measures"]["mean_ftle"]["stderr"])
            for r in out["points"]]


def test_mean_ftle_of_uniform_strain_is_the_strain_rate():
    # u = (a x, -a y, 0): deformation gradient diag(e^{at}, e^{-at}, 1), so FTLE = a exactly
    f = flowkit.custom_flow(["a*x", "-a*y", "0"], params={"a": 0.7})
    out = mean_ftle(f, seed=1, particles=6, time=4.0)
    assert abs(out["value"] - 0.7) < 1e-8 and out["stderr"] < 1e-8


def test_in_process_and_dask_local_cluster_give_identical_numbers(tmp_path):
    spec = small_spec()
    a = run_sweep(spec, tmp_path / "a", progress=False)
    b = run_sweep(spec, tmp_path / "b", local_cluster=2, progress=False)
    assert b["backend"] == "dask" and b["dashboard"]
    assert values(a) == values(b)
    ds = open_results(tmp_path / "b")
    np.testing.assert_array_equal(ds["mean_ftle"].values, [v for _, v, _ in values(a)])


def test_rerun_resumes_without_recomputing(tmp_path):
    spec = small_spec()
    first = run_sweep(spec, tmp_path / "s", progress=False)
    again = run_sweep(spec, tmp_path / "s", progress=False)
    assert again["computed"] == [] and again["reused"] == 3
    assert values(first) == values(again)


def test_killed_sweep_restarts_and_completes_each_point_exactly_once(tmp_path):
    store = tmp_path / "killed"
    argv = [sys.executable, "-m", "flowkit.cli", "sweep", "stf", "--vary", "rotation=0:1:16",
            "--measure", "mean_ftle", "--option", "mean_ftle.particles=24", "--option", "mean_ftle.time=6",
            "--store", str(store), "--no-progress", "--json"]
    proc = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.time() + 240
    while time.time() < deadline and proc.poll() is None:
        if len(list((store / "points").glob("*.json"))) >= 3:
            break
        time.sleep(0.05)
    assert proc.poll() is None, "the sweep process ended before it could be killed" 
    os.kill(proc.pid, signal.SIGKILL)  # a real kill, mid-sweep
    proc.wait()
    before = {int(f.stem) for f in (store / "points").glob("*.json")}
    n_before = len(before)
    assert 3 <= n_before < 16, "the kill should land mid-sweep"
    out = subprocess.run(argv, capture_output=True, text=True, check=True)
    resumed = json.loads(out.stdout)
    assert resumed["reused"] == n_before and resumed["computed"] == 16 - n_before
    manifest = json.loads((store / "manifest.json").read_text())
    # the killed run logged nothing; the restart computed exactly the points that were missing
    assert sorted(manifest["runs"][-1]["computed"]) == sorted(set(range(16)) - before)
    assert sorted(int(f.stem) for f in (store / "points").glob("*.json")) == list(range(16))
    # every point exactly once, and equal to an uninterrupted run
    spec = SweepSpec(flow={"preset": "stf"}, axes={"rotation": np.linspace(0, 1, 16).tolist()},
                     measures=["mean_ftle"], options={"mean_ftle": {"particles": 24, "time": 6}})
    fresh = run_sweep(spec, tmp_path / "fresh", progress=False)
    got = [(p["params"], p["measures"]["mean_ftle"]["value"]) for p in resumed["points"]]
    assert got == [(p, v) for p, v, _ in values(fresh)]


def test_foreign_and_corrupt_stores_are_refused_and_left_untouched(tmp_path):
    foreign = tmp_path / "foreign"
    foreign.mkdir()
    (foreign / "thesis.tex").write_text("precious")
    with pytest.raises(FlowkitError, match="not empty and is not a flowkit sweep store"):
        run_sweep(small_spec(), foreign, progress=False)
    assert (foreign / "thesis.tex").read_text() == "precious" and len(list(foreign.iterdir())) == 1

    store = tmp_path / "s"
    run_sweep(small_spec(), store, progress=False)
    with pytest.raises(FlowkitError, match="holds a different sweep"):
        run_sweep(small_spec(axes={"rotation": [0.0, 0.5]}), store, progress=False)
    (store / "points" / "000001.json").write_text("{not json")
    with pytest.raises(FlowkitError, match="000001.json .* is corrupt"):
        run_sweep(small_spec(), store, progress=False)
    assert (store / "points" / "000001.json").read_text() == "{not json"


def test_bad_sweep_input_is_refused_clearly(tmp_path):
    with pytest.raises(FlowkitError, match="no parameter 'rot' to vary"):
        small_spec(axes={"rot": [0.0]})
    with pytest.raises(FlowkitError, match="unknown measure 'entropy'"):
        small_spec(measures=["entropy"], options={})
    with pytest.raises(FlowkitError, match="range of 'rotation' is empty"):
        small_spec(axes={"rotation": []})
    t0 = time.time()
    with pytest.raises(FlowkitError, match="cannot reach the dask scheduler"):
        run_sweep(small_spec(), tmp_path / "x", scheduler="tcp://127.0.0.1:9", progress=False)
    assert time.time() - t0 < 15
    assert not (tmp_path / "x").exists()


def test_lyapunov_and_chaotic_fraction_measures_see_the_integrable_case(tmp_path):
    # stf with rotation 0 is integrable (J. Fluid Mech. 212, 1990): no chaotic orbits, and the
    # largest exponent is small; with rotation it is chaotic (same source).
    spec = SweepSpec(flow={"preset": "stf"}, axes={"rotation": [0.0, 0.5]},
                     measures=["lyapunov", "chaotic_fraction"],
                     options={"lyapunov": {"time": 60.0}, "chaotic_fraction": {"n": 16, "time": 60.0}})
    out = run_sweep(spec, tmp_path / "s", progress=False)
    integrable, chaotic = out["points"]
    assert integrable["measures"]["chaotic_fraction"]["value"] == 0.0
    assert chaotic["measures"]["chaotic_fraction"]["value"] > 0.5
    assert integrable["measures"]["lyapunov"]["value"] < chaotic["measures"]["lyapunov"]["value"]


def test_line_stretching_and_dynamo_measures_on_exact_cases():
    from flowkit.sweep.measures import dynamo_growth, line_stretching

    # a material segment in uniform strain u = (a x, -a y, 0) grows as e^{a t} once aligned (exact)
    strain = flowkit.custom_flow(["a*x", "-a*y", "0"], params={"a": 0.5})
    out = line_stretching(strain, seed=0, time=8.0, max_points=20_000)
    assert abs(out["value"] - 0.5) < 0.02
    # fluid at rest: the slowest-decaying field mode (|k| = 1) decays at exactly -1/Rm
    rest = flowkit.custom_flow(["0", "0", "0"], domain="periodic", name="rest")
    out = dynamo_growth(rest, seed=0, rm=4.0, resolution=12)
    assert abs(out["value"] + 0.25) < 1e-8
    # one vertical wavenumber kz = 0.5: the slowest mode is uniform in (x, y), rate -kz^2/Rm exactly
    out = dynamo_growth(rest, seed=0, rm=4.0, resolution=12, kz=0.5)
    assert abs(out["value"] + 0.0625) < 1e-8


def test_sweep_plots_draw_the_stored_numbers(tmp_path):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.sweep.plots import plot_measure, plot_measure_map

    spec = small_spec(axes={"rotation": [0.0, 0.5]})
    run_sweep(spec, tmp_path / "s", progress=False)
    ds = open_results(tmp_path / "s")
    fig, ax = plt.subplots()
    art = plot_measure(ax, ds, "mean_ftle")
    line = art["errorbar"].lines[0]
    np.testing.assert_array_equal(line.get_ydata(), ds["mean_ftle"].values)
    with pytest.raises(FlowkitError, match="needs exactly two varied parameters"):
        plot_measure_map(ax, ds, "mean_ftle")
    plt.close(fig)


def test_two_parameter_sweep_map(tmp_path):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.sweep.plots import plot_measure_map

    spec = SweepSpec(flow={"preset": "hill"}, axes={"strength": [0.5, 1.0], "swirl": [0.0, 0.3, 0.6]},
                     measures=["mean_ftle"], options=SMALL)
    out = run_sweep(spec, tmp_path / "m", progress=False)
    # sweep order is C order over the axes: the last axis varies fastest
    assert [p["params"] for p in out["points"]][:2] == [{"strength": 0.5, "swirl": 0.0},
                                                         {"strength": 0.5, "swirl": 0.3}]
    ds = open_results(tmp_path / "m")
    fig, ax = plt.subplots()
    art = plot_measure_map(ax, ds, "mean_ftle")
    np.testing.assert_array_equal(np.asarray(art["mesh"].get_array()).reshape(2, 3), ds["mean_ftle"].values)
    plt.close(fig)
