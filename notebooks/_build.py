"""Write the notebooks of this folder from the cell texts below (run: ``python notebooks/_build.py``).

The notebooks are generated so that they stay consistent (same opening, same
quick-mode switch, no outputs, stable cell ids) and are committed as ``.ipynb``.
Edit the texts here, run this script, and commit both. ``--check`` exits 1 if a
committed notebook says something else than this script would write (used by the tests).

Every notebook reads ``FLOWKIT_QUICK=1`` (set in CI) to shrink its sizes; the
workflow and its checks stay the same.
"""

from __future__ import annotations

import sys
from pathlib import Path

import nbformat

HERE = Path(__file__).resolve().parent

#: Cell shared by every notebook: imports and the quick-mode switch.
QUICK = '''import os

import numpy as np
import matplotlib.pyplot as plt

import flowkit

QUICK = os.environ.get("FLOWKIT_QUICK", "") not in ("", "0")  # CI runs every notebook with tiny sizes
def size(full, quick):
    """The full size for real work, the quick one for the CI run."""
    return quick if QUICK else full'''


def md(text: str) -> tuple[str, str]:
    return ("markdown", text.strip("\n"))


def code(text: str) -> tuple[str, str]:
    return ("code", text.strip("\n"))


# =====================================================================================
NOTEBOOKS: dict[str, list[tuple[str, str]]] = {}

NOTEBOOKS["explore"] = [
    md("""
# Explorer: mixing in a stirred spherical micro-reactor

A droplet-sized reactor is stirred by a stretch-twist-fold flow while the whole
droplet turns slowly about the *y* axis (the `rotation` parameter of the `stf`
preset). Reagents injected on a regular orbit stay trapped on an invariant torus;
on a chaotic orbit they spread through the reactor. The Poincaré section on the
plane *y* = 0 shows which is which, and how that changes with the rotation rate.

**How to use the explorer**

* move a slider: a quick preview follows the slider, the full section appears when it rests;
* click inside the disc: a new seed orbit starts there;
* *colour → chaos* colours each orbit by its finite-time largest Lyapunov exponent
  (the black line on the colour bar is the regular/chaotic threshold);
* *PDF*, *PNG*: a paper-ready figure (points rasterized, axes vector); *data (npz)*:
  the raw crossings with their provenance. Files go to `exports/`.

The first use compiles the kernels (the status line says so); they are cached on disk.
"""),
    code("%matplotlib widget\n" + QUICK),
    code('''
from flowkit.lab import FTLEExplorer, GrowthExplorer, SectionExplorer

explorer = SectionExplorer("stf", params={"rotation": 0.1}, n_seeds=size(10, 6),
                           crossings=size(1000, 150))
explorer'''),
    md("""
## The section as data

The explorer is a thin layer over `flowkit.sections.poincare_section`; its latest
full result is a `Section` with per-orbit outcomes and provenance.
"""),
    code('''
sec = explorer.result
print(sec)
print("in-plane coordinates of the first crossings:\\n", sec.coords[:3])
print("flow and parameters:", sec.provenance["flow"], sec.provenance["parameters"])
assert np.all(np.linalg.norm(sec.points, axis=1) <= 1 + 1e-9), "crossings stay inside the reactor"'''),
    md("""
Seeds can be added from code too (the same path a click takes): here an orbit
started near the wall.
"""),
    code('''
explorer.add_seed([0.7, 0.0, -0.2])
print(explorer.message)'''),
    md("""
## Where the reactor stretches: FTLE map

Forward-time FTLE on the same plane: ridges are the barriers the section shows as
edges of the islands. The preview grid is coarse; the full grid follows when a
slider rests.
"""),
    code('''
ftle_view = FTLEExplorer("stf", params={"rotation": 0.1}, time=size(5.0, 2.0),
                         resolution=size(96, 16), preview_resolution=size(24, 8))
ftle_view'''),
    md("""
## How fast does a reagent filament (or a magnetic field line) grow?

Field-growth curves of an ensemble of particles carrying frozen-in line elements:
the slope of ⟨ln|B|⟩ is the largest Lyapunov exponent, the slopes of ln⟨|B|^p⟩
the generalized exponents L(p). Shaded: the fit window.
"""),
    code('''
growth_view = GrowthExplorer("stf", params={"rotation": 0.1}, time=size(20.0, 4.0),
                             particles=size(1000, 40), preview_particles=size(64, 8), samples=size(60, 12))
growth_view'''),
    md("""
## Would the stirring make a dynamo in a liquid metal?

The same explorer idea for the diffusive dynamo in a periodic cell of liquid
metal stirred in the ABC pattern: move Rm and the parameters; every full result
adds a point to the growth-rate curve (right), so the onset shows where it
crosses zero; left is the leading mode at z = 0. For a stirring independent of z
(the `roberts` and `circular` flows) tick *one vertical wavenumber* to solve a
single kz, any real value, on a 2-D grid.
"""),
    code('''
from flowkit.lab import DynamoExplorer

dynamo_view = DynamoExplorer("abc", rm=10.0, resolution=size(16, 8), preview_resolution=8)
dynamo_view'''),
    md("""
## Export for the paper

The same as the buttons: a PDF with rasterized points and vector axes, a PNG, and
the raw crossings with provenance (reload with `flowkit.sections.Section.load`).
"""),
    code('''
paths = [explorer.export(fmt) for fmt in ("pdf", "png", "npz")]
print(*paths, sep="\\n")
from flowkit.sections import Section

again = Section.load(paths[-1])
assert np.array_equal(again.coords, explorer.result.coords)'''),
]


