"""User-defined flows: sympy expressions, formula strings or plain Python functions.

Every route ends in the same generated kernels as the built-in flows. Symbolic
input (sympy expressions, strings, or a Python function that can be traced with
symbols) gets an exact symbolic gradient. A function that cannot be traced is
compiled with numba as written and its gradient is taken by fourth-order central
differences; ``flow.family.gradient_method`` says which, and a
:class:`~flowkit.errors.FlowkitNotice` is issued.
"""

from __future__ import annotations

import math
import types
import warnings
from typing import Callable, Mapping, Sequence

import numpy as np

from flowkit.errors import FlowDefinitionError, FlowkitError, FlowkitNotice
from flowkit.flows.base import DOMAINS, Flow, FlowFamily

FD_RULE = "4th-order central differences, h = 1e-3 * max(1, |x_j|) (error about 1e-11 for O(1) fields)"

_FD_CODE = """
@njit(cache=CACHE, error_model="numpy")
def velocity(x, y, z, t, p):
    r = _user_velocity(x, y, z, t, p)
    return (float(r[0]), float(r[1]), float(r[2]))


@njit(cache=CACHE, error_model="numpy")
def _fd_axis(x, y, z, t, p, axis):
    # fourth-order central difference of the velocity along one axis
    c = (x, y, z)[axis]
    h = 1e-3 * max(1.0, abs(c))
    e0 = 1.0 if axis == 0 else 0.0
    e1 = 1.0 if axis == 1 else 0.0
    e2 = 1.0 if axis == 2 else 0.0
    a = velocity(x + 2 * h * e0, y + 2 * h * e1, z + 2 * h * e2, t, p)
    b = velocity(x + h * e0, y + h * e1, z + h * e2, t, p)
    c1 = velocity(x - h * e0, y - h * e1, z - h * e2, t, p)
    d = velocity(x - 2 * h * e0, y - 2 * h * e1, z - 2 * h * e2, t, p)
    s = 1.0 / (12.0 * h)
    return ((-a[0] + 8 * b[0] - 8 * c1[0] + d[0]) * s,
            (-a[1] + 8 * b[1] - 8 * c1[1] + d[1]) * s,
            (-a[2] + 8 * b[2] - 8 * c1[2] + d[2]) * s)


@njit(cache=CACHE, error_model="numpy")
def gradient(x, y, z, t, p):
    gx = _fd_axis(x, y, z, t, p, 0)
    gy = _fd_axis(x, y, z, t, p, 1)
    gz = _fd_axis(x, y, z, t, p, 2)
    return (gx[0], gy[0], gz[0], gx[1], gy[1], gz[1], gx[2], gy[2], gz[2])
"""


def _sympy_namespace():
    """Stand-in for ``math``/``numpy`` so a user function can run on sympy symbols."""
    import sympy as sp

    ns = types.SimpleNamespace(
        sin=sp.sin, cos=sp.cos, tan=sp.tan, exp=sp.exp, log=sp.log, sqrt=sp.sqrt,
        sinh=sp.sinh, cosh=sp.cosh, tanh=sp.tanh, arctan=sp.atan, atan=sp.atan,
        arcsin=sp.asin, asin=sp.asin, arccos=sp.acos, acos=sp.acos,
        atan2=sp.atan2, arctan2=sp.atan2, pi=sp.pi, e=sp.E, abs=sp.Abs, fabs=sp.Abs,
        power=lambda a, b: a**b, pow=lambda a, b: a**b,
    )
    return ns


def _trace(func: Callable, pnames: Sequence[str]):
    """Run ``func`` on sympy symbols; return 3 expressions or None if it cannot be traced."""
    import sympy as sp

    from flowkit.flows.codegen import T, X, Y, Z
    from flowkit.flows.grammar import as_sympy

    shim = _sympy_namespace()
    g = dict(func.__globals__)
    for key, val in list(g.items()):
        if isinstance(val, types.ModuleType) and val.__name__ in ("math", "numpy", "cmath"):
            g[key] = shim
        elif getattr(val, "__module__", None) in ("math", "numpy") and hasattr(shim, getattr(val, "__name__", "")):
            g[key] = getattr(shim, val.__name__)
    closure = func.__closure__
    if closure:
        def swap(cell):
            val = cell.cell_contents
            if isinstance(val, types.ModuleType) and val.__name__ in ("math", "numpy", "cmath"):
                return types.CellType(shim)
            return cell
        closure = tuple(swap(c) for c in closure)
    traced = types.FunctionType(func.__code__, g, func.__name__, func.__defaults__, closure)
    psyms = [sp.Symbol(n, real=True) for n in pnames]
    try:
        out = traced(X, Y, Z, T, psyms)
        exprs = tuple(as_sympy(e) for e in out)
    except Exception:  # noqa: BLE001 - any failure means "not traceable"; we fall back
        return None
    if len(exprs) != 3:
        return None
    allowed = {X, Y, Z, T, *psyms}
    if any(not (e.free_symbols <= allowed) for e in exprs):
        return None
    return exprs


