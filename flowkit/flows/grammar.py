"""The formula grammar: text in, sympy expression out, and no code ever runs.

Formulas (user velocity fields, map images, recipes read back from files) are
parsed with :func:`ast.parse` in expression mode and the tree is walked against a
whitelist: numbers, the coordinates ``x, y, z, t``, declared parameter names,
the constants ``pi`` and ``e`` (``E``), ``+ - * / **``, unary signs,
parentheses, the functions in :data:`FUNCTIONS` and, for maps defined by cases,
``Piecewise((expr, condition), ...)`` with comparisons joined by ``&``, ``|``,
``~``. Every sympy object is built by construction (``sp.Symbol``,
``sp.Integer``, ``sp.sin``, ...); nothing is handed to ``eval``, ``sympify`` or
``parse_expr``.

Limits keep a hostile formula from hanging sympy: the length of the text, the
nesting depth, the size of integer literals and of exact powers (``9**9**9`` is
refused before it is computed), and the exponent of a symbolic power. Errors are
:class:`~flowkit.errors.FlowDefinitionError` and point at the offending piece
with a caret line.

Everything sympy's ``str()`` prints for these expressions reads back (``Abs``,
``atan2``, ``E``, ``3/2``, ``Piecewise((x/a, a > x), (1, True))``);
:func:`to_text` prints floats with all 17 digits so recipes round-trip exactly.
"""

from __future__ import annotations

import ast
import keyword
import re
import warnings
from typing import Iterable, Sequence

import sympy as sp

from flowkit.errors import FlowDefinitionError
from flowkit.flows.grammar_walk import (_RESERVED, _UNDEFINED, CONSTANTS, FUNCTIONS, MAX_DEPTH,  # noqa: F401
                                        MAX_DIGITS, MAX_LENGTH, MAX_POWER, _At, _check_finite, _Parser)
from flowkit.flows.sympy_values import as_sympy, to_text  # noqa: F401  (part of the grammar's API)


def coordinate_symbols() -> dict[str, sp.Symbol]:
    """flowkit's own coordinate symbols (real), by name."""
    from flowkit.flows.codegen import T, X, Y, Z

    return {"x": X, "y": Y, "z": Z, "t": T}


def check_parameter_names(names: Iterable, where: str = "params") -> list[str]:
    """Refuse parameter names the grammar or the generated code could confuse; return them as a list."""
    out = []
    for name in names:
        bad = None
        if not isinstance(name, str) or not name.isidentifier() or not name.isascii():
            bad = "must be an ASCII identifier"
        elif keyword.iskeyword(name):
            bad = "is a Python keyword"
        elif name in ("x", "y", "z", "t"):
            bad = "is a coordinate"
        elif name.startswith("_"):
            bad = "must not start with an underscore (reserved for generated code)"
        elif name in FUNCTIONS or name in CONSTANTS or name in _RESERVED or name in _UNDEFINED:
            bad = "is a function or constant name of the formula grammar"
        if bad:
            raise FlowDefinitionError(f"`{where}`: parameter name {name!r} {bad}; choose another name "
                                      "(anything but x, y, z, t, function and constant names)")
        out.append(name)
    return out


def parse_formula(text: str, params: Sequence[str] = (), *, label: str = "formula",
                  coordinates: Sequence[str] = ("x", "y", "z", "t")) -> sp.Expr:
    """Parse one formula into a sympy expression (see the module docstring for the grammar).

    Parameters
    ----------
    text : str
        The formula, e.g. ``"A*sin(z) + C*cos(y)"``.
    params : sequence of str
        Declared parameter names; each becomes a real sympy symbol.
    label : str
        What the formula is, for error messages (e.g. ``"velocity component 0"``).
    coordinates : sequence of str
        Which of ``x, y, z, t`` may appear.

    Raises
    ------
    FlowDefinitionError
        Naming ``label``, the offending piece and its column.
    """
    if not isinstance(text, str):
        raise FlowDefinitionError(f"{label}: a formula must be text; got {type(text).__name__}")
    if len(text) > MAX_LENGTH:
        raise FlowDefinitionError(f"{label}: formula has {len(text):,} characters, more than {MAX_LENGTH:,}")
    for i, ch in enumerate(text):
        if not (ch.isascii() and (ch.isprintable() or ch in "\t\n\r")):
            raise FlowDefinitionError(f"{label}: character {ch!r} at column {i + 1} is not allowed (use plain "
                                      f"ASCII: * for times, - for minus)\n    {text!r}")
    one_line = text.replace("\t", " ").replace("\n", " ").replace("\r", " ")
    if not one_line.strip():
        raise FlowDefinitionError(f"{label}: the formula is empty")
    names = {k: v for k, v in coordinate_symbols().items() if k in coordinates}
    names.update({n: sp.Symbol(n, real=True) for n in check_parameter_names(params)})
    parser = _Parser(one_line, names, label)
    terms = []
    for sign, start, piece in _top_level_terms(one_line):
        node = _parse_piece(parser, piece, start)
        try:
            val = parser.expr(node)
        except RecursionError:
            raise FlowDefinitionError(f"{label}: formula nested too deeply") from None
        terms.append(-val if sign < 0 else val)
    out = sp.Add(*terms)
    _check_finite(out, parser, _At(0, len(one_line)))
    return out


