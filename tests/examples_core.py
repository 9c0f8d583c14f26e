"""Small real instances of the core result types (sections, chaos measures, frozen-in fields).

Each is a quick computation on a preset (maps where the answer does not depend
on continuous time: they compile fast and run in milliseconds).
"""

import numpy as np

import flowkit
from result_examples import example


@example("Section")
def abc_section():
    seeds = [[1.0, 2.0, 0.5], [2.5, 0.5, 1.0]]
    sec = flowkit.poincare_section(flowkit.flow("abc"), seeds, crossings=5)
    return sec.attach("tag", np.array([0.5, 1.5]))


@example("ToleranceCheck")
def abc_tolerance_check():
    from flowkit.sections import tolerance_check

    return tolerance_check(flowkit.flow("abc"), [[1.0, 2.0, 0.5]], crossings=4, rtol=1e-8)


@example("Spectrum")
def lorenz_spectrum():
    return flowkit.lyapunov_spectrum(flowkit.flow("lorenz"), [1.0, 1.0, 20.0], 4.0, intervals=40, blocks=4)


@example("OrbitExponents")
def abc_orbit_exponents():
    from flowkit.chaos import orbit_ftle

    return orbit_ftle(flowkit.flow("abc"), [[1.0, 2.0, 0.5], [0.1, 0.1, 0.1]], 5.0)


@example("ChaoticFraction")
def abc_chaotic_fraction():
    return flowkit.chaotic_fraction(flowkit.flow("abc"), 6, 5.0)


@example("FTLEField")
def double_gyre_ftle():
    plane = flowkit.GridPlane.coordinate("z", 0.0, (0.0, 2.0, 0.0, 1.0))
    return flowkit.ftle_field(flowkit.flow("double-gyre"), plane, (6, 4), 1.0)


@example("StretchResult")
def cat_map_stretch():
    return flowkit.stretch(flowkit.flow("cat-map"), 64, 8, samples=8, p=(0.5, 1.0, 2.0), groups=4)


@example("LineResult")
def cat_map_line():
    return flowkit.material_line(flowkit.flow("cat-map"), 6, max_points=4000)


@example("FluxResult")
def sfs_map_flux():
    return flowkit.flux_growth(flowkit.flow("sfs-map"), 4, samples=200)
