"""Real coordinates and decoupled families of the ball operator.

The solver's state is complex (orders ``-L .. L``), but the operator is the
complexification of a real one, and a symmetric flow splits it further:

- **Real coordinates.** All orders coupled: a real field has ``c_{l,-m} =
  conj(c_{l,m})`` (``Y_{l,-m} = conj(Y_lm)`` in this normalisation), so the unitary
  change ``c_{+-m} = (x +- i y) / sqrt(2)`` makes the matrix real
  (:func:`real_coupled`). One order of an axisymmetric flow: a diagonal change of
  phases makes it real when it can be (:func:`real_phases`; the products
  ``i m`` of the azimuthal derivative sit on a bipartite pattern). Real matrices
  factorise in real arithmetic: a quarter of the complex cost.
- **Families.** A flow with a symmetry (equatorial reflection for ``t1s1``/``t2s2``,
  the half-turn about ``y`` of ``stf``) leaves subspaces invariant that are
  spanned by coordinates of the real basis (parity of ``l + m``, cosine against
  sine parts); they show up as connected components of the matrix's pattern
  (:func:`families`), found, not assumed. Each is solved on its own: the
  factorisations shrink by the cube of the split.

Every map is checked: the imaginary part left after the change of coordinates
and the couplings cut between families must be at round-off (relative ``CUT``).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sps
from scipy.sparse.csgraph import breadth_first_order, connected_components

from flowkit.errors import FlowkitError

#: Entries below ``CUT * max|A|`` are round-off of the transforms, not couplings.
CUT = 1e-12


def pack_index(op) -> np.ndarray:
    """``index[field, order, degree, node]`` -> position in the packed vector (-1 where inactive)."""
    na = int(op.active.sum())
    nr = op.n - 1
    idx = -np.ones((2,) + op.active.shape + (nr,), dtype=np.int64)
    pos = np.arange(na * nr).reshape(na, nr)
    for f in (0, 1):
        idx[f][op.active] = pos + f * na * nr
    return idx


def real_coupled(op) -> sps.csc_matrix:
    """Unitary ``V`` with ``V^H A V`` real for the all-orders operator (module docstring)."""
    if op.m is not None:
        raise FlowkitError("internal: real_coupled is for the all-orders operator (m=None)")
    idx = pack_index(op)
    ms = op.grid.ms
    rows, cols, vals = [], [], []
    h = 1.0 / np.sqrt(2.0)
    for i, m in enumerate(ms):
        if m < 0:
            continue
        p = idx[:, i][idx[:, i] >= 0]
        if m == 0:
            rows.append(p), cols.append(p), vals.append(np.ones(p.size, complex))
            continue
        j = int(np.flatnonzero(ms == -m)[0])
        q = idx[:, j][idx[:, i] >= 0]
        # c_p = (x + i y) / sqrt2 and c_q = (x - i y) / sqrt2, x stored at p, y at q
        rows += [p, p, q, q]
        cols += [p, q, p, q]
        vals += [np.full(p.size, h + 0j), np.full(p.size, 1j * h), np.full(p.size, h + 0j), np.full(p.size, -1j * h)]
    V = sps.csc_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(op.dof, op.dof))
    return V


def real_phases(A) -> np.ndarray | None:
    """Unit phases ``p`` with ``diag(p)^-1 A diag(p)`` real, or ``None`` when no such phases exist."""
    S = sps.csr_matrix(A) if not sps.issparse(A) else A.tocsr()
    big = abs(S).max() if S.nnz else 0.0
    if big == 0:
        return np.ones(S.shape[0], complex)
    S = S.multiply(abs(S) > CUT * big).tocsr()
    S.eliminate_zeros()
    n = S.shape[0]
    phase = np.full(n, np.nan)
    sym = (S + S.T).tocsr()
    for root in range(n):
        if not np.isnan(phase[root]):
            continue
        order, pred = breadth_first_order(abs(sym), root, directed=False)
        phase[root] = 0.0
        for v in order[1:]:
            u = pred[v]
            a = S[u, v] if S[u, v] != 0 else np.conj(S[v, u])
            # A_uv exp(i(phi_v - phi_u)) real: phi_v = phi_u - arg(A_uv) (mod pi)
            phase[v] = phase[u] - np.angle(a)
    p = np.exp(1j * phase)
    R = sps.diags(np.conj(p)) @ S @ sps.diags(p)
    if R.nnz and abs(R.imag).max() > 1e-10 * big:
        return None
    return p


def families(A) -> list[np.ndarray]:
    """Index sets of the connected components of ``A``'s pattern (entries above ``CUT * max|A|``)."""
    S = sps.csr_matrix(A) if not sps.issparse(A) else A.tocsr()
    big = abs(S).max() if S.nnz else 0.0
    mask = abs(S) > CUT * big
    count, labels = connected_components(mask + mask.T, directed=False)
    return [np.flatnonzero(labels == k) for k in range(count)]
