"""tolerance_check says what it found: regular orbits point by point, chaotic ones as point sets.

References: scipy's ``directed_hausdorff`` for the cloud distances; samples of
known distributions (uniform in a disc, and the same disc shifted) for the
same-set test; Hill's spherical vortex with swirl is axisymmetric and steady, so
its Stokes stream function is conserved and every orbit is regular (exact
property of axisymmetric steady flows, common practice, no source).
"""

import numpy as np
import pytest
from scipy.spatial.distance import directed_hausdorff

import flowkit
from flowkit import seeding
from flowkit.errors import FlowkitError
from flowkit.sections import Plane, tolerance_check
from flowkit.sections.check import DIFFERENT, POINTWISE, SAME_SET, cloud_distances, halves, same_cloud


def _disc(n, rng, shift=0.0):
    r, th = np.sqrt(rng.random(n)), 2 * np.pi * rng.random(n)
    return np.c_[r * np.cos(th) + shift, r * np.sin(th)]


def test_cloud_distances_match_scipy_hausdorff():
    rng = np.random.default_rng(3)
    a, b = rng.random((50, 2)), rng.random((70, 2)) + 0.2
    mean, haus = cloud_distances(a, b)
    assert haus == pytest.approx(max(directed_hausdorff(a, b)[0], directed_hausdorff(b, a)[0]), rel=1e-12)
    # the mean runs over both directions' nearest-neighbour distances
    nn = np.r_[[np.min(np.linalg.norm(b - p, axis=1)) for p in a], [np.min(np.linalg.norm(a - q, axis=1)) for q in b]]
    assert mean == pytest.approx(nn.mean(), rel=1e-12)


def test_same_cloud_tells_one_distribution_from_a_shifted_one():
    rng = np.random.default_rng(7)
    ref, other = _disc(400, rng), _disc(400, rng)
    dirs = np.tile([1, -1], 200)
    assert same_cloud(other, ref, ref, dirs)[0]
    assert not same_cloud(_disc(400, rng, shift=0.3), ref, ref, dirs)[0]


def test_halves_share_both_crossing_directions():
    dirs = np.tile([1, -1], 10)
    first = halves(dirs)
    assert first.sum() == 10 and set(dirs[first]) == {1, -1} and set(dirs[~first]) == {1, -1}


def test_regular_orbits_of_an_integrable_flow_pass():
    f = flowkit.flow("hill", strength=1.0, swirl=0.5)
    chk = tolerance_check(f, [[0.3, 0.0, 0.0], [0.7, 0.0, 0.0]], Plane((0, 0, 1), 0.0, "+"), crossings=50,
                          rtol=1e-10, agree=1e-4)
    assert chk.ok and chk.verdicts == [POINTWISE, POINTWISE]
    assert "agree point by point" in chk.reason and chk.max_displacement <= chk.agree


def test_chaotic_orbit_separates_but_traces_the_same_set():
    f = flowkit.flow("stf", rotation=0.3)
    plane = Plane((0, 1, 0), 0.0, "both")
    seed = seeding.across_domain(f, plane, 6)[:1]
    chk = tolerance_check(f, seed, plane, crossings=300)
    # matching crossings end up a sizeable part of the unit disc apart: no point-by-point agreement
    assert chk.orbit_max[0] > 0.5
    assert chk.verdicts == [SAME_SET] and chk.ok, chk.reason
    assert "chaotic" in chk.reason and chk.set_distance[0] <= 1.5 * chk.set_noise[0]
    back = flowkit.load(chk.save(__import__("tempfile").mkdtemp() + "/chk.json"))
    assert back.summary() == chk.summary() and back.loose is None


def test_point_threshold_is_a_fraction_of_the_section_size():
    f = flowkit.flow("stf", rotation=0.3)
    plane = Plane((0, 1, 0), 0.0, "both")
    seed = seeding.across_domain(f, plane, 6)[:1]
    chk = tolerance_check(f, seed, plane, crossings=60, rtol=1e-10, agree=1e-12)
    # rtol 1e-10 cannot place crossings within 1e-12 of the disc's size: compared as sets instead
    assert chk.verdicts[0] in (SAME_SET, DIFFERENT) and 0 < chk.agree <= 2e-12
    with pytest.raises(FlowkitError, match="`agree`"):
        tolerance_check(f, seed, plane, agree=2.0)
