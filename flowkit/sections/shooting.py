"""Periodic orbits of a flow (an ODE system) by shooting: the point and the period are unknowns.

The start x0 = o + u e1 + v e2 is kept on a section plane (the phase
condition), and Newton's method solves F(u, v, T) = phi_T(x0) - x0 = 0, three
equations in three unknowns, with the Jacobian [M e1, M e2, f(phi_T(x0))]
from one integration of the variational equations (M the monodromy matrix).
Unlike the section map this needs no crossing count: it suits orbits whose
number of returns is not known, and gives the full Floquet multipliers
(eigenvalues of M; one of them is 1, along the flow).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numba
import numpy as np

from flowkit.errors import FlowkitError
from flowkit.integrate.batch import thread_limit
from flowkit.sections.geometry import Plane
from flowkit.validation import count, points_in_domain, positive


@dataclass
class ShootingResult:
    """A periodic orbit of the flow found by shooting (plain value, see :func:`shoot_periodic_orbit`)."""

    converged: bool
    point: np.ndarray
    period: float
    multipliers: np.ndarray
    residual: float
    iterations: int
    message: str


def _flow_map(flow, x0: np.ndarray, T: float, rtol: float, atol: float):
    """phi_T(x0) and the monodromy matrix M (3 x 3)."""
    Y = np.zeros((1, 12))
    Y[0, :3] = x0
    Y[0, 3] = Y[0, 7] = Y[0, 11] = 1.0
    plane = np.zeros(9)
    plane[5] = 1.0  # fixed-time mode of the return kernel
    t_out, oc, st = np.zeros(1), np.zeros(1, np.int8), np.zeros(1, np.int64)
    kernel, params = flow.kernel("rm_batch")
    with thread_limit(1), numba.parallel_chunksize(1):
        kernel(Y, 0.0, 1.0 if T >= 0 else -1.0, 1, np.array([abs(T)]), params, rtol, atol, math.inf, 10_000_000,
               flow.domain == "ball", plane, t_out, oc, st)
    if oc[0] != 0 or not np.all(np.isfinite(Y)):
        return None, None
    return Y[0, :3].copy(), Y[0, 3:].reshape(3, 3).T


def shoot_periodic_orbit(flow, start, period_guess: float, plane: Plane, *, tol: float = 1e-10,
                         max_iter: int = 30, rtol: float = 1e-12, atol: float = 1e-12) -> ShootingResult:
    """Periodic orbit through the plane near ``start`` with period near ``period_guess``.

    Parameters
    ----------
    flow : Flow
        A steady flow or ODE system.
    start : 2 section coordinates or a 3-D point (projected on the plane)
    period_guess : float
        Starting guess of the period (> 0).
    plane : Plane
        The phase condition: the orbit's point is sought on this plane.
    """
    if not flow.steady:
        raise FlowkitError("shooting treats autonomous flows; for a time-periodic flow use a Stroboscopic section")
    T = positive(period_guess, "period_guess")
    max_iter = count(max_iter, "max_iter")
    s = np.asarray(start, dtype=float).reshape(-1)
    uv = plane.coords(s[None])[0] if s.size == 3 else s.reshape(2)
    E = np.stack(plane.basis, axis=1)
    points_in_domain(flow, plane.point(uv[0], uv[1])[None], "start")
    res = math.inf
    for it in range(1, max_iter + 1):
        x0 = plane.point(uv[0], uv[1])
        x1, M = _flow_map(flow, x0, T, rtol, atol)
        if x1 is None:
            return ShootingResult(False, x0, T, np.full(3, np.nan + 0j), res, it,
                                  "the orbit left the domain or failed to integrate; try another start")
        F = x1 - x0
        res = float(np.linalg.norm(F))
        if res <= tol:
            mult = np.linalg.eigvals(M)
            return ShootingResult(True, x0, T, mult[np.argsort(-np.abs(mult))], res, it,
                                  f"converged in {it - 1} iterations")
        f1 = flow.velocity(x1[None])[0]
        J = np.column_stack([M @ E - E, f1])
        step = np.linalg.lstsq(J, -F, rcond=None)[0]
        alpha = 1.0
        for _ in range(10):  # backtracking on |F|
            uvt, Tt = uv + alpha * step[:2], T + alpha * step[2]
            xt = plane.point(uvt[0], uvt[1])
            if Tt > 0 and flow.contains(xt[None])[0]:
                xt1, _ = _flow_map(flow, xt, Tt, rtol, atol)
                if xt1 is not None and np.linalg.norm(xt1 - xt) < (1 - 1e-4 * alpha) * res:
                    break
            alpha *= 0.5
        else:
            return ShootingResult(False, x0, T, np.full(3, np.nan + 0j), res, it,
                                  f"not converged (stalled); residual |phi_T(x0) - x0| = {res:.3g}")
        uv, T = uvt, Tt
    return ShootingResult(False, plane.point(uv[0], uv[1]), T, np.full(3, np.nan + 0j), res, max_iter,
                          f"not converged (iteration budget); residual |phi_T(x0) - x0| = {res:.3g}")
