"""Slow, obviously-correct numpy versions of the topology kernels (for tests only).

- :func:`solid_angle_pairs`: the segment-pair solid angle of Biopolymers 54, 2000, 307
  written with numpy arrays over all pairs, no pair skipped by bounds.
- :func:`gauss_quadrature`: the Gauss linking / writhe double integral of smooth
  periodic curves by the trapezoidal rule (spectrally accurate for smooth periodic
  integrands), an independent route that uses no solid angles at all.
- :func:`segment_distance_grid`: distance of two segments by brute force on a parameter grid.
"""

import math

import numpy as np


def _unit(v):
    n = np.linalg.norm(v, axis=-1, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(n > 0, v / n, 0.0)


def solid_angle_pairs(p1, p2, p3, p4):
    """Signed solid angles of segment pairs (arrays (..., 3)); coplanar pairs give 0."""
    r13, r14, r23, r24 = p3 - p1, p4 - p1, p3 - p2, p4 - p2
    n1, n2 = _unit(np.cross(r13, r14)), _unit(np.cross(r14, r24))
    n3, n4 = _unit(np.cross(r24, r23)), _unit(np.cross(r23, r13))
    dot = lambda a, b: np.clip(np.sum(a * b, axis=-1), -1, 1)  # noqa: E731
    om = np.arcsin(dot(n1, n2)) + np.arcsin(dot(n2, n3)) + np.arcsin(dot(n3, n4)) + np.arcsin(dot(n4, n1))
    vol = np.sum(np.cross(p4 - p3, p2 - p1) * r13, axis=-1)
    return np.where(vol == 0, 0.0, np.sign(vol) * om)


def linking_naive(P, Q):
    """Lk of closed polygons: sum over all segment pairs of Omega / 4 pi."""
    P1, P2 = P[:, None, :], np.roll(P, -1, axis=0)[:, None, :]
    Q1, Q2 = Q[None, :, :], np.roll(Q, -1, axis=0)[None, :, :]
    return float(solid_angle_pairs(P1, P2, Q1, Q2).sum() / (4 * math.pi))


def writhe_naive(P):
    """Wr of a closed polygon: sum over ordered non-adjacent pairs i != j of Omega / 4 pi."""
    n = len(P)
    P1, P2 = P[:, None, :], np.roll(P, -1, axis=0)[:, None, :]
    Q1, Q2 = P[None, :, :], np.roll(P, -1, axis=0)[None, :, :]
    om = solid_angle_pairs(P1, P2, Q1, Q2)
    i, j = np.meshgrid(np.arange(n), np.arange(n), indexing="ij")
    d = (j - i) % n
    om = np.where((d == 0) | (d == 1) | (d == n - 1), 0.0, om)
    return float(om.sum() / (4 * math.pi))


def gauss_quadrature(f, g, m=400):
    """(1/4 pi) oint oint (f' x g') . (f - g) / |f - g|^3 by the periodic trapezoidal rule.

    ``f`` and ``g`` map t in [0, 1) to points; derivatives by central differences of
    tiny step would spoil accuracy, so they are taken spectrally from the samples.
    For f == g (writhe) the diagonal is left out, which is only accurate to O(1/m) —
    use it for linking.
    """
    t = np.arange(m) / m
    A, B = f(t), g(t)

    def deriv(X):
        k = np.fft.fftfreq(m, 1.0 / m)
        k[m // 2] = 0
        return np.real(np.fft.ifft(np.fft.fft(X, axis=0) * (2j * math.pi * k)[:, None], axis=0))

    dA, dB = deriv(A), deriv(B)
    R = A[:, None, :] - B[None, :, :]
    num = np.sum(np.cross(dA[:, None, :], dB[None, :, :]) * R, axis=-1)
    return float(np.sum(num / np.linalg.norm(R, axis=-1) ** 3) / m ** 2 / (4 * math.pi))


def segment_distance_grid(p1, p2, p3, p4, m=801):
    """Distance between two segments, minimised over an m x m parameter grid."""
    s = np.linspace(0, 1, m)
    A = p1 + s[:, None] * (p2 - p1)
    B = p3 + s[:, None] * (p4 - p3)
    return float(np.min(np.linalg.norm(A[:, None, :] - B[None, :, :], axis=-1)))


def twist_turns(P, N):
    """Twist of a polygon ribbon written as a plain loop: per segment and per corner, the turn of N.

    Same definition as flowkit.topology.ribbons.polygon_twist, written independently
    with a Rodrigues rotation matrix per corner.
    """
    n = len(P)
    total = 0.0
    for k in range(n):
        t = P[(k + 1) % n] - P[k]
        t /= np.linalg.norm(t)
        tn = P[(k + 2) % n] - P[(k + 1) % n]
        tn /= np.linalg.norm(tn)

        def proj(v, tt):
            w = v - np.dot(v, tt) * tt
            return w / np.linalg.norm(w)

        a, b = proj(N[k], t), proj(N[(k + 1) % n], t)
        total += math.atan2(np.dot(np.cross(a, b), t), np.dot(a, b))
        ax = np.cross(t, tn)
        s, c = np.linalg.norm(ax), np.dot(t, tn)
        if s > 0:
            u = ax / s
            Kx = np.array([[0, -u[2], u[1]], [u[2], 0, -u[0]], [-u[1], u[0], 0]])
            Rm = np.eye(3) + s * Kx + (1 - c) * Kx @ Kx
        else:
            Rm = np.eye(3)
        bt, nb = Rm @ b, proj(N[(k + 1) % n], tn)
        total += math.atan2(np.dot(np.cross(bt, nb), tn), np.dot(bt, nb))
    return total / (2 * math.pi)
