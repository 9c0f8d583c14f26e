"""Generate numba source for a velocity field and its exact gradient from sympy.

The gradient is differentiated symbolically, never typed by hand. Three functions
are printed: ``velocity`` (3-tuple), ``gradient`` (row-major 9-tuple) and
``velocity_gradient`` (the 12 numbers together, for kernels that need both at one
point, so trigonometric and other shared terms are computed once).

``velocity_gradient`` is built as a straight-line program: sympy's cse splits the
velocity into shared pieces, and the gradient is the chain rule applied piece by
piece (each piece differentiated once, in terms of the pieces before it). That
keeps the symbolic work linear in the size of the formula; differentiating a large
unsimplified formula as a whole and running cse's algebraic preprocessing on the
result took tens of seconds for the sphere benchmark flows. Small formulas keep
their ``velocity`` and ``gradient`` printed the established way (whole-expression
derivatives, cse with the basic optimizations), so their numbers do not change, and
so do polynomials of any size (Lamb flows); non-polynomial formulas above
:data:`LARGE_OPS` operations get those two from the program too.
"""

from __future__ import annotations

from typing import Sequence

import sympy as sp
from sympy.printing.precedence import PRECEDENCE
from sympy.printing.pycode import PythonCodePrinter

X, Y, Z, T = sp.symbols("x y z t", real=True)
COORDS = (X, Y, Z)
#: Name of the parameter vector inside generated functions; the leading underscore keeps it
#: out of the user's namespace (parameter names may not start with one), so a parameter may be `p`.
PARAMS = "_params"


def _expr(e):
    from flowkit.flows.grammar import as_sympy

    return as_sympy(e, "velocity component")


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

    def _print_Mul(self, expr):
        # sympy prints a lone denominator factor b**n unparenthesized after "/", which with the
        # products above read a/b*b (= a) for a/b**2: give such a factor its parentheses
        inverse = [f for f in expr.args if f.is_Pow and f.exp.is_Rational and f.exp.is_negative]
        if len(inverse) == 1 and inverse[0].exp.is_Integer and -4 <= int(inverse[0].exp) <= -2:
            base, n = inverse[0].base, -int(inverse[0].exp)
            num = self.parenthesize(expr / inverse[0], PRECEDENCE["Mul"], strict=False)
            return f"{num}/({'*'.join([self.parenthesize(base, 100)] * n)})"
        return super()._print_Mul(expr)


def _print(expr) -> str:
    printer = _NumbaPrinter({"fully_qualified_modules": True, "standard": "python3"})
    return printer.doprint(expr)


def _body(exprs: Sequence[sp.Expr], params: Sequence[sp.Symbol]) -> list[str]:
    lines = [f"    {sym.name} = {PARAMS}[{i}]" for i, sym in enumerate(params)]
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
    exprs = [_expr(e) for e in exprs]
    large = sum(sp.count_ops(e) for e in exprs) > LARGE_OPS
    if large and not all(e.is_polynomial(*COORDS) for e in exprs):
        steps, outputs = chain_rule_program(exprs)
        printed: dict = {}  # each program step printed once for the three functions
        out = _program_function("velocity", steps, outputs[:3], params, printed)
        out += _program_function("gradient", steps, outputs[3:], params, printed)
        out += _program_function("velocity_gradient", steps, outputs, params, printed)
    else:  # as before: small formulas, and large polynomials (Lamb flows of high degree) keep their numbers
        grads = [sp.diff(e, c) for e in exprs for c in COORDS]
        out = _function("velocity", exprs, params) + _function("gradient", grads, params)
        # a joint cse of 12 large polynomials costs seconds; calling both lets LLVM share what it finds
        out += _function("velocity_gradient", exprs + grads, params) if not large else _PAIR.splitlines() + [""]
    return "\n".join(out) + "\n" + splitting_source(exprs, params)


_PAIR = """@njit(cache=CACHE, error_model="numpy")
def velocity_gradient(x, y, z, t, _params):
    u = velocity(x, y, z, t, _params)
    g = gradient(x, y, z, t, _params)
    return (u[0], u[1], u[2], g[0], g[1], g[2], g[3], g[4], g[5], g[6], g[7], g[8])
"""

#: Non-polynomial formulas with more operations than this (sympy's count_ops over the three
#: components) get all three functions from the chain-rule program (whole-expression derivatives
#: and cse's preprocessing grow much faster than linearly with the size); large polynomials keep
#: the established printing, their ``velocity_gradient`` calling ``velocity`` and ``gradient``.
LARGE_OPS = 400


