"""Compute Poincaré sections: validate, allocate, run the parallel kernel, wrap the result."""

from __future__ import annotations

import math
import time
import warnings

import numba
import numpy as np

from flowkit.errors import FlowkitError, FlowkitNotice
from flowkit.flows.base import Flow
from flowkit.integrate.batch import IntegratorSettings, check_seeds, thread_limit
from flowkit.integrate.splitting import SplittingSettings, check_splittable
from flowkit.kernels import generic
from flowkit.sections.geometry import DIRECTIONS, Plane, Stroboscopic, lattice_spacing
from flowkit.sections.result import Section
from flowkit.validation import memory

_METHOD_CODES = {"dop853": 0, "rk4": 1, "splitting": 2}
#: memory for the crossing buffers of one kernel call (seeds are run in chunks beyond it)
_BUFFER_BYTES = 256 * 2**20


def _settings(method, rtol, atol, max_step, max_steps, step, order):
    if method not in _METHOD_CODES:
        raise FlowkitError(f"`method` must be one of {', '.join(_METHOD_CODES)}; got {method!r}")
    if method == "splitting":
        if step is None:
            raise FlowkitError("`step` must be a positive number when method='splitting' (e.g. step=0.01)")
        return SplittingSettings(step=step, order=order)
    return IntegratorSettings(method=method, rtol=rtol, atol=atol, max_step=max_step, max_steps=max_steps, step=step)


def _plane_vector(flow: Flow, geom) -> tuple[np.ndarray, dict]:
    """The kernel's plane parameters and the geometry record."""
    vec = np.zeros(9)
    if isinstance(geom, Plane):
        vec[0:3] = geom.n
        vec[3] = geom.offset
        vec[8] = DIRECTIONS[geom.direction]
        record = geom.as_dict()
        if flow.domain == "periodic":
            vec[4] = lattice_spacing(geom.n)
            record["lattice_spacing"] = vec[4]
        return vec, record
    period = geom.period if geom.period is not None else flow.period
    if period is None:
        raise FlowkitError(
            f"a stroboscopic section needs a period, but flow '{flow.name}' is steady; "
            "pass Stroboscopic(period=...) or use a plane"
        )
    vec[0:3] = geom.view.n  # unused by the stroboscopic kernel path; kept for completeness
    vec[5] = 1.0
    vec[6] = period
    vec[7] = geom.phase
    return vec, geom.as_dict(period)


