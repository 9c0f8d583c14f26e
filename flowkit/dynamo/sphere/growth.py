"""Growth rate of the leading magnetic mode of a ball flow, with a resolution check.

:func:`ball_growth_rate` is what :func:`flowkit.dynamo.growth_rate` calls for a flow
with ``domain="ball"``. Methods:

- ``"eigen"``: shift-invert ARPACK on the operator (dense per order ``m`` for an
  axisymmetric flow, the coloured sparse matrix when all orders couple); for a
  time-periodic flow, Arnoldi on the one-period propagator (Floquet);
- ``"propagator"``: Arnoldi on ``exp(tau A)`` applied by time stepping;
- ``"march"``: time stepping and the oscillation-aware fit.

For an axisymmetric flow the orders ``m = 0 .. m_max`` are solved one at a time
(``m_max = min(L, 4)`` by default; ``m="all"`` for every order, or one ``m``);
``m`` and ``-m`` have conjugate spectra, so ``m >= 0`` suffice.
"""

from __future__ import annotations

import time

import numpy as np

from flowkit.dynamo.sphere.eigen import PROPAGATOR_DEFAULTS, SHIFT_DEFAULTS, propagator, shift_invert
from flowkit.dynamo.sphere.flowcheck import check_ball_flow, check_facts, probe_flow
from flowkit.dynamo.sphere.march import MARCH_DEFAULTS, march_growth
from flowkit.dynamo.sphere.operator import BallOperator, check_ball_resolution
from flowkit.dynamo.sphere.sparse import sparse_shift_invert
from flowkit.errors import FlowkitError
from flowkit.validation import positive

BALL_METHODS = ("eigen", "propagator", "march")
#: Orders scanned by default for an axisymmetric flow: 0 .. min(L, M_SCAN).
M_SCAN = 4
#: ``resolution="auto"``: the default caps (axisymmetric flows; all orders coupled) and the steps.
AUTO_CAP_AXISYMMETRIC, AUTO_CAP_COUPLED = (32, 32), (20, 20)
AUTO_STEP_AXISYMMETRIC, AUTO_STEP_COUPLED = 4, 2


def auto_ladder(facts, axisymmetric: bool, cap=None, name: str = "") -> list[tuple[int, int]]:
    """Resolutions ``(L, N)`` climbed by ``resolution="auto"``: from the flow's minimum (at least 8)
    up to ``cap`` in equal steps (4 for axisymmetric flows, 2 when all orders couple)."""
    lmin = max(2, facts.degree + 2)
    nmin = max(6, (facts.radial_degree or 0) + 4)
    default = AUTO_CAP_AXISYMMETRIC if axisymmetric else AUTO_CAP_COUPLED
    cap = default if cap is None else check_ball_resolution(cap, "max_resolution")
    step = AUTO_STEP_AXISYMMETRIC if axisymmetric else AUTO_STEP_COUPLED
    start = max(8, lmin, nmin)
    if min(cap) <= start:
        raise FlowkitError(f"`max_resolution` = {tuple(cap)} leaves no pair of resolutions to compare for flow "
                           f"'{name}': the 'auto' ladder starts at ({start}, {start}) in steps of "
                           f"{step}; use at least max_resolution=({start + step}, {start + step})")
    ladder, k = [], start
    while k <= min(cap):
        ladder.append((min(k, cap[0]), min(k, cap[1])))
        k += step
    if ladder[-1] != tuple(cap):
        ladder.append(tuple(cap))
    return ladder


def _defaults(method: str, steady: bool, axisymmetric: bool) -> dict:
    if method == "march":
        return MARCH_DEFAULTS
    if method == "propagator" or not steady:
        return PROPAGATOR_DEFAULTS
    return SHIFT_DEFAULTS


def default_check(res: tuple[int, int], facts) -> tuple[int, int]:
    """The smaller resolution of the pair: about ``3/4`` of ``(L, N)``, at least the flow's minimum."""
    lmin = max(2, facts.degree + 2)
    nmin = max(6, (facts.radial_degree or 0) + 4)
    return max(lmin, int(round(0.75 * res[0]))), max(nmin, int(round(0.75 * res[1])))


