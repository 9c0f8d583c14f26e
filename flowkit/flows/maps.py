"""Discrete-time maps: a compiled step and its exact Jacobian, parameters as an array.

A map F sends a point to its image after one iteration; a field vector (a line
element) goes to DF(x) B. Maps with exactly known stretching are the yardsticks
of the stretching, material-line and flux machinery, so they are dynamical
systems of their own here, registered next to the flows::

    import flowkit
    cat = flowkit.flow("cat-map")           # a Map, not a Flow
    cat.step([[0.1, 0.2, 0.0]], n=5)        # five iterations (wrapped onto the torus)
    cat.jacobian([[0.1, 0.2, 0.0]])         # (N, 3, 3) exact DF

How a map is compiled: its image and Jacobian are sympy expressions turned into
numba source by the same generator as flows (:mod:`flowkit.flows.codegen`), so
the Jacobian is differentiated symbolically, never typed by hand, and parameter
changes never recompile. In that generated module the function named
``velocity`` *is the image* F(x, p) and ``gradient`` *is the Jacobian* DF; the
map kernels in :mod:`flowkit.kernels.stretching` use them as such. A
:class:`Map` deliberately is not a :class:`~flowkit.flows.base.Flow` (no
``velocity``/``gradient`` methods), so time-continuous analysis tools refuse it
instead of integrating an image as if it were a velocity.

Presets (built in :mod:`flowkit.flows.map_presets`)
---------------------------------------------------
``cat-map``
    Arnold's cat map (x, y) -> (2x + y, x + y) mod 1 on the unit torus, z fixed.
    Uniformly hyperbolic: every field vector not on the stable direction grows by
    the eigenvalue (3 + sqrt 5)/2 per iteration, so the Lyapunov exponent, all
    moment rates L(p)/p, the line-stretching rate and the flux rate equal
    ln((3 + sqrt 5)/2) (Ergodic Problems of Classical Mechanics, Benjamin 1968).
``sfs-map``
    A stretch-fold-shear map of the unit cube, periodic in z (a generalized
    baker's map with an optional fold and a shear). The strip x < a is stretched
    by 1/a along x and squeezed by a along y; the strip x >= a by 1/b, b = 1 - a,
    and stacked on top (``fold = 0``) or flipped over (``fold = 1``, orientation
    reversed, which makes fields cancel); then z is sheared, z' = z + shear x'.
    Exact answers: the moments of the stretching of an x-directed field grow at
    L(p) = ln(a^(1-p) + b^(1-p)), so the Lyapunov exponent is L'(0) = -a ln a -
    b ln b and material lines grow at L(1) = ln 2 per iteration; the net flux of
    a uniform x-directed field through a full cross-section x = c doubles per
    iteration when stacked and vanishes after one iteration when folded. (Derived
    in the tests; the generalized baker's map is a textbook example, e.g. Chaos in
    Dynamical Systems, Cambridge University Press, 2nd ed. 2002.)
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Mapping

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow, FlowFamily

__all__ = ["Map", "MapFamily", "MapRun", "is_map", "run_map"]


@dataclass(eq=False)
class MapFamily:
    """What is compiled for a map: image + Jacobian (and optionally the inverse map).

    Parameters
    ----------
    name : str
        Registry or user name.
    forward : FlowFamily
        Compiled image (generated function ``velocity``) and Jacobian (``gradient``).
    inverse : FlowFamily, optional
        Compiled inverse map and its Jacobian (needed for backward iteration, e.g.
        net-flux estimates).
    periods : tuple of 3 floats
        Period of each coordinate (0 = not periodic). Images are wrapped into
        [0, period).
    box : tuple of 3 (low, high) pairs
        Where random seeds are drawn and what :meth:`Map.contains` accepts
        (periodic coordinates are accepted anywhere).
    validate : callable, optional
        ``validate(params: dict)`` raises :class:`FlowkitError` for parameter
        values the map does not support.
    """

    name: str
    forward: FlowFamily
    inverse: FlowFamily | None
    periods: tuple
    box: tuple
    description: str = ""
    validate: Callable[[dict], None] | None = None
    structure: dict = field(default_factory=dict)
    kind: str = "map"
    period: None = None  # maps are autonomous (the registry listing reads this)
    gradient_method: str = "exact (symbolic Jacobian)"

    @property
    def formula(self) -> tuple:
        return self.forward.formula

    @property
    def param_names(self) -> tuple:
        return self.forward.param_names

    @property
    def defaults(self) -> tuple:
        return self.forward.defaults

    @property
    def domain(self) -> str:
        if all(p > 0 for p in self.periods):
            return "torus"
        return "cell" if any(p > 0 for p in self.periods) else "unbounded"

    @property
    def kernels(self):
        return self.forward.kernels

    def warm(self) -> float:
        """Compile the image and Jacobian now; return seconds spent."""
        return self.forward.warm()


def is_map(obj) -> bool:
    """True for a discrete-time :class:`Map`."""
    return isinstance(obj, Map)


class Map:
    """A map family with concrete parameter values (get one from :func:`flowkit.flow`).

    ``step(points, n)`` iterates, ``jacobian(points)`` gives DF, ``inverse(points)``
    applies the inverse map. Parameters travel as the float64 vector ``params``.
    """

    kind = "map"
    steady = True
    period = None

    def __init__(self, family: MapFamily, params: Mapping[str, float] | None = None):
        self.family = family
        # same parameter checks and messages as flows (the family quacks like a FlowFamily)
        self.params = Flow(family, params).params
        if family.validate is not None:
            family.validate(self.param_dict)
        self.periods = np.array(family.periods, dtype=np.float64)

    # -- identity (the family quacks like a FlowFamily, so Flow's accessors apply) --------
    name = Flow.name
    domain = Flow.domain
    kernels = Flow.kernels
    param_dict = Flow.param_dict

    @property
    def inverse_kernels(self):
        if self.family.inverse is None:
            raise FlowkitError(f"map '{self.name}' has no inverse; backward iteration (e.g. net flux) needs one "
                               "(pass `inverse=` to flowkit.flows.custom_map)")
        return self.family.inverse.kernels

    def with_params(self, **params: float) -> "Map":
        """Same compiled map, some parameters changed."""
        merged = self.param_dict
        merged.update(params)
        return Map(self.family, merged)

    # -- evaluation ----------------------------------------------------------------
    def wrap(self, points) -> np.ndarray:
        """Points with periodic coordinates wrapped into [0, period)."""
        pts = np.array(points, dtype=np.float64, ndmin=2)
        for i, L in enumerate(self.periods):
            if L > 0:
                pts[:, i] -= L * np.floor(pts[:, i] / L)
        return pts

    def _points(self, points) -> np.ndarray:
        from flowkit.flows.base import _as_points

        return _as_points(points)

    def _apply(self, kernels, points) -> np.ndarray:
        pts = self._points(points)
        out = np.empty_like(pts)
        kernels.velocity_many(pts, 0.0, self.params, out)  # the generated "velocity" is the image
        return self.wrap(out)

    def image(self, points) -> np.ndarray:
        """One application of the map (wrapped)."""
        return self._apply(self.kernels, points)

    def inverse(self, points) -> np.ndarray:
        """One application of the inverse map (wrapped)."""
        return self._apply(self.inverse_kernels, points)

    def jacobian(self, points) -> np.ndarray:
        """Exact Jacobian ``DF[n, i, j] = dF_i/dx_j`` at ``points``; returns (N, 3, 3)."""
        pts = self._points(points)
        out = np.empty((pts.shape[0], 3, 3))
        self.kernels.gradient_many(pts, 0.0, self.params, out)
        return out

    def step(self, points, n: int = 1) -> np.ndarray:
        """Images after ``n`` iterations (``n < 0`` iterates the inverse), in one compiled loop."""
        if not isinstance(n, (int, np.integer)):
            raise FlowkitError(f"`n` must be an integer number of iterations; got {n!r}")
        Y = self.wrap(self._points(points))
        kern = self.kernels if n >= 0 else self.inverse_kernels
        res = run_map(kern, Y, np.array([0, abs(int(n))], dtype=np.int64), self.params, self.periods)
        bad = res.outcome != 0
        Y[bad] = np.nan
        return Y

    def contains(self, points) -> np.ndarray:
        """Mask of points inside the map's cell (periodic coordinates are always inside)."""
        pts = np.atleast_2d(np.asarray(points, dtype=np.float64))
        ok = np.all(np.isfinite(pts), axis=1)
        for i, (L, (lo, hi)) in enumerate(zip(self.periods, self.family.box)):
            if L == 0:
                ok &= (pts[:, i] >= lo) & (pts[:, i] <= hi)
        return ok

    def sample(self, n: int, rng: np.random.Generator) -> np.ndarray:
        """``n`` points uniformly distributed in the map's cell."""
        lo = np.array([b[0] for b in self.family.box])
        hi = np.array([b[1] for b in self.family.box])
        return lo + rng.random((n, 3)) * (hi - lo)

    def velocity(self, *args, **kwargs):
        raise FlowkitError(f"'{self.name}' is a discrete-time map, not a velocity field; use "
                           "map.image / map.step / map.jacobian, or flowkit.stretch for growth rates")

    gradient = velocity

    # -- provenance ----------------------------------------------------------------
    def provenance(self) -> dict:
        """JSON-ready description sufficient to rebuild this map."""
        prov = Flow.provenance(self)
        prov["inverse"] = list(self.family.inverse.formula) if self.family.inverse else None
        prov["periods"] = self.periods.tolist()
        return prov

    def __repr__(self) -> str:
        pars = ", ".join(f"{k}={v:g}" for k, v in self.param_dict.items())
        return f"Map({self.name!r}{', ' if pars else ''}{pars})"

    def __reduce__(self):
        from flowkit.flows.map_presets import _rebuild_map

        return (_rebuild_map, (self.family.structure.get("recipe", {"preset": self.name}), self.param_dict))