_WORD = re.compile(r"[A-Za-z0-9_.]*$")
_MANTISSA = re.compile(r"(\d+\.?\d*|\.\d+)[eE]$")


def _top_level_terms(text: str) -> list[tuple[int, int, str]]:
    """Split at the + and - that join top-level terms: (sign, column, text) of each term.

    Python's parser nests a sum of n terms n levels deep, so long sums (sympy
    prints polynomials with hundreds of terms) are parsed term by term.
    """
    out, depth, start, sign = [], 0, 0, 1
    prev = ""  # last non-blank character
    for i, ch in enumerate(text):
        if ch in "([":
            depth += 1
        elif ch in ")]":
            depth -= 1
        elif ch in "+-" and depth == 0 and prev != "" and (prev.isalnum() or prev in "_.)]"):
            word = _WORD.search(text[:i].rstrip()).group()
            if not _MANTISSA.fullmatch(word):  # not the sign of an exponent as in 1e-5
                out.append((sign, start, text[start:i]))
                sign, start = (1 if ch == "+" else -1), i + 1
        if not ch.isspace():
            prev = ch
    out.append((sign, start, text[start:]))
    return out


def _parse_piece(parser: _Parser, piece: str, start: int):
    """The syntax tree of one term, its columns counted in the whole formula."""
    shift = start + len(piece) - len(piece.lstrip())  # ast refuses leading blanks
    body = piece.strip()
    if not body:
        parser.fail(_At(max(0, start - 1)), "a term is missing around this + or -")
    try:
        with warnings.catch_warnings():  # e.g. "invalid decimal literal": the syntax error says it better
            warnings.simplefilter("ignore", SyntaxWarning)
            warnings.simplefilter("ignore", DeprecationWarning)
            tree = ast.parse(body, mode="eval")
    except SyntaxError as exc:
        col = max(0, min(shift + (exc.offset or 1) - 1, len(parser.text) - 1))
        parser.fail(_At(col), f"not a formula ({exc.msg})")
    except (ValueError, RecursionError, MemoryError) as exc:
        raise FlowDefinitionError(f"{parser.label}: not a formula ({type(exc).__name__}: {str(exc)[:200]})") \
            from None
    for node in ast.walk(tree):
        if hasattr(node, "col_offset"):
            node.col_offset += shift
            if getattr(node, "end_col_offset", None) is not None:
                node.end_col_offset += shift
    return tree.body


def parse_formulas(items: Sequence[str], params: Sequence[str] = (), *, what: str = "velocity component",
                   coordinates: Sequence[str] = ("x", "y", "z", "t")) -> tuple:
    """Parse three (or any number of) formulas; errors name ``what`` and the component index."""
    return tuple(parse_formula(s, params, label=f"{what} {i} ({s!r:.60})" if isinstance(s, str) else f"{what} {i}",
                               coordinates=coordinates) for i, s in enumerate(items))



def as_expression(value, params: Sequence[str] = (), *, label: str = "expression",
                  coordinates: Sequence[str] = ("x", "y", "z", "t")):
    """Text through the grammar, numbers and sympy objects as they are."""
    if isinstance(value, str):
        return parse_formula(value, params, label=label, coordinates=coordinates)
    return as_sympy(value, label)