def solve(flow, rm, res, method, m, facts, opts, warm=None) -> dict:
    """Leading eigenvalue at one resolution: ``eigenvalue``, ``vector``, ``op``, ``m`` and solver details.

    ``warm``: a :class:`~flowkit.dynamo.sphere.warm.WarmStart` (method ``"eigen"`` only).
    """
    lmax, n = res
    if warm is not None and method == "eigen" and flow.steady:
        opts = {**opts, "warm": warm}
    if facts.axisymmetric and flow.steady:
        orders = range(0, min(lmax, M_SCAN) + 1) if m is None else \
            range(0, lmax + 1) if m == "all" else [int(m)]
        best = None
        for mm in orders:
            op = BallOperator(flow, rm, lmax, n, m=mm, facts=facts)
            runner = {"eigen": shift_invert, "propagator": propagator, "march": march_growth}[method]
            out = runner(op, **opts)
            out.update(op=op, m=mm)
            if best is None or out["eigenvalue"].real > best["eigenvalue"].real or not np.isfinite(
                    best["eigenvalue"].real):
                best = out
        best["orders_scanned"] = list(orders)
        return best
    if m is not None and m != "all":
        raise FlowkitError(f"flow '{flow.name}' is not axisymmetric (or not steady), so the orders couple; "
                           "leave m=None")
    op = BallOperator(flow, rm, lmax, n, m=None, facts=facts)
    if method == "march":
        out = march_growth(op, **opts)
    elif method == "propagator" or not flow.steady:
        out = propagator(op, **opts)
    else:
        out = sparse_shift_invert(op, **opts)
    out.update(op=op, m=None, orders_scanned=list(range(-lmax, lmax + 1)))
    return out


def _mode(out) -> tuple[np.ndarray, list]:
    op, x = out["op"], out["vector"]
    T, S = op.unpack(x)
    b = op.basis
    Tf = np.einsum("lij,mlj->mli", b.expand_t, T)
    Sf = np.einsum("lij,mlj->mli", b.expand_s, S)
    scale = max(np.abs(Tf).max(), np.abs(Sf).max(), 1e-300)
    both = np.stack([Tf, Sf]) / scale
    return np.stack([both.real, both.imag]), [int(v) for v in op.grid.ms]