def chain_rule_program(exprs: Sequence[sp.Expr]) -> tuple[list, list]:
    """Straight-line program for the velocity and its gradient, derivatives taken on shared pieces.

    Returns
    -------
    steps : list of (Symbol, Expr)
        Assignments in order: the cse pieces of the velocity, each followed by its
        non-zero derivatives along x, y, z (symbols ``_d<k>_<j>``).
    outputs : list of 12 Expr
        u, v, w and the row-major gradient entries du_i/dx_j, in terms of the steps.
    """
    pieces, reduced = sp.cse(list(exprs), symbols=sp.numbered_symbols("_c"), optimizations=None)
    deriv: dict = {(c, j): (sp.Integer(1) if j == i else sp.Integer(0))
                   for i, c in enumerate(COORDS) for j in range(3)}
    steps = []

    def d(expr, j):
        total = sp.Integer(0)
        for q in expr.free_symbols:
            dq = deriv.get((q, j), 0)
            if dq != 0:
                total += sp.diff(expr, q) * dq
        return total

    for k, (sym, val) in enumerate(pieces):
        steps.append((sym, val))
        for j in range(3):
            dv = d(val, j)
            if dv == 0 or dv.is_Atom:
                deriv[(sym, j)] = dv
            else:
                dsym = sp.Symbol(f"_d{k}_{j}")
                steps.append((dsym, dv))
                deriv[(sym, j)] = dsym
    outputs = list(reduced) + [d(e, j) for e in reduced for j in range(3)]
    return steps, outputs


def _program_function(name: str, steps: list, outputs: Sequence[sp.Expr], params: Sequence[sp.Symbol],
                      printed: dict | None = None) -> list[str]:
    """Lines of a jitted ``name(x, y, z, t, _params)`` running the steps ``outputs`` needs."""
    need = set().union(*(e.free_symbols for e in outputs)) if outputs else set()
    keep = []
    for sym, val in reversed(steps):  # drop steps no output depends on (e.g. derivatives in velocity)
        if sym in need:
            keep.append((sym, val))
            need |= val.free_symbols
    lines = [f"    {sym.name} = {PARAMS}[{i}]" for i, sym in enumerate(params)]
    printed = {} if printed is None else printed
    for sym, val in reversed(keep):
        if sym not in printed:
            printed[sym] = _print(val)
        lines.append(f"    {sym} = {printed[sym]}")
    ret = ", ".join(_print(e) for e in outputs)
    return ["@njit(cache=CACHE, error_model=\"numpy\")", f"def {name}(x, y, z, t, {PARAMS}):", *lines,
            f"    return ({ret},)", ""]


def _function(name: str, exprs: Sequence[sp.Expr], params: Sequence[sp.Symbol]) -> list[str]:
    """Lines of one jitted function ``name(x, y, z, t, _params)`` returning a tuple of ``exprs``."""
    lines, reduced = _body(exprs, params)
    ret = ", ".join(_print(e) for e in reduced)
    return ["@njit(cache=CACHE, error_model=\"numpy\")", f"def {name}(x, y, z, t, {PARAMS}):", *lines, f"    return ({ret},)", ""]


def check_symbols(exprs: Sequence[sp.Expr], params: Sequence[sp.Symbol]) -> None:
    """Raise if an expression uses a symbol that is neither a coordinate nor a parameter."""
    from flowkit.errors import FlowDefinitionError

    allowed = {X, Y, Z, T, *params}
    names = {s.name for s in allowed}
    for i, e in enumerate(exprs):
        extra = {s for s in _expr(e).free_symbols if s not in allowed}
        if extra:
            bad = ", ".join(sorted(s.name for s in extra))
            raise FlowDefinitionError(
                f"velocity component {i} uses unknown symbol(s) {bad}; use x, y, z, t "
                f"or declare them in `params` (known: {', '.join(sorted(names))})"
            )


# ---------------------------------------------------------------------------
# Sub-fields of the volume-preserving splitting scheme
# ---------------------------------------------------------------------------
class SplitUnavailable(Exception):
    """The field cannot be split into planar divergence-free parts (reason in the message)."""


