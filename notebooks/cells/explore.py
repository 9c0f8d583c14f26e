"""Cells of notebooks/explore.ipynb (written by notebooks/_build.py)."""

from _cellkit import QUICK, code, md  # noqa: F401

CELLS = [
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

The same droplet flow in a sphere of liquid metal with an insulating outside: the
kinematic dynamo of `flowkit.dynamo` (harmonics to degree L = N, N radial nodes).
Move Rm and the rotation; every full result adds a point to the growth-rate curve
(below), so the onset shows where it crosses zero; above, |B| of the leading mode
in the meridional disc y = 0. The full result is checked against the grid 3N/4:
a large error there means the mode is not resolved yet.

**The answer** (convergence table in the `dynamo` notebook): at rotation 0.3 the
stirring is a dynamo, **Rm_c = 141.5 ± 1.5** (a steady mode); at rotation 0.1
there is **no onset below Rm = 240**. The explorer opens on N = 12, where the
onset sits near Rm = 136 (the table's first row): its first result builds the
operator (about 6 s of CPU), then each Rm costs about a second, started from the
last eigenpair. On the N = 8 preview high Rm is not resolved (spurious
fast-oscillating modes, flagged by the check). N = 16 gives the next row (about
30 s of CPU at first, then a few seconds per Rm).
"""),
    code('''
from flowkit.lab import DynamoExplorer

dynamo_view = DynamoExplorer("stf", params={"rotation": 0.3}, rm=140.0, resolution=size(12, 8),
                             preview_resolution=8)
dynamo_view'''),
    md("""
## A loop carried by the flow: writhe, twist, linking

A closed ribbon (a tilted circle with an in-plane normal) is carried to time *T*:
left the loop, right its writhe Wr and twist Tw, which trade, and their sum, the
linking number Lk, which the flow cannot change.
"""),
    code('''
from flowkit.lab import LoopExplorer

loop_view = LoopExplorer("stf", params={"rotation": 0.3}, time=size(2.0, 0.5), passes=size(12, 3),
                         max_points=size(20_000, 3_000))
loop_view'''),
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
