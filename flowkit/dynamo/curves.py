"""Growth rate against ``Rm`` (or against ``kz`` at one ``Rm``) and the critical ``Rm`` of dynamo onset."""

from __future__ import annotations

import math
import time

import numpy as np
from scipy.optimize import brentq

from flowkit.dynamo.growth import default_check_resolution, growth_rate
from flowkit.dynamo.induction import check_periodic, check_rm


def _check_flow(flow) -> None:
    """Periodic flows go to the box solver, ball flows to the sphere solver; anything else is refused."""
    if getattr(flow, "domain", None) in ("ball", "unbounded"):
        from flowkit.dynamo.sphere.flowcheck import check_ball_flow

        check_ball_flow(flow)
    else:
        check_periodic(flow)
from flowkit.dynamo.results import CriticalRm, KzScan, RmSweep, stamp
from flowkit.dynamo.spectral import check_kz
from flowkit.errors import FlowkitError


def _checked_list(values, check, name: str, rule: str, example: str) -> list[float]:
    """Every entry of ``values`` through ``check``; errors name the list, the rule and an example."""
    try:
        vals = [check(v) for v in np.atleast_1d(np.asarray(values, dtype=object)).ravel()]
    except FlowkitError as exc:
        raise FlowkitError(f"every value of `{name}` must be {rule}: {exc}") from None
    if not vals:
        raise FlowkitError(f"`{name}` is empty; pass e.g. {name}={example}")
    return vals


def _rm_values(rms) -> list[float]:
    return _checked_list(rms, check_rm, "rm_list", "positive", "[5, 10, 20]")


def _progress(iterable, enabled: bool, desc: str):
    if not enabled:
        return iterable
    from tqdm.auto import tqdm

    return tqdm(iterable, desc=desc, leave=False)


def sweep_rm(flow, rm_list, resolution=None, method: str = "eigen", progress: bool = True,
             save_to=None, **kwargs) -> RmSweep:
    """Growth rate of the leading mode at each ``Rm`` of ``rm_list``.

    Parameters
    ----------
    flow : Flow
        Periodic flow (box solver) or ball flow (sphere solver; ``resolution=(L, N)``).
    rm_list : sequence of float
        Magnetic Reynolds numbers (any order; evaluated as given).
    resolution, method, **kwargs
        Passed to :func:`~flowkit.dynamo.growth.growth_rate` (``keep_mode`` is off;
        ``kz=...`` fixes a vertical wavenumber for a ``z``-independent flow).
    progress : bool
        Show a tqdm progress bar (works in notebooks and terminals).
    save_to : path, optional
        Save the sweep after every point, so an interrupted run keeps what finished.

    Returns
    -------
    RmSweep
        Ctrl-C stops the sweep and returns the finished points
        (``provenance["interrupted"]`` is then true).
    """
    _check_flow(flow)
    rms = _rm_values(rm_list)

    def collect(done, settings, seconds):
        return RmSweep(rm=np.array([r.rm for r in done]), **_curve_arrays(done), points=[r.summary() for r in done],
                       provenance=stamp(flow, settings), seconds=seconds)

    return _run_curve(flow, rms, lambda rm, kw: growth_rate(flow, rm, resolution, method, **kw), collect,
                      {"method": method, "resolution": resolution}, kwargs, progress, save_to,
                      f"growth rate ({flow.name}, N={resolution})")


def sweep_kz(flow, rm: float, kz_list, resolution: int = 32, method: str = "eigen", progress: bool = True,
             save_to=None, **kwargs) -> KzScan:
    """Growth rate of the leading mode at each vertical wavenumber of ``kz_list``, at one ``Rm``.

    For a flow independent of ``z`` each ``kz`` is a separate eigenproblem on an
    ``N^2`` grid (see :class:`~flowkit.dynamo.spectral.VerticalWaveGrid`), so
    ``kz`` need not be an integer: this is the dynamo's dispersion relation, and
    ``result.fastest`` the fastest-growing scale.

    Parameters
    ----------
    flow : Flow
        Periodic flow independent of ``z``.
    rm : float
        Magnetic Reynolds number.
    kz_list : sequence of float
        Vertical wavenumbers ``>= 0``.
    resolution, method, progress, save_to, **kwargs
        As for :func:`sweep_rm`.

    Returns
    -------
    KzScan
    """
    check_periodic(flow)
    rm = check_rm(rm)
    kzs = _checked_list(kz_list, check_kz, "kz_list", "a wavenumber >= 0", "[0.25, 0.5, 1.0]")

    def collect(done, settings, seconds):
        return KzScan(kz=np.array([r.kz for r in done]), **_curve_arrays(done), rm=rm,
                      points=[r.summary() for r in done], provenance=stamp(flow, settings), seconds=seconds)

    return _run_curve(flow, kzs, lambda kz, kw: growth_rate(flow, rm, resolution, method, kz=kz, **kw), collect,
                      {"method": method, "resolution": resolution, "rm": rm}, kwargs, progress, save_to,
                      f"growth rate vs kz ({flow.name}, Rm={rm:g})")


def _curve_arrays(done) -> dict:
    return {"growth_rate": np.array([r.growth_rate for r in done]),
            "frequency": np.array([r.frequency for r in done]),
            "error_estimate": np.array([r.error_estimate for r in done]),
            "converged": [r.converged for r in done]}