def ball_growth_rate(flow, rm: float, resolution=(16, 16), method: str = "eigen", check_resolution="auto",
                     tolerance: float = 1e-2, keep_mode: bool = True, m=None, max_resolution=None,
                     warm_start=None, **settings):
    """Growth rate and frequency of the leading mode of a ball flow (insulating exterior).

    Parameters
    ----------
    flow : Flow
        ``domain="ball"``, ``u . n = 0`` on ``r = 1``.
    rm : float
        Magnetic Reynolds number; time in units of the magnetic diffusion time ``R^2 / eta``.
    resolution : (L, N) or "auto"
        Harmonic degree and radial nodes. ``"auto"`` climbs from ``(8, 8)`` (or the flow's
        minimum) in steps of 4 (2 when all orders couple) until two successive
        resolutions agree within ``tolerance``, up to ``max_resolution``; the finer of the
        last pair is reported, the other is its check. Not reached: ``converged=False``
        and ``reason`` starting "not converged".
    method : {"eigen", "propagator", "march"}
    check_resolution : "auto", (L, N) or None
        Second resolution of the error estimate (``"auto"``: about ``3/4`` of ``(L, N)``), solved
        for the order ``m`` of the reported mode when the flow is axisymmetric.
    tolerance : float
        ``converged`` needs the two growth rates within this (absolute, inverse
        diffusion times; the dipole's free decay rate is ``pi^2``).
    m : None, int or "all"
        Orders of an axisymmetric flow (see the module docstring).
    max_resolution : (L, N), optional
        Cap of ``resolution="auto"`` (default ``(32, 32)``; ``(20, 20)`` when all orders couple).
    warm_start : WarmStart, False or None
        Eigenpairs carried from earlier solves (:mod:`~flowkit.dynamo.sphere.warm`; a critical-Rm
        search passes one along). ``None``: a fresh one for this call, so the ``"auto"`` ladder and
        the resolution check start from the previous resolution's eigenvalues; ``False``: off.
    **settings
        Method settings (``SHIFT_DEFAULTS``, ``PROPAGATOR_DEFAULTS``, ``MARCH_DEFAULTS``).

    Returns
    -------
    GrowthResult
        ``domain="ball"``, ``resolution=[L, N]``, ``orders`` the rows of ``mode``,
        ``diagnostics["m"]`` the order of the leading mode (axisymmetric flows).
    """
    from flowkit.dynamo.results import GrowthResult, stamp

    t0 = time.perf_counter()
    check_ball_flow(flow)
    rm = positive(rm, "rm")
    tolerance = positive(tolerance, "tolerance")
    if method not in BALL_METHODS:
        raise FlowkitError(f"`method` for a ball flow must be one of {', '.join(BALL_METHODS)}; got {method!r}")
    facts = probe_flow(flow)
    defaults = _defaults(method, flow.steady, facts.axisymmetric)
    unknown = sorted(set(settings) - set(defaults))
    if unknown:
        raise FlowkitError(f"unknown {method} settings {unknown}; known: {', '.join(defaults)}")
    opts = {**defaults, **settings}
    from flowkit.dynamo.sphere.warm import WarmStart

    warm = WarmStart() if warm_start is None else (warm_start or None)
    if warm is not None and not isinstance(warm, WarmStart):
        raise FlowkitError(f"`warm_start` must be a WarmStart, None or False; got {warm_start!r}")
    ladder_run = []
    if isinstance(resolution, str) and resolution == "auto":
        runs = []
        for res in auto_ladder(facts, facts.axisymmetric and flow.steady, max_resolution, flow.name):
            out = solve(flow, rm, res, method, m, facts, opts, warm)
            ladder_run.append([list(res), out["eigenvalue"].real, abs(out["eigenvalue"].imag)])
            runs.append((res, out))
            if len(runs) > 1 and abs(out["eigenvalue"].real - runs[-2][1]["eigenvalue"].real) <= tolerance \
                    and out["converged"] and runs[-2][1]["converged"]:
                break
        (check_res, other), (main_res, main) = runs[-2], runs[-1]
    else:
        main_res = check_ball_resolution(resolution)
        check_facts(flow, facts, *main_res)
        main = solve(flow, rm, main_res, method, m, facts, opts, warm)
        if check_resolution is None:
            check_res, other = None, None
        else:
            check_res = default_check(main_res, facts) if check_resolution == "auto" else \
                check_ball_resolution(check_resolution, "check_resolution")
            if tuple(check_res) == tuple(main_res):
                check_res = (main_res[0] + 4, main_res[1] + 4)
            # the check estimates the error of the reported mode: the same order m, not a new scan
            same = main.get("m") if main.get("m") is not None else m
            other = solve(flow, rm, check_res, method, same, facts, opts, warm)
    lam = main["eigenvalue"]
    check, converged, error, reason = {}, None, float("nan"), ""
    if other is not None:
        lam2 = other["eigenvalue"]
        error = float(abs(lam.real - lam2.real))
        check = {"resolution": list(check_res), "growth_rate": float(lam2.real), "frequency": float(abs(lam2.imag)),
                 "converged": bool(other["converged"])}
        converged = bool(error <= tolerance and main["converged"] and other["converged"])
        nxt = (max(main_res[0], check_res[0]) + 4, max(main_res[1], check_res[1]) + 4)
        if not main["converged"]:
            reason = f"the solver did not converge ({main.get('message', '')})"
        elif error > tolerance:
            reason = (f"growth rate changed by {error:.3g} between resolution {list(check_res)} and "
                      f"{list(main_res)} (tolerance {tolerance:g}); try resolution={nxt}")
            if ladder_run:
                reason = (f"not converged: the 'auto' ladder reached its cap {tuple(main_res)}; the " + reason +
                          ", or raise max_resolution / tolerance")
        else:
            reason = f"agrees within {tolerance:g} with resolution {list(check_res)}"
    diagnostics = {k: v for k, v in main.items() if k not in ("eigenvalue", "vector", "op")}
    diagnostics.update(flow_degree=facts.degree, axisymmetric=facts.axisymmetric, reason=reason,
                       grid=[main["op"].n, main["op"].grid.n_theta, main["op"].grid.n_phi],
                       eigenvalue=[float(lam.real), float(lam.imag)])
    if ladder_run:
        diagnostics["auto_ladder"] = ladder_run
    mode, orders = (_mode(main) if keep_mode and main.get("vector") is not None else (None, None))
    return GrowthResult(
        growth_rate=float(lam.real), frequency=float(abs(lam.imag)), rm=rm, resolution=list(main_res),
        method=method, kz=None, converged=converged, error_estimate=error, tolerance=tolerance, check=check,
        diagnostics=diagnostics, mode=mode,
        provenance=stamp(flow, {"method": method, "resolution": list(main_res), "rm": rm, "m": m,
                                "check_resolution": None if check_res is None else list(check_res),
                                "tolerance": tolerance, "radial_basis": "parity-folded Chebyshev collocation",
                                "boundary": "insulating exterior", **opts}),
        seconds=time.perf_counter() - t0, domain="ball", orders=orders, reason=reason,
    )
