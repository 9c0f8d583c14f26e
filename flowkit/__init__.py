"""flowkit: a lab for chaotic flows and kinematic dynamos.

Import is light: nothing is compiled and sympy/numba kernels are built on first
use of a flow. Start with ``flowkit.flow("stf", rotation=0.3)``.
"""

from flowkit._version import __version__
from flowkit.errors import FlowDefinitionError, FlowkitError, FlowkitNotice
from flowkit.flows import Flow, custom_flow, flow, lamb_flow, preset_names, surface_flow

__all__ = [
    "__version__",
    "Flow",
    "FlowkitError",
    "FlowDefinitionError",
    "FlowkitNotice",
    "flow",
    "lamb_flow",
    "surface_flow",
    "custom_flow",
    "preset_names",
]
