"""Regular or chaotic? A per-orbit chaos indicator and the chaotic fraction of a domain.

The indicator is the finite-time largest Lyapunov exponent

    lambda_T(x0) = (1 / T) log(|v(T)| / |v(0)|),

with v a tangent vector integrated along the orbit by the variational equation
(exact gradient, renormalized every DOP853 step; :mod:`flowkit.kernels.lyapunov`).
On a chaotic orbit lambda_T tends to the positive largest exponent; on a regular
orbit (an invariant torus, a closed streamline) tangent vectors grow at most
like a power of t, so lambda_T decays like log(T) / T.

The default threshold that separates the two is ``2 log(T) / T`` (T in the flow's
own time units): an orbit counts as chaotic when its tangent vector grew faster
than t^2. Regular orbits of steady or time-periodic volume-preserving flows grow
tangent vectors linearly (shear across invariant tori), log(a T) / T, so the
threshold leaves a margin up to shear rates a ~ T. It is a convention of this
package, stated in every result, not a published constant; pass ``threshold=``
to use another. Slow chaos (exponent lambda) is only recognized once
lambda > 2 log(T) / T: integrate long enough.

:func:`chaotic_fraction` estimates the fraction of the domain filled by chaotic
orbits from random seeds, with the binomial standard error sqrt(f (1 - f) / n).
"""

from __future__ import annotations

import math
import time as _time
import warnings
from dataclasses import dataclass, field

import numpy as np

from flowkit.chaos.tangent import dop853_settings, method_record, require_flow, run_tangent, tangent_states
from flowkit.errors import FlowkitError, FlowkitNotice
from flowkit.flows.base import Flow
from flowkit.integrate.batch import IntegratorSettings
from flowkit.integrate.outcomes import Outcome, outcome_counts, outcome_notes
from flowkit.progress import Budget
from flowkit.results import Result, plain
from flowkit.validation import count, finite, points_in_domain
from flowkit.validation import duration as check_time

__all__ = ["orbit_ftle", "orbit_indicator", "attach_indicator", "default_threshold", "ChaoticFraction",
           "chaotic_fraction", "OrbitExponents"]

#: Initial tangent vector: a fixed generic direction (not along an axis, where
#: symmetric flows can hide stretching); in-plane for planar flows.
_V0_3D = np.array([1.0, 0.7, 0.3]) / math.sqrt(1.0 + 0.49 + 0.09)
_V0_2D = np.array([1.0, 0.7, 0.0]) / math.sqrt(1.0 + 0.49)


def default_threshold(time: float) -> float:
    """Default regular/chaotic threshold ``2 log(T) / T`` (growth faster than t^2); see the module notes."""
    time = check_time(time)
    return 2.0 * math.log(max(time, math.e)) / time


@dataclass
class OrbitExponents(Result):
    """Finite-time largest exponents of many orbits.

    ``values`` at the full time T and ``half`` at T/2 (regular orbits roughly halve
    from T/2 to T; chaotic ones stay put). Failed orbits (see ``outcome``) are NaN.
    A ``partial`` result (time budget or Ctrl-C) has outcome -1 and NaN for the
    orbits that were not run; ``notes`` say why.
    """

    values: np.ndarray
    half: np.ndarray
    outcome: np.ndarray
    seeds: np.ndarray
    time: float
    t0: float
    threshold: float
    partial: bool = False
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("values", "half", "outcome", "seeds")
    _DIMS = {"values": ("orbit",), "half": ("orbit",), "outcome": ("orbit",), "seeds": ("orbit", "xyz")}

    def summary(self) -> dict:
        """Counts of chaotic and failed orbits, threshold and time (what ``--json`` prints)."""
        return plain({"orbits": len(self.values), "chaotic": int(np.sum(self.chaotic)), "threshold": self.threshold,
                      "time": self.time, "t0": self.t0, "outcomes": self.outcomes, "partial": self.partial,
                      "notes": list(self.notes)})

    @property
    def chaotic(self) -> np.ndarray:
        """True where the orbit finished and its exponent exceeds the threshold."""
        with np.errstate(invalid="ignore"):
            return np.isfinite(self.values) & (self.values > self.threshold)

    @property
    def outcomes(self) -> dict[str, int]:
        return outcome_counts(self.outcome)


