"""The induction operator in the ball: toroidal-poloidal coefficients, transform method.

``B = curl(T x) + curl curl(S x)`` with ``T, S = sum T_lm(r), S_lm(r) Y_lm``. With
``Psi = r grad Y`` and ``Phi = r-hat x Psi`` the field is

    B = l(l+1) S/r Y r-hat + (S' + S/r) Psi - T Phi        (each (l, m))

(vector-harmonic curl identities, a handbook fact: ``curl(f Y r-hat) = -(f/r) Phi``,
``curl(f Psi) = (f' + f/r) Phi``, ``curl(f Phi) = -l(l+1) f/r Y r-hat - (f' + f/r) Psi``).
Taking ``x .`` and ``x . curl`` of ``dB/dt = curl E + lap B`` with
``E = Rm u x B = e_r Y r-hat + e_s Psi + e_t Phi`` gives, per ``(l, m)``,

    dS/dt = D_l S - e_t,     dT/dt = D_l T + e_r / r - (r e_s)' / r,

``D_l`` the radial Laplacian of degree ``l`` (:mod:`~flowkit.dynamo.sphere.basis`).
``E`` is formed on a Gauss-Legendre x longitude grid at every radial node and
projected back exactly (:func:`~flowkit.dynamo.sphere.harmonics.grid_sizes`).
The state is complex (orders ``-L .. L`` independently), so the operator is the
complexification of the real one: same eigenvalues, conjugate pairs included.
An axisymmetric flow keeps one order ``m`` at a time on a meridional grid.
"""

from __future__ import annotations

import numpy as np

from flowkit.dynamo.sphere.basis import RadialBasis, radial
from flowkit.dynamo.sphere.flowcheck import check_ball_flow, check_facts, probe_flow
from flowkit.dynamo.sphere.harmonics import SphereGrid, grid_sizes
from flowkit.validation import memory, positive, resolution as check_count


def check_ball_resolution(resolution, name: str = "resolution") -> tuple[int, int]:
    """``(L, N)`` from a pair (or one int used for both)."""
    from flowkit.errors import FlowkitError

    if isinstance(resolution, (int, np.integer)) and not isinstance(resolution, bool):
        resolution = (resolution, resolution)
    if isinstance(resolution, str) and "," in resolution:
        resolution = resolution.split(",")
    try:
        lmax, n = resolution
    except (TypeError, ValueError):
        raise FlowkitError(f"`{name}` for a ball flow is (L, N): the harmonic degree and the radial nodes, "
                           f"e.g. {name}=(16, 16); got {resolution!r}") from None
    lmax = check_count(int(lmax) if str(lmax).strip().isdigit() else lmax, f"{name}[0] (L)", minimum=1)
    n = check_count(int(n) if str(n).strip().isdigit() else n, f"{name}[1] (N)", minimum=4)
    return lmax, n


