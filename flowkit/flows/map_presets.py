"""Preset and user-defined discrete-time maps (``cat-map``, ``sfs-map``, :func:`custom_map`).

The exact answers each preset is a yardstick for are listed in :mod:`flowkit.flows.maps`.
Importing this module registers the presets with :mod:`flowkit.flows.registry`.
"""

from __future__ import annotations

import math
from typing import Mapping, Sequence

from flowkit.errors import FlowkitError
from flowkit.flows.maps import Map, MapFamily, is_map  # noqa: F401  (is_map re-exported for old imports)

__all__ = ["Map", "MapFamily", "custom_map", "is_map", "MAP_PRESETS"]


def _map_family(name, image, inverse, params, periods, box, description, validate=None, structure=None):
    from flowkit.flows.codegen import T
    from flowkit.flows.formulas import family_from_exprs
    from flowkit.flows.grammar import as_sympy

    for label, exprs in (("image", image), ("inverse", inverse or ())):
        if any(T in as_sympy(e, f"map {label}").free_symbols for e in exprs):
            raise FlowkitError(f"map {label} must not depend on t (maps here are autonomous)")
    fwd = family_from_exprs(name, image, params, "unbounded", kind="map", description=description)
    inv = None
    if inverse is not None:
        inv = family_from_exprs(f"{name}-inverse", inverse, params, "unbounded", kind="map",
                                description=f"inverse of {name}")
    return MapFamily(name=name, forward=fwd, inverse=inv, periods=tuple(float(p) for p in periods),
                     box=tuple(tuple(map(float, b)) for b in box), description=description, validate=validate,
                     structure={"representation": "closed-form map", **(structure or {})})


def cat_map_family() -> MapFamily:
    """Arnold's cat map on the unit torus (z carried along unchanged)."""
    from flowkit.flows.codegen import X, Y, Z

    return _map_family(
        "cat-map", (2 * X + Y, X + Y, Z), (X - Y, -X + 2 * Y, Z), [], (1.0, 1.0, 1.0),
        ((0, 1), (0, 1), (0, 1)),
        "Arnold's cat map (x, y) -> (2x + y, x + y) mod 1 on the unit torus; z unchanged. "
        "Exact growth ln((3 + sqrt 5)/2) per iteration.",
    )


def _check_sfs(params: dict) -> None:
    if not 0.0 < params["a"] < 1.0:
        raise FlowkitError(f"sfs-map parameter `a` (width of the first strip) must lie in (0, 1); got {params['a']}")
    if params["fold"] not in (0.0, 1.0):
        raise FlowkitError(f"sfs-map parameter `fold` must be 0 (stack) or 1 (fold); got {params['fold']}")


def sfs_map_family() -> MapFamily:
    """Stretch-fold-shear map of the unit cube, periodic in z (see the module docstring)."""
    import sympy as sp

    from flowkit.flows.codegen import X, Y, Z

    a, fold, shear = (sp.Symbol(n, real=True) for n in ("a", "fold", "shear"))
    b = 1 - a
    # second strip: stacked (x - a)/b, a + b y   or   folded (1 - x)/b, 1 - b y
    x2 = (1 - fold) * (X - a) / b + fold * (1 - X) / b
    y2 = (1 - fold) * (a + b * Y) + fold * (1 - b * Y)
    xp = sp.Piecewise((X / a, X < a), (x2, True))
    yp = sp.Piecewise((a * Y, X < a), (y2, True))
    image = (xp, yp, Z + shear * xp)
    # inverse: the image strip y' < a came from x < a, the rest from x >= a
    xi2 = (1 - fold) * (a + b * X) + fold * (1 - b * X)
    yi2 = (1 - fold) * (Y - a) / b + fold * (1 - Y) / b
    inverse = (sp.Piecewise((a * X, Y < a), (xi2, True)), sp.Piecewise((Y / a, Y < a), (yi2, True)),
               Z - shear * X)
    return _map_family(
        "sfs-map", image, inverse, [("a", 1.0 / 3.0), ("fold", 1.0), ("shear", 0.5)], (0.0, 0.0, 1.0),
        ((0, 1), (0, 1), (0, 1)),
        "Stretch-fold-shear map of the unit cube (generalized baker's map, periodic in z): strips of width "
        "a and 1 - a stretched by their inverse widths, the second stacked (fold=0) or flipped (fold=1), "
        "then z' = z + shear x'. Moment rates L(p) = ln(a^(1-p) + (1-a)^(1-p)) per iteration.",
        validate=_check_sfs,
    )


