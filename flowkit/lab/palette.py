"""Orbit colours that stay distinguishable for dozens of orbits.

A qualitative map such as ``tab20`` pairs each hue with a paler copy of itself,
so twenty orbits look like ten. Here the colours are picked greedily in the
CIE 1976 L*a*b* space (roughly perceptually uniform): each new colour is the
candidate farthest from every colour already chosen and from the white page,
among sRGB colours light enough to see the black domain outline over and dark
enough to see on white. The result is deterministic and computed once.
"""

from __future__ import annotations

import functools

import numpy as np

#: Number of colours the explorer cycles through when colouring by orbit.
ORBIT_COLOURS = 32
#: Lightness window of the candidates (L* of the page is 100, of black 0).
_LIGHTNESS = (30.0, 85.0)


def srgb_to_lab(rgb) -> np.ndarray:
    """CIE 1976 L*a*b* (D65 white) of sRGB colours in [0, 1], shape (..., 3).

    The sRGB transfer curve, the sRGB-to-XYZ matrix and the L*a*b* formulas are the
    standard definitions (IEC 61966-2-1; CIE 15; common practice, no source).
    """
    c = np.asarray(rgb, dtype=float)
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    m = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]])
    xyz = lin @ m.T / np.array([0.95047, 1.0, 1.08883])
    eps = (6 / 29) ** 3
    f = np.where(xyz > eps, np.cbrt(xyz), xyz / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.stack([116 * f[..., 1] - 16, 500 * (f[..., 0] - f[..., 1]), 200 * (f[..., 1] - f[..., 2])], axis=-1)


@functools.lru_cache(maxsize=4)
def orbit_palette(n: int = ORBIT_COLOURS) -> np.ndarray:
    """``n`` RGB colours (n, 3), each as far as possible (in L*a*b*) from the earlier ones."""
    levels = np.linspace(0.0, 1.0, 18)
    cand = np.stack(np.meshgrid(levels, levels, levels, indexing="ij"), axis=-1).reshape(-1, 3)
    lab = srgb_to_lab(cand)
    keep = (lab[:, 0] >= _LIGHTNESS[0]) & (lab[:, 0] <= _LIGHTNESS[1])
    cand, lab = cand[keep], lab[keep]
    # start from the page: distance to white counts like distance to a chosen colour
    nearest = np.linalg.norm(lab - srgb_to_lab([1.0, 1.0, 1.0]), axis=1)
    chosen = []
    for _ in range(n):
        k = int(np.argmax(nearest))
        chosen.append(cand[k])
        nearest = np.minimum(nearest, np.linalg.norm(lab - lab[k], axis=1))
    return np.array(chosen)


def orbit_cmap(n: int = ORBIT_COLOURS):
    """A :class:`matplotlib.colors.ListedColormap` of :func:`orbit_palette` (index i -> colour i)."""
    from matplotlib.colors import ListedColormap

    return ListedColormap(orbit_palette(n), name="flowkit-orbits")
