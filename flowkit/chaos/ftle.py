"""Finite-time Lyapunov exponent (FTLE) fields on a planar grid.

For every grid point x0 the deformation gradient J = d x(t0 + T) / d x0 is
integrated with the variational equations and the flow's exact gradient (adaptive
DOP853 in :mod:`flowkit.kernels.ftle_dop`: 2 + 4 moved numbers for planar flows,
3 + 9 otherwise, velocity and gradient from one fused call; the same steps as the
generic batch driver), and

    FTLE(x0) = log(sigma_max(J)) / T

with sigma_max the largest singular value of J (the 2x2 in-plane block for
planar flows). Forward time shows repelling structures, backward time attracting
ones. No finite-difference spacing is involved.

The grid lies on a plane of any orientation, described by :class:`GridPlane`
(a point, two in-plane directions and the coordinate ranges along them).

Error norm (``error_norm``). "full" measures every component of the state, so J is
integrated to the tolerance as well. "position" measures x, y, z only: each orbit
takes its streamline's steps (fewer where J grows: 31 instead of 41 per orbit for
the double gyre at T = 15, rtol 1e-8) and J rides along. Measured against "full"
(benchmarks/bench_ftle.py, tests/test_ftle.py): 2e-6 or better wherever the orbit
moves; at a stagnation point (the double gyre's corners) the position error
vanishes, the step grows to ``max_step`` and J goes uncontrolled (6 % off at the
corners with no ``max_step``; 3e-8 with ``max_step=1``).

Speed against ``method="flowmap"`` at equal tolerance (benchmarks/bench_ftle.py, one
thread, load 1.0; figures vary by about 15 % between runs): on stf the default is faster
(1.22-1.31x; position norm 1.58-1.63x); on the double gyre it is slower (0.65-0.79x;
position norm 0.85-1.01x). The gyre's cost is its sin/cos calls, the same per step on
both sides (LLVM already pairs sin and cos of one argument into sincos), so the
variational step costs 1.1-1.15x the flow map's (four more numbers carried through the
twelve stages) and the full norm takes 1.34x its steps (41.7 against 31.1 per orbit at
rtol 1e-8). The flow map stays the option, not the default: its ridges are off by up to
0.75 at 400x200.
"""


from __future__ import annotations

import math
import time as _time
import warnings
from dataclasses import dataclass, field

import numba
import numpy as np

from flowkit.chaos.grid import GridPlane, check_resolution
from flowkit.chaos.tangent import method_record, require_flow
from flowkit.errors import FlowkitError, FlowkitNotice
from flowkit.flows.base import Flow
from flowkit.integrate.batch import IntegratorSettings, integrate_states, thread_limit  # noqa: F401 (old path, for comparisons)
from flowkit.integrate.outcomes import OUTCOME_NAMES, outcome_counts, outcome_notes
from flowkit.progress import Budget
from flowkit.results import Result, plain
from flowkit.validation import duration as check_time
from flowkit.validation import finite, one_of

__all__ = ["GridPlane", "FTLEField", "ftle_field", "ftle_from_states", "FTLE_SETTINGS"]

#: Default integrator settings for FTLE fields (looser than sections: the field is
#: a picture, and its error is checked against tighter runs in the tests).
FTLE_SETTINGS = IntegratorSettings(rtol=1e-9, atol=1e-11)

#: Outcome code of grid points that lie outside the flow's domain (never integrated).
OUTSIDE = -1
#: Outcome code of grid points not computed because the run was interrupted.
NOT_RUN = -2
_EXTRA_NAMES = {OUTSIDE: "outside the domain", NOT_RUN: "not computed (interrupted or time budget)"}


