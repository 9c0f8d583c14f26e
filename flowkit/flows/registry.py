"""Named preset flows.

Families are built (symbolic work, code generation) on first request and kept,
so every :class:`~flowkit.flows.base.Flow` of one preset shares compiled kernels.
"""

from __future__ import annotations

import difflib
import threading
from typing import Callable

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow, FlowFamily


def _builders() -> dict[str, tuple[Callable[[], FlowFamily], str]]:
    from flowkit.flows import map_presets  # noqa: F401  (registers the discrete-time map presets in EXTRA)
    from flowkit.flows import periodic, sphere, sphere_benchmarks, systems

    return {
        "stf": (sphere.stf_family, "stretch-twist-fold Stokes flow in the sphere + rotation about y"),
        "hill": (sphere.hill_family, "Hill's spherical vortex with optional swirl"),
        **{name: (lambda n=name: sphere_benchmarks.benchmark_family(n),
                  f"sphere-dynamo benchmark flow {name} (Proc. R. Soc. Lond. A 425, 1989)")
           for name in sphere_benchmarks.BENCHMARK_FLOWS},
        "abc": (periodic.abc_family, "ABC (Arnold-Beltrami-Childress) flow, 2*pi-periodic"),
        "roberts": (periodic.roberts_family, "Roberts cell flow, 2*pi-periodic, z-independent"),
        "circular": (periodic.circular_family, "circularly polarized time-periodic dynamo flow"),
        "double-gyre": (systems.double_gyre_family, "planar time-periodic double gyre"),
        "lorenz": (systems.lorenz_family, "Lorenz system (validation)"),
        "rossler": (systems.rossler_family, "Rossler system (validation)"),
    }


#: Extra presets registered by other modules (e.g. discrete maps): name -> (builder, summary).
EXTRA: dict[str, tuple[Callable[[], FlowFamily], str]] = {}

_FAMILIES: dict[str, FlowFamily] = {}
_LOCK = threading.Lock()


def preset_names(maps: bool = False) -> list[str]:
    """Names of every preset flow; with ``maps=True`` also the discrete-time maps (``flowkit.flows.maps``)."""
    table = {**_builders(), **EXTRA}
    return sorted(k for k in table if maps or k not in _map_names())


def _map_names() -> set[str]:
    from flowkit.flows.map_presets import MAP_PRESETS

    return set(MAP_PRESETS)


def preset_summary() -> dict[str, str]:
    """One-line summary of each preset."""
    table = {**_builders(), **EXTRA}
    return {k: table[k][1] for k in sorted(table)}


def family(name: str) -> FlowFamily:
    """The (shared) family of a preset; raise a helpful error for unknown names."""
    table = {**_builders(), **EXTRA}
    if name not in table:
        close = difflib.get_close_matches(name, table, n=1)
        hint = f" Did you mean '{close[0]}'?" if close else ""
        raise FlowkitError(f"unknown flow '{name}'.{hint} Available flows: {', '.join(sorted(table))}")
    with _LOCK:
        if name not in _FAMILIES:
            fam = table[name][0]()
            fam.structure.setdefault("recipe", {"preset": name})
            _FAMILIES[name] = fam
        return _FAMILIES[name]


def flow(name: str, **params: float) -> Flow:
    """A preset flow with parameters.

    Parameters
    ----------
    name : str
        Preset name (see :func:`preset_names`).
    **params : float
        Parameter values; the rest keep their defaults.

    Examples
    --------
    >>> import flowkit
    >>> f = flowkit.flow("stf", rotation=0.3)
    >>> f.velocity([[0.1, 0.2, 0.3]]).shape
    (1, 3)
    """
    if not isinstance(name, str):
        raise FlowkitError(f"flow name must be a string; got {type(name).__name__}")
    fam = family(name)
    if fam.kind == "map":  # discrete-time maps (flowkit.flows.maps) have their own type
        from flowkit.flows.maps import Map

        return Map(fam, params)
    return Flow(fam, params)


def rebuild_flow(recipe: dict, params: dict, where: str = "recipe") -> Flow:
    """Rebuild a flow (or map) from the recipe in its provenance.

    The recipe is data (it may come from a file): :func:`flowkit.flows.recipes.check_recipe`
    refuses unknown keys and types, naming ``where``; formulas are read by the
    formula grammar, never evaluated.
    """
    from flowkit.flows.recipes import check_params, check_recipe

    kind = check_recipe(recipe, where)
    params = check_params(params, f"{where} parameters")
    if kind == "preset":
        return flow(recipe["preset"], **params)
    if kind == "lamb":
        from flowkit.flows.sphere import lamb_flow

        coeffs = dict(recipe["lamb"])
        coeffs.update(params)
        return lamb_flow(coeffs, name=recipe.get("name", "lamb"))
    pars = dict(recipe["params"])
    pars.update(params)
    try:
        if kind == "map":
            from flowkit.flows import custom_map

            kw = {k: recipe[k] for k in ("inverse", "periods", "box", "name") if k in recipe}
            return custom_map(list(recipe["map"]), pars, **kw)
        from flowkit.flows.custom import custom_flow

        return custom_flow(list(recipe["custom"]), pars, domain=recipe["domain"], period=recipe["period"],
                           name=recipe["name"], kind=recipe["kind"])
    except FlowkitError as exc:
        raise type(exc)(f"{where}: {exc}") from None
