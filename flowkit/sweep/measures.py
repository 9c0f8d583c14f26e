"""Measures a sweep can compute at each parameter point.

Each measure is ``fn(flow, seed, **options) -> {"value": float, "stderr": float}``
(plus optional extra keys), deterministic for a given seed. Measures import their
analysis modules lazily so a worker only loads what it uses.
"""

from __future__ import annotations

from typing import Callable

import numpy as np

from flowkit.flows.base import Flow


def mean_ftle(flow: Flow, seed: int, particles: int = 64, time: float = 10.0, rtol: float = 1e-9) -> dict:
    """Ensemble mean of the finite-time largest Lyapunov exponent over random particles.

    Each particle carries its deformation gradient (variational equations with the
    exact gradient); FTLE = log(largest singular value) / time. Value: mean over
    particles that finished; stderr: standard deviation / sqrt(count).
    """
    from flowkit.flows.custom import sample_points
    from flowkit.integrate.batch import IntegratorSettings, integrate_states

    rng = np.random.default_rng(seed)
    pts = sample_points(flow, particles, rng)
    if flow.domain == "ball":
        pts *= 0.999  # strictly inside
    states = np.concatenate([pts, np.tile(np.eye(3).T.ravel(), (particles, 1))], axis=1)
    res = integrate_states(flow, states, 0.0, time, IntegratorSettings(rtol=rtol, atol=rtol * 1e-2), threads=1)
    ok = res.ok
    J = res.states[ok, 3:].reshape(-1, 3, 3)
    s = np.linalg.svd(J, compute_uv=False)[:, 0]
    ftle = np.log(s) / time
    n = max(len(ftle), 1)
    return {
        "value": float(ftle.mean()) if len(ftle) else float("nan"),
        "stderr": float(ftle.std(ddof=1) / np.sqrt(n)) if len(ftle) > 1 else float("nan"),
        "failed": int((~ok).sum()),
    }


def largest_lyapunov(flow: Flow, seed: int, point=None, time: float = 200.0, transient: float | None = None,
                     rtol: float = 1e-9) -> dict:
    """Largest Lyapunov exponent of one orbit (QR method, block standard error).

    The orbit starts at ``point`` or, if not given, at a random point of the
    domain drawn from ``seed``. Extra keys: ``converged`` and the full spectrum.
    """
    from flowkit.chaos import random_seeds
    from flowkit.integrate.batch import IntegratorSettings
    from flowkit.chaos import lyapunov_spectrum

    if point is None:
        pts, _ = random_seeds(flow, 1, np.random.default_rng(seed))
        point = pts[0] * (0.9 if flow.domain == "ball" else 1.0)
    spec = lyapunov_spectrum(flow, point, time, transient=transient,
                             settings=IntegratorSettings(rtol=rtol, atol=rtol * 1e-2))
    return {"value": float(spec.exponents[0]), "stderr": float(spec.stderr[0]), "converged": bool(spec.converged),
            "spectrum": [float(e) for e in spec.exponents]}


def chaotic_fraction(flow: Flow, seed: int, n: int = 64, time: float = 100.0, threshold: float | None = None,
                     bounds=None) -> dict:
    """Fraction of random seeds whose orbits are chaotic (finite-time exponent above a threshold).

    Standard error: binomial, sqrt(f (1 - f) / n). Extra keys: threshold, orbits used/failed.
    """
    from flowkit.chaos import chaotic_fraction as _cf

    res = _cf(flow, n, time, threshold=threshold, bounds=bounds, seed=seed, threads=1)
    return {"value": res.fraction, "stderr": res.stderr, "threshold": res.threshold,
            "used": res.n_used, "failed": res.n_failed}


def line_stretching(flow: Flow, seed: int, time: float = 10.0, max_points: int = 200_000) -> dict:
    """Exponential growth rate of a material line's length (adaptive point insertion).

    The default line is the generic segment of :func:`flowkit.fields.curves.default_curve`;
    the rate is the slope of ln L over the fit window with its block error bar.
    """
    from flowkit.fields import material_line

    res = material_line(flow, time, max_points=max_points, threads=1)
    return {"value": float(res.rate.value), "stderr": float(res.rate.stderr), "stopped": res.stopped,
            "points": int(res.npoints[-1])}


def dynamo_growth(flow: Flow, seed: int, rm: float = 10.0, resolution=None, method: str = "eigen",
                  kz: float | None = None, m=None) -> dict:
    """Growth rate of the fastest magnetic mode at magnetic Reynolds number ``rm``.

    Periodic flows: the box solver (``resolution`` N, default 16; ``kz``: one vertical
    wavenumber of a ``z``-independent flow). Ball flows: the insulating-sphere solver
    (``resolution`` ``(L, N)`` or ``"L,N"``, default ``(12, 12)``; ``m``: one order of an
    axisymmetric flow). stderr: the resolution-convergence estimate.
    """
    from flowkit.dynamo import growth_rate

    ball = flow.domain == "ball"
    if resolution is None:
        resolution = (12, 12) if ball else 16
    extra = {"m": m} if ball else {"kz": kz, "workers": 1}
    res = growth_rate(flow, rm, resolution=resolution, method=method, keep_mode=False, **extra)
    err = res.error_estimate
    return {"value": float(res.growth_rate), "stderr": None if err != err else float(err),
            "frequency": float(res.frequency), "converged": res.converged}


#: name -> measure function. Other modules add theirs with :func:`register`.
MEASURES: dict[str, Callable[..., dict]] = {
    "mean_ftle": mean_ftle,
    "lyapunov": largest_lyapunov,
    "chaotic_fraction": chaotic_fraction,
    "line_stretching": line_stretching,
    "dynamo_growth": dynamo_growth,
}


def register(name: str, fn: Callable[..., dict]) -> None:
    """Add a measure under ``name``."""
    MEASURES[name] = fn


def _lazy(module: str, attr: str) -> Callable[..., dict]:
    def call(flow, seed, **options):
        import importlib

        return getattr(importlib.import_module(module), attr)(flow, seed, **options)

    call.__name__ = attr
    call.__doc__ = f"Measure provided by ``{module}.{attr}``."
    return call
