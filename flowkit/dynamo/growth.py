"""Growth rate of the leading magnetic mode, two independent ways.

``eigen``: Arnoldi (ARPACK through ``scipy.sparse.linalg.eigs``) on the induction
operator itself for steady flows (largest real part), or on the one-period
propagator for time-periodic flows (largest modulus: the Floquet multiplier ``mu``,
growth rate ``log|mu| / T``). ``march``: integrate a random seed field in time
and fit ``exp(sigma t)(a cos wt + b sin wt)`` over a stated window.
:func:`growth_rate` runs one of them, repeats it at a second resolution as a
convergence check, and returns a :class:`~flowkit.dynamo.results.GrowthResult`.
"""

from __future__ import annotations

import math
import time

import numpy as np
from scipy.sparse.linalg import ArpackNoConvergence, eigs

from flowkit.dynamo.fit import fit_growth
from flowkit.dynamo.induction import InductionOperator, Stepper, check_periodic, check_rm
from flowkit.dynamo.results import GrowthResult, stamp
from flowkit.dynamo.spectral import MIN_RESOLUTION, check_kz
from flowkit.dynamo.spectral import check_resolution as _check_n
from flowkit.errors import FlowkitError

METHODS = ("eigen", "march")

#: Default settings of each method (any can be overridden by keyword).
EIGEN_DEFAULTS = {"nev": None, "ncv": None, "tol": 1e-9, "maxiter": 20000, "cfl": 1.5, "seed": 0}
MARCH_DEFAULTS = {"t_min": 40.0, "t_max": 400.0, "chunk": 10.0, "cfl": 1.5, "channels": 8,
                  "agree": 5e-5, "seed": 0, "sample_dt": 0.1}


def _spectral_tail(op: InductionOperator, coeffs: np.ndarray) -> float:
    """Energy fraction of a mode in the outer third of the kept (horizontal, for one ``kz``) wavenumbers."""
    g = op.grid
    kinf = np.max(np.abs(g.k if g.kz is None else g.k[:2]), axis=0)
    p = np.sum(np.abs(coeffs) ** 2, axis=tuple(range(coeffs.ndim - 1)))
    total = p.sum()
    return float(p[kinf > 2 * g.kmax / 3].sum() / total) if total else 0.0


def _mode_on_grid(op: InductionOperator, parts: np.ndarray) -> np.ndarray:
    """Real and imaginary parts ``(2, 3, M)`` of a mode -> ``(2, 3, N, N, N)`` fields, max |B| = 1."""
    fields = [op.grid.box_field(p) for p in parts]
    if op.grid.complex_dof:  # one kz: the two parts combine into one complex field b exp(i kz z)
        whole = fields[0] + 1j * fields[1]
        fields = [whole.real, whole.imag]
    mode = np.stack(fields)
    scale = np.sqrt(np.sum(mode**2, axis=1)).max()
    return mode / scale if scale > 0 else mode


def eigen_growth(op: InductionOperator, nev=None, ncv=None, tol=1e-9, maxiter=20000, cfl=1.5, seed=0) -> dict:
    """Leading eigenvalue by Arnoldi; see the module docstring.

    Returns a dict with ``growth_rate``, ``frequency``, ``eigenvalues`` (all
    converged ones, as ``[re, im]``), ``residual`` (``|A x - a x|`` for the unit
    eigenvector ``x`` of the operator ``A`` Arnoldi ran on: ``L`` or the Floquet map),
    ``matvecs``, ``converged`` and ``coeffs``: the real and imaginary parts of the
    mode as two compact coefficient sets, shape ``(2, 3, M)``.
    """
    g = op.grid
    rng = np.random.default_rng(seed)
    v0 = g.pack(g.random_field(rng, slope=g.kmax))
    # a Floquet matvec is a whole period of time stepping: ask for fewer vectors
    nev = nev or (10 if op.steady else 4)
    ncv = ncv or (60 if op.steady else 20)
    nev = int(min(nev, g.dof - 2))
    ncv = int(min(max(ncv, 2 * nev + 1), g.dof))
    op.matvecs = 0
    out = {"converged": True, "message": ""}
    if op.steady:
        A = op.linear_operator()
        which = "LR"
        period = None
    else:
        period = op.period
        A = op.propagator(period, op.stable_dt(cfl))
        which = "LM"
        out["floquet_dt"] = period / max(1, math.ceil(period / op.stable_dt(cfl) - 1e-9))
    try:
        vals, vecs = eigs(A, k=nev, which=which, ncv=ncv, tol=tol, v0=v0, maxiter=maxiter)
    except ArpackNoConvergence as exc:  # keep what converged; report, do not raise
        vals, vecs = exc.eigenvalues, exc.eigenvectors
        out.update(converged=False, message=f"ARPACK did not converge: {len(vals)} of {nev} eigenvalues")
        if len(vals) == 0:
            out.update(growth_rate=float("nan"), frequency=float("nan"), eigenvalues=[], residual=float("nan"),
                       matvecs=op.matvecs, coeffs=None)
            return out
    if period is None:
        lam = vals
    else:
        lam = np.log(vals.astype(complex)) / period
    i = int(np.argmax(lam.real))
    x = vecs[:, i]
    x = x / np.linalg.norm(x)
    ax = A.matvec(x.real) + 1j * A.matvec(x.imag)
    out.update(
        growth_rate=float(lam[i].real),
        frequency=float(abs(lam[i].imag)),
        eigenvalues=[[float(z.real), float(z.imag)] for z in sorted(lam, key=lambda z: -z.real)],
        residual=float(np.linalg.norm(ax - vals[i] * x)),
        matvecs=op.matvecs,
        coeffs=np.stack([g.unpack(x.real), g.unpack(x.imag)]),
    )
    return out


