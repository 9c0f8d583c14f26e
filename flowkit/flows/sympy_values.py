"""Sympy objects from Python values, and text from sympy objects, without a parser.

:func:`as_sympy` is flowkit's only door from numbers to sympy besides the formula
grammar (it refuses text); :func:`to_text` prints an expression so that
:func:`flowkit.flows.grammar.parse_formula` reads it back exactly.
"""

from __future__ import annotations

import math

import sympy as sp
from sympy.printing.str import StrPrinter

from flowkit.errors import FlowDefinitionError


class _RecipePrinter(StrPrinter):
    """sympy's str(), except floats carry all 17 significant digits (exact round trip)."""

    def _print_Float(self, expr):
        return repr(float(expr))


def to_text(expr) -> str:
    """Text of a sympy expression that :func:`parse_formula` reads back exactly."""
    return _RecipePrinter().doprint(expr)


def as_sympy(value, label: str = "expression"):
    """A sympy object for a number or sympy object; text is refused (it must go through :func:`parse_formula`).

    This is flowkit's only door from Python values to sympy besides the grammar,
    so no string is ever handed to sympy's parser.
    """
    import numpy as np

    if isinstance(value, sp.Basic):
        return value
    if isinstance(value, (bool, np.bool_)):
        raise FlowDefinitionError(f"{label}: expected a number or a sympy expression; got {value!r}")
    if isinstance(value, (int, np.integer)):
        return sp.Integer(int(value))
    if isinstance(value, (float, np.floating)):
        if not math.isfinite(float(value)):
            raise FlowDefinitionError(f"{label}: {value!r} is not a finite number")
        return sp.Float(float(value))
    if isinstance(value, str):
        raise FlowDefinitionError(f"{label}: text {value[:60]!r} must be parsed with the formula grammar "
                                  "(flowkit.flows.grammar.parse_formula), not converted directly")
    raise FlowDefinitionError(f"{label}: expected a number, a formula or a sympy expression; "
                              f"got a {type(value).__name__}")
