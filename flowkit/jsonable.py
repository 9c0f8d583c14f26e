"""Turn results and provenance into plain JSON values (no pickle anywhere)."""

from __future__ import annotations

import math

import numpy as np


def json_ready(obj, nonfinite: str = "null"):
    """Copy of ``obj`` with numpy scalars/arrays as lists and numbers, tuples as lists.

    Parameters
    ----------
    obj : any
        Nested dicts, lists, tuples, numpy arrays and scalars.
    nonfinite : {"null", "string"}
        NaN and infinities become ``None`` (for reports), or the strings
        ``"nan"``, ``"inf"``, ``"-inf"`` (for provenance that must round-trip).
    """
    if isinstance(obj, dict):
        return {str(k): json_ready(v, nonfinite) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_ready(v, nonfinite) for v in obj]
    if isinstance(obj, np.ndarray):
        return json_ready(obj.tolist(), nonfinite)
    if isinstance(obj, np.generic):
        return json_ready(obj.item(), nonfinite)
    if isinstance(obj, float) and not math.isfinite(obj):
        return str(obj) if nonfinite == "string" else None
    return obj