@dataclass
class FTLEField(Result):
    """An FTLE field on a planar grid, with its coordinates and provenance.

    Attributes
    ----------
    values : ndarray (M, N)
        FTLE at each grid point (NaN where ``outcome != 0``; see :attr:`outcomes`).
    s, r : ndarray
        Grid coordinates along the plane's ``u`` (N,) and ``v`` (M,) directions.
    points : ndarray (M, N, 3)
        Grid points in space.
    outcome : ndarray (M, N) int8
        Trajectory outcome (0 finished; see :class:`~flowkit.integrate.outcomes.Outcome`),
        -1 outside the domain, -2 not computed (interrupted run).
    time, t0, direction : float, float, str
        Integration time (positive), start time, and "forward" or "backward".
    plane : dict
        The :class:`GridPlane` as a dict.
    """

    values: np.ndarray
    s: np.ndarray
    r: np.ndarray
    points: np.ndarray
    outcome: np.ndarray
    time: float
    t0: float
    direction: str
    plane: dict
    seconds: float = 0.0
    partial: bool = False
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)

    _ARRAYS = ("values", "s", "r", "points", "outcome")
    _DIMS = {"values": ("r", "s"), "s": ("s",), "r": ("r",), "points": ("r", "s", "xyz"), "outcome": ("r", "s")}

    @property
    def outcomes(self) -> dict[str, int]:
        """Number of grid points per outcome (including outside / not computed)."""
        out = outcome_counts(self.outcome[self.outcome >= 0])
        for code, name in _EXTRA_NAMES.items():
            out[name] = int(np.sum(self.outcome == code))
        return out

    @property
    def complete(self) -> bool:
        """True if every grid point inside the domain finished."""
        return bool(np.all((self.outcome == 0) | (self.outcome == OUTSIDE)))

    def to_xarray(self):
        """``xarray.Dataset`` with ``ftle(r, s)``, ``outcome`` and the x, y, z of each grid point.

        (A view for analysis; :meth:`save` writes the protocol layout, which :func:`flowkit.load` reads.)
        """
        import xarray as xr

        dims = ("r", "s")
        ds = xr.Dataset(
            {"ftle": (dims, self.values), "outcome": (dims, self.outcome)},
            coords={"s": self.s, "r": self.r, "x": (dims, self.points[..., 0]),
                    "y": (dims, self.points[..., 1]), "z": (dims, self.points[..., 2])},
        )
        ds["ftle"].attrs.update(long_name=f"{self.direction} FTLE", units="1/time")
        ds.attrs.update(super().to_xarray().attrs)  # kind, fields and provenance, as in saved files
        return ds

    def summary(self) -> dict:
        """Grid, time, value range and outcome counts (what ``--json`` prints)."""
        ok = self.values[np.isfinite(self.values)]
        return plain({"shape": list(self.values.shape[::-1]), "time": self.time, "t0": self.t0,
                      "direction": self.direction, "plane": self.plane,
                      "min": float(ok.min()) if ok.size else None, "max": float(ok.max()) if ok.size else None,
                      "mean": float(ok.mean()) if ok.size else None, "outcomes": self.outcomes,
                      "complete": self.complete, "seconds": self.seconds, "partial": self.partial,
                      "notes": list(self.notes)})

    def headline(self) -> list:
        s = self.summary()
        return [("grid", f"{s['shape'][0]} x {s['shape'][1]}", None), ("T", self.time, None),
                ("direction", self.direction, None), ("FTLE min", s["min"], None), ("FTLE max", s["max"], None),
                ("complete", self.complete, None)]

    def __str__(self) -> str:
        ok = self.values[np.isfinite(self.values)]
        rng = f"{ok.min():.4g} .. {ok.max():.4g}" if ok.size else "no finite values"
        return (f"{self.direction} FTLE field {self.values.shape[1]}x{self.values.shape[0]}, T = {self.time:g}, "
                f"t0 = {self.t0:g}: {rng}; outcomes {self.outcomes}")


def ftle_from_states(states: np.ndarray, planar: bool, time: float) -> np.ndarray:
    """FTLE from final variational states (N, 3 + 3k): log(sigma_max(J)) / time."""
    N = states.shape[0]
    if planar:
        J = states[:, 3:9].reshape(N, 2, 3)[:, :, :2].transpose(0, 2, 1)
    else:
        J = states[:, 3:12].reshape(N, 3, 3).transpose(0, 2, 1)
    with np.errstate(divide="ignore", invalid="ignore"):
        sig = np.linalg.svd(J, compute_uv=False)[:, 0]
        return np.log(sig) / time


