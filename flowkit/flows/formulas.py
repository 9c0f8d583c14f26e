"""Build a flow family from sympy expressions (shared by presets and user flows)."""

from __future__ import annotations

from typing import Callable, Sequence

import sympy as sp

from flowkit.flows.base import FlowFamily
from flowkit.flows.codegen import check_symbols, velocity_gradient_source
from flowkit.flows.grammar import as_sympy


def family_from_exprs(
    name: str,
    exprs: Sequence,
    params: Sequence[tuple[str, float]],
    domain: str,
    period: Callable | None = None,
    kind: str = "flow",
    description: str = "",
    period_expr: str | None = None,
) -> FlowFamily:
    """Compile-ready family from three expressions in x, y, z, t and named parameters."""
    syms = [sp.Symbol(n, real=True) for n, _ in params]
    exprs = tuple(as_sympy(e, f"{name} component {i}") for i, e in enumerate(exprs))
    check_symbols(exprs, syms)
    structure = {"representation": "closed-form expressions"}
    if period_expr:
        structure["period"] = period_expr
    return FlowFamily(
        name=name,
        formula=tuple(str(e) for e in exprs),
        param_names=tuple(n for n, _ in params),
        defaults=tuple(float(v) for _, v in params),
        domain=domain,
        code=velocity_gradient_source(exprs, syms),
        period=period,
        kind=kind,
        structure=structure,
        exprs=exprs,
        description=description,
    )
