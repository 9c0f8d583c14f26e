"""Periodic orbits of a section map: Newton's method on P^k(xi) - xi with the exact Jacobian.

Newton step: solve (DP^k - I) s = -(P^k(xi) - xi) in the least-squares sense
(a pseudo-inverse, so families of periodic points on the resonant tori of
integrable flows, where DP^k - I is singular, still converge onto the family),
then a backtracking line search on |P^k(xi) - xi| inside a trust radius: a trial
that fails to return, leaves the domain or does not reduce the residual is
halved. Many starts run together through the batch kernel (the scan uses this).

The type of an orbit comes from the eigenvalues of DP^k. For an area- (flux-)
preserving map (det DP^k = 1) the trace decides: |tr| < 2 elliptic, |tr| > 2
hyperbolic, |tr| = 2 parabolic, and Greene's residue R = (2 - tr)/4
(J. Math. Phys. 20, 1979, 1183) is in (0, 1) exactly for elliptic orbits.
Dissipative maps (det != 1, e.g. Lorenz) have saddles ("hyperbolic"),
"attracting" and "repelling" orbits.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.sections.geometry import Plane, Stroboscopic
from flowkit.sections.returnmap import ReturnMap
from flowkit.validation import count, positive

#: why a Newton run stopped
CONVERGED, NO_RETURN, STALLED, MAX_ITER = "converged", "no return", "stalled", "iteration budget"


@dataclass
class NewtonRun:
    """Batched Newton outcome: final iterates, residual norms, status per start."""

    xi: np.ndarray
    residual: np.ndarray
    iterations: np.ndarray
    status: np.ndarray  # strings, see the module constants
    outcome: np.ndarray | None = None  # kernel outcome of the start's own return (why there was none)

    @property
    def converged(self) -> np.ndarray:
        return self.status == CONVERGED


def newton(rm: ReturnMap, starts, k: int = 1, *, tol: float = 1e-10, max_iter: int = 40,
           max_step: float | None = None, threads: int | None = None) -> NewtonRun:
    """Newton's method from every start (N, dim) for a fixed point of P^k (see module notes).

    ``tol`` bounds |P^k(xi) - xi| (section length units); ``max_step`` is the
    trust radius (default a tenth of the domain size).
    """
    xi = np.array(np.atleast_2d(starts), dtype=np.float64)
    N, dim = xi.shape
    radius = max_step if max_step is not None else (0.1 if rm.flow.domain == "ball" else 1.0)
    status = np.full(N, MAX_ITER, dtype=object)
    iters = np.zeros(N, dtype=np.int64)
    active = np.ones(N, dtype=bool)
    r = rm.apply(xi, k, threads=threads)
    res = _residual(r.xi, xi)
    norm = np.linalg.norm(res, axis=1)
    bad = ~r.ok
    status[bad] = NO_RETURN
    norm[bad] = np.nan
    active &= ~bad
    jac = r.jacobian
    for it in range(max_iter):
        done = active & (norm <= tol)
        status[done] = CONVERGED
        active &= ~done
        idx = np.flatnonzero(active)
        if idx.size == 0:
            break
        iters[idx] += 1
        A = jac[idx] - np.eye(dim)[None]
        step = -np.einsum("nij,nj->ni", np.linalg.pinv(A, rcond=1e-11), res[idx])
        size = np.linalg.norm(step, axis=1)
        scale = np.minimum(1.0, radius / np.maximum(size, 1e-300))
        alpha = scale.copy()
        pending = np.ones(idx.size, dtype=bool)
        for _ in range(8):  # backtracking: halve the step until the residual drops
            sub = np.flatnonzero(pending)
            trial = xi[idx[sub]] + alpha[sub, None] * step[sub]
            inside = rm.flow.contains(rm.embed(trial))
            rt = rm.apply(trial, k, threads=threads)
            rtres = _residual(rt.xi, trial)
            rtn = np.linalg.norm(rtres, axis=1)
            good = rt.ok & inside & (rtn < (1.0 - 1e-4 * alpha[sub]) * norm[idx[sub]])
            g = idx[sub[good]]
            xi[g] = trial[good]
            res[g] = rtres[good]
            norm[g] = rtn[good]
            jac[g] = rt.jacobian[good]
            pending[sub[good]] = False
            # a step already at round-off that cannot lower the residual: stop trying
            tiny = ~good & (alpha[sub] * size[sub] <= 1e-14 * (1.0 + np.linalg.norm(xi[idx[sub]], axis=1)))
            pending[sub[tiny]] = False
            alpha[sub] *= 0.5
            if not pending.any():
                break
        # no acceptable step (or only steps at round-off): Newton has stalled at this residual
        stalled = idx[pending | (alpha * 2.0 * size <= 1e-14 * (1.0 + np.linalg.norm(xi[idx], axis=1)))]
        stalled = stalled[norm[stalled] > tol]
        status[stalled] = STALLED
        active[stalled] = False
    done = active & (norm <= tol)
    status[done] = CONVERGED
    return NewtonRun(xi, norm, iters, status.astype(str), r.outcome)


def _residual(img: np.ndarray, xi: np.ndarray) -> np.ndarray:
    return img - xi


def classify(jac: np.ndarray, parabolic_tol: float = 1e-6) -> dict:
    """Eigenvalues, trace, determinant, Greene's residue and type of DP^k (2 x 2 or 3 x 3)."""
    jac = np.asarray(jac, dtype=np.float64)
    ev, vec = np.linalg.eig(jac)
    order = np.argsort(-np.abs(ev))
    ev, vec = ev[order], vec[:, order]
    tr = float(np.trace(jac))
    det = float(np.linalg.det(jac))
    out = {"eigenvalues": ev.astype(np.complex128), "eigenvectors": vec.astype(np.complex128), "trace": tr,
           "det": det, "residue": (2.0 - tr) / 4.0 if jac.shape[0] == 2 else math.nan, "reflection": False}
    mods = np.abs(ev)
    if abs(det - 1.0) <= 1e-6 * max(1.0, abs(det)) and jac.shape[0] == 2:
        if abs(abs(tr) - 2.0) <= parabolic_tol * max(1.0, abs(tr)):
            kind = "parabolic"
        elif abs(tr) < 2.0:
            kind = "elliptic"
        else:
            kind = "hyperbolic"
            out["reflection"] = tr < 0
    else:
        near = np.abs(mods - 1.0) <= parabolic_tol
        if np.all(near):
            kind = "elliptic" if np.any(np.abs(ev.imag) > parabolic_tol) else "parabolic"
        elif np.all(mods < 1.0):
            kind = "attracting"
        elif np.all(mods > 1.0):
            kind = "repelling"
        else:
            kind = "hyperbolic"
            out["reflection"] = bool(np.real(ev[0]) < 0)
    out["type"] = kind
    return out


