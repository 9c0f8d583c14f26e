"""Small real instances of the section-skeleton results (periodic orbits, scans, manifolds, ...)."""

import flowkit
from flowkit.sections import Plane
from result_examples import example

_MERIDIAN = Plane((0, 1, 0), 0.0, "+")


def _hill():
    return flowkit.flow("hill", strength=1.0, swirl=1.0)


@example("PeriodicOrbit")
def hill_core_orbit():
    from flowkit.sections.periodic import find_periodic_orbit

    return find_periodic_orbit(_hill(), (0.69, 0.02), _MERIDIAN)


@example("OrbitSet")
def hill_scan():
    from flowkit.sections.scan import scan_periodic_orbits

    return scan_periodic_orbits(_hill(), _MERIDIAN, region=(0.6, 0.8, -0.1, 0.1), grid=2, max_period=1)


@example("Manifold")
def stf_saddle_manifold():
    from flowkit.sections.manifolds import invariant_manifolds
    from flowkit.sections.periodic import find_periodic_orbit

    o = find_periodic_orbit(flowkit.flow("stf", rotation=1.0), (-0.93, 0.0), _MERIDIAN, period=2)
    return invariant_manifolds(o, length=0.3, max_points=300)


@example("ContinuationCurve")
def hill_core_curve():
    from flowkit.sections.continuation import continue_orbit

    return continue_orbit(_hill(), (0.7, 0.0), "swirl", [1.0, 1.1, 1.2], _MERIDIAN)


@example("RotationProfile")
def hill_rotation_profile():
    from flowkit.sections.rotation import rotation_profile

    return rotation_profile(_hill(), (0.7071067811865476, 0.0), _MERIDIAN, seeds=3, iterations=20)