def _run_chunk(flow, pts, t0, t1, time, settings, threads, planar, error_norm):
    """FTLE values and outcome codes for one chunk of grid points."""
    if settings.method == "rk4":
        nsteps = max(1, int(math.ceil(time / settings.step - 1e-9)))
        logs = np.empty(pts.shape[0])
        codes = np.zeros(pts.shape[0], dtype=np.int8)
        with thread_limit(threads), numba.parallel_chunksize(16):
            kernel = flow.kernels.ftle_rk4_grid_planar if planar else flow.kernels.ftle_rk4_grid
            kernel(np.ascontiguousarray(pts), t0, (t1 - t0) / nsteps, nsteps, flow.params, flow.domain == "ball",
                   logs, codes)
        return logs / time, codes
    k = 2 if planar else 3
    Y = np.zeros((pts.shape[0], 3 + 3 * k))
    Y[:, :3] = pts
    for c in range(k):
        Y[:, 3 + 3 * c + c] = 1.0
    codes = np.zeros(Y.shape[0], dtype=np.int8)
    with thread_limit(threads), numba.parallel_chunksize(1):
        flow.kernels.ftle_dop853_batch(Y, t0, t1, flow.params, settings.rtol, settings.atol, float(settings.max_step),
                                       int(settings.max_steps), flow.domain == "ball", planar,
                                       error_norm == "position", codes, np.zeros(Y.shape[0]),
                                       np.zeros(Y.shape[0], dtype=np.int64))
    vals = ftle_from_states(Y, planar, time)
    vals[codes != 0] = np.nan
    return vals, codes


def _variational_chunks(flow, flat, idx, values, outcome, t0, t1, time, settings, threads, planar, chunk,
                        progress, max_seconds, error_norm) -> Budget:
    """Fill ``values``/``outcome`` at ``idx`` chunk by chunk under a progress/time/Ctrl-C budget."""
    with Budget(total=idx.size, desc=f"FTLE {flow.name}", unit="pt", progress=progress,
                max_seconds=max_seconds) as budget:
        for a in range(0, idx.size, chunk):
            if budget.expired():
                break
            part = idx[a:a + chunk]
            vals, codes = _run_chunk(flow, flat[part], t0, t1, time, settings, threads, planar, error_norm)
            values[part] = vals
            outcome[part] = codes
            budget.advance(part.size)
    return budget