def poincare_section(
    flow: Flow,
    seeds,
    plane: Plane | Stroboscopic | None = None,
    *,
    crossings: int = 1000,
    t0: float = 0.0,
    t_max: float | None = None,
    method: str = "dop853",
    rtol: float = 1e-10,
    atol: float = 1e-12,
    max_step: float = math.inf,
    max_steps: int | None = None,
    step: float | None = None,
    order: int = 2,
    threads: int | None = None,
    progress: bool = False,
) -> Section:
    """Poincaré section of the orbits started at ``seeds``.

    Parameters
    ----------
    flow : Flow
        The flow (parameters are part of it; changing them never recompiles).
    seeds : array (N, 3)
        Initial points, inside the flow's domain.
    plane : Plane or Stroboscopic, optional
        The section; default ``Plane((0, 0, 1), 0, "+")`` (z = 0 crossed upward).
    crossings : int
        Crossing budget per orbit: an orbit stops with outcome "crossing budget"
        once it has this many.
    t0, t_max : float
        Start time and optional end time (orbits reaching it end as "finished").
    method : {"dop853", "rk4", "splitting"}
        Adaptive DOP853 with dense-output crossing location (default), or a
        fixed-step method with Hénon's crossing location (``step`` required;
        "splitting" is the volume-preserving scheme, ``order`` 2 or 4).
    rtol, atol, max_step : float
        DOP853 tolerances and step cap.
    max_steps : int, optional
        Step budget per orbit (default ``max(100_000, 5_000 * crossings)``).
    threads : int, optional
        Threads for the batch (default: all numba threads). Results do not
        depend on it.
    progress : bool
        Show a progress bar over chunks of seeds (tqdm).

    Returns
    -------
    Section
        Crossings with per-orbit outcomes and provenance. An orbit that leaves
        the domain, blows up or runs out of steps keeps the crossings it found
        and reports its outcome; the rest of the batch is unaffected.

    Notes
    -----
    The kernels are :func:`flowkit.kernels.sections.sec_batch_dop853` and ``sec_batch_fixed``; its module
    docstring describes the crossing location and the hidden-pair check.
    """
    if not isinstance(flow, Flow):
        raise FlowkitError(f"`flow` must be a flowkit Flow (e.g. flowkit.flow('stf')); got {type(flow).__name__}")
    X0 = check_seeds(flow, seeds)
    if isinstance(crossings, bool) or not isinstance(crossings, (int, np.integer)) or crossings < 1:
        raise FlowkitError(f"`crossings` must be a positive integer (the crossing budget per orbit); got {crossings!r}")
    crossings = int(crossings)
    # the assembled section holds 3 coordinates, a time and a direction per crossing (5 doubles)
    memory(X0.shape[0] * crossings * 40.0, "crossings", per_unit=X0.shape[0] * 40.0,
           value=f"{crossings} for {X0.shape[0]} seeds")
    if max_steps is None:
        max_steps = max(100_000, 5_000 * crossings)
    settings = _settings(method, rtol, atol, max_step, max_steps, step, order)
    if method == "splitting":
        check_splittable(flow)
        if not (isinstance(max_steps, (int, np.integer)) and max_steps > 0):
            raise FlowkitError(f"`max_steps` must be a positive integer; got {max_steps!r}")
    geom = Plane() if plane is None else plane
    if not isinstance(geom, (Plane, Stroboscopic)):
        raise FlowkitError(f"`plane` must be a Plane or Stroboscopic; got {type(plane).__name__}")
    if not math.isfinite(t0):
        raise FlowkitError(f"`t0` must be finite; got {t0!r}")
    t_lim = math.inf if t_max is None else float(t_max)
    if not t_lim > t0:
        raise FlowkitError(f"`t_max` must be later than t0 = {t0}; got {t_max!r}")
    pvec, record = _plane_vector(flow, geom)

    N = X0.shape[0]
    chunk = max(1, min(N, _BUFFER_BYTES // (crossings * 48)))
    if progress:
        chunk = min(chunk, max(1, 4 * numba.get_num_threads()))
    mcode = _METHOD_CODES[method]
    hfix = float(step) if step is not None else 0.0
    parts = []
    done = 0
    seconds = 0.0
    # The first call in a process compiles the kernel (or loads it from the disk cache): do that on a
    # one-seed, near-zero-time run first and report it as compile_seconds, apart from `seconds`.
    opts = (float(rtol), float(atol), float(max_step), int(max_steps), hfix, int(order))
    kernel, params, background = _pick_kernel(flow, mcode, pvec, opts)
    compile_seconds = 0.0
    if N and not getattr(kernel, "signatures", True):
        tic = time.perf_counter()
        _run_kernel(kernel, params, mcode, X0[:1], float(t0), float(t0) + 1e-9, pvec, 1, opts)
        compile_seconds = time.perf_counter() - tic
    if background is not None:  # only now: the generic kernel is loaded, so nothing here waits for numba's lock
        background()
    interrupted = False
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=N, desc=f"section {flow.name}", unit="orbit")
    try:
        with thread_limit(threads), numba.parallel_chunksize(1):
            while done < N:
                sl = slice(done, min(N, done + chunk))
                n = sl.stop - sl.start
                pts = np.empty((n, crossings, 3))
                tim = np.empty((n, crossings))
                sgn = np.empty((n, crossings))
                count = np.zeros(n, dtype=np.int64)
                outcome = np.zeros(n, dtype=np.int8)
                t_end = np.zeros(n)
                steps = np.zeros(n, dtype=np.int64)
                tic = time.perf_counter()
                _call_kernel(kernel, params, mcode, X0[sl], float(t0), t_lim, pvec, opts, flow.domain == "ball",
                             (pts, tim, sgn, count, outcome, t_end, steps))
                seconds += time.perf_counter() - tic
                parts.append((pts, tim, sgn, count, outcome, t_end, steps))
                done = sl.stop
                if bar is not None:
                    bar.update(n)
    except KeyboardInterrupt:
        interrupted = True
        warnings.warn(f"section interrupted: kept the {done} of {N} orbits that had finished", FlowkitNotice, stacklevel=2)
    finally:
        if bar is not None:
            bar.close()

    count = np.concatenate([p[3] for p in parts]) if parts else np.zeros(0, dtype=np.int64)
    points = np.concatenate([p[0][i, : p[3][i]] for p in parts for i in range(len(p[3]))]) if parts else np.zeros((0, 3))
    times = np.concatenate([p[1][i, : p[3][i]] for p in parts for i in range(len(p[3]))]) if parts else np.zeros(0)
    dirs = np.concatenate([p[2][i, : p[3][i]] for p in parts for i in range(len(p[3]))]) if parts else np.zeros(0)
    orbit = np.repeat(np.arange(done), count)
    view = geom if isinstance(geom, Plane) else geom.view
    prov = flow.provenance()
    prov.update(
        integrator=settings.as_dict(),
        section=record,
        seeds=X0[:done].tolist(),
        crossing_budget=crossings,
        t0=float(t0),
        t_max=t_max,
        threads=int(threads or numba.get_num_threads()),
        seconds=seconds,
        compile_seconds=compile_seconds,
        kernel="generic" if params is not flow.params else "specialized",
        interrupted=interrupted,
    )
    return Section(
        points=points.reshape(-1, 3),
        coords=view.coords(points.reshape(-1, 3)),
        time=times,
        orbit=orbit,
        crossing_direction=dirs.astype(np.int8),
        seeds=X0[:done],
        outcome=np.concatenate([p[4] for p in parts]) if parts else np.zeros(0, dtype=np.int8),
        t_end=np.concatenate([p[5] for p in parts]) if parts else np.zeros(0),
        steps=np.concatenate([p[6] for p in parts]) if parts else np.zeros(0, dtype=np.int64),
        counts=count,
        geometry=record,
        provenance=prov,
    )


def _pick_kernel(flow: Flow, mcode: int, pvec, opts: tuple):
    """(kernel, parameter vector, start-background-compile or None) for this section.

    The family's own DOP853 kernel when it is compiled or cached on disk; otherwise the
    generic kernel (compiled once for every flow, bitwise the same results; see
    flowkit/kernels/generic.py) and a function that compiles the family's own one in a
    background thread, so later sections of this flow run at full speed.
    """
    if mcode != 0:
        return flow.kernels.sec_batch_fixed, flow.params, None  # own: splitting needs the family's sub-fields
    kernel = flow.kernels.sec_batch_dop853
    if not generic.enabled() or generic.ready(kernel):
        return kernel, flow.params, None
    params = generic.pointer_params(flow)
    if params is None:
        return kernel, flow.params, None
    shared = generic.generic_kernels().sec_batch_dop853
    if generic.only():  # chosen per section call (one kernel call per chunk of this run): never mid-run
        return shared, params, None

    def warm():  # compile only (the same argument types as the generic kernel's): never a second parallel run
        kernel.compile(shared.signatures[0])

    return shared, params, lambda: generic.compile_in_background(flow.kernels.__name__ + ".sec_batch_dop853", warm)


def _call_kernel(kernel, params, mcode: int, X0, t0: float, t_lim: float, pvec, opts: tuple, bounded: bool,
                 out: tuple) -> None:
    """One batch of a section kernel; ``opts`` = (rtol, atol, max_step, max_steps, step, order)."""
    rtol, atol, max_step, max_steps, hfix, order = opts
    if mcode == 0:
        kernel(X0, t0, t_lim, params, rtol, atol, max_step, max_steps, bounded, pvec, *out)
    else:
        kernel(X0, t0, t_lim, params, mcode, hfix, order, max_steps, bounded, pvec, *out)


def _run_kernel(kernel, params, mcode: int, X0, t0: float, t_lim: float, pvec, crossings: int, opts,
                bounded: bool = False) -> None:
    """A throw-away kernel call with fresh output buffers (compiles the kernel on first use)."""
    n = len(X0)
    out = (np.empty((n, crossings, 3)), np.empty((n, crossings)), np.empty((n, crossings)),
           np.zeros(n, dtype=np.int64), np.zeros(n, dtype=np.int8), np.zeros(n), np.zeros(n, dtype=np.int64))
    _call_kernel(kernel, params, mcode, X0, t0, t_lim, pvec, opts, bounded, out)


def warm_sections(flow: Flow, method: str = "dop853", wait: bool = False) -> float:
    """Make sections of ``flow`` ready to run; return seconds spent.

    Loads the section kernel from the disk cache, or compiles it. For a DOP853
    section of a flow whose own kernel is not cached yet, the generic kernel is
    made ready instead and the flow's own one compiles in the background (see
    :func:`poincare_section`); ``wait=True`` compiles the flow's own kernel now.
    """
    tic = time.perf_counter()
    seed = np.zeros((1, 3)) if flow.contains(np.zeros((1, 3)))[0] else None
    if seed is None:  # pragma: no cover - every domain contains the origin today
        return 0.0
    if wait and method == "dop853":
        kernel = flow.kernels.sec_batch_dop853
        pvec, _ = _plane_vector(flow, Plane())
        _run_kernel(kernel, flow.params, 0, seed, 0.0, 1e-9, pvec, 1, (1e-10, 1e-12, math.inf, 10, 0.0, 2))
        return time.perf_counter() - tic
    kw = {"step": 0.1} if method != "dop853" else {}
    poincare_section(flow, seed, Plane(), crossings=1, t_max=0.1, method=method, **kw)
    return time.perf_counter() - tic
