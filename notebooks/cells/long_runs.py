"""Cells of notebooks/long_runs.ipynb (written by notebooks/_build.py)."""

from _cellkit import QUICK, code, md  # noqa: F401

CELLS = [
    md("""
# Long runs: stiff reaction networks, time budgets, progress and Ctrl-C

A liquid-metal droplet reactor is modelled by a small reaction network whose
fastest rate is many orders above its slowest. An explicit integrator such as
DOP853 then takes steps of the size of the fastest decay time, however smooth the
solution: the run crawls. flowkit notices (the stiffness test of the published
DOP853 code), ends the orbit with the outcome `stiff` and says what to do.
Long analyses also take a wall-clock budget `max_seconds`, show a progress bar
once they run longer than 2 s, and keep the finished part on Ctrl-C.
"""),
    code(QUICK),
    md("""
## A stiff network: Robertson's reactions

Rates 0.04, 1e4 and 3e7 (the classic stiff test problem, Solving Ordinary
Differential Equations II, Springer 1996, section IV.1). The orbit ends early
with outcome `stiff`, after about a thousand steps, and the note names the remedies.
"""),
    code("""
from flowkit.integrate.batch import IntegratorSettings, integrate_states

robertson = flowkit.custom_flow(
    ["-0.04*x + 1e4*y*z", "0.04*x - 1e4*y*z - 3e7*y**2", "3e7*y**2"], kind="system", name="robertson")
run = integrate_states(robertson, [[1.0, 0.0, 0.0]], 0.0, 1e5, IntegratorSettings(rtol=1e-6, atol=1e-10))
print(run.outcomes)
print(f"stopped at t = {run.t_end[0]:.3g} after {run.steps[0]} steps")
print(run.notes[0])
assert run.outcome[0] == flowkit.integrate.Outcome.STIFF"""),
    md("""
## A time budget

`max_seconds` is checked between chunks: the result keeps what finished and is
flagged `partial`, with the reason in its notes.
"""),
    code("""
reactor = flowkit.flow("stf", rotation=0.3)
res = flowkit.stretch(reactor, particles=size(20000, 2000), time=size(50.0, 10.0), chunk=256, max_seconds=0.5)
print("partial:", res.partial)
print(res.notes[0] if res.notes else "finished within the budget")"""),
    md("""
## FTLE from the flow map, and what it smears

`ftle_field(..., method="flowmap")` integrates positions only and differences the
final positions over one grid spacing: cheaper, but where the map folds inside a
cell (the ridges) the stretching is underestimated and depends on the resolution.
"""),
    code("""
gyre = flowkit.flow("double-gyre")
plane = flowkit.GridPlane.coordinate("z", 0.0, (0.0, 2.0, 0.0, 1.0))
res_grid = (size(200, 60), size(100, 30))
var = flowkit.ftle_field(gyre, plane, res_grid, time=size(15.0, 5.0))
fmap = flowkit.ftle_field(gyre, plane, res_grid, time=size(15.0, 5.0), method="flowmap")
ridge = var.values >= np.nanpercentile(var.values, 98)
print(f"variational {var.seconds:.2f} s, flow map {fmap.seconds:.2f} s")
print(f"on the ridges (top 2 %): mean FTLE {np.nanmean(var.values[ridge]):.3f} (variational) vs "
      f"{np.nanmean(fmap.values[ridge]):.3f} (flow map)")

fig, axes = plt.subplots(1, 2, figsize=(9, 2.6), layout="constrained", sharey=True)
for ax, field, title in zip(axes, (var, fmap), ("variational", "flow map + finite differences")):
    ax.pcolormesh(field.s, field.r, field.values, shading="auto", rasterized=True)
    ax.set(title=title, xlabel="x")
axes[0].set_ylabel("y")
plt.show()"""),
]