def ftle_field(
    flow: Flow,
    plane: GridPlane,
    resolution=(128, 128),
    time: float = 1.0,
    *,
    t0: float = 0.0,
    direction: str = "forward",
    settings: IntegratorSettings | None = None,
    threads: int | None = None,
    chunk: int = 8192,
    progress: bool | None = None,
    max_seconds: float | None = None,
    method: str = "variational",
    error_norm: str = "full",
) -> FTLEField:
    """FTLE field of ``flow`` on a grid over ``plane``.

    Parameters
    ----------
    flow : Flow
        Any flowkit flow; planar flows need a plane in the x-y plane (their 2x2
        block is used).
    plane : GridPlane
        Where the grid lies; a missing span is filled from the flow's domain.
    resolution : (int, int)
        Grid points along ``u`` and ``v`` (N, M), each at least 2.
    time : float
        Integration time, positive; ``direction`` chooses forward or backward.
    t0 : float
        Start time (time-periodic flows).
    direction : {"forward", "backward"}
    settings : IntegratorSettings, optional
        Default :data:`FTLE_SETTINGS` (DOP853, rtol 1e-9). ``method="rk4"`` with a
        ``step`` is accepted too.
    threads : int, optional
        Number of threads (default: all).
    chunk : int
        Grid points per kernel call; finished chunks survive an interruption
        (Ctrl-C returns the partial field with outcome -2 where not computed).
    progress : bool, optional
        A progress bar over chunks once the run lasts 2 s (default); False: never.
    max_seconds : float, optional
        Wall-clock budget, checked between chunks: the field is returned with the
        finished chunks, outcome -2 elsewhere, flagged ``partial``.
    method : {"variational", "flowmap"}
        "variational" (default): the deformation gradient from the variational
        equations with the exact gradient. "flowmap": positions only, then centred
        finite differences over one grid spacing (:mod:`flowkit.chaos.ftle_flowmap`);
        cheaper, but ridges are smeared over a cell and depend on the resolution.
    error_norm : {"full", "position"}
        What DOP853's step control measures with ``method="variational"``. "full"
        (default): the position and the deformation gradient, as every flowkit
        integration does. "position": the position only, so each orbit takes the
        steps its streamline alone would take (those of ``method="flowmap"``) and
        the deformation gradient rides along without its own error control:
        faster (fewer steps when J grows), but J is uncontrolled where an orbit
        stands still: set ``max_step`` for flows with stagnation points (module notes).

    Returns
    -------
    FTLEField
        Grid points outside the domain get outcome -1 and NaN; orbits that fail
        (left the domain, non-finite, step budget) keep their outcome code and NaN.
    """
    flow = require_flow(flow)
    time = check_time(time)
    one_of(direction, "direction", ("forward", "backward"))
    one_of(method, "method", ("variational", "flowmap"))
    one_of(error_norm, "error_norm", ("full", "position"))
    if not isinstance(plane, GridPlane):
        raise FlowkitError(f"`plane` must be a GridPlane (GridPlane.coordinate('z', 0.0, span)); got {type(plane).__name__}")
    t0 = finite(t0, "t0")
    plane = plane.with_default_span(flow)
    settings = settings or FTLE_SETTINGS
    planar = flow.kind == "planar"
    if planar and (abs(plane.u[2]) > 1e-12 or abs(plane.v[2]) > 1e-12):
        raise FlowkitError(f"flow '{flow.name}' is planar: the grid must lie in the x-y plane (e.g. --plane z=0)")
    s, r, pts = plane.grid(resolution)
    flat = pts.reshape(-1, 3)
    inside = flow.contains(flat)
    if not inside.any():
        raise FlowkitError(f"no grid point lies inside the domain of '{flow.name}' ({flow.domain}); "
                           "move the plane or change its span")
    outcome = np.full(flat.shape[0], NOT_RUN, dtype=np.int8)
    outcome[~inside] = OUTSIDE
    values = np.full(flat.shape[0], np.nan)
    idx = np.flatnonzero(inside)
    t1 = float(t0) + (time if direction == "forward" else -time)
    start = _time.perf_counter()
    if method == "flowmap":
        from flowkit.chaos.ftle_flowmap import flowmap_field

        vals2, codes2, budget = flowmap_field(flow, plane, s, r, pts, inside, float(t0), t1, time, settings,
                                              threads, chunk, progress, max_seconds, NOT_RUN)
        values[:] = vals2.ravel()
        outcome[inside] = codes2.ravel()[inside]
    else:
        budget = _variational_chunks(flow, flat, idx, values, outcome, float(t0), t1, time, settings, threads,
                                     planar, chunk, progress, max_seconds, error_norm)
    notes = []
    if budget.partial:
        notes.append(f"{'interrupted' if budget.interrupted else 'time budget reached'}: "
                     f"{int(np.sum(outcome == NOT_RUN))} grid points not computed (outcome -2); {budget.reason}")
        warnings.warn(f"FTLE field: {notes[0]}", FlowkitNotice, stacklevel=2)
    notes += outcome_notes(outcome[outcome >= 0])
    seconds = _time.perf_counter() - start
    failed = {OUTCOME_NAMES[c]: int(n) for c, n in zip(*np.unique(outcome[outcome > 0], return_counts=True))}
    if failed:
        warnings.warn(f"FTLE field: some trajectories did not finish ({failed}); their values are NaN "
                      "(see field.outcome)", FlowkitNotice, stacklevel=2)
    provenance = flow.provenance()
    provenance["method"] = method_record(
        settings, algorithm=("variational equations with the exact gradient" if method == "variational" else
                             "flow map of positions, centred finite differences over one grid spacing")
        + "; FTLE = log(largest singular value of the deformation gradient) / T"
        + ("; in-plane 2x2 block" if planar else ""),
        resolution=list(check_resolution(resolution)), threads=threads, ftle_method=method,
        **({"error_norm": error_norm} if method == "variational" and settings.method == "dop853" else {}))
    M, N = pts.shape[:2]
    return FTLEField(values.reshape(M, N), s, r, pts, outcome.reshape(M, N), time, float(t0), direction,
                     plane.as_dict(), seconds, budget.partial, notes, provenance)
