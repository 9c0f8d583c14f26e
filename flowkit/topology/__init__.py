"""Topology of curves and fields: writhe, twist, linking, helicity, field lines.

- :mod:`~flowkit.topology.curves`: closed curves, spectral length / curvature / torsion.
- :mod:`~flowkit.topology.writhe`: writhe and linking number (exact polygon Gauss integrals).
- :mod:`~flowkit.topology.ribbons`: ribbons, twist, the Călugăreanu–White check.
- :mod:`~flowkit.topology.material`: material ribbons carried by a flow, Wr(t), Tw(t), Lk(t).
- :mod:`~flowkit.topology.helicity`: kinetic, magnetic and current helicity.
- :mod:`~flowkit.topology.fieldlines`: a box dynamo mode's magnetic field as a flow to trace;
  :mod:`~flowkit.topology.ballfield` the same for ball (sphere-dynamo) modes, with the potential exterior.
- :mod:`~flowkit.topology.ballhelicity`: relative magnetic helicity of a ball mode.
- :mod:`~flowkit.topology.fieldlinks`: linking number of two (nearly) closed field lines.
"""

from flowkit.topology.curves import ClosedCurve, closed_curve
from flowkit.topology.ribbons import Ribbon, ribbon, ribbon_topology
from flowkit.topology.writhe import linking_number, writhe

_LAZY = {
    "curve_geometry": "flowkit.topology.curves",
    "material_ribbon": "flowkit.topology.material",
    "kinetic_helicity": "flowkit.topology.helicity",
    "helicity_density": "flowkit.topology.helicity",
    "mode_helicity": "flowkit.topology.helicity",
    "mode_field_flow": "flowkit.topology.fieldlines",
    "ball_field_flow": "flowkit.topology.ballfield",
    "ball_helicity": "flowkit.topology.ballhelicity",
    "field_line_linking": "flowkit.topology.fieldlinks",
}


def __getattr__(name):
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'flowkit.topology' has no attribute {name!r}")


__all__ = ["ClosedCurve", "closed_curve", "Ribbon", "ribbon", "ribbon_topology", "writhe", "linking_number", *_LAZY]
