"""Radial basis of the ball dynamo: Chebyshev collocation in r with the parity of each degree.

Why this basis
--------------
A scalar ``T_lm(r)`` or ``S_lm(r)`` of a smooth field behaves like ``r^l`` times
an even function of ``r``, so it extends to ``r in [-1, 1]`` as a smooth function
of parity ``(-1)^l``. We collocate that extension on the ``2N`` Chebyshev
Gauss-Lobatto points of ``[-1, 1]`` (an even number, so ``r = 0`` is not a node)
and keep only the ``N`` nodes in ``(0, 1]``; the differentiation matrices are
folded with the parity (``f(-r) = (-1)^l f(r)``). This is the standard
parity-folded Chebyshev method for polar and spherical Laplacians (SIAM, 2000,
"Spectral Methods in MATLAB", chapter 11, cited from memory): no node at the
coordinate singularity, spectral accuracy for the regular solutions, and the
singular ones (``r^-(l+1)``) are not polynomials of that parity, so they do not
appear. The nodes cluster at ``r = 1``, where the boundary layers of the mode are.

Boundary conditions at ``r = 1`` (insulating exterior, the outside field a
decaying potential field): ``T(1) = 0`` and ``S'(1) + (l+1) S(1) = 0``. The
unknowns are the values at the ``N - 1`` interior nodes; ``T(1)`` is zero and
``S(1)`` follows from the interior values through the Robin row, so every
vector of unknowns satisfies the conditions exactly.
"""

from __future__ import annotations

import numpy as np
from scipy.linalg import expm


def chebyshev_nodes(n: int) -> np.ndarray:
    """The ``n`` Chebyshev Gauss-Lobatto points ``cos(pi k / (n - 1))`` of ``[-1, 1]``, descending."""
    return np.cos(np.pi * np.arange(n) / (n - 1))


def chebyshev_diff(x: np.ndarray) -> np.ndarray:
    """First-derivative collocation matrix on Gauss-Lobatto nodes (negative-sum trick for the diagonal)."""
    n = x.size
    c = np.ones(n)
    c[0] = c[-1] = 2.0
    c *= (-1.0) ** np.arange(n)
    dx = x[:, None] - x[None, :] + np.eye(n)
    d = np.outer(c, 1.0 / c) / dx
    d -= np.diag(d.sum(axis=1))
    return d


def radial(mat: np.ndarray, f: np.ndarray) -> np.ndarray:
    """Apply per-degree radial matrices ``mat[l]`` to ``f[..., m, l, :]`` (a broadcast BLAS product)."""
    return np.matmul(mat, f[..., None])[..., 0]


class RadialBasis:
    """Parity-folded Chebyshev collocation on ``N`` nodes in ``(0, 1]`` (``r[0] = 1``).

    Parameters
    ----------
    n : int
        Nodes in ``(0, 1]``; ``n - 1`` interior unknowns per scalar.
    lmax : int
        Largest harmonic degree (matrices are stacked over ``l = 0 .. lmax``).

    Attributes
    ----------
    r : (n,) array
        Nodes, ``r[0] = 1``.
    d1 : (lmax+1, n, n) array
        ``d/dr`` acting on functions of parity ``(-1)^l``.
    expand_s, expand_t : (lmax+1, n, n-1) arrays
        Interior values -> all nodes, with the insulating condition of ``S`` (Robin)
        and of ``T`` (Dirichlet).
    diffusion_s, diffusion_t : (lmax+1, n-1, n-1) arrays
        ``D_l = d2/dr2 + (2/r) d/dr - l(l+1)/r^2`` with the boundary conditions,
        at the interior nodes.
    """

    def __init__(self, n: int, lmax: int):
        self.n, self.lmax = int(n), int(lmax)
        x = chebyshev_nodes(2 * n)
        d = chebyshev_diff(x)
        d2 = d @ d
        self.r = x[:n].copy()
        mirror = 2 * n - 1 - np.arange(n)
        ls = np.arange(lmax + 1)
        parity = np.where(ls % 2 == 0, 1.0, -1.0)
        self.d1 = np.stack([d[:n, :n] + p * d[:n, mirror] for p in parity])
        d2f = np.stack([d2[:n, :n] + p * d2[:n, mirror] for p in parity])
        r = self.r
        expand_t = np.zeros((n, n - 1))
        expand_t[1:] = np.eye(n - 1)
        self.expand_t = np.broadcast_to(expand_t, (lmax + 1, n, n - 1)).copy()
        self.expand_s = np.zeros((lmax + 1, n, n - 1))
        self.diffusion_s = np.zeros((lmax + 1, n - 1, n - 1))
        self.diffusion_t = np.zeros((lmax + 1, n - 1, n - 1))
        for l in ls:
            es = np.zeros((n, n - 1))
            es[1:] = np.eye(n - 1)
            # Robin row at r = 1: S'(1) + (l+1) S(1) = 0 solved for S(1)
            es[0] = -self.d1[l, 0, 1:] / (self.d1[l, 0, 0] + l + 1)
            self.expand_s[l] = es
            lap = d2f[l] + (2.0 / r)[:, None] * self.d1[l] - np.diag(l * (l + 1) / r**2)
            self.diffusion_s[l] = (lap @ es)[1:]
            self.diffusion_t[l] = (lap @ expand_t)[1:]
        self._expm_cache: dict[float, tuple[np.ndarray, np.ndarray]] = {}

    def decay_rates(self, l: int, field: str) -> np.ndarray:
        """Eigenvalues of ``D_l`` with the insulating conditions (``field`` "S" or "T"), largest first."""
        mat = self.diffusion_s[l] if field == "S" else self.diffusion_t[l]
        vals = np.linalg.eigvals(mat)
        return vals[np.argsort(-vals.real)]

    def propagators(self, h: float) -> tuple[np.ndarray, np.ndarray]:
        """``exp(h D_l)`` for ``S`` and ``T``, stacked over ``l``: exact diffusion over a step ``h``."""
        key = float(h)
        if key not in self._expm_cache:
            es = np.stack([expm(h * m) for m in self.diffusion_s])
            et = np.stack([expm(h * m) for m in self.diffusion_t])
            self._expm_cache[key] = (es, et)
        return self._expm_cache[key]

    def chebyshev_coefficients(self, values: np.ndarray, parity_exponent: int) -> np.ndarray:
        """Chebyshev coefficients (on ``[-1, 1]``) of the parity-``(-1)^k`` extension of node values.

        ``values`` ``(..., N)`` at the nodes; returns ``(..., 2N)``. Used to evaluate a mode at any radius.
        """
        full = np.concatenate([values, ((-1) ** parity_exponent) * values[..., ::-1]], axis=-1)
        vander = np.polynomial.chebyshev.chebvander(chebyshev_nodes(2 * self.n), 2 * self.n - 1)
        flat = full.reshape(-1, 2 * self.n)
        return np.linalg.solve(vander, flat.T).T.reshape(full.shape)
