"""How a trajectory ended. Every trajectory ends with exactly one of these."""

from enum import IntEnum


class Outcome(IntEnum):
    """Outcome codes written by the kernels (int8 arrays) and their names."""

    FINISHED = 0          #: reached the requested end time
    LEFT_DOMAIN = 1       #: left a bounded domain (r > 1 for the unit ball)
    STEP_UNDERFLOW = 2    #: the adaptive step fell below round-off of t
    NON_FINITE = 3        #: a NaN or infinite value appeared
    CROSSING_BUDGET = 4   #: collected the requested number of section crossings
    STEP_BUDGET = 5       #: hit the maximum number of steps
    STIFF = 6             #: DOP853's stiffness test fired: a fast decaying mode holds the step


OUTCOME_NAMES = {o.value: o.name.lower().replace("_", " ") for o in Outcome}

#: what to do about an outcome that ended orbits early (shown in results' notes and by the CLI)
ADVICE = {
    Outcome.STIFF: (
        "the system is stiff there: the explicit DOP853 step is held by a decaying mode far faster "
        "than the orbit itself (at its stability limit, or, with tangent vectors, by the accuracy of "
        "that mode), so the run would crawl. Remedies: integrate over a shorter time, "
        "rescale the system (time unit or variables) so the fastest rate is not many orders above "
        "the slowest, or use an implicit integrator from a general library (e.g. "
        "scipy.integrate.solve_ivp(method='Radau' or 'BDF')) for this system"
    ),
    Outcome.STEP_BUDGET: (
        "the step budget per orbit was used up; pass a larger `max_steps`, a shorter time, or looser "
        "tolerances"
    ),
    Outcome.STEP_UNDERFLOW: (
        "the adaptive step fell to round-off (a singularity or a very fast time scale); check the "
        "formula near the time reached"
    ),
}


def outcome_counts(codes) -> dict[str, int]:
    """Count outcome codes by name (names with zero count included)."""
    import numpy as np

    codes = np.asarray(codes)
    return {OUTCOME_NAMES[o.value]: int(np.sum(codes == o.value)) for o in Outcome}


def outcome_notes(codes) -> list[str]:
    """One sentence per early-ending outcome present in ``codes`` that has advice (:data:`ADVICE`).

    E.g. ``["3 of 16 orbits ended 'stiff': the system is stiff there: ..."]``; empty when
    no orbit ended in an outcome with advice.
    """
    import numpy as np

    codes = np.asarray(codes).ravel()
    notes = []
    for o, text in ADVICE.items():
        n = int(np.sum(codes == o.value))
        if n:
            notes.append(f"{n} of {codes.size} orbit{'s' if codes.size != 1 else ''} ended "
                         f"'{OUTCOME_NAMES[o.value]}': {text}")
    return notes
