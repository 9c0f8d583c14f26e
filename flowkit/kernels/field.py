"""Kernel template: evaluate a family's velocity and gradient at many points."""

from flowkit.kernels._stub import CACHE, gradient, njit, velocity  # flowkit:stub


@njit(cache=CACHE)
def velocity_many(points, t, p, out):
    """Write the velocity at each row of ``points`` (N, 3) into ``out`` (N, 3)."""
    for i in range(points.shape[0]):
        u, v, w = velocity(points[i, 0], points[i, 1], points[i, 2], t, p)
        out[i, 0] = u
        out[i, 1] = v
        out[i, 2] = w


@njit(cache=CACHE)
def gradient_many(points, t, p, out):
    """Write du_i/dx_j at each row of ``points`` into ``out`` (N, 3, 3)."""
    for i in range(points.shape[0]):
        g = gradient(points[i, 0], points[i, 1], points[i, 2], t, p)
        for a in range(3):
            for b in range(3):
                out[i, a, b] = g[3 * a + b]
