"""Stiffness detection in the adaptive DOP853 kernels, and no false alarms on chaotic flows.

Reference: the stiffness test of the published DOP853 code (Solving Ordinary
Differential Equations II, 2nd ed., Springer, 1996, section IV.2; cited from
memory): h*|lambda| estimated from the last two stages at t + h, compared with
the method's stability boundary 6.1, 15 such steps -> stiff.

Stiff problems: Robertson's chemical reactions (rates 0.04, 1e4, 3e7; the
classic stiff test problem of the same book, section IV.1, common practice) and
a linear system with eigenvalues -1e8, +-i. Both live in one parametrized family
below, so the test compiles one kernel set instead of two.
"""

import numpy as np
import pytest

import flowkit
from flowkit.integrate.batch import IntegratorSettings, integrate_states
from flowkit.integrate.outcomes import ADVICE, Outcome, outcome_notes
from flowkit.integrate.tableau import STIFF_BOUND, STIFF_EVERY, STIFF_RUN, work_array
from flowkit.sections import Plane, poincare_section

ROBERTSON = {"k1": 0.04, "k2": 1e4, "k3": 3e7, "lam": 0.0, "om": 0.0}
FAST_DECAY = {"k1": 0.0, "k2": 0.0, "k3": 0.0, "lam": 1e8, "om": 1.0}   # x' = -1e8 x, (y, z) rotate
#: an orbit found stiff ends at the first test after STIFF_EVERY steps plus the run of stiff tests
MOST_STEPS = STIFF_EVERY + 2 * STIFF_RUN


@pytest.fixture(scope="module")
def family():
    return flowkit.custom_flow(
        ["-k1*x + k2*y*z - lam*x", "k1*x - k2*y*z - k3*y**2 - om*z", "k3*y**2 + om*y"],
        params=ROBERTSON, kind="system", name="stiff_pair")


def test_stiff_test_constants_are_those_of_the_published_code():
    assert (STIFF_BOUND, STIFF_RUN, STIFF_EVERY) == (6.1, 15, 1000)


def test_estimate_is_h_lambda_on_a_rotation():
    # u = (-y, x, 0): the Jacobian is an in-plane rotation, |A d| = |d| for in-plane d,
    # so the estimate h * |A d| / |d| equals |h| exactly (to the round-off of the stages: ynew - Y12 is small).
    rot = flowkit.custom_flow(["-y", "x", "0"])
    k = rot.kernels
    for h in (0.4, -0.05):
        y = np.array([1.0, 0.2, 0.0])
        W = work_array(3)
        k.rhs(0.0, y, rot.params, W[0])
        k.dop853_try(0.0, y, h, rot.params, 1e-10, 1e-12, W)
        assert k.dop853_stiff_ratio(W, 3) == pytest.approx(abs(h), rel=1e-4)


def test_robertson_is_stiff_in_batches_and_sections(family):
    f = family.with_params(**ROBERTSON)
    res = integrate_states(f, np.array([[1.0, 0.0, 0.0]]), 0.0, 1e5, IntegratorSettings(rtol=1e-6, atol=1e-10))
    assert res.outcome[0] == Outcome.STIFF
    assert 0.0 < res.t_end[0] < 1e5 and res.steps[0] <= MOST_STEPS   # reported early, not after 1e5 time units
    notes = outcome_notes(res.outcome)
    assert len(notes) == 1 and "stiff" in notes[0] and "Radau" in notes[0] and "shorter time" in notes[0]
    assert res.notes == notes
    sec = poincare_section(f, [[1.0, 0.0, 0.0]], Plane((0, 0, 1), 0.5, "+"), crossings=5, t_max=1e5)
    assert sec.outcome_names() == ["stiff"] and sec.steps[0] <= MOST_STEPS


def test_fast_decay_is_stiff_with_tangent_vectors(family):
    f = family.with_params(**FAST_DECAY)
    res = integrate_states(f, np.array([[1.0, 1.0, 0.0]]), 0.0, 100.0)
    assert res.outcome[0] == Outcome.STIFF and res.steps[0] <= MOST_STEPS
    spec = flowkit.lyapunov_spectrum(f, [1.0, 1.0, 0.0], time=10.0, transient=0.0, intervals=40, blocks=4)
    assert spec.outcome == "stiff" and not spec.converged
    assert "ended early (stiff)" in spec.reason and "Radau" in spec.reason


@pytest.mark.parametrize("name, seeds, rtol, k, T", [
    ("stf", [[0.1, 0.0, 0.3], [0.5, 0.2, -0.1], [-0.3, 0.4, 0.2]], 1e-10, 1, 4000.0),
    ("stf", [[0.1, 0.0, 0.3], [0.5, 0.2, -0.1], [-0.3, 0.4, 0.2]], 1e-5, 1, 20000.0),
    ("abc", [[0.1, 0.2, 0.3], [3.0, 1.0, 5.0], [1.0, 4.0, 2.0]], 1e-5, 0, 50000.0),
    ("lorenz", [[1.0, 1.0, 20.0], [-5.0, 3.0, 30.0], [8.0, -2.0, 10.0]], 1e-5, 0, 4000.0),
])
def test_no_false_alarm_on_chaotic_flows(name, seeds, rtol, k, T):
    # non-stiff chaotic flows: the step is set by accuracy, h*|lambda| stays small, and the
    # test must never fire over many thousands of tests. Loose tolerances (large steps) are
    # the hard case. k = 1 adds one (unrenormalized) tangent vector: the 6-component step,
    # on stf whose slow stretching keeps it finite over the run.
    f = flowkit.flow(name)
    Y = np.zeros((len(seeds), 3 + 3 * k))
    Y[:, :3] = seeds
    if k:
        Y[:, 3] = 1.0
    res = integrate_states(f, Y, 0.0, T, IntegratorSettings(rtol=rtol, atol=1e-3 * rtol))
    assert np.all(res.outcome == Outcome.FINISHED), res.outcomes
    assert res.steps.min() > 20 * STIFF_EVERY      # long enough for many tests


@pytest.mark.parametrize("name, point", [("abc", [0.1, 0.2, 0.3]), ("lorenz", [1.0, 1.0, 20.0])])
def test_no_false_alarm_with_renormalized_tangent_vectors(name, point):
    # the scale-separation test of tangent runs must not fire on chaotic flows either
    spec = flowkit.lyapunov_spectrum(flowkit.flow(name), point, time=20000.0 if name == "abc" else 2000.0,
                                     transient=0.0, intervals=40, blocks=4,
                                     settings=IntegratorSettings(rtol=1e-6, atol=1e-9))
    assert spec.outcome == "finished", spec.reason
    assert spec.steps > 20 * STIFF_EVERY


def test_advice_names_the_remedies():
    text = ADVICE[Outcome.STIFF]
    for remedy in ("shorter time", "rescale", "implicit", "Radau", "BDF"):
        assert remedy in text