NOTEBOOKS["surface_flow"] = [
    md("""
# A liquid-metal droplet stirred through its skin

A gallium droplet sits in an alternating magnetic field. The induced currents
live in a thin skin, so the Lorentz force acts at the surface: it drags the
surface from both poles toward the equator, makes the two hemispheres swirl in
opposite senses, and, because the field is tilted, tumbles the droplet slowly
about the *x* axis. Inside, the flow is slow and viscous: a Stokes flow in the
unit ball fixed by that surface velocity.

We build the interior flow from the surface velocity (Lamb's general solution,
`flowkit.surface_flow`), check it, and look at how it stirs the droplet.
"""),
    code(QUICK),
    code("""
U, W, TUMBLE = 1.0, 0.8, 0.3   # poloidal drag, counter-swirl, tumble (units of the surface speed)


def skin_velocity(p):
    \"\"\"Tangential velocity on r = 1 for points p (N, 3).\"\"\"
    z = p[:, 2:3]
    zhat, xhat = np.array([0.0, 0.0, 1.0]), np.array([1.0, 0.0, 0.0])
    poloidal = -2 * U * z * (zhat - z * p)           # -U grad_s(z^2): poles -> equator
    swirl = W * z * np.cross(zhat, p)                # hemispheres turning in opposite senses
    tumble = TUMBLE * np.cross(xhat, p)              # slow rigid tumble about x
    return poloidal + swirl + tumble


droplet = flowkit.surface_flow(skin_velocity, max_degree=3, name="droplet")
print(droplet)
print("projection:", droplet.family.structure["projection"])"""),
    md("""
## Is it the flow we asked for?

Three checks against facts outside the construction: on the surface the flow
reproduces the prescribed velocity (it is polynomial of degree 2, so the degree-3
projection is exact); the flow is divergence-free, tangent to the wall, and a
Stokes flow (the curl of its Laplacian vanishes).
"""),
    code("""
rng = np.random.default_rng(1)
s = rng.normal(size=(size(2000, 200), 3))
s /= np.linalg.norm(s, axis=1)[:, None]
mismatch = np.abs(droplet.velocity(s) - skin_velocity(s)).max()
print(f"largest surface mismatch: {mismatch:.2e}")
assert mismatch < 1e-10

from flowkit.flows.checks import check_flow

report = check_flow(droplet, n=size(2000, 200))
print({k: report[k] for k in ("divergence_max", "boundary_normal_max", "stokes_residual_max")})
assert report["divergence_max"] < 1e-10 and report["boundary_normal_max"] < 1e-10"""),
    md("""
## How does it stir?

A Poincaré section on the plane *y* = 0, orbits coloured by their finite-time
largest Lyapunov exponent: regular orbits (islands) stay dark.
"""),
    code("""
from flowkit.chaos import orbit_indicator
from flowkit.plot import plot_section
from flowkit.sections import Plane, poincare_section
from flowkit.seeding import across_domain

plane = Plane((0, 1, 0), 0.0, "+")
seeds = across_domain(droplet, plane, size(16, 4))
sec = poincare_section(droplet, seeds, plane, crossings=size(800, 60))
sec.attach("ftle", orbit_indicator(droplet, sec.seeds, size(100.0, 10.0)))
print(sec)

fig, ax = plt.subplots(figsize=(5, 4.4), layout="constrained")
plot_section(ax, sec, color_by="ftle", size=1.0)
ax.set_title("droplet: section y = 0, colour = finite-time exponent")
plt.show()"""),
    md("""
The section's crossings and provenance (surface velocity projection included)
can be saved for later without pickle:
"""),
    code("""
import tempfile
from pathlib import Path

path = sec.save(Path(tempfile.mkdtemp()) / "droplet-section.npz")
print(path, sec.provenance["structure"].get("projection"))"""),
]

