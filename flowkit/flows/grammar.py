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
import math
import re
import warnings
from typing import Iterable, Sequence

import sympy as sp
from sympy.printing.str import StrPrinter

from flowkit.errors import FlowDefinitionError

#: Longest formula accepted, in characters.
MAX_LENGTH = 20_000
#: Deepest nesting of calls, parentheses and powers.
MAX_DEPTH = 60
#: Most digits in an integer literal or an exact numeric power.
MAX_DIGITS = 300
#: Largest |exponent| of a number raised onto a symbolic base (x**32 is fine, x**10**9 is not).
MAX_POWER = 32

#: Function names (numpy, math and sympy spellings) -> (sympy function, allowed argument counts).
FUNCTIONS: dict[str, tuple[object, tuple[int, ...]]] = {
    "sin": (sp.sin, (1,)), "cos": (sp.cos, (1,)), "tan": (sp.tan, (1,)),
    "exp": (sp.exp, (1,)), "log": (sp.log, (1, 2)), "ln": (sp.log, (1,)), "sqrt": (sp.sqrt, (1,)),
    "abs": (sp.Abs, (1,)), "Abs": (sp.Abs, (1,)), "fabs": (sp.Abs, (1,)),
    "sinh": (sp.sinh, (1,)), "cosh": (sp.cosh, (1,)), "tanh": (sp.tanh, (1,)),
    "arcsin": (sp.asin, (1,)), "asin": (sp.asin, (1,)),
    "arccos": (sp.acos, (1,)), "acos": (sp.acos, (1,)),
    "arctan": (sp.atan, (1,)), "atan": (sp.atan, (1,)),
    "arctan2": (sp.atan2, (2,)), "atan2": (sp.atan2, (2,)),
    "floor": (sp.floor, (1,)), "ceiling": (sp.ceiling, (1,)), "ceil": (sp.ceiling, (1,)),
    "mod": (sp.Mod, (2,)), "Mod": (sp.Mod, (2,)), "sign": (sp.sign, (1,)),
    "min": (sp.Min, (2, 3, 4, 5, 6, 7, 8)), "Min": (sp.Min, (2, 3, 4, 5, 6, 7, 8)),
    "max": (sp.Max, (2, 3, 4, 5, 6, 7, 8)), "Max": (sp.Max, (2, 3, 4, 5, 6, 7, 8)),
}
#: Named constants.
CONSTANTS = {"pi": sp.pi, "e": sp.E, "E": sp.E}
#: Names whose meaning in sympy's printout is "this formula is undefined".
_UNDEFINED = {"nan", "zoo", "oo", "I", "j"}
#: Names the generated numba code uses itself, so parameters may not take them.
_RESERVED = {"math", "Piecewise", "And", "Or", "Not", "True", "False"}

_COMPARE = {ast.Lt: sp.Lt, ast.LtE: sp.Le, ast.Gt: sp.Gt, ast.GtE: sp.Ge}
_BINARY = {ast.Add: "+", ast.Sub: "-", ast.Mult: "*", ast.Div: "/", ast.Pow: "**"}


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


