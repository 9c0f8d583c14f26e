"""The ball operator as ``A(Rm) = D + Rm K``, built once per flow and resolution.

Diffusion ``D`` is block diagonal (one radial matrix per degree and field) and
does not depend on the flow; the induction matrix ``K`` (at ``Rm = 1``) is built
by applying the induction term to basis vectors (dense, one order of an
axisymmetric flow) or to coloured probes (sparse, all orders coupled;
:mod:`~flowkit.dynamo.sphere.sparse`). A sweep over ``Rm`` or a critical-Rm search
then forms ``D + Rm K`` for each ``Rm`` instead of rebuilding the operator. The
real form and the decoupled families (:mod:`~flowkit.dynamo.sphere.families`)
depend only on the pattern, so they are kept with the parts.

The store is keyed by the flow's formula text, parameters and the resolution, and
holds at most ``STORE_BYTES`` (least recently used entries leave first).
"""

from __future__ import annotations

import hashlib
import threading
from collections import OrderedDict

import numpy as np
import scipy.sparse as sps

from flowkit.dynamo.sphere.families import families, real_coupled, real_phases

#: Memory kept for operator parts across calls (bytes).
STORE_BYTES = 1.5e9
_STORE: OrderedDict = OrderedDict()
_LOCK = threading.Lock()  # the lab's explorers solve in worker threads


def _key(op) -> tuple:
    fam = op.flow.family
    text = "\n".join([fam.name, repr(getattr(fam, "formula", "")), getattr(fam, "code", "") or ""])
    digest = hashlib.sha1(text.encode()).hexdigest()
    return (digest, tuple(np.asarray(op.flow.params, float).tolist()), op.lmax, op.n, op.m,
            op.grid.n_theta, op.grid.n_phi)


def _size(entry: dict) -> float:
    total = 0.0
    for v in entry.values():
        if sps.issparse(v):
            total += v.data.nbytes + v.indices.nbytes + v.indptr.nbytes
        elif isinstance(v, np.ndarray):
            total += v.nbytes
    return total


def diffusion_matrix(op) -> sps.csr_matrix:
    """``D`` in the packed order (block diagonal: per active ``(m, l)``, the T block then the S block)."""
    b = op.basis
    ls = np.nonzero(op.active)[1]
    blocks = [b.diffusion_t[l] for l in ls] + [b.diffusion_s[l] for l in ls]
    return sps.block_diag(blocks, format="csr").astype(complex)


def induction_dense(op) -> np.ndarray:
    """``K`` (induction at ``Rm = 1``) as a dense matrix: the induction term on all basis vectors.

    A basis vector's field coefficients are one column of the radial matrices, so they are
    gathered directly instead of being unpacked and multiplied (half the cost at L = N = 24).
    """
    from flowkit.dynamo.sphere.families import pack_index

    op.set_time(0.0)
    idx = pack_index(op)
    where = np.argwhere(idx >= 0)  # (field, order, degree, node) per packed position, in pack order
    where = where[np.argsort(idx[tuple(where.T)])]
    shape = op.active.shape + (op.n,)
    cols = []
    step = max(1, int(2e7 // max(1, op.n * op.grid.n_theta * op.grid.n_phi * 16)))
    for i in range(0, op.dof, step):
        f, mi, l, j = where[i:i + step].T
        k = np.arange(f.size)
        br, bs, bt = (np.zeros((f.size,) + shape, complex) for _ in range(3))
        s_, t_ = f == 1, f == 0
        br[k[s_], mi[s_], l[s_]] = op._br[l[s_], :, j[s_]]
        bs[k[s_], mi[s_], l[s_]] = op._bs[l[s_], :, j[s_]]
        bt[k[t_], mi[t_], l[t_]] = op._bt[l[t_], :, j[t_]]
        cols.append(op.pack(*op.induction_of_fields(br, bs, bt)))
    return np.concatenate(cols, axis=0).T / op.rm


def operator_parts(op) -> dict:
    """``{"D", "K", "real", "families"}`` for ``op`` (built once, then from the store).

    ``real``: for one order, unit phases ``p`` (``diag(p)^-1 A diag(p)`` real) or ``None``;
    for all orders, the unitary ``V`` (``V^H A V`` real). ``families``: index sets of the
    decoupled blocks of the real form.
    """
    key = _key(op)
    with _LOCK:
        if key in _STORE:
            _STORE.move_to_end(key)
            return _STORE[key]
    D = diffusion_matrix(op)
    if op.m is None:
        from flowkit.dynamo.sphere.sparse import sparse_matrix

        K = sparse_matrix(op, part="induction") / op.rm
        V = real_coupled(op)
        fams = families(V.conj().T @ (D + K) @ V)
        entry = {"D": D, "K": K, "real": V, "families": fams}
    else:
        K = induction_dense(op)
        full = D.toarray() + K
        p = real_phases(full)
        fams = families(full if p is None else (np.conj(p)[:, None] * full * p[None, :]))
        entry = {"D": D, "K": K, "real": p, "families": fams}
    with _LOCK:
        _STORE[key] = entry
        while len(_STORE) > 1 and sum(_size(e) for e in _STORE.values()) > STORE_BYTES:
            _STORE.popitem(last=False)
    return entry


def real_blocks(op, parts: dict) -> tuple[list, object]:
    """The real form of ``A = D + Rm K`` split by family: ``([(index, block), ...], to_complex)``.

    ``to_complex(index, y)`` maps a family eigenvector back to the packed complex basis.
    A block is real unless the order's matrix has no real form (then complex).
    """
    rm = op.rm
    real = parts["real"]
    if op.m is None:
        V = real
        A = (V.conj().T @ (parts["D"] + rm * parts["K"]) @ V).tocsc()
        imag = abs(A.imag).max() if A.nnz else 0.0
        scale = abs(A).max() if A.nnz else 1.0
        if imag > 1e-9 * scale:
            raise RuntimeError(f"internal: the all-orders operator is not real in cosine/sine form ({imag:.2e})")
        A = A.real.tocsc()
        blocks = [(ix, A[ix][:, ix]) for ix in parts["families"]]

        def to_complex(ix, y):
            full = np.zeros(op.dof, complex)
            full[ix] = y
            return V @ full
    else:
        full = parts["D"].toarray() + rm * parts["K"]
        if real is not None:
            full = (np.conj(real)[:, None] * full * real[None, :])
            full = full.real
        blocks = [(ix, full[np.ix_(ix, ix)]) for ix in parts["families"]]

        def to_complex(ix, y):
            x = np.zeros(op.dof, complex)
            x[ix] = y
            return x * real if real is not None else x
    return blocks, to_complex