NOTEBOOKS["sections_vs_parameter"] = [
    md("""
# Islands in the micro-reactor as the stirring rotation grows

The stirred spherical micro-reactor of `explore.ipynb`: a stretch-twist-fold
flow plus a rigid rotation about *y*. Without rotation the reactor has large
regular regions where reagents stay trapped; the rotation breaks them up. Here
we follow the Poincaré section on *y* = 0 and the chaotic fraction of the
reactor as the rotation grows.
"""),
    code(QUICK),
    code("""
from flowkit.plot import plot_section
from flowkit.sections import Plane, poincare_section, tolerance_check
from flowkit.seeding import across_domain

rotations = np.linspace(0.02, 0.5, size(6, 3))
plane = Plane((0, 1, 0), 0.0, "+")
base = flowkit.flow("stf")
seeds = across_domain(base, plane, size(12, 4))

sections = [poincare_section(base.with_params(rotation=r), seeds, plane, crossings=size(600, 50))
            for r in rotations]
fig, axes = plt.subplots(1, len(rotations), figsize=(3 * len(rotations), 3.2), layout="constrained")
for ax, r, sec in zip(np.atleast_1d(axes), rotations, sections):
    plot_section(ax, sec, size=0.6, labels=False)
    ax.set(title=f"rotation = {r:.2f}", aspect="equal", xticks=[], yticks=[])
plt.show()
for r, sec in zip(rotations, sections):
    print(f"rotation {r:.2f}: {sec.summary()['outcomes']}")"""),
    md("""
## Are the sections converged?

A section computed at two tolerances, crossing by crossing: regular orbits agree
to near the tolerance; on chaotic orbits the difference grows with the crossing
number (nearby orbits separate), which is expected and says how many crossings
can be trusted point by point.
"""),
    code("""
check = tolerance_check(base.with_params(rotation=0.3), seeds[:size(4, 2)], plane, crossings=size(100, 20))
print(check)"""),
    md("""
## Chaotic fraction of the reactor

Each of many random seeds is classified by its finite-time largest Lyapunov
exponent; the fraction of chaotic orbits estimates the chaotic volume fraction,
with its binomial standard error.
"""),
    code("""
from flowkit.chaos import chaotic_fraction

fractions = [chaotic_fraction(base.with_params(rotation=r), size(200, 12), size(100.0, 10.0), seed=3)
             for r in rotations]
f = np.array([c.fraction for c in fractions])
e = np.array([c.stderr for c in fractions])
assert np.all((0 <= f) & (f <= 1)) and np.all(e <= 0.5)

fig, ax = plt.subplots(figsize=(4.5, 3), layout="constrained")
ax.errorbar(rotations, f, yerr=e, fmt="o-", capsize=3)
ax.set(xlabel="rotation", ylabel="chaotic fraction", ylim=(-0.05, 1.05))
plt.show()
for r, c in zip(rotations, fractions):
    print(f"rotation {r:.2f}: {c}")"""),
]

