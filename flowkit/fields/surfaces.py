"""Fixed flat surfaces a flux is measured through: discs and parallelograms."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.maps import is_map

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


def _unit(v, name) -> np.ndarray:
    arr = np.asarray(v, dtype=np.float64)
    if arr.shape != (3,) or not np.all(np.isfinite(arr)) or not np.linalg.norm(arr) > 0:
        raise FlowkitError(f"`{name}` must be a non-zero vector of three finite numbers; got {v!r}")
    return arr / np.linalg.norm(arr)


def disc(center, normal, radius: float) -> Surface:
    """The flat disc of ``radius`` around ``center`` with unit ``normal``."""
    c = np.asarray(center, dtype=np.float64)
    if c.shape != (3,) or not np.all(np.isfinite(c)):
        raise FlowkitError(f"`center` must be three finite numbers; got {center!r}")
    n = _unit(normal, "normal")
    if not (math.isfinite(radius) and radius > 0):
        raise FlowkitError(f"`radius` must be positive; got {radius!r}")
    a = np.cross(n, [1.0, 0, 0] if abs(n[0]) < 0.9 else [0, 1.0, 0])
    a /= np.linalg.norm(a)
    b = np.cross(n, a)
    return Surface("disc", c, a, b, (float(radius),), math.pi * radius**2,
                   {"disc": {"center": c.tolist(), "normal": n.tolist(), "radius": float(radius)}})


def patch(origin, edge_u, edge_v) -> Surface:
    """The parallelogram ``origin + u edge_u + v edge_v``, u, v in [0, 1]; normal along edge_u x edge_v."""
    o = np.asarray(origin, dtype=np.float64)
    eu = np.asarray(edge_u, dtype=np.float64)
    ev = np.asarray(edge_v, dtype=np.float64)
    for name, v in (("origin", o), ("edge_u", eu), ("edge_v", ev)):
        if v.shape != (3,) or not np.all(np.isfinite(v)):
            raise FlowkitError(f"`{name}` must be three finite numbers; got {v!r}")
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