def orbit_ftle(
    flow: Flow,
    seeds,
    time: float,
    settings: IntegratorSettings | None = None,
    *,
    t0: float = 0.0,
    threshold: float | None = None,
    threads: int | None = None,
    max_seconds: float | None = None,
    progress: bool | None = None,
) -> OrbitExponents:
    """Finite-time largest Lyapunov exponent of each seed's orbit (parallel over seeds).

    Parameters
    ----------
    flow : Flow
    seeds : array_like (N, 3)
        Starting points inside the domain.
    time : float
        Integration time T (positive).
    settings : IntegratorSettings, optional
        DOP853 tolerances (default rtol 1e-10, atol 1e-12).
    t0 : float
        Start time (time-periodic flows).
    threshold : float, optional
        Regular/chaotic threshold (default :func:`default_threshold`).
    threads : int, optional
    max_seconds : float, optional
        Wall-clock budget, checked between chunks of seeds; the orbits not yet run
        are left out (outcome -1) and the result is flagged ``partial``.
    progress : bool, optional
        Progress bar over chunks once the run lasts 2 s (default); False: never.

    Returns
    -------
    OrbitExponents
        Ctrl-C between chunks also returns the finished orbits, flagged ``partial``.
    """
    flow = require_flow(flow)
    time = check_time(time)
    settings = dop853_settings(settings)
    pts = points_in_domain(flow, seeds, "seeds")
    t0 = finite(t0, "t0")
    thr = default_threshold(time) if threshold is None else float(threshold)
    v0 = _V0_2D if flow.kind == "planar" else _V0_3D
    times = float(t0) + np.array([0.0, 0.5 * time, time])
    N = len(pts)
    logs = np.full((N, 2), np.nan)
    outcome = np.full(N, -1, dtype=np.int8)   # -1: not run (a partial result)
    # chunks of seeds, doubled while a chunk takes under a quarter second: progress, the time
    # budget and Ctrl-C act between chunks (each orbit is independent: results do not depend on it)
    step, a = 16, 0
    with Budget(total=N, desc=f"indicator {flow.name}", unit="orbit", progress=progress,
                max_seconds=max_seconds) as budget:
        while a < N and not budget.expired():
            tic = _time.perf_counter()
            run = run_tangent(flow, tangent_states(pts[a:a + step], 1, v0), times, settings, threads)
            logs[a:a + step] = run.logs[:, :, 0]
            outcome[a:a + step] = run.outcome
            budget.advance(len(run.outcome))
            a += step
            if _time.perf_counter() - tic < 0.25:
                step = min(2 * step, 4096)
    ok = outcome == Outcome.FINISHED
    values = np.where(ok, logs.sum(axis=1) / time, np.nan)
    half = logs[:, 0] / (0.5 * time)
    notes = [budget.reason] if budget.partial else []
    notes += outcome_notes(outcome[outcome >= 0])
    n_bad = int(np.sum(outcome > 0))
    if n_bad:
        bad = {k: v for k, v in outcome_counts(outcome).items() if v and k != "finished"}
        warnings.warn(f"{n_bad} of {len(ok)} orbits did not finish ({bad}); their exponent is NaN",
                      FlowkitNotice, stacklevel=2)
    prov = flow.provenance()
    prov["method"] = method_record(settings, indicator="finite-time largest Lyapunov exponent",
                                   time=time, t0=float(t0), threshold=thr,
                                   threshold_rule="given" if threshold is not None else "2 log(T) / T",
                                   initial_tangent=v0.tolist())
    return OrbitExponents(values, half, outcome, pts, time, float(t0), thr, budget.partial, notes, prov)


def orbit_indicator(flow: Flow, seeds, time: float, settings: IntegratorSettings | None = None) -> np.ndarray:
    """Per-orbit chaos indicator for colouring sections: the finite-time largest exponent.

    Signature ``(flow, seeds, time, settings) -> array`` so that a Poincaré
    section can store it per orbit (e.g. ``section.orbit_values["ftle"]``).
    Orbits that did not finish get NaN (a :class:`~flowkit.errors.FlowkitNotice`
    says how many). Compare with :func:`default_threshold` (``time``).
    """
    return orbit_ftle(flow, seeds, time, settings).values


def attach_indicator(section, flow: Flow, time: float, settings: IntegratorSettings | None = None, *,
                     name: str = "ftle", threshold: float | None = None):
    """Compute the finite-time largest exponent of every orbit of a Poincaré section and attach it.

    Orbits start at ``section.seeds`` and at the section's start time. Two per-orbit
    arrays are attached: ``name`` (the exponent, NaN where the orbit failed) and
    ``name + "_chaotic"`` (1 above the threshold, 0 below, -1 failed), so that
    ``plot_section(ax, section, color_by=name)`` colours regular vs chaotic orbits.
    The threshold and its rule are recorded in ``section.provenance["indicator"]``.
    Returns the section.
    """
    t0 = float(section.provenance.get("t0", 0.0))
    res = orbit_ftle(flow, section.seeds, time, settings, t0=t0, threshold=threshold)
    flag = np.where(np.isfinite(res.values), res.chaotic.astype(np.int8), np.int8(-1)).astype(np.int8)
    section.attach(name, res.values)
    section.attach(f"{name}_chaotic", flag)
    method = res.provenance["method"]
    section.provenance["indicator"] = {k: method[k] for k in ("indicator", "time", "t0", "threshold",
                                                               "threshold_rule")}
    section.provenance["indicator"]["name"] = name
    return section


