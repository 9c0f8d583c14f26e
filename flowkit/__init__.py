"""flowkit: a lab for chaotic flows and kinematic dynamos.

Import is light: nothing is compiled and sympy/numba kernels are built on first
use of a flow. Start with ``flowkit.flow("stf", rotation=0.3)``.
"""

from flowkit import _moved
from flowkit._version import __version__
from flowkit.errors import FlowDefinitionError, FlowkitError, FlowkitNotice
from flowkit.flows import Flow, custom_flow, flow, lamb_flow, preset_names, surface_flow

_moved.install()  # old root module paths (flowkit.lyapunov, flowkit.stretching, ...) still import

#: Analysis entry points, imported on first use so ``import flowkit`` stays light.
_LAZY = {
    "load": "flowkit.results",
    "poincare_section": "flowkit.sections",
    "Plane": "flowkit.sections",
    "Stroboscopic": "flowkit.sections",
    "find_periodic_orbit": "flowkit.sections",
    "scan_periodic_orbits": "flowkit.sections",
    "invariant_manifolds": "flowkit.sections",
    "lyapunov_spectrum": "flowkit.chaos",
    "chaotic_fraction": "flowkit.chaos",
    "ftle_field": "flowkit.chaos",
    "GridPlane": "flowkit.chaos",
    "stretch": "flowkit.fields",
    "material_line": "flowkit.fields",
    "flux_growth": "flowkit.fields",
    "growth_rate": "flowkit.dynamo",
    "sweep_rm": "flowkit.dynamo",
    "sweep_kz": "flowkit.dynamo",
    "critical_rm": "flowkit.dynamo",
    "writhe": "flowkit.topology",
    "linking_number": "flowkit.topology",
    "material_ribbon": "flowkit.topology",
    "kinetic_helicity": "flowkit.topology",
}


def __getattr__(name):
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'flowkit' has no attribute {name!r}")


__all__ = [*_LAZY, 
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
