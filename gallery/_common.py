"""Shared by the gallery scripts: quick mode, output folder, saving a figure as PNG and PDF.

``FLOWKIT_QUICK=1`` (CI) shrinks sizes and resolution; ``FLOWKIT_GALLERY_OUT``
chooses the output folder (default ``gallery/output``).
"""

import os
from pathlib import Path

QUICK = os.environ.get("FLOWKIT_QUICK", "") not in ("", "0")
OUT = Path(os.environ.get("FLOWKIT_GALLERY_OUT", Path(__file__).resolve().parent / "output"))
DPI = 50 if QUICK else 200


def size(full, quick):
    """The full size for the real figure, the quick one for the CI run."""
    return quick if QUICK else full


def save(fig, name: str) -> list[Path]:
    """Write ``name.png`` and ``name.pdf`` (point layers are rasterized by the plot helpers)."""
    OUT.mkdir(parents=True, exist_ok=True)
    paths = [OUT / f"{name}.png", OUT / f"{name}.pdf"]
    for path in paths:
        fig.savefig(path, dpi=DPI)
    print(*(str(p) for p in paths), sep="\n")
    return paths