def _parse_strings(items: Sequence[str], pnames: Sequence[str], what: str = "velocity component"):
    """Formula strings through flowkit's own grammar (:mod:`flowkit.flows.grammar`); no code runs."""
    from flowkit.flows.grammar import parse_formulas

    return parse_formulas(items, pnames, what=what)


def _normalize_symbols(exprs, pnames, what: str = "velocity component"):
    """Map user symbols named x, y, z, t or a parameter onto flowkit's own symbols.

    Items may be sympy expressions, numbers or formula strings (read by the grammar).
    """
    import sympy as sp

    from flowkit.flows.grammar import as_expression, coordinate_symbols

    table = coordinate_symbols()
    table.update({n: sp.Symbol(n, real=True) for n in pnames})
    out = []
    for i, e in enumerate(exprs):
        e = as_expression(e, pnames, label=f"{what} {i}")
        out.append(e.xreplace({s: table[s.name] for s in e.free_symbols if s.name in table}))
    return tuple(out)


def custom_flow(
    velocity: Callable | Sequence,
    params: Mapping[str, float] | None = None,
    domain: str = "unbounded",
    period: float | None = None,
    name: str = "custom",
    kind: str = "flow",
) -> Flow:
    """Make a flow from your own velocity field.

    Parameters
    ----------
    velocity : callable or sequence of 3
        ``f(x, y, z, t, p) -> (u, v, w)`` where ``p`` is the parameter vector in
        the order of ``params``; or three sympy expressions / strings in
        ``x, y, z, t`` and the parameter names.
    params : mapping, optional
        Parameter names and default values.
    domain : {"unbounded", "ball", "periodic"}
        Where the flow lives.
    period : float, optional
        Period of a time-periodic flow (``None`` for steady flows).
    name : str
        Name used in provenance and file names.
    kind : {"flow", "system", "planar"}
        ``"system"`` for ODE systems that are not velocity fields (no
        divergence warning).

    Returns
    -------
    Flow
        Compiled through the same kernels as the presets. Divergence is measured
        at random points (``flow.family.structure["divergence_max"]``; for a
        polynomial velocity from its exact divergence polynomial, so nothing is
        compiled for it) and a clearly non-solenoidal ``"flow"`` triggers a
        warning naming it.
    """
    from flowkit.flows.grammar import check_parameter_names, to_text

    params = dict(params or {})
    check_parameter_names(params, "params")
    for key, val in params.items():
        if isinstance(val, bool) or not isinstance(val, (int, float, np.integer, np.floating)) \
                or not np.isfinite(val):
            raise FlowkitError(f"`params`: parameter {key!r} must have a finite number as default; got {val!r}")
    if domain not in DOMAINS:
        raise FlowkitError(f"`domain` must be one of {', '.join(DOMAINS)}; got {domain!r}")
    if kind not in ("flow", "system", "planar"):
        raise FlowkitError(f"`kind` must be 'flow', 'system' or 'planar'; got {kind!r}")
    if period is not None:
        from flowkit.validation import positive

        period = positive(period, "period", what="number or None")
    pnames = list(params)
    period_fn = None if period is None else (lambda p, _T=float(period): _T)

    exprs = None
    if callable(velocity):
        exprs = _trace(velocity, pnames)
    elif isinstance(velocity, (list, tuple)) and len(velocity) == 3:
        if all(isinstance(v, str) for v in velocity):
            exprs = _parse_strings(velocity, pnames)
        else:
            exprs = _normalize_symbols(velocity, pnames)
    else:
        raise FlowkitError(
            "`velocity` must be a function f(x, y, z, t, p) -> (u, v, w) or a sequence of three expressions"
        )

    if exprs is not None:
        from flowkit.flows.formulas import family_from_exprs

        fam = family_from_exprs(name, exprs, list(params.items()), domain, period=period_fn, kind=kind,
                                description="user-defined flow (symbolic)")
        if period is not None:
            fam.structure["period"] = float(period)
        fam.structure["recipe"] = {"custom": [to_text(e) for e in exprs], "params": params, "domain": domain,
                                   "period": period, "name": name, "kind": kind}
    else:
        fam = _callable_family(velocity, name, params, domain, period_fn, kind)
    flow = Flow(fam)
    _measure_divergence(flow, exprs)
    return flow


