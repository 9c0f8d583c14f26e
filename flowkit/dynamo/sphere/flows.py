"""The sphere-dynamo benchmark flows t1s1 and t2s2 of Proc. R. Soc. Lond. A 425 (1989) 407-429.

Their formulas live with the other flows (:mod:`flowkit.flows.sphere_benchmarks`) and are
registered presets there: ``flowkit.flow("t2s2")`` works without importing the dynamo.
"""

from __future__ import annotations

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.flows.sphere_benchmarks import BENCHMARK_FLOWS

__all__ = ["BENCHMARK_FLOWS", "benchmark_flow"]


def benchmark_flow(name: str, epsilon: float | None = None) -> Flow:
    """The benchmark flow ``"t1s1"`` or ``"t2s2"`` (default ``epsilon`` of the paper: 0.17, 0.14).

    Returns a :class:`~flowkit.flows.base.Flow` with ``domain="ball"``, usable by every analysis.
    """
    if name not in BENCHMARK_FLOWS:
        raise FlowkitError(f"unknown benchmark flow {name!r}; choose one of {', '.join(BENCHMARK_FLOWS)}")
    from flowkit.flows.registry import family

    params = {} if epsilon is None else {"epsilon": epsilon}
    return Flow(family(name), params)
