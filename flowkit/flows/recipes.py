"""Recipes are data: the checks a flow recipe passes before a flow is rebuilt from it.

A recipe (``flow.family.structure["recipe"]``) travels in saved results, sweep
manifests and task payloads. Read back from a file it is untrusted, so
:func:`check_recipe` accepts exactly the keys and value types flowkit writes and
names the file and key of anything else. Formulas inside are text for the
formula grammar (:mod:`flowkit.flows.grammar`), read later by
:func:`~flowkit.flows.custom.custom_flow` or :func:`~flowkit.flows.custom_map`,
never evaluated.
"""

from __future__ import annotations

import math

from flowkit.errors import FlowkitError

_NAME_LENGTH = 200
_FORMULA_LENGTH = 20_000


def _is_number(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def _text(v, limit=_NAME_LENGTH) -> bool:
    return isinstance(v, str) and len(v) <= limit


def _formulas(v) -> bool:
    return isinstance(v, (list, tuple)) and len(v) == 3 and all(_text(e, _FORMULA_LENGTH) for e in v)


def _numbers_by_name(v) -> bool:
    return isinstance(v, dict) and all(_text(k) and _is_number(x) for k, x in v.items())


def _optional(check):
    return lambda v: v is None or check(v)


def _box(v) -> bool:
    return isinstance(v, (list, tuple)) and len(v) == 3 and all(
        isinstance(b, (list, tuple)) and len(b) == 2 and all(_is_number(x) for x in b) for b in v)


def _three_numbers(v) -> bool:
    return isinstance(v, (list, tuple)) and len(v) == 3 and all(_is_number(x) for x in v)


#: Recipe kinds: the key that names the kind -> {key: (required, check, what it must be)}.
SCHEMAS = {
    "preset": {"preset": (True, _text, "a preset name")},
    "lamb": {"lamb": (True, _numbers_by_name, "a mapping of harmonic labels to numbers"),
             "name": (False, _text, "a name")},
    "custom": {"custom": (True, _formulas, "three formula strings"),
               "params": (True, _numbers_by_name, "a mapping of parameter names to numbers"),
               "domain": (True, _text, "a domain name"),
               "period": (True, _optional(_is_number), "a number or null"),
               "name": (True, _text, "a name"),
               "kind": (True, _text, "'flow', 'system' or 'planar'")},
    "map": {"map": (True, _formulas, "three formula strings"),
            "inverse": (False, _optional(_formulas), "three formula strings or null"),
            "params": (True, _numbers_by_name, "a mapping of parameter names to numbers"),
            "periods": (False, _three_numbers, "three numbers"),
            "box": (False, _box, "three [low, high] pairs"),
            "name": (False, _text, "a name")},
}


def check_recipe(recipe, where: str = "recipe") -> str:
    """Refuse anything but a recipe flowkit writes; return its kind.

    Parameters
    ----------
    recipe : object
        Read from a file or a payload.
    where : str
        Where it came from (a file name and key path), for the error message.
    """
    if not isinstance(recipe, dict):
        raise FlowkitError(f"{where}: a flow recipe must be a mapping; got {type(recipe).__name__}")
    kinds = [k for k in SCHEMAS if k in recipe]
    if len(kinds) != 1:
        raise FlowkitError(f"{where}: a flow recipe names exactly one of {', '.join(SCHEMAS)}; "
                           f"got keys {sorted(map(str, recipe))}")
    kind = kinds[0]
    schema = SCHEMAS[kind]
    for key in recipe:
        if key not in schema:
            raise FlowkitError(f"{where}: unknown key {key!r} in a {kind!r} recipe; allowed: {', '.join(schema)}")
    for key, (required, check, what) in schema.items():
        if key not in recipe:
            if required:
                raise FlowkitError(f"{where}: the {kind!r} recipe lacks key {key!r} ({what})")
            continue
        if not check(recipe[key]):
            raise FlowkitError(f"{where}: key {key!r} of the {kind!r} recipe must be {what}; "
                               f"got {_short(recipe[key])}")
    return kind


def check_params(params, where: str = "parameters") -> dict:
    """A mapping of parameter names to finite numbers (as floats)."""
    if params is None:
        return {}
    if not isinstance(params, dict):
        raise FlowkitError(f"{where}: parameters must be a mapping of names to numbers; got {type(params).__name__}")
    for k, v in params.items():
        if not _text(k):
            raise FlowkitError(f"{where}: parameter name {_short(k)} must be a short string")
        if not _is_number(v) and not _numpy_number(v):
            raise FlowkitError(f"{where}: parameter {k!r} must be a finite number; got {_short(v)}")
    return {k: float(v) for k, v in params.items()}


def _numpy_number(v) -> bool:
    import numpy as np

    return isinstance(v, (np.integer, np.floating)) and bool(np.isfinite(v))


def _short(v) -> str:
    text = repr(v)
    return text if len(text) <= 80 else text[:77] + "..."
