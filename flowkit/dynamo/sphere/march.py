"""Time stepping of the ball induction equation and a growth-rate fit.

Diffusion is exact per degree (``exp(h D_l)`` with its boundary conditions,
:meth:`~flowkit.dynamo.sphere.basis.RadialBasis.propagators`); the induction
term is explicit, by the integrating-factor (Lawson) fourth-order Runge-Kutta
scheme, so the step is limited only by the induction term: ``h = cfl / rho``
with ``rho`` its spectral radius (power iteration) and ``cfl <= 2.8`` (the
imaginary-axis reach of RK4). The growth rate is fitted with its oscillation by
:func:`flowkit.dynamo.fit.fit_growth`, the same fit as the box solver.
"""

from __future__ import annotations

import math

import numpy as np

from flowkit.dynamo.fit import fit_growth
from flowkit.dynamo.sphere.basis import radial

MARCH_DEFAULTS = {"t_min": 1.0, "t_max": 12.0, "chunk": 0.5, "cfl": 1.5, "channels": 8, "agree": 1e-4,
                  "seed": 0, "sample_dt": 0.01}


def stable_step(op, cfl: float = 1.5) -> float:
    """Largest explicit step for the induction term: ``cfl / rho`` (``rho`` by power iteration, +10% margin)."""
    if not hasattr(op, "_rho"):
        op._rho = op.induction_radius()
    rho = 1.1 * op._rho
    return cfl / rho if rho > 0 else 0.05


class Stepper:
    """Lawson RK4 with exact diffusion, step ``h``: ``advance(T, S, t, steps)``."""

    def __init__(self, op, h: float):
        self.op, self.h = op, float(h)
        self.full = op.basis.propagators(self.h)
        self.half = op.basis.propagators(0.5 * self.h)

    @staticmethod
    def _diffuse(prop, T, S):
        es, et = prop
        return radial(et, T), radial(es, S)

    def step(self, T, S, t):
        op, h = self.op, self.h
        F, H = self.full, self.half
        k1 = op.induction(T, S, t)
        eT, eS = self._diffuse(H, T, S)  # E_{h/2} c
        a = self._diffuse(H, T + 0.5 * h * k1[0], S + 0.5 * h * k1[1])
        k2 = op.induction(*a, t + 0.5 * h)
        k3 = op.induction(eT + 0.5 * h * k2[0], eS + 0.5 * h * k2[1], t + 0.5 * h)
        b = self._diffuse(H, eT + h * k3[0], eS + h * k3[1])
        k4 = op.induction(*b, t + h)
        c1 = self._diffuse(F, T + h / 6 * k1[0], S + h / 6 * k1[1])
        c2 = self._diffuse(H, h / 3 * (k2[0] + k3[0]), h / 3 * (k2[1] + k3[1]))
        return c1[0] + c2[0] + h / 6 * k4[0], c1[1] + c2[1] + h / 6 * k4[1]

    def advance(self, T, S, t, steps: int):
        for i in range(steps):
            T, S = self.step(T, S, t + i * self.h)
        return T, S


def march_growth(op, t_min=1.0, t_max=12.0, chunk=0.5, cfl=1.5, channels=8, agree=1e-4, seed=0,
                 sample_dt=0.01) -> dict:
    """Step a random seed field and fit ``exp(sigma t)(a cos wt + b sin wt)`` to linear observables.

    Runs in chunks until ``t >= t_min`` (diffusion times) and the fits over
    ``[t/2, t]`` and ``[3t/4, t]`` agree within ``agree`` (relative to
    ``max(1, |sigma|)``), or ``t_max``. A time-periodic flow is sampled once per period.
    """
    rng = np.random.default_rng(seed)
    x = rng.standard_normal(op.dof) + 1j * rng.standard_normal(op.dof)
    x /= np.linalg.norm(x)
    T, S = op.unpack(x)
    w = rng.standard_normal((channels, op.dof)) + 1j * rng.standard_normal((channels, op.dof))
    h = stable_step(op, cfl)
    omega_max = None
    if op.steady:
        per = max(1, int(round(sample_dt / h)))
        h = min(h, sample_dt)
    else:
        per = max(1, math.ceil(op.period / h - 1e-9))
        h = op.period / per
        omega_max = math.pi / op.period
        t_min = max(t_min, 24 * op.period)
    stepper = Stepper(op, h)
    dts = per * h

    def observe(v):
        z = w @ v
        return np.concatenate([z.real, z.imag])

    times, values, logs = [0.0], [observe(x)], [0.0]
    t, log_scale = 0.0, 0.0
    op.matvecs = 0
    per_chunk = max(1, int(round(chunk / dts)))
    while True:
        for _ in range(per_chunk):
            T, S = stepper.advance(T, S, t, per)
            t += dts
            v = op.pack(T, S)
            norm = float(np.linalg.norm(v))
            if not math.isfinite(norm) or norm == 0.0:
                return {"eigenvalue": complex("nan"), "vector": None, "converged": False,
                        "message": f"the field became {'zero' if norm == 0 else 'non-finite'} at t = {t:.4g}; "
                                   "lower cfl", "matvecs": op.matvecs}
            T, S = T / norm, S / norm
            log_scale += math.log(norm)
            times.append(t)
            values.append(observe(v / norm))
            logs.append(log_scale)
        if t < t_min - 1e-12:
            continue
        fit = fit_growth(times, np.array(values), logs, (t / 2, t), omega_max)
        late = fit_growth(times, np.array(values), logs, (0.75 * t, t), omega_max)
        spread = abs(fit["growth_rate"] - late["growth_rate"])
        done = spread <= agree * max(1.0, abs(fit["growth_rate"]))
        if done or t >= t_max - 1e-12:
            break
    lam = complex(fit["growth_rate"], fit["frequency"])
    msg = "" if done else f"fits over [t/2, t] and [3t/4, t] still differ by {spread:.2e} at t_max = {t_max:g}"
    return {"eigenvalue": lam, "vector": op.pack(T, S), "converged": bool(done), "message": msg,
            "matvecs": op.matvecs, "dt": h, "t_end": t, "window_spread": spread,
            "stderr": fit["stderr"], "second_mode": fit["second_mode"], "window": fit["window"]}
