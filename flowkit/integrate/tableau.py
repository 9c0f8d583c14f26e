"""Butcher tableaus used by the step kernels.

DOP853: the explicit Runge–Kutta pair of order 8(5,3) with its 7th-order dense
output (Solving Ordinary Differential Equations I, 2nd ed., Springer, 1993,
section II.10). The published coefficients are taken from scipy's copy
(``scipy.integrate._ivp.dop853_coefficients``) rather than retyped;
tests/test_steppers.py checks their order conditions.
"""

import importlib.util
import os

import numpy as np


def _scipy_dop853_table():
    """scipy's DOP853 coefficient module (it imports numpy only), loaded from its file.

    Importing it through the ``scipy.integrate`` package costs 0.8 s (the package imports
    scipy.special, quadrature and BVP code), which a new formula's first section would wait
    for; nothing else in a section needs that package.
    """
    spec = importlib.util.find_spec("scipy")
    for base in (spec.submodule_search_locations or []) if spec else []:
        path = os.path.join(base, "integrate", "_ivp", "dop853_coefficients.py")
        if os.path.isfile(path):
            table = importlib.util.spec_from_file_location("flowkit.integrate._scipy_dop853_coefficients", path)
            module = importlib.util.module_from_spec(table)
            table.loader.exec_module(module)
            return module
    try:  # pragma: no cover - a scipy laid out differently
        from scipy.integrate._ivp import dop853_coefficients
    except ImportError as exc:  # pragma: no cover - only if scipy reorganises
        raise ImportError("flowkit needs scipy's DOP853 coefficient table (scipy >= 1.4)") from exc
    return dop853_coefficients


_d = _scipy_dop853_table()

N_STAGES = 12
#: stage matrix (16 x 16: 12 stages, FSAL row, 3 extra stages for dense output)
DOP_A = np.ascontiguousarray(_d.A, dtype=np.float64)
DOP_B = np.ascontiguousarray(_d.B, dtype=np.float64)
DOP_C = np.ascontiguousarray(_d.C, dtype=np.float64)
DOP_E3 = np.ascontiguousarray(_d.E3, dtype=np.float64)
DOP_E5 = np.ascontiguousarray(_d.E5, dtype=np.float64)
DOP_D = np.ascontiguousarray(_d.D, dtype=np.float64)

#: classical fourth-order Runge–Kutta
RK4_C = np.array([0.0, 0.5, 0.5, 1.0])
RK4_B = np.array([1.0, 2.0, 2.0, 1.0]) / 6.0

#: rows of the per-trajectory work array used by the DOP853 kernels
W_K = 0          # rows 0..15: stages
W_YNEW = 16      # candidate state
W_YTMP = 17      # stage argument
W_YOLD = 18      # state at the start of the last accepted step
W_F = 19         # rows 19..25: dense-output coefficients
W_STIFF = 26     # stiffness test counters: [accepted steps since the last test, stiff tests, calm tests]
W_ROWS = 27

#: stiffness test of the published DOP853 code (Solving Ordinary Differential Equations II,
#: 2nd ed., Springer, 1996, section IV.2, and the code's own comments; cited from memory):
#: every STIFF_EVERY accepted steps, and after every accepted step while a test has come out
#: stiff, h*|lambda| is estimated from the last two stages (both at t + h); STIFF_RUN results
#: above the stability boundary STIFF_BOUND of the method along the negative axis make the
#: problem "stiff"; STIFF_CLEAR results below it in a row clear the count.
STIFF_EVERY = 1000
STIFF_BOUND = 6.1
STIFF_RUN = 15
STIFF_CLEAR = 6
#: States with tangent vectors (renormalized every step) never sit at the stability limit:
#: the fast tangent column is reset to norm one each step, so accuracy holds the step at
#: h*|lambda| ~ 0.4-1.5 and the published test cannot fire (measured: -1e8 eigenvalue, 12
#: components). For them a step also counts as stiff when h*|lambda| > STIFF_ACTIVE (the
#: fast mode sets the step) and exceeds STIFF_SEPARATION times the relative change of the
#: velocity over the step (h times the orbit's own rate): a scale separation of 1e4. Measured
#: on stf, abc and lorenz at rtol 1e-5..1e-10 the ratio stays below 50; with -1e8 it is 1e8.
STIFF_ACTIVE = 0.05
STIFF_SEPARATION = 1e4
#: weights of ynew - Y12 = h * sum_j STIFF_D[j] K_j (Y12 the argument of stage 12, at t + h),
#: formed directly so the difference of two nearby states carries no cancellation
STIFF_D = np.ascontiguousarray(DOP_B[:N_STAGES] - DOP_A[N_STAGES - 1, :N_STAGES])


def work_array(n: int) -> np.ndarray:
    """Scratch space for one trajectory with ``n`` state components."""
    return np.zeros((W_ROWS, n), dtype=np.float64)