def split_fields(exprs: Sequence[sp.Expr]) -> tuple[tuple, tuple]:
    """Split a divergence-free field f into two planar divergence-free fields.

    f = a + b with a = (f1, -q, 0) and b = (0, f2 + q, f3), where q = int df1/dx dy
    (Numer. Math. 71, 1995; Acta Numerica 11, 2002, 'Splitting methods'). ``a``
    moves (x, y) with z frozen and has d a1/dx + d a2/dy = 0; ``b`` moves (y, z)
    with x frozen and has d b2/dy + d b3/dz = div f = 0.

    Returns
    -------
    ((a1, a2), (b2, b3))
        The non-zero components of the two sub-fields.

    Raises
    ------
    SplitUnavailable
        If f is not divergence-free or sympy finds no closed-form antiderivative.
    """
    f1, f2, f3 = (_expr(e) for e in exprs)
    ops = sum(sp.count_ops(e) for e in (f1, f2, f3))
    if ops > LARGE_OPS and not all(e.is_polynomial(*COORDS) for e in (f1, f2, f3)):
        # proving div u = 0 and searching an antiderivative of a large non-polynomial formula
        # took minutes in sympy (a sphere benchmark flow: 150 s), so it is not attempted
        raise SplitUnavailable(f"the formula is too large for a closed-form split ({ops} operations, "
                               f"non-polynomial; up to {LARGE_OPS} are tried)")
    div = sum(sp.diff(e, c) for e, c in zip((f1, f2, f3), COORDS))
    if _clearly_nonzero(div):  # cheap numeric test first: expanding a large field can take very long
        raise SplitUnavailable("the field is not divergence-free (div u is non-zero at a test point)")
    div = sp.expand(div)
    if div != 0 and sp.simplify(div) != 0:
        raise SplitUnavailable(f"the field is not divergence-free (div u = {div})")
    dx = sp.expand(sp.diff(f1, X))
    try:
        q = sp.integrate(dx, Y) if dx.is_polynomial(Y) else sp.integrate(dx, Y, manual=True)
    except Exception as exc:  # noqa: BLE001 - sympy raises many kinds; all mean "no antiderivative"
        raise SplitUnavailable(f"sympy could not integrate d(u)/dx = {dx} over y ({exc})") from exc
    if q.has(sp.Integral) or q.has(sp.Piecewise):
        raise SplitUnavailable(f"d(u)/dx = {dx} has no closed-form antiderivative in y")
    return (f1, -q), (f2 + q, f3)


def _clearly_nonzero(expr) -> bool:
    """True if the sum ``expr`` is far from zero, relative to its terms, at one of three fixed points."""
    free = sorted(expr.free_symbols, key=lambda s: s.name)
    terms = sp.Add.make_args(expr)
    for k in range(3):
        subs = {s: sp.Float(0.3183098861837907 + 0.1234567 * (i + 1) * (k + 1), 30) for i, s in enumerate(free)}
        try:
            vals = [complex(term.evalf(30, subs=subs)) for term in terms]
        except (TypeError, ValueError, ArithmeticError):
            return False
        total, scale = abs(sum(vals)), sum(abs(v) for v in vals)
        if total == total and scale == scale and total > 1e-9 * scale:
            return True
    return False


def _planar_with_jacobian(field: tuple, moving: tuple, frozen: sp.Symbol) -> list[sp.Expr]:
    """(g_i, g_j, dg_i/dm_i, dg_i/dm_j, dg_j/dm_i, dg_j/dm_j, dg_i/dfrozen, dg_j/dfrozen)."""
    gi, gj = field
    mi, mj = moving
    return [gi, gj, sp.diff(gi, mi), sp.diff(gi, mj), sp.diff(gj, mi), sp.diff(gj, mj),
            sp.diff(gi, frozen), sp.diff(gj, frozen)]


def splitting_source(exprs: Sequence[sp.Expr], params: Sequence[sp.Symbol]) -> str:
    """Source of the sub-fields used by the splitting kernel template.

    Defines ``split_a(x, y, z, t, _params)`` (the (x, y) part, z frozen) and
    ``split_b(x, y, z, t, _params)`` (the (y, z) part, x frozen), each returning the
    8-tuple of :func:`_planar_with_jacobian`, and ``SPLIT_STATUS = "ok"``. When
    the field cannot be split, only ``SPLIT_STATUS`` (the reason) is defined and
    the template supplies NaN stand-ins that the Python wrapper refuses to run.
    """
    try:
        a, b = split_fields(exprs)
    except SplitUnavailable as exc:
        return f"SPLIT_STATUS = {str(exc)!r}\n"
    out = _function("split_a", _planar_with_jacobian(a, (X, Y), Z), params)
    out += _function("split_b", _planar_with_jacobian(b, (Y, Z), X), params)
    return "\n".join(out) + '\nSPLIT_STATUS = "ok"\n'
