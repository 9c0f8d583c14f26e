"""Fixed flat surfaces a flux is measured through: discs and parallelograms."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.maps import is_map
from flowkit.validation import positive, vector

__all__ = ["Surface", "disc", "patch", "default_surface"]


@dataclass
class Surface:
    """A flat surface S: uniform sampling, orthonormal tangents (a, b), unit normal a x b, area."""

    kind: str
    origin: np.ndarray
    a: np.ndarray
    b: np.ndarray
    size: tuple
    area: float
    description: dict

    @property
    def normal(self) -> np.ndarray:
        return np.cross(self.a, self.b)

    def sample(self, M: int, rng: np.random.Generator) -> np.ndarray:
        """``M`` points distributed uniformly (by area) on the surface."""
        if self.kind == "disc":
            r = self.size[0] * np.sqrt(rng.random(M))
            th = 2 * math.pi * rng.random(M)
            return self.origin + (r * np.cos(th))[:, None] * self.a + (r * np.sin(th))[:, None] * self.b
        eu, ev = self.size
        u, v = rng.random(M), rng.random(M)
        return self.origin + u[:, None] * np.asarray(eu) + v[:, None] * np.asarray(ev)


def plane_basis(n: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Orthonormal (a, b) with a x b = n, for a unit normal ``n`` (discs, circles)."""
    a = np.cross(n, [1.0, 0, 0] if abs(n[0]) < 0.9 else [0, 1.0, 0])
    a /= np.linalg.norm(a)
    return a, np.cross(n, a)


def disc(center, normal, radius: float) -> Surface:
    """The flat disc of ``radius`` around ``center`` with unit ``normal``."""
    c = vector(center, "center")
    n = vector(normal, "normal", unit=True)
    radius = positive(radius, "radius")
    a, b = plane_basis(n)
    return Surface("disc", c, a, b, (float(radius),), math.pi * radius**2,
                   {"disc": {"center": c.tolist(), "normal": n.tolist(), "radius": float(radius)}})


def patch(origin, edge_u, edge_v) -> Surface:
    """The parallelogram ``origin + u edge_u + v edge_v``, u, v in [0, 1]; normal along edge_u x edge_v."""
    o, eu, ev = vector(origin, "origin"), vector(edge_u, "edge_u"), vector(edge_v, "edge_v")
    cr = np.cross(eu, ev)
    area = float(np.linalg.norm(cr))
    if not area > 0:
        raise FlowkitError("`edge_u` and `edge_v` must be non-zero and not parallel")
    a = eu / np.linalg.norm(eu)
    b = np.cross(cr / area, a)
    return Surface("patch", o, a, b, (eu, ev), area,
                   {"patch": {"origin": o.tolist(), "edge_u": eu.tolist(), "edge_v": ev.tolist()}})


def default_surface(system) -> Surface:
    """A surface inside the domain (used by the command line): see :func:`flux_growth`."""
    if is_map(system):
        return patch((0.37, 0.0, 0.0), (0.0, 1.0, 0.0), (0.0, 0.0, 1.0))
    if system.domain == "ball":
        return disc((0.0, 0.0, 0.0), (0.0, 0.0, 1.0), 0.999)
    if system.domain == "periodic":
        return patch((1.0, 0.0, 0.0), (0.0, math.pi, 0.0), (0.0, 0.0, math.pi))
    return disc((0.0, 0.0, 0.0), (0.0, 0.0, 1.0), 1.0)


