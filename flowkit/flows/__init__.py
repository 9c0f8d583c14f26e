"""Flows: compiled velocity + exact gradient + parameters + domain.

Entry points: :func:`flow` (presets), :func:`lamb_flow` and :func:`surface_flow`
(Stokes flows in the sphere), :func:`custom_flow` (your own formula).
"""

from flowkit.flows.base import DOMAINS, Flow, FlowFamily
from flowkit.flows.registry import flow, preset_names, preset_summary


def lamb_flow(*args, **kwargs):
    """See :func:`flowkit.flows.sphere.lamb_flow` (imported lazily: it needs sympy)."""
    from flowkit.flows.sphere import lamb_flow as _f

    return _f(*args, **kwargs)


def surface_flow(*args, **kwargs):
    """See :func:`flowkit.flows.sphere.surface_flow`."""
    from flowkit.flows.sphere import surface_flow as _f

    return _f(*args, **kwargs)


def custom_flow(*args, **kwargs):
    """See :func:`flowkit.flows.custom.custom_flow`."""
    from flowkit.flows.custom import custom_flow as _f

    return _f(*args, **kwargs)


def custom_map(*args, **kwargs):
    """See :func:`flowkit.flows.map_presets.custom_map` (a discrete-time map from formulas)."""
    from flowkit.flows.map_presets import custom_map as _f

    return _f(*args, **kwargs)


__all__ = ["DOMAINS", "Flow", "FlowFamily", "flow", "preset_names", "preset_summary",
           "lamb_flow", "surface_flow", "custom_flow", "custom_map"]
