"""The whitelist walk of the formula grammar: one syntax tree in, sympy objects out.

:mod:`flowkit.flows.grammar` splits and parses the text; this module holds the
tables of what is allowed (functions, constants, operators, limits) and the
walker that builds every sympy object by construction.
"""

from __future__ import annotations

import ast
import math

import sympy as sp

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