def march_growth(op: InductionOperator, t_min=40.0, t_max=400.0, chunk=10.0, cfl=1.5, channels=8,
                 agree=5e-5, seed=0, sample_dt=0.1) -> dict:
    """Time-step a random seed field and fit the growth rate with its oscillation.

    The run goes on in chunks until ``t >= t_min`` and the fits over the windows
    ``[t/2, t]`` and ``[3t/4, t]`` agree within ``agree`` (or ``t_max`` is reached);
    ``t_min``, ``t_max`` and ``chunk`` are in time units of the flow.
    The reported fit uses the window ``[t/2, t]``. Time-periodic flows are sampled
    once per period (stroboscopically) and run for at least 24 periods.
    """
    g = op.grid
    rng = np.random.default_rng(seed)
    c = g.random_field(rng, slope=g.kmax)
    w = rng.standard_normal((channels, 3, g.k2.size)) + 1j * rng.standard_normal((channels, 3, g.k2.size))
    if op.steady:
        h = op.stable_dt(cfl)
        per_sample = max(1, int(round(sample_dt / h)))
        omega_max = None
    else:
        unit = op.period
        t_min = max(t_min, 24 * unit)
        per_sample = max(1, math.ceil(unit / op.stable_dt(cfl) - 1e-9))
        h = unit / per_sample
        omega_max = math.pi / unit
    stepper = Stepper(op, h)
    dt_sample = per_sample * h
    times, values, logs = [0.0], [np.real(np.einsum("mcj,cj->m", w, c))], [0.0]
    log_scale = 0.0
    t = 0.0
    op.matvecs = 0
    fit = None
    samples_per_chunk = max(1, int(round(chunk / dt_sample)))
    while True:
        for _ in range(samples_per_chunk):
            c = stepper.advance(c, t, per_sample)
            t = times[-1] + dt_sample
            norm = np.linalg.norm(c)
            if not np.isfinite(norm) or norm == 0.0:
                return {"growth_rate": float("nan"), "frequency": float("nan"), "converged": False,
                        "message": f"the field became {'zero' if norm == 0 else 'non-finite'} at t = {t:.4g}; "
                                   "lower cfl", "matvecs": op.matvecs, "coeffs": None, "t_end": t}
            c = c / norm
            log_scale += math.log(norm)
            times.append(t)
            values.append(np.real(np.einsum("mcj,cj->m", w, c)))
            logs.append(log_scale)
        if t < t_min - 1e-9:
            continue
        fit = fit_growth(times, np.array(values), logs, (t / 2, t), omega_max)
        late = fit_growth(times, np.array(values), logs, (0.75 * t, t), omega_max)
        spread = abs(fit["growth_rate"] - late["growth_rate"])
        done = spread <= agree
        if done or t >= t_max - 1e-9:
            break
    fit.update(
        converged=bool(done),
        message="" if done else f"fits over [t/2, t] and [3t/4, t] still differ by {spread:.2e} at t_max",
        window_spread=spread,
        dt=h,
        sample_dt=dt_sample,
        t_end=t,
        matvecs=op.matvecs,
        coeffs=np.stack([c, np.zeros_like(c)]),
        divergence=g.divergence_norm(c),
    )
    return fit


