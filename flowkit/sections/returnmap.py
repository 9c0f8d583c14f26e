"""The section map P and its exact Jacobian DP, from the variational equations.

For a plane n.x = d of a steady flow, a point with in-plane coordinates xi is
embedded as x0 = o + xi_1 e1 + xi_2 e2 and integrated together with its 3 x 3
deformation gradient to its k-th return x1 (time T). With M the monodromy
matrix there and f1 = u(x1),

    DP^k = E^T (I - f1 n^T / (n.f1)) M E,        E = [e1 e2],

the projector removing the change of return time (the variation along the flow
that moves the point off the plane). A stroboscopic section of a time-periodic
flow has DP = M(k * period); when the velocity does not depend on the
coordinate along the view normal (planar or z-independent flows) the map is
reduced to the view plane (2-D), otherwise it acts on the full 3-D state.

Periodic boxes are integrated unwrapped: the image is reduced by the lattice
vector L in 2*pi*Z^3 that brings it back to the level of the plane nearest the
start point, and L is reported (the winding of the orbit).

Backward time (``backward=True``) gives the inverse map P^-k with the same
formula (the return time is then negative).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numba
import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.integrate.batch import thread_limit
from flowkit.sections.compute import _plane_vector
from flowkit.sections.geometry import Plane, Stroboscopic
from flowkit.validation import count as _count
from flowkit.validation import points_in_domain, positive

_TWO_PI = 2.0 * math.pi
_CROSSING_FOUND = 4
_FINISHED = 0


@dataclass
class Return:
    """The k-th return of a batch of section points (plain arrays, one row per point).

    Attributes
    ----------
    xi : (N, dim)
        Image in section coordinates (periodic boxes: reduced by ``shift``).
    points : (N, 3)
        Image in space, unwrapped (as integrated).
    time : (N,)
        Time taken (negative for the inverse map).
    jacobian : (N, dim, dim) or None
        DP^k at the start point (NaN rows where the return failed).
    ok : (N,) bool
        Whether the return was reached; ``outcome`` says why not.
    outcome : (N,) int8
        Kernel outcome code (4 for a plane return, 0 for a stroboscopic one).
    shift : (N, 3)
        Lattice vector subtracted from ``points`` (zeros outside periodic boxes).
    """

    xi: np.ndarray
    points: np.ndarray
    time: np.ndarray
    jacobian: np.ndarray | None
    ok: np.ndarray
    outcome: np.ndarray
    shift: np.ndarray


class ReturnMap:
    """The section map of a flow, evaluated in batches by a parallel kernel.

    Parameters
    ----------
    flow : Flow
        A steady flow for a :class:`Plane`; a time-periodic one for a :class:`Stroboscopic` section.
    section : Plane or Stroboscopic
        The section (a plane's crossing direction counts: "+", "-" or "both").
    t0 : float
        Start time of a stroboscopic section (samples at t0 + phase + j * period).
    rtol, atol : float
        DOP853 tolerances (default 1e-12: Newton needs a smooth, accurate map).
    max_time : float, optional
        Longest time allowed for one return (default 1000 time units).
    max_steps : int
        Step budget per return.
    min_time : float
        Shortest return counted (default 1e-3): near the curve where the flow is
        tangent to the plane the return time goes to zero and P tends to the
        identity, a spurious line of fixed points that Newton would creep onto.
    """

    def __init__(self, flow: Flow, section: Plane | Stroboscopic, *, t0: float = 0.0, rtol: float = 1e-12,
                 atol: float = 1e-12, max_time: float | None = None, max_steps: int = 2_000_000,
                 min_time: float = 1e-3):
        if not isinstance(flow, Flow):
            raise FlowkitError(f"`flow` must be a flowkit Flow (e.g. flowkit.flow('stf')); got {type(flow).__name__}")
        if not isinstance(section, (Plane, Stroboscopic)):
            raise FlowkitError(f"`section` must be a Plane or Stroboscopic; got {type(section).__name__}")
        if isinstance(section, Plane) and not flow.steady:
            raise FlowkitError(
                f"flow '{flow.name}' is time-periodic, so returns to a plane depend on the time of the start and "
                "are not a map of the plane; use section=Stroboscopic() (--stroboscopic on the command line)")
        self.flow = flow
        self.section = section
        self.t0 = float(t0)
        self.rtol = positive(rtol, "rtol")
        self.atol = positive(atol, "atol")
        self.max_time = positive(max_time, "max_time") if max_time is not None else 1000.0
        self.max_steps = _count(max_steps, "max_steps")
        self.min_time = positive(min_time, "min_time", allow_zero=True)
        self.plane_vec, self.record = _plane_vector(flow, section)
        self.view = section if isinstance(section, Plane) else section.view
        self.strobe = isinstance(section, Stroboscopic)
        self.period = float(self.plane_vec[6]) if self.strobe else None
        self.dim = 3 if (self.strobe and not _decoupled(flow, self.view.n, self.period)) else 2

    # -- coordinates ----------------------------------------------------------------
    def embed(self, xi) -> np.ndarray:
        """Points in space (N, 3) of section coordinates ``xi`` (N, dim)."""
        xi = np.atleast_2d(np.asarray(xi, dtype=np.float64))
        if xi.ndim != 2 or xi.shape[1] != self.dim:
            raise FlowkitError(f"section coordinates must have shape (N, {self.dim}); got {np.shape(xi)}")
        if self.dim == 3:
            return xi.copy()
        return self.view.point(xi[:, 0], xi[:, 1])

    def coords(self, points) -> np.ndarray:
        """Section coordinates (N, dim) of points in space (N, 3)."""
        pts = np.atleast_2d(np.asarray(points, dtype=np.float64))
        return pts.copy() if self.dim == 3 else self.view.coords(pts)

    def check_start(self, xi, name: str = "start") -> np.ndarray:
        """Section coordinates whose points lie inside the flow's domain (clear error otherwise)."""
        xi = np.atleast_2d(np.asarray(xi, dtype=np.float64))
        if xi.ndim != 2 or xi.shape[1] != self.dim or xi.shape[0] == 0:
            raise FlowkitError(f"`{name}` must be {self.dim} section coordinates (or an (N, {self.dim}) array); "
                               f"got shape {np.shape(xi)}")
        points_in_domain(self.flow, self.embed(xi), name)
        return xi

    @property
    def time_scale(self) -> float:
        """A typical return time (the period of a stroboscopic section, else 1)."""
        return self.period if self.strobe else 1.0

    # -- the map ----------------------------------------------------------------------
    def apply(self, xi, k: int = 1, *, backward: bool = False, jacobian: bool = True,
              threads: int | None = None) -> Return:
        """The k-th return P^k (or P^-k) of section points ``xi`` (N, dim), with DP^k if asked."""
        k = _count(k, "period", what=" (returns to the section)")
        xi = np.atleast_2d(np.asarray(xi, dtype=np.float64))
        X0 = self.embed(xi)
        N = X0.shape[0]
        ncol = 3 if jacobian else 0
        Y = np.zeros((N, 3 + 3 * ncol))
        Y[:, :3] = X0
        for c in range(ncol):
            Y[:, 3 + 3 * c + c] = 1.0
        direction = -1.0 if backward else 1.0
        plane = self.plane_vec.copy()
        if backward:
            plane[8] = -plane[8]  # the dense polynomial runs against time: flip the kept direction
        spans = np.full(N, k * self.period if self.strobe else k * self.max_time)
        t_out = np.zeros(N)
        outcome = np.zeros(N, dtype=np.int8)
        steps = np.zeros(N, dtype=np.int64)
        t_start = self.t0 + (self.section.phase if self.strobe else 0.0)
        if threads is None and N < 8:
            threads = 1  # waking a thread pool costs more than a few returns (and much more on a busy machine)
        kernel, params = self.flow.kernel("rm_batch")
        with thread_limit(threads), numba.parallel_chunksize(1):
            kernel(Y, t_start, direction, k, spans, params, self.rtol, self.atol, math.inf, int(self.max_steps * k),
                   self.flow.domain == "ball", plane, t_out, outcome, steps)
        ok = outcome == (_FINISHED if self.strobe else _CROSSING_FOUND)
        if not self.strobe:  # a near-instant "return" is the start itself at a tangency of the plane
            ok &= np.abs(t_out - t_start) > max(self.min_time, 1e-9)
        ok &= np.all(np.isfinite(Y), axis=1)
        pts = Y[:, :3].copy()
        shift = self._shift(X0, pts) if self.flow.domain == "periodic" else np.zeros((N, 3))
        img = self.coords(pts - shift)
        jac = None
        if jacobian:
            M = Y[:, 3:].reshape(N, 3, 3).transpose(0, 2, 1)  # column c of M is stored at 3 + 3c
            jac = self._project(M, pts, t_out)
            jac[~ok] = np.nan
        img[~ok] = np.nan
        return Return(img, pts, t_out - t_start, jac, ok, outcome, shift)

    def _project(self, M: np.ndarray, pts: np.ndarray, t_end: np.ndarray) -> np.ndarray:
        if self.strobe:
            if self.dim == 3:
                return M
            E = np.stack(self.view.basis, axis=1)
            return np.einsum("ai,nab,bj->nij", E, M, E)
        n = self.view.n
        E = np.stack(self.view.basis, axis=1)
        f1 = self.flow.velocity(np.nan_to_num(pts), 0.0)
        nf = f1 @ n
        with np.errstate(divide="ignore", invalid="ignore"):
            proj = np.eye(3)[None] - f1[:, :, None] * n[None, None, :] / nf[:, None, None]
        return np.einsum("ai,nab,nbc,cj->nij", E, proj, M, E)

    def _shift(self, X0: np.ndarray, X1: np.ndarray) -> np.ndarray:
        """Lattice vectors L in 2*pi*Z^3 with X1 - L on the start's level of the plane, nearest X0."""
        delta = X1 - X0
        base = np.round(np.nan_to_num(delta) / _TWO_PI)
        offs = np.array(np.meshgrid([-1, 0, 1], [-1, 0, 1], [-1, 0, 1], indexing="ij")).reshape(3, -1).T
        cand = (base[:, None, :] + offs[None]) * _TWO_PI  # (N, 27, 3)
        rest = delta[:, None, :] - cand
        if self.strobe and self.dim == 3:
            off_plane = np.zeros(rest.shape[:2])
        elif self.strobe:
            off_plane = np.zeros(rest.shape[:2])  # the coordinate along the view normal is ignored
            rest = rest - (rest @ self.view.n)[..., None] * self.view.n
        else:
            off_plane = np.abs(rest @ self.view.n)
        score = np.linalg.norm(rest, axis=2) + np.where(off_plane < 1e-6, 0.0, np.inf)
        best = np.argmin(np.nan_to_num(score, nan=np.inf), axis=1)
        L = cand[np.arange(len(X0)), best]
        if self.strobe and self.dim == 2:
            L = L - (L @ self.view.n)[:, None] * self.view.n
        return L

    def describe(self) -> dict:
        """JSON record of the map (section, dimension, tolerances) for provenance."""
        return {"section": self.record, "dim": self.dim, "rtol": self.rtol, "atol": self.atol,
                "max_time": self.max_time, "t0": self.t0, "min_time": self.min_time}


def _decoupled(flow: Flow, normal: np.ndarray, period: float) -> bool:
    """Does the velocity ignore the coordinate along ``normal``? (sampled exactly through the gradient)."""
    rng = np.random.default_rng(7)
    pts = rng.uniform(-0.55, 0.55, size=(24, 3))
    if flow.domain == "periodic":
        pts *= 2 * math.pi
    worst = 0.0
    for t in (0.0, 0.31 * period, 0.77 * period):
        G = flow.gradient(pts, t)
        worst = max(worst, float(np.max(np.abs(G @ normal)) / (1.0 + np.max(np.abs(G)))))
    return worst < 1e-13
