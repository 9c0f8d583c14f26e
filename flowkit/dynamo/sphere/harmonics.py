"""Spherical-harmonic transforms on a Gauss-Legendre x uniform-longitude grid.

Harmonics ``Y_lm = Pbar_l^|m|(cos theta) exp(i m phi)`` with ``m = -L .. L``,
orthonormal on the unit sphere (``2 pi int Pbar^2 d(cos theta) = 1``). Scalars
and the two tangential vector harmonics ``Psi = r grad Y`` and ``Phi = r-hat x Psi``
are synthesised and analysed with precomputed tables of ``Pbar``,
``d Pbar / d theta`` and ``m Pbar / sin theta``: a matrix product over ``l`` per
``m`` and an FFT over ``phi`` (numpy; a packaged transform library was not
needed at the degrees used here, where a transform is a few milliseconds).

Exactness: a field whose Cartesian components restrict to the sphere as
polynomials of degree ``D`` is integrated exactly by ``n_theta >= (D + 1) / 2``
Gauss nodes and ``n_phi >= D + 1`` longitudes; :func:`grid_sizes` chooses them
for the products ``(u x B) . Psi*`` of the induction term (see there).
"""

from __future__ import annotations

import math

import numpy as np


def normalized_legendre(lmax: int, x: np.ndarray) -> np.ndarray:
    """``Pbar_l^m(x)`` for ``0 <= m <= l <= lmax``, shape ``(lmax+1, lmax+1, x.size)`` indexed ``[m, l]``.

    Orthonormal with weight ``2 pi`` (so ``Pbar_l^m e^{i m phi}`` is orthonormal on the
    sphere), no Condon-Shortley phase; the standard stable three-term recurrence in ``l``.
    """
    x = np.asarray(x, dtype=float)
    s = np.sqrt(np.maximum(0.0, 1.0 - x * x))
    p = np.zeros((lmax + 1, lmax + 1, x.size))
    pmm = np.full(x.size, math.sqrt(1.0 / (4 * math.pi)))
    for m in range(lmax + 1):
        if m > 0:
            pmm = pmm * s * math.sqrt((2 * m + 1) / (2 * m))
        p[m, m] = pmm
        if m + 1 <= lmax:
            p[m, m + 1] = x * math.sqrt(2 * m + 3) * pmm
        for l in range(m + 2, lmax + 1):
            a = math.sqrt((4 * l * l - 1) / (l * l - m * m))
            b = math.sqrt(((l - 1) ** 2 - m * m) / (4 * (l - 1) ** 2 - 1))
            p[m, l] = a * (x * p[m, l - 1] - b * p[m, l - 2])
    return p


def grid_sizes(lmax: int, flow_degree: int) -> tuple[int, int]:
    """``(n_theta, n_phi)`` that integrate the induction products exactly.

    ``B`` of degree ``L`` has Cartesian components of degree ``<= L + 1`` on a
    sphere, the flow ``<= d``, so ``(u x B) . Psi*_lm`` has degree
    ``D <= d + 2L + 2``: ``n_theta = ceil((D + 1) / 2)`` Gauss nodes and
    ``n_phi > D`` longitudes make the projections exact (dealiasing by degree).
    """
    deg = flow_degree + 2 * lmax + 2
    n_theta = (deg + 2) // 2
    n_phi = deg + 1
    n_phi += n_phi % 2
    return n_theta, n_phi