class _Parser:
    """One walk over one formula's syntax tree."""

    def __init__(self, text: str, names: dict[str, sp.Symbol], label: str):
        self.text = text
        self.names = names
        self.label = label

    # -- errors ------------------------------------------------------------------
    def fail(self, node, message: str):
        start = getattr(node, "col_offset", None)
        end = getattr(node, "end_col_offset", None)
        where = ""
        if start is not None:
            end = end if end is not None and end > start else start + 1
            piece = self.text[start:end]
            where = f" at column {start + 1} ({piece!r})"
            caret = "\n    " + self.text + "\n    " + " " * start + "^" * max(1, end - start)
        else:
            caret = "\n    " + self.text
        raise FlowDefinitionError(f"{self.label}: {message}{where}{caret}")

    # -- expressions ---------------------------------------------------------------
    def expr(self, node, depth: int = 0):
        if depth > MAX_DEPTH:
            self.fail(node, f"nested more than {MAX_DEPTH} levels deep")
        if isinstance(node, ast.BinOp) and type(node.op) in (ast.Add, ast.Sub):
            return self._chain(node, depth, (ast.Add, ast.Sub))
        if isinstance(node, ast.BinOp) and type(node.op) in (ast.Mult, ast.Div):
            return self._chain(node, depth, (ast.Mult, ast.Div))
        if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Pow):
            return self._power(node, self.expr(node.left, depth + 1), self.expr(node.right, depth + 1))
        if isinstance(node, ast.BinOp):
            hint = " (use ** for powers)" if isinstance(node.op, ast.BitXor) else ""
            self.fail(node, f"operator not allowed in a formula{hint}; use + - * / **")
        if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
            val = self.expr(node.operand, depth + 1)
            return -val if isinstance(node.op, ast.USub) else val
        if isinstance(node, ast.Constant):
            return self.number(node)
        if isinstance(node, ast.Name):
            return self.name(node)
        if isinstance(node, ast.Call):
            return self.call(node, depth)
        if isinstance(node, (ast.Compare, ast.BoolOp)):
            self.fail(node, "a condition is only allowed inside Piecewise((value, condition), ...)")
        if isinstance(node, ast.Attribute):
            self.fail(node, "attribute access is not allowed; write sin(x), not math.sin(x)")
        self.fail(node, f"{type(node).__name__.lower()} is not part of the formula grammar")

    def _chain(self, node, depth, ops):
        """A run of + and - (or * and /) flattened, so long sums cost no recursion."""
        items, top = [], node
        while isinstance(node, ast.BinOp) and isinstance(node.op, ops):
            items.append((node.op, node.right))
            node = node.left
        terms = [self.expr(node, depth + 1)]
        for op, right in reversed(items):
            val = self.expr(right, depth + 1)
            if isinstance(op, ast.Sub):
                terms.append(-val)
            elif isinstance(op, ast.Div):
                if val == 0:
                    self.fail(right, "division by zero")
                terms.append(1 / val if val.is_Number else sp.Pow(val, -1))
            else:
                terms.append(val)
        out = self.build(top, sp.Add if ops[0] is ast.Add else sp.Mul, *terms)
        _check_powers(out, self, top)
        return out

    def _power(self, node, base, exp):
        if exp.is_Number:
            if base.is_Number:
                if base == 0 and exp.is_negative:
                    self.fail(node, "zero raised to a negative power")
                if base.is_Rational and exp.is_Rational:
                    size = max(abs(int(base.p)), abs(int(base.q)), 2)
                    digits = abs(float(exp)) * math.log10(size) if size < 10**MAX_DIGITS else math.inf
                    if digits > MAX_DIGITS:
                        self.fail(node, f"exact power with about {digits:.3g} digits (more than {MAX_DIGITS}); "
                                        "write a float base (e.g. 9.0**99) or a smaller power")
            elif abs(float(exp)) > MAX_POWER:
                self.fail(node, f"power {str(exp)[:40]} is larger than {MAX_POWER} in size; rewrite it (e.g. exp(n*log(x)))")
        out = self.build(node, sp.Pow, base, exp)
        _check_powers(out, self, node)
        return out

    def number(self, node):
        val = node.value
        if isinstance(val, bool) or not isinstance(val, (int, float)):
            kind = "complex number" if isinstance(val, complex) else type(val).__name__
            self.fail(node, f"{kind} literal is not allowed; formulas hold real numbers")
        if isinstance(val, int):
            if val.bit_length() > MAX_DIGITS * 3.33:
                self.fail(node, f"integer with more than {MAX_DIGITS} digits")
            return sp.Integer(val)
        if not math.isfinite(val):
            self.fail(node, "number too large for double precision")
        return sp.Float(val)

    def name(self, node):
        n = node.id
        if n in self.names:
            return self.names[n]
        if n in CONSTANTS:
            return CONSTANTS[n]
        if n in FUNCTIONS:
            self.fail(node, f"{n} is a function; call it, e.g. {n}(x)")
        if n in _UNDEFINED:
            self.fail(node, f"{n!r} (infinite, undefined or imaginary) is not a real finite value")
        known = ", ".join(self.names)
        self.fail(node, f"unknown symbol {n!r}; use {known}, pi, e or declare it in `params`")

    def call(self, node, depth):
        if not isinstance(node.func, ast.Name):
            self.fail(node.func, "only named functions can be called, e.g. sin(x)")
        fname = node.func.id
        if node.keywords:
            self.fail(node.keywords[0].value, f"{fname}() takes no keyword arguments")
        if any(isinstance(a, ast.Starred) for a in node.args):
            self.fail(node, "starred arguments are not allowed")
        if fname == "Piecewise":
            return self.piecewise(node, depth)
        if fname not in FUNCTIONS:
            known = ", ".join(sorted(k for k in FUNCTIONS if k.islower()))
            self.fail(node.func, f"unknown function {fname!r}; known: {known}, Piecewise")
        func, nargs = FUNCTIONS[fname]
        if len(node.args) not in nargs:
            want = " or ".join(map(str, nargs[:2])) + (" or more" if len(nargs) > 2 else "")
            self.fail(node, f"{fname}() takes {want} argument(s); got {len(node.args)}")
        args = [self.expr(a, depth + 1) for a in node.args]
        return self.build(node, func, *args)

    def build(self, node, func, *args):
        """``func(*args)`` with sympy's own complaints (e.g. Mod(x, 0)) reported at ``node``."""
        try:
            out = func(*args)
        except (ArithmeticError, ValueError, TypeError, AttributeError) as exc:
            self.fail(node, f"sympy refuses this piece ({type(exc).__name__}: {str(exc)[:120]})")
        if isinstance(out, sp.Expr) and out.is_number:
            self.settle(node, out)
        return out

    def settle(self, node, value) -> None:
        """A constant piece must be a finite real double; checked at every step, so towers of
        huge numbers (exp(1e300**9), mod(2, 9**1e300)) stop before sympy works on them."""
        if value.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
            self.fail(node, "the formula is undefined or infinite here (e.g. log(0), 1/0, tan(pi/2))")
        try:
            v = complex(value.evalf(15))
        except (TypeError, ValueError, ArithmeticError):
            self.fail(node, "this constant cannot be evaluated to a number")
        if not (math.isfinite(v.real) and math.isfinite(v.imag)):
            self.fail(node, "this constant does not fit in double precision")
        if abs(v.imag) > 1e-12 * (1 + abs(v.real)):
            self.fail(node, "this constant is complex (e.g. sqrt(-1), log(-1)); formulas are real")

    # -- conditions (Piecewise only) ---------------------------------------------------
    def piecewise(self, node, depth):
        if not node.args:
            self.fail(node, "Piecewise needs at least one (value, condition) pair")
        pairs = []
        for arg in node.args:
            if not (isinstance(arg, ast.Tuple) and len(arg.elts) == 2):
                self.fail(arg, "each Piecewise argument must be a pair (value, condition)")
            pairs.append((self.expr(arg.elts[0], depth + 1), self.condition(arg.elts[1], depth + 1)))
        return self.build(node, sp.Piecewise, *pairs)

    def condition(self, node, depth):
        if depth > MAX_DEPTH:
            self.fail(node, f"nested more than {MAX_DEPTH} levels deep")
        if isinstance(node, ast.Constant) and isinstance(node.value, bool):
            return sp.true if node.value else sp.false
        if isinstance(node, ast.Name) and node.id in ("True", "False"):
            return sp.true if node.id == "True" else sp.false
        if isinstance(node, ast.Compare):
            parts, left = [], self.expr(node.left, depth + 1)
            for op, comp in zip(node.ops, node.comparators):
                if type(op) not in _COMPARE:
                    self.fail(node, "only <, <=, > and >= compare values in a condition")
                right = self.expr(comp, depth + 1)
                parts.append(self.build(node, _COMPARE[type(op)], left, right))
                left = right
            return sp.And(*parts)
        if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.BitAnd, ast.BitOr)):
            a, b = self.condition(node.left, depth + 1), self.condition(node.right, depth + 1)
            return sp.And(a, b) if isinstance(node.op, ast.BitAnd) else sp.Or(a, b)
        if isinstance(node, ast.BoolOp):
            vals = [self.condition(v, depth + 1) for v in node.values]
            return sp.And(*vals) if isinstance(node.op, ast.And) else sp.Or(*vals)
        if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.Invert, ast.Not)):
            return sp.Not(self.condition(node.operand, depth + 1))
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id in ("And", "Or", "Not") \
                and not node.keywords:
            vals = [self.condition(v, depth + 1) for v in node.args]
            if node.func.id == "Not":
                if len(vals) != 1:
                    self.fail(node, "Not() takes one condition")
                return sp.Not(vals[0])
            return sp.And(*vals) if node.func.id == "And" else sp.Or(*vals)
        self.fail(node, "not a condition; write comparisons such as x < a, joined by & or |")


