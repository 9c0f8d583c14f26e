"""Warm starts for a run of ball eigen solves: the last eigenpair starts the next solve.

A critical-Rm search, a resolution ladder (``resolution="auto"``) or a convergence table
solves the same flow many times with small changes. :class:`WarmStart` keeps, per flow,
order ``m`` and decoupled family, the leading eigenpair of the last solve:

- **same resolution, nearby Rm** (``|Rm - Rm_last| <= WARM_RM_STEP * Rm``): each family is
  solved by shift-invert ARPACK around its own last leading eigenvalue (one factorisation),
  with the last eigenvector as ARPACK's start vector; this replaces dense ``eig`` for
  blocks of at least :data:`WARM_DENSE_MIN` unknowns and the coarse shifts for larger ones;
- **another resolution, same Rm** (within the same step): the last solve's leading
  eigenvalues replace the coarse-resolution guesses (the vectors differ in size).

When a warm solve fails (ARPACK does not converge, or finds nothing finite) that family
falls back to the ordinary path (dense ``eig`` or the coarse shifts) and ``fallbacks``
counts it. A warm solve finds the eigenvalues nearest the last one, so a different mode
that overtakes it far away in the complex plane between two nearby Rm would be missed;
the step limit keeps the searches where the leading mode moves continuously (a
critical-Rm search's Brent steps inside its bracket). ``warm_start=False`` turns it off.
"""

from __future__ import annotations

import numpy as np

#: Largest relative change of Rm across which the last eigenpair is reused.
WARM_RM_STEP = 0.2
#: Smallest family block solved by warm shift-invert instead of dense ``eig`` (measured: t2s2 m = 1,
#: 480 unknowns, dense eig 1.4 s against 0.14 s warm shift-invert; benchmarks/bench_dynamo_sphere.py).
WARM_DENSE_MIN = 200


def _flow_key(op) -> tuple:
    return (op.flow.name, tuple(np.asarray(op.flow.params, float).tolist()), op.m)


class WarmStart:
    """Leading eigenpairs of the last solves (module docstring); pass one object along a run."""

    def __init__(self):
        self._pairs: dict = {}  # (flow, m, L, N, family) -> (rm, eigenvalue, vector)
        self._leads: dict = {}  # (flow, m) -> (rm, (L, N), leading eigenvalues)
        self.warm_solves = 0  #: family blocks solved from a warm start
        self.fallbacks = 0  #: warm solves that failed and went the ordinary way

    @staticmethod
    def _near(rm: float, last: float) -> bool:
        return abs(rm - last) <= WARM_RM_STEP * abs(rm)

    def pair(self, op, family: int, size: int):
        """``(eigenvalue, vector)`` of ``family`` at this resolution from a nearby Rm, or None."""
        hit = self._pairs.get(_flow_key(op) + (op.lmax, op.n, family))
        if hit is None or not self._near(op.rm, hit[0]) or hit[2].size != size:
            return None
        return hit[1], hit[2]

    def guesses(self, op) -> list | None:
        """Leading eigenvalues of the last solve of this flow and order at a nearby Rm (any resolution)."""
        hit = self._leads.get(_flow_key(op))
        if hit is None or not self._near(op.rm, hit[0]):
            return None
        return list(hit[2])

    def remember(self, op, family: int, eigenvalue: complex, vector) -> None:
        if vector is not None and np.isfinite(eigenvalue):
            self._pairs[_flow_key(op) + (op.lmax, op.n, family)] = (float(op.rm), complex(eigenvalue),
                                                                     np.array(vector))

    def remember_leads(self, op, eigenvalues, count: int = 2) -> None:
        out: list[complex] = []
        for v in eigenvalues:
            v = complex(v)
            if np.isfinite(v) and all(abs(v - w) > 1e-6 * max(1.0, abs(v)) for w in out):
                out.append(v)
            if len(out) == count:
                break
        if out:
            self._leads[_flow_key(op)] = (float(op.rm), (op.lmax, op.n), out)


def start_vector(vector, real: bool):
    """ARPACK's start vector from a last eigenvector: real blocks need a real one (the real and
    imaginary parts of a complex pair's vector span its invariant plane)."""
    v = np.asarray(vector)
    if real and np.iscomplexobj(v):
        v = v.real + v.imag
    norm = np.linalg.norm(v)
    return v / norm if norm > 0 and np.all(np.isfinite(v)) else None
