"""Cells of notebooks/sweep.ipynb (written by notebooks/_build.py)."""

from _cellkit import QUICK, code, md  # noqa: F401

CELLS = [
    md("""
# An overnight sweep of the micro-reactor

The reactor's mixing rate as a function of its rotation, computed as a sweep:
every parameter point is written to a store as soon as it finishes, so an
interrupted sweep resumes where it stopped, and the same sweep can run on a dask
cluster (`flowkit sweep ... --scheduler tcp://...`). Here it runs in-process.
"""),
    code(QUICK),
    code("""
import tempfile
from pathlib import Path

from flowkit.sweep import SweepSpec, open_results, run_sweep
from flowkit.sweep.plots import plot_measure

spec = SweepSpec(flow={"preset": "stf"}, axes={"rotation": np.linspace(0.0, 1.5, size(16, 3)).tolist()},
                 measures=["mean_ftle"],
                 options={"mean_ftle": {"particles": size(256, 8), "time": size(20.0, 2.0)}})
store = Path(tempfile.mkdtemp()) / "reactor-sweep"
first = run_sweep(spec, store, progress=False)
print(f"computed {len(first['computed'])} points in {first['seconds']:.1f} s")"""),
    md("""
Running the same sweep again finds every point in the store and computes nothing:
this is what happens after an interruption, for the points already done.
"""),
    code("""
again = run_sweep(spec, store, progress=False)
print("computed now:", again["computed"], "reused:", again["reused"])
assert again["computed"] == [] and again["reused"] == len(spec.points())

results = open_results(store)
print(results)
fig, ax = plt.subplots(figsize=(4.8, 3.2), layout="constrained")
plot_measure(ax, results, "mean_ftle")
ax.set_ylabel("mean FTLE (mixing rate)")
plt.show()"""),
]
