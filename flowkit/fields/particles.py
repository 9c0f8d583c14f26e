"""Flows and maps alike: checks, checkpoints, seeds, and advancing particles with tangent vectors.

Used by field vectors, material lines and flux (:mod:`flowkit.fields`). Flows run
through the tangent kernel (:func:`flowkit.chaos.tangent.run_tangent`), maps
through the map kernel (:func:`flowkit.flows.maps.run_map`).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from flowkit._version import __version__
from flowkit.errors import FlowkitError
from flowkit.flows.maps import is_map
from flowkit.integrate.batch import IntegratorSettings, integrate_states
from flowkit.validation import count, duration, points, points_in_domain, positive


def check_system(system, name: str = "flow"):
    """A flowkit Flow or Map, or a clear error."""
    from flowkit.flows.base import Flow

    if isinstance(system, Flow) or is_map(system):
        return system
    raise FlowkitError(f"`{name}` must be a flowkit flow or map (flowkit.flow('stf'), flowkit.custom_flow(...), "
                       f"flowkit.flow('cat-map')); got {type(system).__name__}")


def check_duration(system, time, name: str = "time"):
    """Positive finite duration; a positive integer number of iterations for maps."""
    if is_map(system):
        if isinstance(time, float) and time.is_integer():
            time = int(time)
        if not (isinstance(time, (int, np.integer)) and not isinstance(time, bool) and time > 0):
            raise FlowkitError(f"`{name}` is a number of iterations for map '{system.name}': a positive integer; "
                               f"got {time!r}")
        return int(time)
    return duration(time, name, backward_hint=False)


def units(system) -> str:
    return "per iteration" if is_map(system) else "per unit time"


def checkpoints(system, time, samples: int) -> np.ndarray:
    """Checkpoint times 0 .. time (``samples`` stretches; maps: distinct iteration counts)."""
    samples = count(samples, "samples", minimum=2, what=" (number of checkpoints)")
    if is_map(system):
        return np.unique(np.round(np.linspace(0, time, min(samples, time) + 1)).astype(np.int64))
    return np.linspace(0.0, float(time), samples + 1)


def default_seeds(system, n: int, rng: np.random.Generator) -> np.ndarray:
    """``n`` random points spread over the domain of a flow or the cell of a map."""
    if is_map(system):
        return system.sample(n, rng)
    from flowkit.flows.custom import sample_points

    pts = sample_points(system, n, rng)
    if system.domain == "ball":
        pts *= 0.999  # keep seeds strictly inside, away from the wall
    return pts


def check_points(system, seeds, name: str = "seeds") -> np.ndarray:
    """Validated (N, 3) starting points inside the domain."""
    if not is_map(system):
        return points_in_domain(system, seeds, name)
    arr = points(seeds, name)
    inside = system.contains(arr)
    if not np.all(inside):
        bad = int(np.flatnonzero(~inside)[0])
        raise FlowkitError(f"`{name}` row {bad} ({arr[bad].tolist()}) lies outside the cell of map '{system.name}' "
                           f"(box {system.family.box}); move it inside")
    return np.ascontiguousarray(system.wrap(arr))


class FrameRun(NamedTuple):
    logs: np.ndarray     # (N, m, ncol) sums of log R_cc per stretch (NaN where not reached)
    div: np.ndarray      # (N, m) integral of div u (maps: sum of ln|det DF|) per stretch
    outcome: np.ndarray  # (N,) int8


def run_frames(system, states: np.ndarray, marks: np.ndarray, settings: IntegratorSettings | None,
               threads: int | None = None) -> FrameRun:
    """Advance position + orthonormal tangent columns (rows of ``states``, in place) through ``marks``.

    Flows: :func:`flowkit.chaos.tangent.run_tangent` (adaptive DOP853; ``marks`` are
    times, decreasing for backward integration). Maps: the map kernel (``marks``
    are iteration counts; a decreasing sequence iterates the inverse map).
    """
    if is_map(system):
        from flowkit.flows.maps import run_map

        marks = np.asarray(marks, dtype=np.int64)
        backward = marks[-1] < marks[0]
        kern = system.inverse_kernels if backward else system.kernels
        counts = marks[0] - marks if backward else marks
        r = run_map(kern, states, counts, system.params, system.periods, threads)
        return FrameRun(r.logs, r.logvol, r.outcome)
    from flowkit.chaos.tangent import run_tangent

    r = run_tangent(system, states, np.asarray(marks, dtype=np.float64), settings, threads)
    return FrameRun(r.logs, r.div, r.outcome)


def advance_points(system, points: np.ndarray, t0, t1, settings: IntegratorSettings | None,
                   threads: int | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Positions (N, 3) moved from t0 to t1 (maps: iteration counts); returns (positions, outcome)."""
    if is_map(system):
        Y = np.ascontiguousarray(points, dtype=np.float64).copy()
        r = run_frames(system, Y, np.array([t0, t1]), None, threads)
        return Y, r.outcome
    res = integrate_states(system, points, float(t0), float(t1), settings, threads)
    return res.states, res.outcome


def stretch_settings(settings: IntegratorSettings | None, rtol: float = 1e-9) -> IntegratorSettings:
    """DOP853 settings for the tangent kernel (default rtol 1e-9, atol 1e-12)."""
    if settings is None:
        return IntegratorSettings(rtol=rtol, atol=1e-12)
    if not isinstance(settings, IntegratorSettings):
        raise FlowkitError(f"`settings` must be an IntegratorSettings; got {type(settings).__name__}")
    if settings.method != "dop853":
        raise FlowkitError("field vectors are integrated with adaptive DOP853; pass "
                           f"IntegratorSettings(method='dop853', ...) instead of method={settings.method!r}")
    return settings


def random_directions(n: int, rng: np.random.Generator, planar: bool = False) -> np.ndarray:
    """``n`` isotropically distributed unit vectors (in the x-y plane if ``planar``)."""
    v = rng.normal(size=(n, 3))
    if planar:
        v[:, 2] = 0.0
    return v / np.linalg.norm(v, axis=1)[:, None]


def _planar(system) -> bool:
    return getattr(system, "kind", "") == "planar"


def provenance_of(system, settings, **method) -> dict:
    """Flow/map provenance plus the method record of a result."""
    import datetime

    prov = system.provenance()
    rec = {"flowkit_version": __version__,
           "date": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds")}
    if not is_map(system) and settings is not None:
        rec["integrator"] = settings.as_dict()
    rec.update(method)
    prov["method"] = rec
    return prov


def check_transient(system, transient):
    if is_map(system):
        if not (isinstance(transient, (int, np.integer)) or float(transient).is_integer()) or transient < 0:
            raise FlowkitError(f"`transient` is a number of iterations for maps (integer >= 0); got {transient!r}")
        return int(transient)
    return positive(transient, "transient", allow_zero=True, what="time")


