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


OUTCOME_NAMES = {o.value: o.name.lower().replace("_", " ") for o in Outcome}


def outcome_counts(codes) -> dict[str, int]:
    """Count outcome codes by name (names with zero count included)."""
    import numpy as np

    codes = np.asarray(codes)
    return {OUTCOME_NAMES[o.value]: int(np.sum(codes == o.value)) for o in Outcome}