NOTEBOOKS["lyapunov_ftle"] = [
    md("""
# How fast does the micro-reactor mix? Lyapunov spectra and FTLE maps

The mixing rate of a chaotic reactor is its largest Lyapunov exponent: a blob
of reagent is stretched by a factor e every 1/λ time units. We first check the
machinery on a system whose numbers are known, then measure the reactor, then
map where it stretches (FTLE, forward and backward in time).
"""),
    code(QUICK),
    md("""
## Check: the Lorenz system

For sigma = 10, rho = 28, beta = 8/3 the largest exponent is about 0.906 (Physica
D 16, 1985, 285-317), and the exponents add up to the divergence,
-(sigma + 1 + beta) = -13.667 exactly.
"""),
    code("""
from flowkit.lyapunov import lyapunov_spectrum
from flowkit.plot import plot_lyapunov_running

lorenz = lyapunov_spectrum(flowkit.flow("lorenz"), [1.0, 1.0, 20.0], size(2000.0, 200.0), transient=size(50.0, 10.0))
print(lorenz)
assert abs(lorenz.exponents.sum() + (10 + 1 + 8 / 3)) < 1e-6 * 13.667 + 3 * lorenz.sum_stderr + 1e-6
assert abs(lorenz.exponents[0] - 0.906) < size(0.03, 0.25)"""),
    md("""
## The reactor

The reactor flow is incompressible, so its exponents add up to zero; a steady
flow also has one zero exponent (along the orbit).
"""),
    code("""
reactor = flowkit.flow("stf", rotation=0.5)
spec = lyapunov_spectrum(reactor, [0.3, 0.1, -0.2], size(2000.0, 150.0))
print(spec)
assert abs(spec.exponents.sum()) < 1e-6 + 3 * spec.sum_stderr
print(f"a reagent blob is stretched e-fold every {1 / spec.exponents[0]:.2f} time units")

fig, ax = plt.subplots(figsize=(5, 3.2), layout="constrained")
plot_lyapunov_running(ax, spec)
ax.set_title("running estimates (band: 2 standard errors)")
plt.show()"""),
    md("""
## Where the reactor stretches

Forward-time FTLE ridges repel nearby fluid (they cut blobs apart), backward-time
ridges attract it (filaments line up along them). The gradient comes from the
variational equations, so no finite-difference spacing is involved.
"""),
    code("""
from flowkit.ftle import GridPlane, ftle_field
from flowkit.plot import plot_ftle

plane = GridPlane.coordinate("y", 0.0, (-1, 1, -1, 1))
res = (size(160, 16), size(160, 16))
T = size(4.0, 1.0)
fields = [ftle_field(reactor, plane, res, T, direction=d) for d in ("forward", "backward")]
fig, axes = plt.subplots(1, 2, figsize=(9, 3.8), layout="constrained")
for ax, fld in zip(axes, fields):
    plot_ftle(ax, fld)
plt.show()
for fld in fields:
    print(fld)"""),
    md("""
A check on both maps: the reactor flow is reversible. The map (x, y, z, t) ->
(-x, -y, z, -t) takes it to itself (u(-x, -y, z) = (u, v, -w)(x, y, z) with signs
flipped accordingly), so on the plane *y* = 0 the backward map is the forward map
mirrored in *x*.
"""),
    code("""
fwd, bwd = (fld.values for fld in fields)
assert np.allclose(bwd, fwd[:, ::-1], rtol=1e-6, atol=1e-6, equal_nan=True)
print("backward FTLE = forward FTLE mirrored in x: largest difference",
      f"{np.nanmax(np.abs(bwd - fwd[:, ::-1])):.1e}")"""),
]

