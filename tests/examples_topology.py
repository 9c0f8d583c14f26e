"""Small real instances of the topology result types (curves, ribbons, material ribbons, helicity)."""

import numpy as np

import flowkit
from result_examples import example


def _circle(t):
    a = 2 * np.pi * np.asarray(t)
    return np.stack([np.cos(a), np.sin(a), 0.2 * np.sin(2 * a)], 1)


def _twisted(t):
    a = 2 * np.pi * np.asarray(t)
    return np.stack([np.cos(a) * np.cos(a), np.sin(a) * np.cos(a), np.sin(a)], 1)


@example("CurveGeometry")
def curve_geometry():
    from flowkit.topology import curve_geometry

    return curve_geometry(_circle, 64)


@example("Writhe")
def writhe():
    from flowkit.topology import writhe

    return writhe(_circle, n=64, method="fast")  # carries method and method_bound


@example("Linking")
def linking():
    from flowkit.topology import linking_number

    other = lambda t: np.stack([1 + np.cos(2 * np.pi * t), 0 * t, np.sin(2 * np.pi * t)], 1)  # noqa: E731
    return linking_number(_circle, other, n=48)


@example("RibbonTopology")
def ribbon_topology():
    from flowkit.topology import ribbon, ribbon_topology

    return ribbon_topology(ribbon(_circle, _twisted, n=64))


@example("RibbonHistory")
def material_ribbon():
    from flowkit.topology import material_ribbon

    return material_ribbon(flowkit.flow("stf", rotation=0.3), time=0.2, passes=2, initial_points=32)


@example("Helicity")
def helicity():
    from flowkit.topology import kinetic_helicity

    return kinetic_helicity(flowkit.flow("stf", rotation=0.3), plane=("z", 0.0), plane_points=8)
