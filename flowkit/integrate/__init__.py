"""Integrators: Runge–Kutta steppers (numba kernel templates) and their settings.

The step kernels live in :mod:`flowkit.kernels.steppers` (compiled per flow
family); this package holds the flow-independent pieces: tableaus, outcome codes
and the validated settings object.
"""

from flowkit.integrate.outcomes import OUTCOME_NAMES, Outcome

__all__ = ["Outcome", "OUTCOME_NAMES"]
