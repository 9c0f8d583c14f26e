"""Tolerance self-check: the same section at two tolerances, and how far the crossings moved."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.sections.compute import poincare_section
from flowkit.sections.geometry import Plane, Stroboscopic
from flowkit.sections.result import Section


@dataclass
class ToleranceCheck:
    """Result of :func:`tolerance_check`.

    Attributes
    ----------
    rtols : (float, float)
        The two relative tolerances compared (loose, tight).
    max_displacement : float
        Largest distance between matching crossings (same orbit, same index).
    orbit_max : (N,) array
        Largest displacement per orbit (NaN for an orbit without crossings).
    compared : int
        Number of matched crossings.
    mismatched_counts : int
        Orbits whose crossing counts differ between the runs.
    loose, tight : Section
        The two sections.
    """

    rtols: tuple
    max_displacement: float
    orbit_max: np.ndarray
    compared: int
    mismatched_counts: int
    loose: Section
    tight: Section

    def summary(self) -> dict:
        return {"rtol": list(self.rtols), "max_displacement": self.max_displacement, "compared": self.compared,
                "mismatched_counts": self.mismatched_counts,
                "orbit_max": [None if not np.isfinite(v) else float(v) for v in self.orbit_max]}


def tolerance_check(
    flow: Flow,
    seeds,
    plane: Plane | Stroboscopic | None = None,
    *,
    crossings: int = 200,
    rtol: float = 1e-10,
    factor: float = 100.0,
    **options,
) -> ToleranceCheck:
    """Compute one section at ``rtol`` and at ``rtol / factor`` and compare crossing by crossing.

    The displacement of the k-th crossing of an orbit estimates the error of the
    looser section. On chaotic orbits it grows with k (nearby orbits separate at
    the Lyapunov rate), so small budgets answer "is the tolerance tight enough
    for this many crossings"; ``orbit_max`` tells regular from chaotic orbits.
    Extra keyword arguments go to :func:`poincare_section` (``atol`` is scaled
    with ``rtol``).
    """
    if not (isinstance(factor, (int, float)) and factor > 1):
        raise FlowkitError(f"`factor` must be a number greater than 1; got {factor!r}")
    atol = options.pop("atol", rtol * 1e-2)
    loose = poincare_section(flow, seeds, plane, crossings=crossings, rtol=rtol, atol=atol, **options)
    tight = poincare_section(flow, seeds, plane, crossings=crossings, rtol=rtol / factor, atol=atol / factor, **options)
    orbit_max = np.full(loose.n_orbits, np.nan)
    compared = 0
    mismatched = 0
    for i in range(loose.n_orbits):
        a = loose.points[loose.orbit_slice(i)]
        b = tight.points[tight.orbit_slice(i)]
        m = min(len(a), len(b))
        mismatched += int(len(a) != len(b))
        if m:
            orbit_max[i] = float(np.linalg.norm(a[:m] - b[:m], axis=1).max())
            compared += m
    finite = orbit_max[np.isfinite(orbit_max)]
    return ToleranceCheck(
        rtols=(float(rtol), float(rtol / factor)),
        max_displacement=float(finite.max()) if finite.size else float("nan"),
        orbit_max=orbit_max,
        compared=compared,
        mismatched_counts=mismatched,
        loose=loose,
        tight=tight,
    )