@dataclass
class ChaoticFraction(Result):
    """Fraction of seeds whose orbits are chaotic, with its binomial standard error."""

    fraction: float
    stderr: float
    n_chaotic: int
    n_used: int
    n_failed: int
    threshold: float
    time: float
    orbits: OrbitExponents
    bounds: list
    partial: bool = False
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)

    _PARTS = ("orbits",)

    def summary(self) -> dict:
        """The fraction with its error, counts, threshold and time (what ``--json`` prints)."""
        return plain({"fraction": self.fraction, "stderr": self.stderr, "n_chaotic": self.n_chaotic,
                      "n_used": self.n_used, "n_failed": self.n_failed, "threshold": self.threshold,
                      "time": self.time, "bounds": self.bounds, "partial": self.partial,
                      "notes": list(self.notes)})

    def headline(self) -> list:
        return [("chaotic fraction", self.fraction, self.stderr), ("orbits used", self.n_used, None),
                ("failed", self.n_failed, None), ("threshold", self.threshold, None), ("T", self.time, None)]

    def __str__(self) -> str:
        return (f"chaotic fraction {self.fraction:.3f} ± {self.stderr:.3f} ({self.n_chaotic}/{self.n_used} orbits "
                f"with finite-time exponent > {self.threshold:.3g} at T = {self.time:g}; {self.n_failed} failed)")


def random_seeds(flow: Flow, n: int, rng: np.random.Generator, bounds=None) -> tuple[np.ndarray, list]:
    """``n`` seeds uniform in the flow's domain (unit ball, 2*pi box) or in ``bounds``."""
    if bounds is not None:
        try:
            b = np.asarray(bounds, dtype=np.float64)
        except (TypeError, ValueError):
            b = np.zeros(0)
        if b.shape != (3, 2) or not np.all(np.isfinite(b)) or np.any(b[:, 1] < b[:, 0]):
            raise FlowkitError(f"`bounds` must be three (low, high) pairs for x, y, z; got {bounds!r}")
        pts = b[:, 0] + rng.random((n, 3)) * (b[:, 1] - b[:, 0])
        return pts, b.tolist()
    if flow.domain == "ball":
        v = rng.normal(size=(n, 3))
        v /= np.linalg.norm(v, axis=1)[:, None]
        return v * rng.random(n)[:, None] ** (1.0 / 3.0), "unit ball"
    if flow.domain == "periodic":
        return rng.random((n, 3)) * 2 * math.pi, [[0, 2 * math.pi]] * 3
    raise FlowkitError(f"flow '{flow.name}' lives on an unbounded domain: pass `bounds` "
                       "[(x0, x1), (y0, y1), (z0, z1)] for the random seeds")


def chaotic_fraction(
    flow: Flow,
    n: int,
    time: float,
    *,
    threshold: float | None = None,
    bounds=None,
    seed: int = 0,
    settings: IntegratorSettings | None = None,
    threads: int | None = None,
    max_seconds: float | None = None,
    progress: bool | None = None,
) -> ChaoticFraction:
    """Estimate the fraction of the domain filled by chaotic orbits.

    ``n`` seeds are drawn uniformly (in the unit ball, the 2*pi box, or ``bounds``);
    each orbit is classified by :func:`orbit_ftle`. Orbits that fail (e.g. leave
    the domain) are left out and counted in ``n_failed``. The standard error is
    the binomial one, sqrt(f (1 - f) / n_used). ``max_seconds`` and Ctrl-C end the
    run between chunks of seeds with the fraction of the orbits finished so far
    (``partial``; the seeds are in random order, so the estimate stays unbiased).
    """
    flow = require_flow(flow)
    n = count(n, "n", what=" (number of seeds)")
    pts, box = random_seeds(flow, int(n), np.random.default_rng(seed), bounds)
    orbits = orbit_ftle(flow, pts, time, settings, threshold=threshold, threads=threads, max_seconds=max_seconds,
                        progress=progress)
    used = np.isfinite(orbits.values)
    n_used = int(used.sum())
    n_run = int(np.sum(orbits.outcome >= 0))
    if n_used == 0:
        raise FlowkitError("no orbit finished, so no fraction can be estimated; see the outcome counts")
    k = int(np.sum(orbits.chaotic))
    f = k / n_used
    prov = dict(orbits.provenance)
    prov["method"] = dict(prov["method"], seeds=int(n), rng_seed=seed, bounds=box,
                          error="binomial standard error sqrt(f(1-f)/n)")
    return ChaoticFraction(f, math.sqrt(f * (1 - f) / n_used), k, n_used, n_run - n_used, orbits.threshold,
                           orbits.time, orbits, box, orbits.partial, list(orbits.notes), prov)
