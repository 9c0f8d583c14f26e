"""The ball operator as a sparse matrix, built with few applications by colouring (l, m).

A flow of angular degree ``d`` couples a harmonic ``(l, m)`` only to ``(l', m')``
with ``|l' - l| <= dl`` and ``|m' - m| <= dm`` (the flow's own orders); radially
every node couples to every node. Columns whose ``(l, m)`` differ by multiples of
``(2 dl + 1, 2 dm + 1)`` have disjoint outputs, so one application of the
operator to their sum gives all of them: ``(2 dl + 1)(2 dm + 1) * 2 (N - 1)``
applications build the whole matrix, whatever ``L``. The windows are measured
(not assumed) on random columns, and the finished matrix is checked against the
operator on a random vector; shift-invert then uses a sparse LU.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sps

from flowkit.errors import FlowkitError


def coupling_windows(op, samples: int = 6, seed: int = 1) -> tuple[int, int]:
    """Largest ``|l' - l|`` and ``|m' - m|`` reached by the induction term from single harmonics."""
    rng = np.random.default_rng(seed)
    act = np.argwhere(op.active)
    dl = dm = 0
    for k in rng.choice(len(act), size=min(samples, len(act)), replace=False):
        mi, l = act[k]
        for field in (0, 1):
            T, S = op.zeros()
            (T if field == 0 else S)[mi, l, :] = rng.standard_normal(op.n - 1)
            dT, dS = op.induction(T, S)
            mag = np.abs(dT).max(axis=2) + np.abs(dS).max(axis=2)
            hit = np.argwhere(mag > 1e-9 * max(mag.max(), 1e-300))
            if hit.size:
                dm = max(dm, int(np.abs(op.grid.ms[hit[:, 0]] - op.grid.ms[mi]).max()))
                dl = max(dl, int(np.abs(hit[:, 1] - l).max()))
    return dl + 1, dm  # one degree of margin: a sampled column may miss the widest coupling


def sparse_matrix(op, part: str = "all") -> sps.csc_matrix:
    """The operator as a sparse matrix, by coloured probes (module docstring).

    ``part="all"``: induction + diffusion; ``"induction"``: the induction term alone (at ``op.rm``).
    """
    if part == "all":
        apply = op.apply
    else:
        def apply(x):
            return op.pack(*op.induction(*op.unpack(x)))
    dl, dm = coupling_windows(op)
    sl, sm = 2 * dl + 1, 2 * dm + 1
    L, nr = op.lmax, op.n - 1
    act = op.active
    na = int(act.sum())
    block = -np.ones(act.shape, dtype=np.int64)
    block[act] = np.arange(na)
    ms_idx, ls_idx = np.nonzero(act)  # pack order of the active blocks
    rows, cols, vals = [], [], []
    for cm in range(min(sm, act.shape[0])):
        for cl in range(min(sl, L + 1)):
            chosen = act & (np.arange(act.shape[0])[:, None] % sm == cm) & (np.arange(L + 1)[None, :] % sl == cl)
            if not chosen.any():
                continue
            probes = np.zeros((2 * nr, op.dof), complex)
            for field in (0, 1):
                for j in range(nr):
                    T, S = op.zeros()
                    (T if field == 0 else S)[chosen, j] = 1.0
                    probes[field * nr + j] = op.pack(T, S)
            out = apply(probes)  # (2 nr, dof)
            # which input block each output block came from
            m_in = ms_idx - dm + (cm - (ms_idx - dm)) % sm
            l_in = ls_idx - dl + (cl - (ls_idx - dl)) % sl
            ok = (m_in >= 0) & (m_in < act.shape[0]) & (l_in >= 0) & (l_in <= L)
            src = np.full(na, -1, dtype=np.int64)
            src[ok] = block[m_in[ok], l_in[ok]]
            src[ok] = np.where(chosen[m_in[ok], l_in[ok]], src[ok], -1)
            for field in (0, 1):
                for j in range(nr):
                    y = out[field * nr + j].reshape(2, na, nr)
                    good = src >= 0
                    col = field * na * nr + src[good] * nr + j
                    for f_out in (0, 1):
                        r = f_out * na * nr + np.arange(na)[good][:, None] * nr + np.arange(nr)[None, :]
                        v = y[f_out, good]
                        keep = v != 0
                        rows.append(r[keep])
                        cols.append(np.broadcast_to(col[:, None], r.shape)[keep])
                        vals.append(v[keep])
    A = sps.csc_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                       shape=(op.dof, op.dof))
    x = np.random.default_rng(2).standard_normal(op.dof) + 0j
    ref = apply(x)
    err = np.linalg.norm(A @ x - ref) / max(np.linalg.norm(ref), 1e-300)
    if err > 1e-9:
        raise FlowkitError(f"internal check failed: the coloured sparse operator differs from the operator by "
                           f"{err:.2e}; use method='propagator'")
    return A


def sparse_shift_invert(op, nev=4, ncv=20, tol=1e-10, maxiter=20000, shift=30.0, guesses=None,
                        warm=None) -> dict:
    """Leading eigenvalue of the coupled operator: the sparse ``D + Rm K`` in cosine/sine (real) form,
    split into its decoupled families, each by shift-invert ARPACK (dense LU or SuperLU) at shifts next
    to the leading eigenvalues of a coarse resolution, and at ``shift`` if given (or from a ``warm`` start)."""
    from flowkit.dynamo.sphere.eigen import solve_families

    out = solve_families(op, nev, ncv, tol, maxiter, shift, guesses, warm)
    from flowkit.dynamo.sphere.parts import operator_parts

    out["nnz"] = int(operator_parts(op)["K"].nnz)
    return out
