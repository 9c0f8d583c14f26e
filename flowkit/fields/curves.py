"""Initial material curves x(s), s in [0, 1]: segments, circles, your own function."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.fields.surfaces import plane_basis
from flowkit.flows.maps import is_map
from flowkit.validation import positive, vector

__all__ = ["Curve", "segment", "circle", "curve", "default_curve", "default_spacing"]


@dataclass
class Curve:
    """An initial material curve x(s), s in [0, 1] (vectorized: (M,) -> (M, 3))."""

    func: Callable[[np.ndarray], np.ndarray]
    closed: bool
    description: dict

    def points(self, s) -> np.ndarray:
        s = np.asarray(s, dtype=np.float64)
        out = np.asarray(self.func(s), dtype=np.float64)
        if out.shape != (len(s), 3):
            raise FlowkitError(f"the curve function must map M labels to an (M, 3) array; got shape {out.shape}")
        return np.ascontiguousarray(out)


def segment(a, b) -> Curve:
    """The straight segment from ``a`` to ``b`` (open curve)."""
    a = vector(a, "a")
    b = vector(b, "b")
    if np.allclose(a, b):
        raise FlowkitError("segment end points `a` and `b` coincide; give two different points")
    return Curve(lambda s: a + s[:, None] * (b - a), False, {"segment": [a.tolist(), b.tolist()]})


def circle(center, radius: float, normal=(0.0, 0.0, 1.0)) -> Curve:
    """The circle of ``radius`` around ``center`` in the plane with unit ``normal`` (closed curve)."""
    c = vector(center, "center")
    n = vector(normal, "normal", unit=True)
    radius = positive(radius, "radius")
    e1, e2 = plane_basis(n)
    r = float(radius)

    def f(s):
        ang = 2 * math.pi * s[:, None]
        return c + r * (np.cos(ang) * e1 + np.sin(ang) * e2)

    return Curve(f, True, {"circle": {"center": c.tolist(), "radius": r, "normal": n.tolist()}})


def curve(func: Callable, closed: bool = False, name: str = "user curve") -> Curve:
    """Your own initial curve: ``func(s)`` maps labels (M,) in [0, 1] to points (M, 3)."""
    if not callable(func):
        raise FlowkitError("`func` must be callable: labels (M,) -> points (M, 3)")
    return Curve(func, bool(closed), {"callable": name})


def default_curve(system) -> Curve:
    """A generic straight segment inside the domain (used by the command line)."""
    if is_map(system):
        if system.domain == "torus":
            return segment((0.1, 0.3, 0.5), (0.6, 0.3, 0.5))
        return segment((0.0, 0.3, 0.5), (1.0, 0.3, 0.5))
    if system.domain == "ball":
        return segment((-0.5, 0.1, 0.2), (0.5, -0.1, 0.3))
    if system.domain == "periodic":
        return segment((0.0, 1.0, 2.0), (math.pi, 1.0, 2.0))
    return segment((-0.5, 0.0, 0.0), (0.5, 0.0, 0.0))


def default_spacing(system) -> float:
    if is_map(system):
        return 0.005
    return {"ball": 0.01, "periodic": 2 * math.pi / 200}.get(system.domain, 0.02)


