"""Write the notebooks of this folder from the cell texts below (run: ``python notebooks/_build.py``).

The notebooks are generated so that they stay consistent (same opening, same
quick-mode switch, no outputs, stable cell ids) and are committed as ``.ipynb``.
Edit the texts here, run this script, and commit both. ``--check`` exits 1 if a
committed notebook differs from what this script would write (used by the tests).

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

explorer = SectionExplorer("stf", params={"rotation": 0.3}, n_seeds=size(10, 6),
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
ftle_view = FTLEExplorer("stf", params={"rotation": 0.3}, time=size(5.0, 2.0),
                         resolution=size(96, 16), preview_resolution=size(24, 8))
ftle_view'''),
    md("""
## How fast does a reagent filament (or a magnetic field line) grow?

Field-growth curves of an ensemble of particles carrying frozen-in line elements:
the slope of ⟨ln|B|⟩ is the largest Lyapunov exponent, the slopes of ln⟨|B|^p⟩
the generalized exponents L(p). Shaded: the fit window.
"""),
    code('''
growth_view = GrowthExplorer("stf", params={"rotation": 0.3}, time=size(20.0, 4.0),
                             particles=size(1000, 40), preview_particles=size(64, 8), samples=size(60, 12))
growth_view'''),
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


def main(argv: list[str]) -> int:
    check = "--check" in argv
    stale = []
    for name, cells in NOTEBOOKS.items():
        path = HERE / f"{name}.ipynb"
        text = nbformat.writes(build(name, cells)) + "\n"
        if check:
            if not path.exists() or path.read_text() != text:
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
