"""Flow-independent compiled loops of the spectral induction solver.

The velocity is already sampled on the grid, so nothing here depends on the flow
family: these are plain numba functions, not kernel templates.
"""

from __future__ import annotations

from numba import njit


@njit(cache=True)
def cross_into(u, b, out):
    """``out = u x b`` point by point for fields of shape ``(3, N, N, N)``.

    ``out`` may be ``b`` itself (each point is read fully before it is written).
    Serial on purpose: the loop costs a few percent of the FFTs around it, and a
    threaded version stalls on thread wake-ups when the cores are busy (measured).
    """
    n0, n1, n2 = b.shape[1], b.shape[2], b.shape[3]
    for i in range(n0):
        for j in range(n1):
            for k in range(n2):
                ux = u[0, i, j, k]
                uy = u[1, i, j, k]
                uz = u[2, i, j, k]
                bx = b[0, i, j, k]
                by = b[1, i, j, k]
                bz = b[2, i, j, k]
                out[0, i, j, k] = uy * bz - uz * by
                out[1, i, j, k] = uz * bx - ux * bz
                out[2, i, j, k] = ux * by - uy * bx


@njit(cache=True)
def curl_diffuse(k, k2, e, b, eta, out):
    """``out = i k x e - eta k^2 b`` on compact coefficient arrays ``(3, M)``."""
    for m in range(k.shape[1]):
        kx = k[0, m]
        ky = k[1, m]
        kz = k[2, m]
        d = eta * k2[m]
        out[0, m] = 1j * (ky * e[2, m] - kz * e[1, m]) - d * b[0, m]
        out[1, m] = 1j * (kz * e[0, m] - kx * e[2, m]) - d * b[1, m]
        out[2, m] = 1j * (kx * e[1, m] - ky * e[0, m]) - d * b[2, m]
