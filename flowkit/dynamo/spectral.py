"""Fourier grid of the 2*pi-periodic box: wavenumbers, 2/3-rule mask, FFTs, packing.

Fields live on an ``N^3`` grid ``x_j = 2*pi*j/N``; their transforms are the
``rfftn`` arrays of shape ``(N, N, N//2 + 1)``. Only *active* modes are ever
nonzero: every ``|k_i| <= K`` with ``3K < N`` (Orszag's 2/3 rule, J. Atmos. Sci.
28, 1971, 1074, so the product of two band-limited fields does not alias onto
them), the mean ``k = 0`` excluded. Time stepping works on the compact array of
active modes, shape ``(3, M)``; the eigen solver works on a real vector of
independent degrees of freedom, two transverse amplitudes per wavevector (so
``k . B = 0`` holds exactly and the Hermitian redundancy of the ``k_z = 0`` plane
is removed: no spurious eigenvalues).

:class:`VerticalWaveGrid` is the same machinery for flows independent of ``z``:
the field is ``B = Re[b(x, y) exp(i kz z)]`` with any real vertical wavenumber
``kz`` (not only the integers a ``2*pi`` box allows), ``b`` complex on an ``N^2``
grid. A ``z``-independent flow couples no two values of ``kz``, so each is an
exact, separate eigenproblem (the classical setting of Roberts-type dynamos).
"""

from __future__ import annotations

import os

import numpy as np
import scipy.fft

from flowkit.errors import FlowkitError

#: Smallest grid accepted (2/3 rule then keeps |k_i| <= 2).
MIN_RESOLUTION = 8