_RUNNERS = {"eigen": (eigen_growth, EIGEN_DEFAULTS), "march": (march_growth, MARCH_DEFAULTS)}


def default_check_resolution(n: int) -> int:
    """The other grid of a convergence pair: ``2N/3`` rounded to even (so ``N`` is its ``3/2``),
    or ``3N/2`` when ``2N/3`` would fall below the smallest grid."""
    m = int(round(2 * n / 3))
    m += m % 2
    if m < MIN_RESOLUTION:
        m = int(round(3 * n / 2))
        m += m % 2
    return m


def growth_rate(flow, rm: float, resolution=None, method: str = "eigen", check_resolution="auto",
                tolerance: float | None = None, keep_mode: bool = True, workers: int | None = None,
                kz: float | None = None, m=None, **settings) -> GrowthResult:
    """Growth rate and frequency of the leading magnetic mode of ``flow`` at ``rm``.

    Dispatches on the flow's domain: a periodic flow goes to the pseudo-spectral box
    solver documented here; a flow with ``domain="ball"`` to the insulating-sphere
    solver :func:`flowkit.dynamo.sphere.growth.ball_growth_rate` (``resolution=(L, N)``,
    default ``(16, 16)``, ``tolerance`` default ``1e-2``, ``m=`` the orders of an
    axisymmetric flow). The two never share code that assumes the other's boundary.

    Parameters
    ----------
    flow : Flow
        Steady or time-periodic flow on the 2*pi-periodic box (or a ball flow, see above).
    rm : float
        Magnetic Reynolds number ``Rm = 1/eta`` (the flow's velocity as defined).
    resolution : int or "auto"
        Grid points per side ``N`` (even, >= 8; default 32); the 2/3 rule keeps
        ``|k_i| <= (N-1)//3``. ``"auto"`` tries 12, 16, 24, 32, 48 until two successive
        grids agree within ``tolerance`` (the last pair is the reported value and its check).
    method : {"eigen", "march"}
        Arnoldi on the operator (Floquet propagator if time-periodic), or time
        stepping with a fitted growth rate.
    check_resolution : "auto", int or None
        Second resolution for the convergence estimate: ``"auto"`` uses ``2N/3``
        (so the pair is ``M, 3M/2`` and the estimate is conservative for ``N``);
        pass e.g. ``3 * N // 2`` to check upward, ``None`` to skip.
    tolerance : float
        ``converged`` requires the two resolutions to agree within this (absolute;
        default ``1e-3`` in the box).
    keep_mode : bool
        Keep the leading mode on the grid (``result.mode``).
    workers : int, optional
        FFT threads (default: all cores).
    kz : float, optional
        For a flow independent of ``z``: solve for fields ``Re[b(x, y) exp(i kz z)]``
        of this one vertical wavenumber, any real ``kz >= 0`` (``N^2`` grid; the
        box's own ``kz`` are the integers). ``None``: the full ``N^3`` box.
    **settings
        Method settings (see :data:`EIGEN_DEFAULTS`, :data:`MARCH_DEFAULTS`).

    Returns
    -------
    GrowthResult
    """
    if getattr(flow, "domain", None) in ("ball", "unbounded"):
        from flowkit.dynamo.sphere.growth import ball_growth_rate

        if kz is not None:
            raise FlowkitError("`kz` is for z-independent periodic flows; a ball flow has no vertical wavenumber")
        return ball_growth_rate(flow, rm, (16, 16) if resolution is None else resolution, method,
                                check_resolution, 1e-2 if tolerance is None else tolerance, keep_mode, m,
                                **settings)
    t0 = time.perf_counter()
    check_periodic(flow)
    if m is not None:
        raise FlowkitError("`m` (azimuthal order) is for ball flows; the box solver has no such option")
    tolerance = 1e-3 if tolerance is None else tolerance
    resolution = 32 if resolution is None else resolution
    if isinstance(resolution, str) and resolution == "auto":
        return _auto_box(flow, rm, method, tolerance, keep_mode, workers, kz, settings)
    rm = check_rm(rm)
    resolution = check_resolution_value(resolution, "resolution")
    if method not in METHODS:
        raise FlowkitError(f"`method` must be one of {', '.join(METHODS)}; got {method!r}")
    runner, defaults = _RUNNERS[method]
    unknown = sorted(set(settings) - set(defaults))
    if unknown:
        raise FlowkitError(f"unknown {method} settings {unknown}; known: {', '.join(defaults)}")
    opts = {**defaults, **settings}
    if kz is not None:
        kz = check_kz(kz)
    op = InductionOperator(flow, rm, resolution, workers, kz=kz)
    raw = runner(op, **opts)
    coeffs = raw.pop("coeffs")
    diagnostics = {k: v for k, v in raw.items() if k not in ("growth_rate", "frequency")}
    diagnostics["velocity_tail"] = op.resolution_info["velocity_tail"]
    if coeffs is not None:
        diagnostics["spectral_tail"] = _spectral_tail(op, coeffs)
    check = {}
    converged = None
    error = float("nan")
    reason = ""
    other = default_check_resolution(resolution) if check_resolution == "auto" else check_resolution
    if other is not None:
        other = check_resolution_value(other, "check_resolution")
        if other == resolution:
            raise FlowkitError("`check_resolution` must differ from `resolution` (e.g. 3N/2, or 'auto' for 2N/3)")
        raw2 = runner(InductionOperator(flow, rm, other, workers, kz=kz), **opts)
        check = {"resolution": other, "growth_rate": raw2["growth_rate"], "frequency": raw2["frequency"],
                 "converged": raw2["converged"]}
        error = abs(raw["growth_rate"] - raw2["growth_rate"])
        converged = bool(error <= tolerance and raw["converged"] and raw2["converged"])
        nxt = 3 * max(resolution, other) // 2
        nxt += nxt % 2
        if not (raw["converged"] and raw2["converged"]):
            reason = f"the solver did not converge ({raw.get('message') or raw2.get('message')}); " \
                     f"change the method settings or try resolution={nxt}"
        elif error > tolerance:
            reason = (f"growth rate changed by {error:.3g} between N = {other} and N = {resolution} "
                      f"(tolerance {tolerance:g}); try resolution={nxt}")
        else:
            reason = f"agrees within {tolerance:g} with N = {other}"
    mode = _mode_on_grid(op, coeffs) if (keep_mode and coeffs is not None) else None
    return GrowthResult(
        growth_rate=raw["growth_rate"], frequency=raw["frequency"], rm=rm, resolution=resolution,
        method=method, kz=kz, converged=converged, error_estimate=error, tolerance=tolerance, check=check,
        diagnostics=diagnostics, mode=mode,
        provenance=stamp(flow, {"method": method, "resolution": resolution, "rm": rm,
                                "check_resolution": other, "tolerance": tolerance, "kz": kz,
                                "dealiasing": "2/3 rule", **opts}),
        seconds=time.perf_counter() - t0, reason=reason,
    )