def custom_map(
    image: Sequence,
    params: Mapping[str, float] | None = None,
    *,
    inverse: Sequence | None = None,
    periods: Sequence[float] = (0.0, 0.0, 0.0),
    box: Sequence[Sequence[float]] = ((0, 1), (0, 1), (0, 1)),
    name: str = "custom-map",
) -> Map:
    """A map from your own formulas.

    Parameters
    ----------
    image : sequence of 3 str or sympy expressions
        F(x, y, z) in the symbols ``x, y, z`` and the parameter names
        (``Piecewise`` is allowed for maps defined by cases).
    params : mapping, optional
        Parameter names and default values.
    inverse : sequence of 3, optional
        The inverse map (needed for backward iteration, e.g. net flux).
    periods : 3 floats
        Period of each coordinate (0 = not periodic); images are wrapped.
    box : 3 (low, high) pairs
        Cell for random seeds and :meth:`Map.contains`.
    name : str
        Name used in provenance.

    Returns
    -------
    Map
    """
    from flowkit.flows.custom import _parse_strings, _normalize_symbols
    from flowkit.flows.grammar import check_parameter_names, to_text

    params = dict(params or {})
    check_parameter_names(params, "params")
    if len(periods) != 3 or any(not (math.isfinite(p) and p >= 0) for p in periods):
        raise FlowkitError(f"`periods` must be three non-negative numbers (0 = not periodic); got {periods!r}")
    if len(box) != 3 or any(len(b) != 2 or not b[0] < b[1] for b in box):
        raise FlowkitError(f"`box` must be three (low, high) pairs with low < high; got {box!r}")

    def parse(exprs, label):
        if not (isinstance(exprs, (list, tuple)) and len(exprs) == 3):
            raise FlowkitError(f"`{label}` must be a sequence of three expressions")
        if all(isinstance(e, str) for e in exprs):
            return _parse_strings(exprs, list(params), what=f"map {label} component")
        return _normalize_symbols(exprs, list(params), what=f"map {label} component")

    img = parse(image, "image")
    inv = parse(inverse, "inverse") if inverse is not None else None
    fam = _map_family(name, img, inv, list(params.items()), periods, box, "user-defined map")
    fam.structure["recipe"] = {"map": [to_text(e) for e in img], "inverse": [to_text(e) for e in inv] if inv else None,
                               "params": params, "periods": list(periods), "box": [list(b) for b in box],
                               "name": name}
    return Map(fam)


#: Presets registered with the flow registry: name -> (builder, one-line summary).
MAP_PRESETS = {
    "cat-map": (cat_map_family, "Arnold's cat map on the unit torus (discrete time; exact rate ln((3+sqrt5)/2))"),
    "sfs-map": (sfs_map_family, "stretch-fold-shear map of the unit cube (discrete time; exact moment rates)"),
}


def _rebuild_map(recipe: dict, params: dict) -> Map:
    """Rebuild a map from its provenance recipe (used for pickling; the recipe is checked as data)."""
    from flowkit.flows.registry import rebuild_flow

    return rebuild_flow(recipe, params, "map recipe")


def _register() -> None:
    from flowkit.flows.registry import EXTRA

    EXTRA.update(MAP_PRESETS)


_register()
