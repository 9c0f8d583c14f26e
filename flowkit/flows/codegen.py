"""Generate numba source for a velocity field and its exact gradient from sympy.

The gradient is differentiated symbolically, never typed by hand, and common
subexpressions are shared between the three velocity components and the nine
gradient entries of each function.
"""

from __future__ import annotations

from typing import Sequence

import sympy as sp
from sympy.printing.pycode import PythonCodePrinter

X, Y, Z, T = sp.symbols("x y z t", real=True)
COORDS = (X, Y, Z)


class _NumbaPrinter(PythonCodePrinter):
    """Plain ``math.*`` calls and float literals, so numba sees scalar code."""

    def _print_Rational(self, expr):
        return f"({float(expr.p)!r}/{float(expr.q)!r})"

    def _print_Integer(self, expr):
        return f"{float(expr)!r}"

    def _print_Pow(self, expr, rational=False):
        base, exp = expr.as_base_exp()
        if exp.is_Integer and 1 < int(exp) <= 4:  # small powers as products: faster, exact
            b = self.parenthesize(base, 100)
            return "*".join([b] * int(exp))
        return super()._print_Pow(expr, rational=rational)


def _print(expr) -> str:
    printer = _NumbaPrinter({"fully_qualified_modules": True, "standard": "python3"})
    return printer.doprint(expr)


def _body(exprs: Sequence[sp.Expr], params: Sequence[sp.Symbol]) -> list[str]:
    lines = [f"    {sym.name} = p[{i}]" for i, sym in enumerate(params)]
    subs, reduced = sp.cse(list(exprs), symbols=sp.numbered_symbols("_c"), optimizations="basic")
    lines += [f"    {sym} = {_print(val)}" for sym, val in subs]
    return lines, reduced


def velocity_gradient_source(
    exprs: Sequence[sp.Expr], params: Sequence[sp.Symbol]
) -> str:
    """Return source defining jitted ``velocity`` and ``gradient``.

    Parameters
    ----------
    exprs : sequence of 3 sympy expressions
        Velocity components in the symbols ``x, y, z, t`` and ``params``.
    params : sequence of sympy symbols
        Parameter symbols, in the order of the parameter vector ``p``.
    """
    exprs = [sp.sympify(e) for e in exprs]
    grads = [sp.diff(e, c) for e in exprs for c in COORDS]
    out = []
    for name, group in (("velocity", exprs), ("gradient", grads)):
        lines, reduced = _body(group, params)
        ret = ", ".join(_print(e) for e in reduced)
        out.append("@njit(cache=CACHE)")
        out.append(f"def {name}(x, y, z, t, p):")
        out += lines
        out.append(f"    return ({ret},)")
        out.append("")
    return "\n".join(out)


def check_symbols(exprs: Sequence[sp.Expr], params: Sequence[sp.Symbol]) -> None:
    """Raise if an expression uses a symbol that is neither a coordinate nor a parameter."""
    from flowkit.errors import FlowDefinitionError

    allowed = {X, Y, Z, T, *params}
    names = {s.name for s in allowed}
    for i, e in enumerate(exprs):
        extra = {s for s in sp.sympify(e).free_symbols if s not in allowed}
        if extra:
            bad = ", ".join(sorted(s.name for s in extra))
            raise FlowDefinitionError(
                f"velocity component {i} uses unknown symbol(s) {bad}; use x, y, z, t "
                f"or declare them in `params` (known: {', '.join(sorted(names))})"
            )