NOTEBOOKS["frozen_in"] = [
    md("""
# Magnetic field lines in a liquid-metal droplet: the ideal limit

In a perfectly conducting droplet a magnetic field is frozen into the flow:
each field vector is stretched and turned like a material line element. Its
ensemble statistics grow exponentially: <ln|B|> at the largest Lyapunov
exponent, the moments <|B|^p> at the generalized exponents L(p), which are convex
in p with L(p)/p non-decreasing. What a magnetometer outside sees is a flux
through a surface, and there folding brings field of both signs together: the
net flux grows more slowly than the unsigned one.
"""),
    code(QUICK),
    code("""
from flowkit.plot import plot_growth
from flowkit.stretching import stretch

droplet = flowkit.flow("stf", rotation=0.3)   # the stirring pattern of the droplet
res = stretch(droplet, size(4000, 120), size(30.0, 6.0), p=(0.5, 1.0, 2.0), samples=size(120, 24))
print(res)

fig, ax = plt.subplots(figsize=(5.5, 3.6), layout="constrained")
plot_growth(ax, res, p=[1.0, 2.0])
ax.legend(fontsize=7, loc="upper left")
plt.show()"""),
    md("""
Sanity checks from the theory of generalized exponents: L(p) is convex, L(p)/p
does not decrease, and L(p) >= p * lambda (Jensen). The checks allow for the
statistical error bars.
"""),
    code("""
L = {p: res.rate(p) for p in (0.5, 1.0, 2.0)}
lam = res.field_rate                      # slope of <ln|B|>


def slack(*rates):
    \"\"\"Three standard errors of the rates involved.\"\"\"
    return 3 * sum(r.stderr for r in rates)


# convex: L(1) lies below the chord through L(0.5) and L(2)
chord = (L[0.5].value + 0.5 * L[2.0].value) / 1.5
assert L[1.0].value <= chord + slack(*L.values()), (L, chord)
# L(p)/p does not decrease, and L(p) >= p * lambda (Jensen's inequality)
assert L[0.5].value / 0.5 <= L[1.0].value + slack(L[0.5], L[1.0]) * 2
assert L[1.0].value <= L[2.0].value / 2 + slack(L[2.0], L[1.0])
for p in (0.5, 1.0, 2.0):
    assert L[p].value >= p * lam.value - slack(L[p], lam), (p, L[p], lam)
print({p: f"{r.value:.3f} ± {r.stderr:.2g}" for p, r in L.items()}, "lambda", lam)"""),
    md("""
## A material line and the flux through the equator

A material line (for instance a field line, or a dye streak) grows in length at
a rate bounded below by the topological entropy of the flow. The flux through the
droplet's equatorial disc separates stretching (unsigned flux) from cancellation
(net flux).
"""),
    code("""
from flowkit.flux import flux_growth
from flowkit.lines import material_line

line = material_line(droplet, size(12.0, 3.0), max_points=size(400_000, 20_000))
flux = flux_growth(droplet, size(10.0, 2.0), samples=size(4000, 200))
print(line.rate, "(material line)")
print(flux.unsigned_rate, "(unsigned flux)")
print(flux.flux_rate, "(net flux)")

fig, axes = plt.subplots(1, 2, figsize=(9, 3.4), layout="constrained")
plot_growth(axes[0], line)
plot_growth(axes[1], flux)
for ax in axes:
    ax.legend(fontsize=6, loc="upper left")
plt.show()"""),
]

