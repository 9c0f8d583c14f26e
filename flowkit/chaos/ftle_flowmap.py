"""FTLE fields from the flow map of positions and centred finite differences on the grid.

The alternative to :func:`flowkit.ftle_field`'s default (variational equations with the
exact gradient): integrate only the positions of the grid points (3 components instead
of 3 + 6 or 3 + 9) and difference the final positions on the grid, the way a compiled
ODE library plus a finite-difference loop does it. Cheaper per point, but the
deformation gradient is then a difference quotient over one grid spacing: where the
flow map folds within a cell (FTLE ridges, long times) it is smeared and its size
depends on the resolution (USER-NEEDS item 10). The default stays variational;
``method="flowmap"`` selects this one.

In-plane derivatives: centred differences along the grid (one-sided at its edges).
The third column for 3-D flows: two extra trajectories from the point moved by
plus and minus one grid spacing along the plane's normal. ``u``, ``v`` and the normal
are orthonormal, so the singular values of [dX/ds, dX/dr, dX/dn] are those of the
deformation gradient. Planar flows use the in-plane 2x2 block.
"""

from __future__ import annotations

import numpy as np

from flowkit.integrate.batch import integrate_states
from flowkit.progress import Budget


def flowmap_field(flow, plane, s, r, pts, inside, t0, t1, time, settings, threads, chunk, progress,
                  max_seconds, not_run: int):
    """FTLE values (M, N), outcome codes (M, N) and the :class:`~flowkit.progress.Budget` of the run.

    Grid points whose own orbit or a neighbour's failed get NaN; orbits not run
    (time budget, Ctrl-C) keep the code ``not_run``.
    """
    M, N = pts.shape[:2]
    planar = flow.kind == "planar"
    flat = pts.reshape(-1, 3)
    idx = np.flatnonzero(inside)
    if planar:
        starts = flat[idx]
        h = 0.0
    else:
        normal = np.cross(plane.u, plane.v)
        h = float(min(abs(s[1] - s[0]), abs(r[1] - r[0])))
        starts = np.concatenate([flat[idx], flat[idx] + h * normal, flat[idx] - h * normal])
    ok = flow.contains(starts)
    todo = np.flatnonzero(ok)
    final = np.full((len(starts), 3), np.nan)
    codes = np.full(len(starts), not_run, dtype=np.int8)
    with Budget(total=todo.size, desc=f"FTLE flow map {flow.name}", unit="pt", progress=progress,
                max_seconds=max_seconds) as budget:
        for a in range(0, todo.size, chunk):
            if budget.expired():
                break
            part = todo[a:a + chunk]
            res = integrate_states(flow, starts[part], t0, t1, settings, threads)
            good = res.outcome == 0
            final[part[good]] = res.states[good]
            codes[part] = res.outcome
            budget.advance(part.size)
    n_in = idx.size
    X = np.full((M * N, 3), np.nan)
    X[idx] = final[:n_in]
    X = X.reshape(M, N, 3)
    cols = [np.gradient(X, s, axis=1), np.gradient(X, r, axis=0)]
    if planar:
        A = np.stack([c[..., :2] for c in cols], axis=-1)               # (M, N, 2, 2)
    else:
        Xp = np.full((M * N, 3), np.nan)
        Xm = np.full((M * N, 3), np.nan)
        Xp[idx] = final[n_in:2 * n_in]
        Xm[idx] = final[2 * n_in:]
        cols.append(((Xp - Xm) / (2.0 * h)).reshape(M, N, 3))
        A = np.stack(cols, axis=-1)                                    # (M, N, 3, 3)
    values = np.full((M, N), np.nan)
    valid = np.all(np.isfinite(A), axis=(-2, -1))
    if valid.any():
        sig = np.linalg.svd(A[valid], compute_uv=False)[:, 0]
        with np.errstate(divide="ignore"):
            values[valid] = np.log(sig) / time
    outcome = np.full(M * N, -1, dtype=np.int8)
    outcome[idx] = codes[:n_in]
    outcome = outcome.reshape(M, N)
    values[outcome != 0] = np.nan
    return values, outcome, budget