def _run_curve(flow, values, compute, collect, settings, kwargs, progress, save_to, desc):
    """Evaluate ``compute(value, kwargs)`` along ``values``; save after each point; Ctrl-C keeps what finished."""
    kwargs.setdefault("keep_mode", False)
    settings = {**settings, **{k: v for k, v in kwargs.items() if k != "keep_mode"}}
    t0 = time.perf_counter()
    done: list = []
    interrupted = False
    try:
        for value in _progress(values, progress, desc):
            done.append(compute(value, kwargs))
            if save_to is not None:
                collect(done, settings, time.perf_counter() - t0).save(save_to)
    except KeyboardInterrupt:
        interrupted = True
    curve = collect(done, settings, time.perf_counter() - t0)
    curve.provenance["interrupted"] = interrupted
    return curve


def critical_rm(flow, rm_list=(1, 2, 4, 6, 8, 10, 15, 20, 30, 50), resolution=None,
                method: str = "eigen", xtol: float = 1e-3, check_resolution="auto", progress: bool = True,
                **settings) -> CriticalRm:
    """Lowest ``Rm`` at which the leading growth rate crosses zero from below.

    ``rm_list`` is scanned upward until the growth rate changes sign from
    negative to positive; the root in that bracket is found by Brent's method
    (``scipy.optimize.brentq``) to ``xtol`` (relative to ``Rm``).

    Returns
    -------
    CriticalRm
        ``uncertainty = xtol * Rm_c + |sigma_check(Rm_c)| / |d sigma/d Rm|``: the
        root-finding tolerance plus the shift of the root implied by the growth
        rate at the check resolution (``2N/3`` by default).
    """
    _check_flow(flow)
    ball = flow.domain == "ball"
    if resolution is None:
        resolution = (16, 16) if ball else 32
    rms = sorted(_rm_values(rm_list))
    t0 = time.perf_counter()
    solver = dict(settings)
    if ball and method == "eigen":  # each solve starts from the last eigenpair (flowkit.dynamo.sphere.warm)
        from flowkit.dynamo.sphere.warm import WarmStart

        solver.setdefault("warm_start", WarmStart())
    evaluations: dict[float, float] = {}
    freqs: dict[float, float] = {}

    def sigma(rm: float) -> float:
        if rm not in evaluations:
            r = growth_rate(flow, rm, resolution, method, check_resolution=None, keep_mode=False, **solver)
            if not math.isfinite(r.growth_rate):
                raise FlowkitError(f"no growth rate at Rm = {rm:g} ({r.diagnostics.get('message', '')}); "
                                   "raise `resolution` or change the method settings")
            evaluations[rm], freqs[rm] = r.growth_rate, r.frequency
        return evaluations[rm]

    bracket = None
    previous = None
    for rm in _progress(rms, progress, f"bracketing Rm_c ({flow.name})"):
        s = sigma(rm)
        if previous is not None and sigma(previous) < 0 <= s:
            bracket = (previous, rm)
            break
        previous = rm
    if bracket is None:
        signs = ", ".join(f"Rm={r:g}: {evaluations[r]:+.3g}" for r in sorted(evaluations))
        raise FlowkitError(
            f"no sign change from decay to growth in `rm_list` ({signs}); widen the list "
            "(e.g. --rm-list 1,2,5,10,20,50,100) or raise --resolution for large Rm"
        )
    root = brentq(sigma, *bracket, xtol=xtol * bracket[0], rtol=1e-10, full_output=False)
    left = max(r for r in evaluations if r < root or r == bracket[0])
    right = min(r for r in evaluations if r > root or r == bracket[1])
    slope = (evaluations[right] - evaluations[left]) / (right - left)
    sigma(root)
    uncertainty = xtol * root
    check = {}
    if check_resolution is not None:
        if ball:
            from flowkit.dynamo.sphere.flowcheck import probe_flow
            from flowkit.dynamo.sphere.growth import default_check
            from flowkit.dynamo.sphere.operator import check_ball_resolution

            res = check_ball_resolution(resolution)
            other = list(default_check(res, probe_flow(flow)) if check_resolution == "auto"
                         else check_ball_resolution(check_resolution, "check_resolution"))
        else:
            other = default_check_resolution(resolution) if check_resolution == "auto" else int(check_resolution)
        r2 = growth_rate(flow, root, other, method, check_resolution=None, keep_mode=False, **solver)
        check = {"resolution": other, "growth_rate_at_root": r2.growth_rate}
        uncertainty += abs(r2.growth_rate - evaluations[root]) / abs(slope)
    return CriticalRm(
        rm_critical=float(root), uncertainty=float(uncertainty), bracket=[float(b) for b in bracket],
        slope=float(slope), frequency=float(freqs[root]),
        evaluations=[[r, evaluations[r], freqs[r]] for r in sorted(evaluations)],
        resolution=resolution, method=method,
        provenance={**stamp(flow, {"method": method, "resolution": resolution, "xtol": xtol,
                                   "rm_list": rms, **{k: v for k, v in settings.items() if k != "warm_start"}}),
                    "check": check},
        seconds=time.perf_counter() - t0,
    )
