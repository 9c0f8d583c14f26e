"""The induction operator ``dB/dt = curl(u x B) + Rm^-1 lap B`` and its time stepper.

The velocity of any periodic flow of the library is sampled on the grid with
``flow.velocity(points, t)``; ``u x B`` is formed on the grid (compiled loop),
``curl`` and diffusion act on the active Fourier modes. Time stepping is a
fourth-order Runge--Kutta scheme on the integrating-factor variable
``exp(eta k^2 t) B_k``, so diffusion is integrated exactly (a field in a fluid at
rest decays at exactly ``-eta k^2``) and the step is limited only by advection.
"""

from __future__ import annotations

import math

import numpy as np
import scipy.fft
from scipy.sparse.linalg import LinearOperator

from flowkit.dynamo._kernels import cross_into, curl_diffuse
from flowkit.dynamo.spectral import SpectralGrid, VerticalWaveGrid
from flowkit.errors import FlowkitError

#: Velocity energy allowed beyond the 2/3-rule cut-off before a grid is called too coarse.
VELOCITY_TAIL_TOL = 1e-12


def check_rm(rm) -> float:
    """Validate a magnetic Reynolds number (``Rm = 1/eta``)."""
    try:
        rm = float(rm)
    except (TypeError, ValueError):
        raise FlowkitError(f"`rm` must be a number (Rm = 1/eta); got {rm!r}") from None
    if not math.isfinite(rm) or rm <= 0:
        raise FlowkitError(
            f"`rm` must be a positive finite number (Rm = 1/eta, the inverse magnetic diffusivity); got {rm}. "
            "Pass e.g. --rm 10."
        )
    return rm


def check_periodic(flow) -> None:
    """The spectral solver needs a flow on the 2*pi-periodic box."""
    if getattr(flow, "domain", None) != "periodic":
        raise FlowkitError(
            f"the spectral dynamo solver needs a flow on the 2*pi-periodic box; flow '{flow.name}' lives in "
            f"domain '{flow.domain}'. Use a periodic preset (abc, roberts, circular) or "
            "flowkit.custom_flow(..., domain='periodic') with a 2*pi-periodic formula."
        )


def _sample_times(flow) -> list[float]:
    if flow.steady:
        return [0.0]
    return [flow.period * j / 5 for j in range(5)]


def velocity_spectrum_check(flow, grid: SpectralGrid) -> dict:
    """Raise if the flow has energy beyond the 2/3-rule cut-off of ``grid``.

    Returns the tail fraction and the smallest resolution that holds the flow.
    """
    pts = grid.points()
    shape = grid.shape
    axes = tuple(range(1, 1 + len(shape)))
    freqs = [np.abs(np.fft.fftfreq(s, 1.0 / s)) for s in shape]
    kinf = np.maximum(np.maximum(freqs[0][:, None, None], freqs[1][None, :, None]), freqs[2][None, None, :])
    tail, need = 0.0, 0
    for t in _sample_times(flow):
        u = flow.velocity(pts, t).T.reshape((3,) + shape)
        power = np.sum(np.abs(scipy.fft.fftn(u, axes=axes, workers=grid.workers)) ** 2, axis=0)
        power[0, 0, 0] = 0.0  # a mean flow is allowed
        total = power.sum()
        if total == 0.0:
            continue
        tail = max(tail, float(power[kinf > grid.kmax].sum() / total))
        significant = power > VELOCITY_TAIL_TOL * total
        need = max(need, int(kinf[significant].max()))
    if tail > VELOCITY_TAIL_TOL:
        if need >= grid.n // 2:
            hint = (f"its spectrum reaches the grid's Nyquist wavenumber: use resolution >= {2 * grid.n}, and "
                    "check the formula is 2*pi-periodic in x, y and z")
        else:
            suggested = 3 * need + 1
            suggested += suggested % 2
            hint = f"use resolution >= {suggested} (3 * {need} + 1, even) so the 2/3 rule keeps |k| <= {need}"
        raise FlowkitError(
            f"`resolution` {grid.n} is too small for flow '{flow.name}': a fraction {tail:.1e} of its kinetic "
            f"energy lies beyond |k_i| = {grid.kmax} (2/3-rule cut-off); {hint}."
        )
    return {"velocity_tail": tail, "velocity_kmax": need}


def check_z_independent(flow, grid: SpectralGrid) -> None:
    """A single vertical wavenumber is an exact eigenproblem only for a flow independent of ``z``."""
    base = grid.points()
    for t in _sample_times(flow):
        u0 = flow.velocity(base, t)
        scale = max(float(np.abs(u0).max()), 1e-300)
        for z in (0.7390851332, 2.2, 4.81):  # arbitrary heights, none a fraction of the period
            shifted = base.copy()
            shifted[:, 2] = z
            if float(np.abs(flow.velocity(shifted, t) - u0).max()) > 1e-12 * scale:
                raise FlowkitError(
                    f"`kz` needs a flow independent of z (then each vertical wavenumber is a separate "
                    f"eigenproblem); flow '{flow.name}' varies with z. Drop kz to solve in the full 3-D box."
                )