def _callable_family(func, name, params, domain, period_fn, kind) -> FlowFamily:
    from numba import njit

    try:
        jitted = njit(cache=False)(func)
        p = np.array(list(params.values()) or [0.0], dtype=np.float64)
        res = jitted(0.1, 0.2, 0.3, 0.0, p)
        if len(res) != 3:
            raise TypeError(f"it returned {len(res)} values instead of 3")
    except Exception as exc:  # noqa: BLE001 - numba raises many types; report them all the same way
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise FlowDefinitionError(
            f"numba could not compile `velocity` ({first}). Write it with scalar arithmetic and math/numpy "
            "functions of (x, y, z, t, p) returning a 3-tuple, or pass sympy expressions instead."
        ) from exc
    warnings.warn(
        f"flow '{name}': the velocity function could not be traced symbolically, so its gradient uses finite differences ({FD_RULE}). "
        "Pass sympy expressions for an exact gradient.",
        FlowkitNotice,
        stacklevel=3,
    )
    return FlowFamily(
        name=name,
        formula=(f"python function {getattr(func, '__qualname__', repr(func))}",) * 1,
        param_names=tuple(params),
        defaults=tuple(float(v) for v in params.values()),
        domain=domain,
        code=_FD_CODE,
        period=period_fn,
        kind=kind,
        gradient_method=FD_RULE,
        structure={"representation": "compiled Python function"},
        inject={"_user_velocity": jitted},
        description="user-defined flow (Python function, finite-difference gradient)",
    )


def _polynomial_divergence(flow: Flow, exprs, pts: np.ndarray):
    """(|div u|, gradient scale) at ``pts`` (t = 0) for a polynomial velocity, without compiling.

    The divergence and gradient of a polynomial are polynomials: their monomials are
    summed in numpy over the points. Returns None when a component is not a
    polynomial in x, y, z (then the compiled gradient measures it).
    """
    if exprs is None:
        return None
    import sympy as sp

    from flowkit.flows.codegen import T, X, Y, Z

    values = {T: 0.0}
    values.update({sp.Symbol(n, real=True): float(v) for n, v in zip(flow.family.param_names, flow.params)})
    coords = (X, Y, Z)
    polys = []
    for e in exprs:
        if not (isinstance(e, sp.Expr) and e.is_polynomial(*coords)):  # structural test: microseconds
            return None
        try:
            poly = sp.Poly(e.xreplace(values), *coords)
        except sp.PolynomialError:
            return None
        if not all(c.is_number for c in poly.coeffs()):  # a symbol left unreplaced
            return None
        polys.append(poly)
    # the divergence summed as a polynomial: exactly zero when the terms cancel
    div = sum((p.diff(c) for p, c in zip(polys, coords)), sp.Poly(0, *coords))
    scale = max(1.0, max(float(np.abs(_poly_values(p.diff(c), pts)).max()) for p in polys for c in coords))
    return np.abs(_poly_values(div, pts)), scale


def _poly_values(poly, pts: np.ndarray) -> np.ndarray:
    """A sympy Poly in (x, y, z) at the rows of ``pts``: its monomials summed in numpy."""
    out = np.zeros(pts.shape[0])
    for (i, j, k), c in poly.terms():
        out += float(c) * pts[:, 0] ** i * pts[:, 1] ** j * pts[:, 2] ** k
    return out


def sample_points(flow: Flow, n: int, rng: np.random.Generator) -> np.ndarray:
    """Random points inside the flow's domain (or a typical box for unbounded ones)."""
    if flow.domain == "ball":
        v = rng.normal(size=(n, 3))
        v /= np.linalg.norm(v, axis=1)[:, None]
        return v * rng.random(n)[:, None] ** (1 / 3)
    if flow.domain == "periodic":
        return rng.random((n, 3)) * 2 * math.pi
    if flow.name == "double-gyre":
        return rng.random((n, 3)) * [2.0, 1.0, 0.0]
    return (rng.random((n, 3)) - 0.5) * 4.0


def _measure_divergence(flow: Flow, exprs=None) -> None:
    rng = np.random.default_rng(12345)
    pts = sample_points(flow, 256, rng)
    measured = _polynomial_divergence(flow, exprs, pts)
    if measured is None:
        g = flow.gradient(pts)  # compiles the gradient (about 1 s for a new formula)
        div = np.abs(np.trace(g, axis1=1, axis2=2))
        scale = max(1.0, float(np.abs(g).max()))
    else:
        div, scale = measured
    dmax = float(div.max())
    if not np.isfinite(dmax):
        raise FlowDefinitionError(f"flow '{flow.name}' gives NaN or infinite gradients at ordinary points of its domain")
    flow.family.structure["divergence_max"] = dmax
    if flow.kind != "system" and dmax > 1e-6 * scale:
        warnings.warn(
            f"flow '{flow.name}' is not divergence-free: max |div u| = {dmax:.3g} over 256 random points "
            "(volume-preserving integrators and incompressible-flow checks do not apply)",
            FlowkitNotice,
            stacklevel=3,
        )