#: The ``resolution="auto"`` ladder of the box.
AUTO_BOX = (12, 16, 24, 32, 48)


def _auto_box(flow, rm, method, tolerance, keep_mode, workers, kz, settings) -> GrowthResult:
    """Climb :data:`AUTO_BOX` until two successive grids agree within ``tolerance``."""
    previous = None
    for n in AUTO_BOX:
        res = growth_rate(flow, rm, n, method, check_resolution=previous, tolerance=tolerance,
                          keep_mode=keep_mode, workers=workers, kz=kz, **settings)
        if previous is not None and res.converged:
            break
        previous = n
    res.diagnostics["auto_ladder"] = list(AUTO_BOX[: AUTO_BOX.index(res.resolution) + 1])
    if not res.converged:
        res.reason += " (the 'auto' ladder reached its cap N = 48)"
    return res


#: Bytes per grid point of one box solve: 3 components x (Arnoldi basis + work arrays) x 8 bytes.
_BYTES_PER_POINT = 3 * 8 * 90


def check_resolution_value(n, name: str) -> int:
    """:func:`~flowkit.dynamo.spectral.check_resolution` with the argument's own name in errors,
    and a memory check (:func:`flowkit.validation.memory`) naming the largest grid that fits."""
    from flowkit.validation import available_memory, memory

    try:
        n = _check_n(n)
    except FlowkitError as exc:
        raise FlowkitError(str(exc).replace("`resolution`", f"`{name}`", 1)) from None
    try:
        memory(float(n) ** 3 * _BYTES_PER_POINT, name, value=n)
    except FlowkitError as exc:
        fit = int((available_memory() / _BYTES_PER_POINT) ** (1 / 3))
        fit -= fit % 2
        raise FlowkitError(f"{exc}; the largest `{name}` that fits is about {fit}") from None
    return n
