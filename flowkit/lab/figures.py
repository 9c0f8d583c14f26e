"""Small helpers the explorers share for figures and files: paper style, axis names,
colour ranges and file-name stems."""

from __future__ import annotations

import re

import numpy as np

from flowkit.flows.base import Flow

#: Matplotlib settings of exported paper figures (small single-column figures).
PAPER_STYLE = {"font.size": 8, "axes.titlesize": 8, "axes.labelsize": 8, "xtick.labelsize": 7,
               "ytick.labelsize": 7, "pdf.fonttype": 42, "savefig.bbox": "tight"}


def file_stem(kind: str, flow: Flow) -> str:
    """A file-name stem naming what and which parameters, e.g. ``section-stf-rotation0.3``."""
    pars = "-".join(f"{k}{v:.4g}" for k, v in flow.param_dict.items())
    stem = f"{kind}-{flow.name}" + (f"-{pars}" if pars else "")
    return re.sub(r"[^\w.+-]", "_", stem)


def axis_name(e) -> str:
    """'x', '-z', ... for an in-plane axis along a coordinate axis, else the vector."""
    e = np.asarray(e, dtype=float)
    hit = np.flatnonzero(np.abs(e) > 1e-12)
    if hit.size == 1:
        return ("-" if e[hit[0]] < 0 else "") + "xyz"[hit[0]]
    return "(" + ", ".join(f"{c:.3g}" for c in e) + ")"


def finite_range(values, floor: float = 0.0) -> tuple[float, float]:
    """(low, high) of the finite values (a safe colour range), widened if empty or flat."""
    vals = np.asarray(values, dtype=float)
    vals = vals[np.isfinite(vals)]
    if vals.size == 0:
        return floor, floor + 1.0
    lo, hi = float(vals.min()), float(vals.max())
    if hi - lo < 1e-12:
        hi = lo + 1.0
    return lo, hi
