"""Kernel template: iterate discrete-time maps with tangent vectors (field vectors).

Compiled into every family module like the other templates, but meaningful only
for map families (:mod:`flowkit.flows.maps`), whose generated ``velocity`` is the image
F(x) and ``gradient`` the Jacobian DF. The state layout is the one of
:mod:`flowkit.kernels.steppers`: position + k tangent columns. One iteration
maps each column v -> DF(x) v (for a frozen-in field: B -> DF B, the discrete
Cauchy solution), then the point x -> F(x), wrapped into [0, period) for
periodic coordinates. The columns are re-orthonormalized after every iteration
with the tangent kernel's modified Gram–Schmidt (as the flow kernels do after
every step), so nothing overflows; log R_cc and log|det DF| are summed per
stretch between checkpoints. Time-continuous flows use
:func:`tangent_batch` of :mod:`flowkit.kernels.lyapunov` for the same job.
"""

import math

import numpy as np

from flowkit.kernels._stub import CACHE, gradient, njit, prange  # flowkit:stub
from flowkit.kernels.lyapunov import tangent_orthonormalize  # flowkit:stub
from flowkit.kernels.steppers import rhs  # flowkit:stub


@njit(cache=CACHE)
def map_apply(y, n, p, periods, scratch):
    """One iteration of the map on state ``y`` in place; returns log|det DF| (NaN if not finite).

    The flow right-hand side :func:`rhs` evaluated on a map family returns exactly
    (F(x), DF(x) v_1, ..., DF(x) v_k), the new state.
    """
    g = gradient(y[0], y[1], y[2], float(n), p)
    det = (g[0] * (g[4] * g[8] - g[5] * g[7]) - g[1] * (g[3] * g[8] - g[5] * g[6])
           + g[2] * (g[3] * g[7] - g[4] * g[6]))
    rhs(float(n), y, p, scratch)
    for i in range(y.shape[0]):
        y[i] = scratch[i]
    for i in range(3):
        L = periods[i]
        if L > 0.0:
            y[i] -= L * math.floor(y[i] / L)
    if not (math.isfinite(y[0]) and math.isfinite(y[1]) and math.isfinite(y[2])):
        return np.nan
    return math.log(abs(det)) if det != 0.0 else -np.inf


@njit(cache=CACHE, parallel=True)
def map_tangent_batch(Y, counts, p, periods, logs, logvol, outcome, n_end):
    """Iterate each row of ``Y`` (N, 3 + 3k) through the iteration ``counts`` (m + 1,).

    For row r and stretch j (iterations counts[j] .. counts[j + 1] - 1) writes the
    sum of log R_cc into ``logs[r, j, c]`` and the sum of log|det DF| into
    ``logvol[r, j]``; stretches not reached keep the caller's fill value. Outcome
    3 (non-finite) stops a row. Rows write only their own slices, so results do
    not depend on the thread count.
    """
    N, n = Y.shape
    m = counts.shape[0] - 1
    ncol = (n - 3) // 3
    for r in prange(N):
        y = Y[r]
        scratch = np.zeros(n)
        acc = np.zeros(max(1, ncol))
        it = counts[0]
        oc = 0
        for j in range(m):
            acc[:] = 0.0
            lv = 0.0
            while it < counts[j + 1]:
                d = map_apply(y, it, p, periods, scratch)
                it += 1
                if math.isnan(d) or (ncol > 0 and not tangent_orthonormalize(y, scratch, acc)):
                    oc = 3
                    break
                lv += d
            if oc != 0:
                break
            for c in range(ncol):
                logs[r, j, c] = acc[c]
            logvol[r, j] = lv
        outcome[r] = oc
        n_end[r] = it