class _At:
    """A position in the text without a node (syntax errors)."""

    def __init__(self, col: int, end: int | None = None):
        self.col_offset, self.end_col_offset = col, end


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


def _check_powers(expr, parser: _Parser, node) -> None:
    """Refuse symbolic powers beyond MAX_POWER, however they arose ((x**8)**8, x*x*...*x)."""
    stack = [expr]
    while stack:
        e = stack.pop()
        if e.is_Pow and e.exp.is_Number and not e.base.is_Number and abs(float(e.exp)) > MAX_POWER:
            parser.fail(node, f"gives the power {str(e.exp)[:40]} of a symbolic base, larger than {MAX_POWER} in size")
        if e.is_Add or e.is_Mul:
            stack.extend(e.args)


def _check_finite(expr, parser: _Parser, node) -> None:
    if not isinstance(expr, sp.Basic):
        parser.fail(node, "not an expression")
    if expr.has(sp.zoo, sp.nan, sp.oo, -sp.oo, sp.I):
        parser.fail(node, "the formula is undefined, infinite or complex here (e.g. log(0), 1/0, sqrt(-1))")
    for num in expr.atoms(sp.Number):
        try:
            ok = math.isfinite(float(num))
        except (OverflowError, TypeError, ValueError):
            ok = False
        if not ok:
            parser.fail(node, f"the number {str(num)[:40]} does not fit in double precision")


def parse_formulas(items: Sequence[str], params: Sequence[str] = (), *, what: str = "velocity component",
                   coordinates: Sequence[str] = ("x", "y", "z", "t")) -> tuple:
    """Parse three (or any number of) formulas; errors name ``what`` and the component index."""
    return tuple(parse_formula(s, params, label=f"{what} {i} ({s!r:.60})" if isinstance(s, str) else f"{what} {i}",
                               coordinates=coordinates) for i, s in enumerate(items))


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


def as_expression(value, params: Sequence[str] = (), *, label: str = "expression",
                  coordinates: Sequence[str] = ("x", "y", "z", "t")):
    """Text through the grammar, numbers and sympy objects as they are."""
    if isinstance(value, str):
        return parse_formula(value, params, label=label, coordinates=coordinates)
    return as_sympy(value, label)
