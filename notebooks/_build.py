"""Write the notebooks of this folder from their cell files in cells/ (run: ``python notebooks/_build.py``).

The notebooks are generated so that they stay consistent (same opening, same
quick-mode switch, no outputs, stable cell ids) and are committed as ``.ipynb``.
Edit cells/<name>.py (a new file there is a new notebook), run this script, and commit both. ``--check`` exits 1 if a
committed notebook says something else than this script would write (used by the tests).

Every notebook reads ``FLOWKIT_QUICK=1`` (set in CI) to shrink its sizes; the
workflow and its checks stay the same.
"""

from __future__ import annotations

import sys
from pathlib import Path

import nbformat

HERE = Path(__file__).resolve().parent

# =====================================================================================
#: Notebook name -> cells, one file per notebook in cells/ (order: the list below, then the rest).
ORDER = ['explore', 'surface_flow', 'sections_vs_parameter', 'lyapunov_ftle', 'frozen_in', 'dynamo', 'sweep']


def _load() -> dict[str, list[tuple[str, str]]]:
    import importlib.util

    sys.path.insert(0, str(HERE))
    found = {p.stem: p for p in sorted((HERE / "cells").glob("*.py")) if not p.stem.startswith("_")}
    out = {}
    for name in [*[n for n in ORDER if n in found], *[n for n in found if n not in ORDER]]:
        spec = importlib.util.spec_from_file_location(f"_cells_{name}", found[name])
        mod = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(mod)
        out[name] = mod.CELLS
    return out


NOTEBOOKS = _load()


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
