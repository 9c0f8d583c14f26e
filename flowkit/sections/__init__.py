"""Poincaré sections: planes and stroboscopic sections of many orbits.

>>> import flowkit
>>> from flowkit.sections import Plane, poincare_section
>>> f = flowkit.flow("stf", rotation=0.3)
>>> sec = poincare_section(f, [[0.1, 0.0, 0.3]], Plane((0, 1, 0), 0.0, "+"), crossings=10)
>>> sec.points.shape
(10, 3)

Modules: :mod:`~flowkit.sections.geometry` (Plane, Stroboscopic, in-plane
basis), :mod:`~flowkit.sections.compute` (the driver),
:mod:`~flowkit.sections.result` (the Section result and its files),
:mod:`~flowkit.sections.check` (tolerance self-check).
"""

from flowkit.sections.check import ToleranceCheck, tolerance_check
from flowkit.sections.compute import poincare_section, warm_sections
from flowkit.sections.geometry import Plane, Stroboscopic
from flowkit.sections.result import Section
from flowkit.sections.continuation import continue_orbit
from flowkit.sections.manifolds import invariant_manifolds
from flowkit.sections.periodic import find_periodic_orbit
from flowkit.sections.returnmap import ReturnMap
from flowkit.sections.rotation import rotation_profile
from flowkit.sections.scan import scan_periodic_orbits

__all__ = ["Plane", "Stroboscopic", "Section", "poincare_section", "tolerance_check", "ToleranceCheck", "warm_sections",
           "ReturnMap", "find_periodic_orbit", "scan_periodic_orbits", "invariant_manifolds",
           "continue_orbit", "rotation_profile"]