class SphereGrid:
    """Tables and transforms for degrees ``<= lmax`` and the azimuthal orders ``ms``.

    Parameters
    ----------
    lmax : int
    ms : sequence of int
        Orders kept (all of ``-L .. L`` for coupled problems, one for an axisymmetric flow).
    n_theta, n_phi : int
        Grid sizes; ``n_phi = 1`` means one order with the ``exp(i m phi)`` factor
        taken analytically (no FFT: an axisymmetric flow multiplies it pointwise).
    """

    def __init__(self, lmax: int, ms, n_theta: int, n_phi: int):
        self.lmax = int(lmax)
        self.ms = np.asarray(list(ms), dtype=int)
        self.n_theta, self.n_phi = int(n_theta), int(n_phi)
        x, w = np.polynomial.legendre.leggauss(self.n_theta)
        self.cos_theta, self.weights = x, w
        self.theta = np.arccos(x)
        self.phi = 2 * np.pi * np.arange(self.n_phi) / self.n_phi
        sin = np.sqrt(1 - x * x)
        pall = normalized_legendre(self.lmax + 1, x)
        ls = np.arange(self.lmax + 1)
        M = self.ms.size
        self.P = np.zeros((M, self.lmax + 1, self.n_theta))
        self.dP = np.zeros_like(self.P)
        self.Q = np.zeros_like(self.P)  # m Pbar / sin(theta), signed m
        for i, m in enumerate(self.ms):
            am = abs(int(m))
            p = pall[am, : self.lmax + 1]
            p = np.where((ls >= am)[:, None], p, 0.0)
            # dP/dtheta = (l x P_l - c_lm P_{l-1}) / sin, c_lm = sqrt((2l+1)/(2l-1) (l^2 - m^2))
            prev = np.zeros_like(p)
            prev[1:] = p[:-1]
            c = np.sqrt(np.maximum(0.0, (2 * ls + 1) / np.maximum(2 * ls - 1, 1) * (ls**2 - am**2)))
            self.P[i] = p
            self.dP[i] = (ls[:, None] * x * p - c[:, None] * prev) / sin
            self.Q[i] = m * p / sin
        self.active = np.array([[l >= max(abs(m), 1) for l in ls] for m in self.ms])  # (M, L+1)
        if self.n_phi > 1:
            self._fft_index = self.ms % self.n_phi

    # -- synthesis: coefficients (..., M, L+1, R) -> grid (..., R, n_theta, n_phi) ------------------
    def _to_phi(self, fm: np.ndarray) -> np.ndarray:
        """``fm`` (..., M, R, n_theta) per order -> values on the longitudes (..., R, n_theta, n_phi)."""
        if self.n_phi == 1:
            return np.moveaxis(fm[..., 0, :, :], -1, -1)[..., None]
        shape = fm.shape[:-3] + fm.shape[-2:] + (self.n_phi,)
        spec = np.zeros(shape, dtype=complex)
        spec[..., self._fft_index] = np.moveaxis(fm, -3, -1)
        return np.fft.ifft(spec, axis=-1) * self.n_phi

    def _from_phi(self, g: np.ndarray) -> np.ndarray:
        """Grid values (..., R, n_theta, n_phi) -> per-order values (..., M, R, n_theta)."""
        if self.n_phi == 1:
            return g[..., 0][..., None, :, :]
        spec = np.fft.fft(g, axis=-1) / self.n_phi
        return np.moveaxis(spec[..., self._fft_index], -1, -3)

    def synth_vector(self, br, bs, bt):
        """Spherical components ``(B_r, B_theta, B_phi)`` of ``sum br Y r-hat + bs Psi + bt Phi``."""
        def syn(c, table):  # sum over l per order: a batched matrix product (BLAS), (..., M, R, n_theta)
            return np.matmul(np.swapaxes(c, -1, -2), table)

        pr = syn(br, self.P)
        th = syn(bs, self.dP) - 1j * syn(bt, self.Q)
        ph = 1j * syn(bs, self.Q) + syn(bt, self.dP)
        return self._to_phi(pr), self._to_phi(th), self._to_phi(ph)

    def analyse_vector(self, er, eth, eph):
        """Coefficients ``(e_r, e_s, e_t)`` of a vector field on ``Y r-hat, Psi, Phi`` (inverse of synthesis)."""
        w = 2 * np.pi * self.weights
        fr, fth, fph = self._from_phi(er) * w, self._from_phi(eth) * w, self._from_phi(eph) * w
        ls = np.arange(self.lmax + 1)
        norm = np.where(ls > 0, 1.0 / np.maximum(ls * (ls + 1), 1), 0.0)[:, None]
        def ana(f, table):  # projection on each degree per order: (..., M, L+1, R)
            return np.swapaxes(np.matmul(f, np.swapaxes(table, -1, -2)), -1, -2)

        cr = ana(fr, self.P)
        cs = (ana(fth, self.dP) - 1j * ana(fph, self.Q)) * norm
        ct = (ana(fph, self.dP) + 1j * ana(fth, self.Q)) * norm
        return cr, cs, ct

    def points(self, r: np.ndarray) -> np.ndarray:
        """Cartesian grid points, shape ``(R, n_theta, n_phi, 3)``."""
        st = np.sin(self.theta)[None, :, None]
        ct = self.cos_theta[None, :, None]
        rr = np.asarray(r)[:, None, None]
        cp, sp = np.cos(self.phi)[None, None, :], np.sin(self.phi)[None, None, :]
        return np.stack(np.broadcast_arrays(rr * st * cp, rr * st * sp, rr * ct), axis=-1)

    def frames(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Unit vectors ``r-hat, theta-hat, phi-hat`` at ``(n_theta, n_phi)``, each ``(n_theta, n_phi, 3)``."""
        st, ct = np.sin(self.theta)[:, None], self.cos_theta[:, None]
        cp, sp = np.cos(self.phi)[None, :], np.sin(self.phi)[None, :]
        rhat = np.stack(np.broadcast_arrays(st * cp, st * sp, ct), axis=-1)
        that = np.stack(np.broadcast_arrays(ct * cp, ct * sp, -st), axis=-1)
        phat = np.stack(np.broadcast_arrays(-sp + 0 * st, cp + 0 * st, 0 * st * cp), axis=-1)
        return rhat, that, phat