class BallOperator:
    """``Rm curl(u x B) + lap B`` for ``B`` in the unit ball with an insulating exterior.

    Parameters
    ----------
    flow : Flow
        A ball flow (``u . n = 0`` on ``r = 1``).
    rm : float
        Magnetic Reynolds number (multiplies the flow as defined).
    lmax, n : int
        Harmonic degree ``L`` and radial nodes ``N``.
    m : int, optional
        For an axisymmetric flow: keep only this order (meridional grid, no FFT).
        ``None``: all orders ``-L .. L`` coupled on the full grid.
    facts : FlowFacts, optional
        Reuse a probe of the flow (degree, axisymmetry).
    """

    def __init__(self, flow, rm: float, lmax: int, n: int, m: int | None = None, facts=None):
        check_ball_flow(flow)
        self.flow, self.rm = flow, positive(rm, "rm")
        self.lmax, self.n = int(lmax), int(n)
        self.facts = facts or probe_flow(flow)
        check_facts(flow, self.facts, self.lmax, self.n)
        from flowkit.errors import FlowkitError

        if m is not None and not self.facts.axisymmetric:
            raise FlowkitError(f"flow '{flow.name}' is not axisymmetric about z, so the orders m couple; "
                               "leave m=None")
        if m is not None and abs(int(m)) > self.lmax:
            raise FlowkitError(f"`m` = {m} exceeds the degree L = {self.lmax}; choose |m| <= L")
        self.m = None if m is None else int(m)
        ms = range(-self.lmax, self.lmax + 1) if m is None else [self.m]
        n_theta, n_phi = grid_sizes(self.lmax, self.facts.degree)
        if m is not None:
            n_phi = 1
        M = len(ms)
        # grid work arrays of a matvec (~12 complex copies) and the velocity: refuse what cannot fit
        per = 16.0 * 12 * self.n * n_theta * max(n_phi, 1) + 16.0 * 8 * M * (self.lmax + 1) * self.n
        memory(per, "resolution", value=(self.lmax, self.n))
        self.basis = RadialBasis(self.n, self.lmax)
        self.grid = SphereGrid(self.lmax, ms, n_theta, n_phi)
        self.active = self.grid.active
        self.dof = 2 * int(self.active.sum()) * (self.n - 1)
        b, r = self.basis, self.basis.r
        ls = np.arange(self.lmax + 1)
        self._br = (ls * (ls + 1))[:, None, None] / r[None, :, None] * b.expand_s
        self._bs = np.einsum("lij,ljk->lik", b.d1, b.expand_s) + b.expand_s / r[None, :, None]
        self._bt = -b.expand_t
        self._ar = np.broadcast_to(np.diag(1.0 / r)[1:], (self.lmax + 1, self.n - 1, self.n))
        self._as = -np.einsum("i,lij,j->lij", 1.0 / r, b.d1, r)[:, 1:, :]
        self.steady = flow.steady
        self.period = flow.period
        self._u_time = None
        self.matvecs = 0
        self.set_time(0.0)

    # -- velocity on the grid --------------------------------------------------------------
    def set_time(self, t: float) -> None:
        """Evaluate ``Rm u`` (spherical components) on the grid at time ``t`` (once if steady)."""
        if self._u_time is not None and (self.steady or self._u_time == t):
            return
        g = self.grid
        pts = g.points(self.basis.r)
        shape = pts.shape[:-1]
        u = self.flow.velocity(pts.reshape(-1, 3), t).reshape(pts.shape) * self.rm
        rhat, that, phat = g.frames()
        self.u = tuple(np.einsum("rtpc,tpc->rtp", u, e) for e in (rhat, that, phat))
        assert self.u[0].shape == shape
        self._u_time = t

    # -- packing -----------------------------------------------------------------------------
    def zeros(self, batch: tuple = ()) -> tuple[np.ndarray, np.ndarray]:
        shape = batch + (self.grid.ms.size, self.lmax + 1, self.n - 1)
        return np.zeros(shape, complex), np.zeros(shape, complex)

    def pack(self, T: np.ndarray, S: np.ndarray) -> np.ndarray:
        """``(T, S)`` arrays ``(..., M, L+1, N-1)`` -> vectors ``(..., dof)`` of the active entries."""
        a = self.active
        return np.concatenate([T[..., a, :].reshape(T.shape[:-3] + (-1,)),
                               S[..., a, :].reshape(S.shape[:-3] + (-1,))], axis=-1)

    def unpack(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        x = np.asarray(x)
        batch = x.shape[:-1]
        T, S = self.zeros(batch)
        half = x.shape[-1] // 2
        na = int(self.active.sum())
        T[..., self.active, :] = x[..., :half].reshape(batch + (na, self.n - 1))
        S[..., self.active, :] = x[..., half:].reshape(batch + (na, self.n - 1))
        return T, S

    # -- the operator ---------------------------------------------------------------------------
    def field_coefficients(self, T, S):
        """``(b_r, b_s, b_t)`` at all radial nodes, ``(..., M, L+1, N)``."""
        return radial(self._br, S), radial(self._bs, S), radial(self._bt, T)

    def induction(self, T, S, t: float = 0.0):
        """``(dT/dt, dS/dt)`` of the induction term ``Rm curl(u x B)`` alone (arrays as :meth:`zeros`)."""
        self.set_time(t)
        self.matvecs += 1 if T.ndim == 3 else int(np.prod(T.shape[:-3]))
        return self.induction_of_fields(*self.field_coefficients(T, S))

    def induction_of_fields(self, br, bs, bt):
        """The induction term from the field's coefficients at all nodes (:meth:`field_coefficients`)."""
        Br, Bt, Bp = self.grid.synth_vector(br, bs, bt)
        ur, ut, up = self.u
        er, es, et = self.grid.analyse_vector(ut * Bp - up * Bt, up * Br - ur * Bp, ur * Bt - ut * Br)
        dT = radial(self._ar, er) + radial(self._as, es)
        dS = -et[..., 1:]
        mask = self.active[:, :, None]
        return dT * mask, dS * mask

    def diffusion(self, T, S):
        b = self.basis
        return radial(b.diffusion_t, T), radial(b.diffusion_s, S)

    def apply(self, x: np.ndarray, t: float = 0.0) -> np.ndarray:
        """The whole operator on packed vectors ``(..., dof)``."""
        T, S = self.unpack(x)
        iT, iS = self.induction(T, S, t)
        dT, dS = self.diffusion(T, S)
        return self.pack(iT + dT, iS + dS)

    def matrix(self) -> np.ndarray:
        """The dense operator (all columns at once; for one order ``m`` of an axisymmetric flow)."""
        eye = np.eye(self.dof, dtype=complex)
        cols = []
        step = max(1, int(2e7 // max(1, self.n * self.grid.n_theta * self.grid.n_phi * 16)))
        for i in range(0, self.dof, step):
            cols.append(self.apply(eye[i:i + step]))
        return np.concatenate(cols, axis=0).T

    def induction_radius(self, iterations: int = 30, seed: int = 0) -> float:
        """Spectral radius of the induction term (power iteration), for the explicit step size."""
        rng = np.random.default_rng(seed)
        x = rng.standard_normal(self.dof) + 1j * rng.standard_normal(self.dof)
        x /= np.linalg.norm(x)
        est = 0.0
        for _ in range(iterations):
            T, S = self.unpack(x)
            y = self.pack(*self.induction(T, S, 0.0))
            est = float(np.linalg.norm(y))
            if est == 0:
                return 0.0
            x = y / est
        return est
