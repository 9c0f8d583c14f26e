"""Kernel template: integrate many states in parallel, each with its own adaptive step.

Seeds are spread over threads with ``prange`` (the wrapper sets chunk size 1, so
threads pick up work dynamically and fast-finishing regular orbits do not leave a
core idle). Each seed writes only its own rows, so results do not depend on the
number of threads.
"""

import numpy as np

from flowkit.integrate.tableau import W_ROWS
from flowkit.kernels._stub import CACHE, njit, prange  # flowkit:stub
from flowkit.kernels.steppers import dop853_solve, rk4_solve  # flowkit:stub


@njit(cache=CACHE, parallel=True)
def batch_solve(Y, t0, t1, p, method, rtol, atol, hmax, max_steps, nsteps, bounded, outcome, t_end, steps):
    """Advance each row of ``Y`` (N, n) in place from t0 to t1.

    method 0: adaptive DOP853 (rtol, atol, hmax, max_steps); method 1: RK4 with
    ``nsteps`` equal steps. Writes per-row outcome code, final time and step count.
    """
    N, n = Y.shape
    for k in prange(N):
        W = np.zeros((W_ROWS, n))
        y = Y[k]
        if method == 0:
            oc, tt, ns = dop853_solve(t0, y, t1, p, rtol, atol, hmax, max_steps, W, bounded)
        else:
            oc, tt, ns = rk4_solve(t0, y, t1, nsteps, p, W, bounded)
        outcome[k] = oc
        t_end[k] = tt
        steps[k] = ns