class InductionOperator:
    """The induction operator of one flow at one ``Rm`` on one grid.

    Parameters
    ----------
    flow : Flow
        A steady or time-periodic flow with ``flow.domain == "periodic"``.
    rm : float
        Magnetic Reynolds number ``Rm = 1/eta`` (velocity as defined by the flow).
    resolution : int
        Grid points per side.
    workers : int, optional
        FFT threads (default: all cores).
    kz : float, optional
        Solve for fields ``Re[b(x, y) exp(i kz z)]`` of this one vertical wavenumber
        (any real ``kz >= 0``) on an ``N^2`` grid; needs a flow independent of ``z``.
        ``None`` (default): the full ``N^3`` box.
    """

    def __init__(self, flow, rm: float, resolution: int, workers: int | None = None, kz: float | None = None):
        check_periodic(flow)
        self.rm = check_rm(rm)
        self.eta = 1.0 / self.rm
        self.flow = flow
        self.grid = SpectralGrid(resolution, workers) if kz is None else VerticalWaveGrid(resolution, kz, workers)
        if kz is not None:
            check_z_independent(flow, self.grid)
        self.resolution_info = velocity_spectrum_check(flow, self.grid)
        self._points = self.grid.points()
        self._u_time = None
        self._u = None
        self.matvecs = 0
        if flow.steady:
            self._u = self._sample(0.0)

    @property
    def steady(self) -> bool:
        return self.flow.steady

    @property
    def period(self) -> float | None:
        return self.flow.period

    def _sample(self, t: float) -> np.ndarray:
        return np.ascontiguousarray(self.flow.velocity(self._points, t).T.reshape((3,) + self.grid.shape))

    def velocity(self, t: float = 0.0) -> np.ndarray:
        """Velocity on the grid, shape ``(3,) + grid.shape`` (kept for the last time asked)."""
        if self.steady:
            return self._u
        if self._u_time != t:
            self._u, self._u_time = self._sample(t), t
        return self._u

    def max_speed_sum(self) -> float:
        """``max |u_x| + |u_y| + |u_z|`` over the grid (and over a period when unsteady)."""
        return max(float(np.abs(self.velocity(t)).sum(axis=0).max()) for t in _sample_times(self.flow))

    # -- the operator ------------------------------------------------------------
    def apply(self, coeffs: np.ndarray, t: float = 0.0, eta: float | None = None) -> np.ndarray:
        """``curl(u x B) - eta k^2 B`` on compact active coefficients ``(3, M)``.

        ``eta=0`` gives the advective part alone (used by the integrating-factor stepper).
        """
        self.matvecs += 1
        b = self.grid.inverse(coeffs)
        cross_into(self.velocity(t), b, b)
        e = self.grid.forward(b)
        out = np.empty_like(coeffs)
        curl_diffuse(self.grid.k, self.grid.k2, e, coeffs, self.eta if eta is None else eta, out)
        return out

    def linear_operator(self) -> LinearOperator:
        """The steady induction operator on packed transverse amplitudes (for Arnoldi)."""
        if not self.steady:
            raise FlowkitError("the induction operator of a time-periodic flow has no eigenvalues; "
                               "use the Floquet (one-period propagator) form")
        g = self.grid
        return LinearOperator((g.dof, g.dof), matvec=lambda v: g.pack(self.apply(g.unpack(np.ravel(v)))),
                              dtype=self.dof_dtype)

    @property
    def dof_dtype(self):
        """Type of the packed vectors: real for the 3-D box, complex for one ``kz``."""
        return np.complex128 if self.grid.complex_dof else np.float64

    def propagator(self, duration: float, dt: float, t0: float = 0.0) -> LinearOperator:
        """``B(t0) -> B(t0 + duration)`` on packed transverse amplitudes (Floquet map over a period)."""
        g = self.grid
        stepper = Stepper(self, dt)
        nsteps = max(1, int(math.ceil(duration / dt - 1e-9)))
        h = duration / nsteps

        def matvec(v):
            c = g.unpack(np.ravel(v))
            stepper.h = h
            c = stepper.advance(c, t0, nsteps)
            return g.pack(c)

        return LinearOperator((g.dof, g.dof), matvec=matvec, dtype=self.dof_dtype)

    def stable_dt(self, cfl: float = 1.0) -> float:
        """Advective step limit: ``cfl / (K max(|u_x| + |u_y| + |u_z|))``.

        RK4 is stable on the imaginary axis up to ``2.8``; the default keeps a wide margin.
        """
        umax = self.max_speed_sum()
        if umax == 0.0:
            return 0.5
        return cfl / (self.grid.kmax * umax)


class Stepper:
    """Integrating-factor RK4 for the induction equation on compact coefficients.

    Notes
    -----
    With ``v = exp(eta k^2 t) B_k`` the equation becomes ``dv/dt = exp(eta k^2 t)
    N(B, t)`` with ``N = i k x FFT(u x B)``; classical RK4 is applied to ``v``
    (the integrating-factor method of Lawson, SIAM J. Numer. Anal. 4, 1967, 372).
    """

    def __init__(self, op: InductionOperator, h: float):
        self.op = op
        self.h = float(h)

    def advance(self, c: np.ndarray, t: float, nsteps: int) -> np.ndarray:
        """``nsteps`` steps from time ``t``; returns the new coefficients."""
        op = self.op
        h = self.h
        e2 = np.exp(-op.eta * op.grid.k2 * (h / 2))
        e1 = e2 * e2
        for j in range(nsteps):
            # stage times written the same way at every step, so the velocity sampled at
            # the end of one step is reused (same float) at the start of the next
            tj, tmid, tnext = t + j * h, t + (j + 0.5) * h, t + (j + 1) * h
            k1 = op.apply(c, tj, eta=0.0)
            k2 = op.apply(e2 * (c + (h / 2) * k1), tmid, eta=0.0)
            k3 = op.apply(e2 * c + (h / 2) * k2, tmid, eta=0.0)
            k4 = op.apply(e1 * c + h * (e2 * k3), tnext, eta=0.0)
            c = e1 * (c + (h / 6) * k1) + (h / 3) * (e2 * (k2 + k3)) + (h / 6) * k4
        return c