NOTEBOOKS["dynamo"] = [
    md("""
# Does stirring a liquid metal make a dynamo? Growth rate versus Rm

A liquid-metal cell is stirred in a periodic ABC pattern (A = B = C = 1). At a
finite magnetic Reynolds number Rm the field diffuses as well as being
stretched; a dynamo exists where the fastest magnetic mode grows. For this flow
the first dynamo window opens near Rm = 8.9 (Geophys. Astrophys. Fluid Dyn. 36,
1986, 53-83). We compute the growth rate of the leading mode against Rm with the
spectral solver, find the onset, and look at the mode.
"""),
    code(QUICK),
    code("""
from flowkit.dynamo import critical_rm, growth_rate, sweep_rm
from flowkit.dynamo.plot import plot_growth_curve, plot_mode_slice

stirring = flowkit.flow("abc")
N = size(32, 16)                      # grid points per side
rms = size([2, 4, 6, 8, 10, 12, 15, 18], [6, 14])
curve = sweep_rm(stirring, rms, resolution=N, progress=False)
onset = critical_rm(stirring, rm_list=size((6, 8, 10, 12), (8, 10)), resolution=N, xtol=size(1e-3, 2e-2),
                    progress=False)
print(onset)
assert abs(onset.rm_critical - 8.9) < max(0.3, onset.uncertainty), "onset of the first ABC dynamo window"

fig, ax = plt.subplots(figsize=(5, 3.4), layout="constrained")
plot_growth_curve(ax, curve, critical=onset)
ax.legend()
plt.show()"""),
    md("""
## The growing mode

The leading eigenmode just above onset, sliced at *z* = 0: |B| in colour, the
in-plane field as stream lines. Its frequency is non-zero: the mode oscillates
while it grows.
"""),
    code("""
mode = growth_rate(stirring, size(12.0, 10.0), resolution=N)
print(mode)
fig, ax = plt.subplots(figsize=(4.6, 4), layout="constrained")
plot_mode_slice(ax, mode, axis="z", position=0.0)
plt.show()
assert mode.growth_rate > 0"""),
    md("""
## A cell stirred by a lattice of helical vortices: which vertical scale grows?

A second cell is stirred by a square lattice of counter-rotating helical
vortices that does not vary along *z* (the Roberts flow). Each vertical
wavenumber *kz* is then a separate eigenproblem on a 2-D grid, for any real *kz*,
not only the integers of the 2π box. The growth rate against *kz* is the
dynamo's dispersion relation. At small Rm it must follow the exact limit
σ = −kz²/Rm + Rm (kz − kz²): growth at small Rm, but only for vertical scales
longer than 2π (1 + Rm²)/Rm².
"""),
    code("""
from flowkit.dynamo import sweep_kz

vortices = flowkit.flow("roberts")
kzs = np.linspace(0.05, 1.0, size(12, 3))
fig, ax = plt.subplots(figsize=(5, 3.4), layout="constrained")
for rm, colour in [(0.4, "C0"), (2.0, "C1"), (8.0, "C2")]:
    scan = sweep_kz(vortices, rm, kzs, resolution=size(16, 8), progress=False)
    plot_growth_curve(ax, scan, color=colour, label=f"Rm = {rm:g}, fastest kz = {scan.fastest[0]:.2f}")
    if rm == 0.4:
        limit = -kzs**2 / rm + rm * (kzs - kzs**2)
        ax.plot(kzs, limit, "k:", lw=1, label="small-Rm limit, Rm = 0.4")
        assert np.max(np.abs(scan.growth_rate - limit)) < 2 * rm**3
ax.set(title="Roberts cell: growth rate against kz", ylim=(-0.6, 0.4))
ax.legend(fontsize=7)
plt.show()"""),
]

NOTEBOOKS["sweep"] = [
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


# =====================================================================================
def build(name: str, cells: list[tuple[str, str]]) -> nbformat.NotebookNode:
    nb = nbformat.v4.new_notebook()
    nb.metadata = {
        "kernelspec": {"display_name": "Python 3 (ipykernel)", "language": "python", "name": "python3"},
        "language_info": {"name": "python"},
    }
    for i, (kind, text) in enumerate(cells):
        cell = nbformat.v4.new_markdown_cell(text) if kind == "markdown" else nbformat.v4.new_code_cell(text)
        cell.id = f"{name}-{i:02d}"  # stable ids: regenerating does not churn the files
        nb.cells.append(cell)
    return nb


def _content(nb) -> tuple:
    """What the notebook says: kernel, and each cell's id, type, source and outputs."""
    cells = tuple((c.get("id"), c.cell_type, c.source, len(c.get("outputs", []))) for c in nb.cells)
    return nb.metadata.get("kernelspec", {}).get("name"), cells


def main(argv: list[str]) -> int:
    check = "--check" in argv
    stale = []
    for name, cells in NOTEBOOKS.items():
        path = HERE / f"{name}.ipynb"
        text = nbformat.writes(build(name, cells)) + "\n"
        if check:  # compare content, not formatting (another nbformat version may indent differently)
            if not path.exists() or _content(nbformat.read(path, as_version=4)) != _content(build(name, cells)):
                stale.append(path.name)
        else:
            path.write_text(text)
            print(f"wrote {path.relative_to(HERE.parent)}")
    if stale:
        print(f"out of date (run python notebooks/_build.py): {', '.join(stale)}")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