def default_workers() -> int:
    """Threads for scipy.fft: all cores the process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover - not Linux
        return os.cpu_count() or 1


def check_resolution(n) -> int:
    """Validate a grid size, naming the argument and the fix."""
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)):
        raise FlowkitError(f"`resolution` must be an integer number of grid points per side; got {n!r}")
    n = int(n)
    if n < MIN_RESOLUTION:
        raise FlowkitError(
            f"`resolution` must be at least {MIN_RESOLUTION} (the 2/3 rule then keeps |k| <= 2); got {n}. "
            "Use --resolution 16 or more."
        )
    if n % 2:
        raise FlowkitError(f"`resolution` must be even (real FFT layout); got {n}. Use {n + 1}.")
    return n


class SpectralGrid:
    """Wavenumbers, the 2/3-rule active set and FFTs for an ``N^3`` periodic grid.

    Parameters
    ----------
    n : int
        Grid points per side (even, at least :data:`MIN_RESOLUTION`).
    workers : int, optional
        Threads for ``scipy.fft`` (default: all available cores).
    """

    def __init__(self, n: int, workers: int | None = None):
        self.n = check_resolution(n)
        self.workers = int(workers) if workers else default_workers()
        #: vertical wavenumber of a single-``kz`` grid (None: the full 3-D box)
        self.kz = None
        #: ``(3,) + shape`` is the layout of a field on the grid
        self.shape = (self.n,) * 3
        #: whether :meth:`pack` gives complex amplitudes (the operator is then complex)
        self.complex_dof = False
        self.kmax = (self.n - 1) // 3  # largest kept |k_i|: 3 * kmax < n
        n = self.n
        kx = np.fft.fftfreq(n, 1.0 / n)
        kz = np.fft.rfftfreq(n, 1.0 / n)
        KX, KY, KZ = np.meshgrid(kx, kx, kz, indexing="ij")
        self.spectral_shape = KX.shape
        keep = (np.abs(KX) <= self.kmax) & (np.abs(KY) <= self.kmax) & (KZ <= self.kmax)
        keep &= (KX != 0) | (KY != 0) | (KZ != 0)
        #: flat indices (into the rfftn array) of the active modes
        self.active = np.flatnonzero(keep)
        self.k = np.stack([KX.ravel()[self.active], KY.ravel()[self.active], KZ.ravel()[self.active]])
        self.k2 = np.sum(self.k**2, axis=0)
        self._build_transverse_basis()
        self._full = np.zeros((3, KX.size), dtype=np.complex128)

    # -- FFTs --------------------------------------------------------------------
    def points(self) -> np.ndarray:
        """Grid points as an ``(N^3, 3)`` array in ``(x, y, z)`` C order."""
        x = 2 * np.pi * np.arange(self.n) / self.n
        X, Y, Z = np.meshgrid(x, x, x, indexing="ij")
        return np.stack([X.ravel(), Y.ravel(), Z.ravel()], axis=1)

    def box_field(self, coeffs: np.ndarray) -> np.ndarray:
        """Compact coefficients -> the field on the ``N^3`` box (real here; complex for one ``kz``)."""
        return self.inverse(coeffs)

    def forward(self, field: np.ndarray) -> np.ndarray:
        """Real ``(3, N, N, N)`` field -> compact active coefficients ``(3, M)``."""
        hat = scipy.fft.rfftn(field, axes=(1, 2, 3), workers=self.workers)
        return hat.reshape(3, -1)[:, self.active]

    def inverse(self, coeffs: np.ndarray) -> np.ndarray:
        """Compact ``(3, M)`` coefficients -> real ``(3, N, N, N)`` field."""
        self._full[:, self.active] = coeffs  # inactive entries stay zero forever
        full = self._full.reshape((3,) + self.spectral_shape)
        return scipy.fft.irfftn(full, s=(self.n,) * 3, axes=(1, 2, 3), workers=self.workers)

    # -- vector calculus on compact coefficients ---------------------------------
    def curl(self, coeffs: np.ndarray) -> np.ndarray:
        """``i k x coeffs`` on the active modes."""
        k = self.k
        c = coeffs
        return 1j * np.stack([k[1] * c[2] - k[2] * c[1], k[2] * c[0] - k[0] * c[2], k[0] * c[1] - k[1] * c[0]])

    def project(self, coeffs: np.ndarray) -> np.ndarray:
        """Remove the longitudinal part ``k (k . B) / k^2`` (divergence-free projection)."""
        div = np.sum(self.k * coeffs, axis=0) / self.k2
        return coeffs - self.k * div

    def divergence_norm(self, coeffs: np.ndarray) -> float:
        """``|k . B| / |k| |B|`` summed over modes: zero for a solenoidal field."""
        num = np.linalg.norm(np.sum(self.k * coeffs, axis=0) / np.sqrt(self.k2))
        den = np.linalg.norm(coeffs)
        return float(num / den) if den else 0.0

    def energy(self, coeffs: np.ndarray) -> float:
        """Mean of ``|B|^2 / 2`` over the box (Parseval, with the rfft half-space weights)."""
        w = np.where(self.k[2] > 0, 2.0, 1.0)
        return float(0.5 * np.sum(w * np.sum(np.abs(coeffs) ** 2, axis=0)) / float(self.n) ** 6)

    # -- real packing of independent degrees of freedom --------------------------
    def _build_transverse_basis(self) -> None:
        kx, ky, kz = self.k
        indep = (kz > 0) | ((kz == 0) & ((ky > 0) | ((ky == 0) & (kx > 0))))
        self.independent = np.flatnonzero(indep)
        # partner of each independent k_z = 0 mode: the active mode at -k
        lookup = {(int(a), int(b), int(c)): i for i, (a, b, c) in enumerate(self.k.T)}
        self._plane = np.flatnonzero(kz[self.independent] == 0)
        self._partner = np.array(
            [lookup[(-int(kx[i]), -int(ky[i]), 0)] for i in self.independent[self._plane]], dtype=np.int64
        )
        self._set_transverse_vectors(self.k[:, self.independent])
        self.dof = 4 * self.independent.size

    def _set_transverse_vectors(self, k: np.ndarray) -> None:
        """Unit vectors ``e1, e2`` orthogonal to each wavevector (columns of ``k``) and to each other."""
        khat = k / np.linalg.norm(k, axis=0)
        # e1 = khat x a / |khat x a| with a = z, or x when khat is along z; e2 = khat x e1
        a = np.zeros_like(khat)
        along_z = (khat[0] == 0) & (khat[1] == 0)
        a[2] = np.where(along_z, 0.0, 1.0)
        a[0] = np.where(along_z, 1.0, 0.0)
        e1 = np.cross(khat.T, a.T).T
        e1 /= np.linalg.norm(e1, axis=0)
        self.e1, self.e2 = e1, np.cross(khat.T, e1.T).T

    def pack(self, coeffs: np.ndarray) -> np.ndarray:
        """Compact solenoidal coefficients -> real vector of transverse amplitudes."""
        c = coeffs[:, self.independent]
        a1 = np.sum(self.e1 * c, axis=0)
        a2 = np.sum(self.e2 * c, axis=0)
        return np.concatenate([a1.real, a1.imag, a2.real, a2.imag])

    def unpack(self, vec: np.ndarray) -> np.ndarray:
        """Real (or complex) vector of transverse amplitudes -> compact coefficients.

        A complex ``vec`` (an eigenvector) gives the complex combination
        ``unpack(vec.real) + 1j * unpack(vec.imag)``.
        """
        if np.iscomplexobj(vec):
            return self.unpack(vec.real) + 1j * self.unpack(vec.imag)
        m = self.independent.size
        a1 = vec[:m] + 1j * vec[m : 2 * m]
        a2 = vec[2 * m : 3 * m] + 1j * vec[3 * m :]
        h = self.e1 * a1 + self.e2 * a2
        out = np.zeros((3, self.k2.size), dtype=np.complex128)
        out[:, self.independent] = h
        out[:, self._partner] = np.conj(h[:, self._plane])
        return out

    def random_field(self, rng: np.random.Generator, slope: float = 2.0) -> np.ndarray:
        """A random real solenoidal field with spectrum ~ exp(-|k|^2 / slope^2), unit energy."""
        m = self.independent.size
        scale = np.exp(-self.k2[self.independent] / (2 * slope**2))
        vec = rng.standard_normal(4 * m) * np.tile(scale, 4)
        c = self.unpack(vec)
        return c / np.sqrt(self.energy(c))


def check_kz(kz) -> float:
    """Validate a vertical wavenumber, naming the argument and the fix."""
    try:
        value = float(kz)
    except (TypeError, ValueError):
        raise FlowkitError(f"`kz` must be a real vertical wavenumber; got {kz!r}") from None
    if not np.isfinite(value) or value < 0:
        raise FlowkitError(
            f"`kz` must be a finite number >= 0; got {kz!r}. The field exp(-i kz z) is the complex "
            "conjugate of exp(i kz z) and grows at the same rate, so pass |kz|."
        )
    return value


class VerticalWaveGrid(SpectralGrid):
    """Fourier grid for fields ``Re[b(x, y) exp(i kz z)]`` of one vertical wavenumber.

    Wavevectors are ``(kx, ky, kz)`` with integer ``|kx|, |ky| <= K`` (2/3 rule on the
    ``N^2`` grid) and the given real ``kz``; at ``kz = 0`` the mean is excluded. The
    amplitudes ``b`` are complex with no Hermitian redundancy, so :meth:`pack` gives
    complex transverse amplitudes and the operator is complex-linear.

    Parameters
    ----------
    n : int
        Grid points per side in ``x`` and ``y``.
    kz : float
        Vertical wavenumber (``>= 0``, any real value).
    workers : int, optional
        Threads for ``scipy.fft``.
    """

    def __init__(self, n: int, kz: float, workers: int | None = None):
        self.n = check_resolution(n)
        self.workers = int(workers) if workers else default_workers()
        self.kz = check_kz(kz)
        self.shape = (self.n, self.n, 1)
        self.complex_dof = True
        self.kmax = (self.n - 1) // 3
        kx = np.fft.fftfreq(self.n, 1.0 / self.n)
        KX, KY = np.meshgrid(kx, kx, indexing="ij")
        self.spectral_shape = self.shape
        keep = (np.abs(KX) <= self.kmax) & (np.abs(KY) <= self.kmax)
        if self.kz == 0.0:
            keep &= (KX != 0) | (KY != 0)
        self.active = np.flatnonzero(keep)
        kzs = np.full(self.active.size, self.kz)
        self.k = np.stack([KX.ravel()[self.active], KY.ravel()[self.active], kzs])
        self.k2 = np.sum(self.k**2, axis=0)
        self.independent = np.arange(self.active.size)
        self._set_transverse_vectors(self.k)
        self.dof = 2 * self.active.size
        self._full = np.zeros((3, KX.size), dtype=np.complex128)

    def points(self) -> np.ndarray:
        """Grid points of the ``z = 0`` plane as an ``(N^2, 3)`` array."""
        x = 2 * np.pi * np.arange(self.n) / self.n
        X, Y = np.meshgrid(x, x, indexing="ij")
        return np.stack([X.ravel(), Y.ravel(), np.zeros(X.size)], axis=1)

    def forward(self, field: np.ndarray) -> np.ndarray:
        """Complex ``(3, N, N, 1)`` amplitude ``b`` -> compact coefficients ``(3, M)``."""
        hat = scipy.fft.fftn(field, axes=(1, 2), workers=self.workers)
        return hat.reshape(3, -1)[:, self.active]

    def inverse(self, coeffs: np.ndarray) -> np.ndarray:
        """Compact coefficients -> complex amplitude ``b`` on the plane, shape ``(3, N, N, 1)``."""
        self._full[:, self.active] = coeffs
        full = self._full.reshape((3,) + self.spectral_shape)
        return scipy.fft.ifftn(full, axes=(1, 2), workers=self.workers)

    def box_field(self, coeffs: np.ndarray) -> np.ndarray:
        """``b(x, y) exp(i kz z)`` on the ``N^3`` box (complex; the field is its real part)."""
        z = 2 * np.pi * np.arange(self.n) / self.n
        return self.inverse(coeffs) * np.exp(1j * self.kz * z)[None, None, None, :]

    def energy(self, coeffs: np.ndarray) -> float:
        """Mean of ``|b|^2 / 2`` over the plane (Parseval)."""
        return float(0.5 * np.sum(np.abs(coeffs) ** 2) / float(self.n) ** 4)

    def pack(self, coeffs: np.ndarray) -> np.ndarray:
        """Compact solenoidal coefficients -> complex vector of transverse amplitudes."""
        return np.concatenate([np.sum(self.e1 * coeffs, axis=0), np.sum(self.e2 * coeffs, axis=0)])

    def unpack(self, vec: np.ndarray) -> np.ndarray:
        """Complex vector of transverse amplitudes -> compact coefficients."""
        m = self.active.size
        vec = np.asarray(vec, dtype=np.complex128)
        return self.e1 * vec[:m] + self.e2 * vec[m:]

    def random_field(self, rng: np.random.Generator, slope: float = 2.0) -> np.ndarray:
        """A random solenoidal amplitude with spectrum ~ exp(-|k|^2 / slope^2), unit energy."""
        m = self.active.size
        scale = np.tile(np.exp(-self.k2 / (2 * slope**2)), 2)
        c = self.unpack((rng.standard_normal(2 * m) + 1j * rng.standard_normal(2 * m)) * scale)
        return c / np.sqrt(self.energy(c))
