"""Butcher tableaus used by the step kernels.

DOP853: the explicit Runge–Kutta pair of order 8(5,3) with its 7th-order dense
output (Solving Ordinary Differential Equations I, 2nd ed., Springer, 1993,
section II.10). The published coefficients are taken from scipy's copy
(``scipy.integrate._ivp.dop853_coefficients``) rather than retyped;
tests/test_steppers.py checks their order conditions.
"""

import numpy as np

try:
    from scipy.integrate._ivp import dop853_coefficients as _d
except ImportError as exc:  # pragma: no cover - only if scipy reorganises
    raise ImportError("flowkit needs scipy's DOP853 coefficient table (scipy >= 1.4)") from exc

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
W_ROWS = 26


def work_array(n: int) -> np.ndarray:
    """Scratch space for one trajectory with ``n`` state components."""
    return np.zeros((W_ROWS, n), dtype=np.float64)