def find_periodic_orbit(flow, start, section: Plane | Stroboscopic | None = None, *, period: int = 1,
                        tol: float = 1e-10, max_iter: int = 40, max_step: float | None = None,
                        rtol: float = 1e-12, atol: float = 1e-12, max_time: float | None = None,
                        parabolic_tol: float = 1e-6, return_map: ReturnMap | None = None):
    """A periodic orbit of the section map from a starting point (a click's distance away).

    Parameters
    ----------
    flow : Flow
        Steady flow (plane sections) or time-periodic flow (stroboscopic sections).
    start : 2 numbers (in-plane u, v) or a 3-D point
        Starting guess; a 3-D point is projected on the section plane.
    section : Plane or Stroboscopic
        Default: the plane z = 0 crossed upward (stroboscopic for a time-periodic flow).
    period : int
        Number of returns k (the orbit is a fixed point of P^k).
    tol : float
        Required |P^k(xi) - xi| (section length units).
    max_iter, max_step : Newton budget and trust radius.
    rtol, atol, max_time : integration tolerances and the longest single return.
    parabolic_tol : float
        How close |tr| must be to 2 to call the orbit parabolic.

    Returns
    -------
    PeriodicOrbit
        Always a result: ``converged`` says whether it is a periodic orbit, and
        ``message`` what happened (the residual reached when Newton failed; an
        unconverged result carries no type).
    """
    from flowkit.sections.orbit_results import PeriodicOrbit

    rm = return_map or make_map(flow, section, rtol=rtol, atol=atol, max_time=max_time)
    period = count(period, "period", what=" (returns to the section; must be positive)")
    tol = positive(tol, "tol")
    xi0 = start_coords(rm, start)
    run = newton(rm, xi0, period, tol=tol, max_iter=count(max_iter, "max_iter"), max_step=max_step)
    return PeriodicOrbit.from_newton(rm, xi0[0], run, period, parabolic_tol)


def make_map(flow, section, **kw) -> ReturnMap:
    """The return map with the default section (z = 0 upward; stroboscopic for time-periodic flows)."""
    if section is None:
        section = Stroboscopic() if not flow.steady else Plane((0, 0, 1), 0.0, "+")
    return ReturnMap(flow, section, **kw)


def start_coords(rm: ReturnMap, start, name: str = "start") -> np.ndarray:
    """Section coordinates (N, dim) of starting guesses given in section or 3-D coordinates."""
    arr = np.atleast_2d(np.asarray(start, dtype=np.float64))
    if arr.ndim != 2 or arr.shape[0] == 0 or not np.all(np.isfinite(arr)):
        raise FlowkitError(f"`{name}` must be finite section coordinates ({rm.dim} numbers) or 3-D points")
    if arr.shape[1] == 3 and rm.dim == 2:
        arr = rm.coords(arr)
    return rm.check_start(arr, name)


def orbit_of(rm: ReturnMap, xi: np.ndarray, k: int):
    """The k points of the orbit of a periodic point (section coordinates, 3-D points, return times)."""
    pts_xi = [np.asarray(xi, dtype=np.float64)]
    pts3 = [rm.embed(xi[None])[0]]
    times = []
    cur = pts_xi[0][None]
    shift = np.zeros(3)
    for j in range(k):
        r = rm.apply(cur, 1, jacobian=False)
        if not r.ok[0]:
            raise FlowkitError("the converged orbit failed to return on a single step; tighten rtol")
        times.append(float(r.time[0]))
        shift = shift + r.shift[0]
        if j < k - 1:
            pts_xi.append(r.xi[0])
            pts3.append(rm.embed(r.xi)[0])
        cur = r.xi
    return np.array(pts_xi), np.array(pts3), np.array(times), shift


def minimal_period(xis: np.ndarray, k: int, close: float) -> int:
    """Smallest d dividing k with P^d(xi) = xi among the orbit points ``xis`` (k, dim)."""
    for d in range(1, k):
        if k % d == 0 and np.linalg.norm(xis[d] - xis[0]) <= close:
            return d
    return k