@dataclass
class MapRun:
    """Raw output of :func:`run_map` (per row and per stretch between checkpoints)."""

    logs: np.ndarray     # (N, m, ncol) sums of log R_cc over each stretch (NaN if not reached)
    logvol: np.ndarray   # (N, m) sum of log|det DF| over each stretch
    outcome: np.ndarray  # (N,) int8 outcome codes
    n_end: np.ndarray    # (N,) iterations reached


def run_map(kernels, states: np.ndarray, counts: np.ndarray, params: np.ndarray, periods: np.ndarray,
            threads: int | None = None) -> MapRun:
    """Iterate the rows of ``states`` (N, 3 + 3k, modified in place) through iteration ``counts``.

    Tangent columns (if any) are multiplied by the Jacobian and re-orthonormalized
    after every iteration, exactly like the flow tangent kernel does after every
    step; the log R_cc are summed per stretch between consecutive ``counts``.
    """
    import numba

    from flowkit.integrate.batch import thread_limit

    N, n = states.shape
    m = len(counts) - 1
    ncol = (n - 3) // 3
    logs = np.full((N, m, max(ncol, 1)), np.nan)
    logvol = np.full((N, m), np.nan)
    outcome = np.zeros(N, dtype=np.int8)
    n_end = np.zeros(N, dtype=np.int64)
    with thread_limit(threads), numba.parallel_chunksize(1):
        kernels.map_tangent_batch(states, np.ascontiguousarray(counts, dtype=np.int64), params, periods,
                                  logs, logvol, outcome, n_end)
    return MapRun(logs[:, :, :ncol], logvol, outcome, n_end)
