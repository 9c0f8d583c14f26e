"""Where a Poincaré section is taken: a plane (normal, offset, direction) or stroboscopic times.

In-plane coordinates
--------------------
For a plane with unit normal n the in-plane basis (e1, e2) is orthonormal and
right-handed with n (e1 x e2 = n): e1 is the projection onto the plane of a
reference direction (``axis1`` if given, otherwise the coordinate axis least
aligned with n, the first one on ties), normalized; e2 = n x e1. A point x has
in-plane coordinates u = e1.(x - o), v = e2.(x - o), where o = offset * n is the
point of the plane nearest the origin. Examples: n = z gives (u, v) = (x, y);
n = x gives (y, z); n = y gives (x, -z) (seen from +y).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from flowkit.errors import FlowkitError

DIRECTIONS = {"+": 1.0, "-": -1.0, "both": 0.0}


def _unit(vec, name: str) -> np.ndarray:
    try:
        v = np.asarray(vec, dtype=np.float64).reshape(-1)
    except (TypeError, ValueError):
        raise FlowkitError(f"`{name}` must be three numbers, e.g. (0, 0, 1); got {vec!r}") from None
    if v.shape != (3,) or not np.all(np.isfinite(v)):
        raise FlowkitError(f"`{name}` must be three finite numbers, e.g. (0, 0, 1); got {vec!r}")
    size = float(np.linalg.norm(v))
    if size == 0.0:
        raise FlowkitError(f"`{name}` is the zero vector; give a non-zero direction, e.g. (0, 0, 1)")
    return v / size


@dataclass(frozen=True, eq=False)
class Plane:
    """A section plane n.x = offset with a crossing direction.

    Parameters
    ----------
    normal : 3 numbers
        Normal direction (any length, not zero); stored normalized.
    offset : float
        Signed distance of the plane from the origin along the unit normal.
    direction : {"+", "-", "both"}
        Keep crossings with n.u > 0 ("+"), n.u < 0 ("-") or all.
    axis1 : 3 numbers, optional
        Reference direction for the first in-plane axis (see module notes).
    """

    normal: tuple = (0.0, 0.0, 1.0)
    offset: float = 0.0
    direction: str = "+"
    axis1: tuple | None = None

    def __post_init__(self):
        n = _unit(self.normal, "normal")
        object.__setattr__(self, "normal", tuple(float(c) for c in n))
        try:
            off = float(self.offset)
        except (TypeError, ValueError):
            raise FlowkitError(f"`offset` must be a number; got {self.offset!r}") from None
        if not math.isfinite(off):
            raise FlowkitError(f"`offset` must be finite; got {self.offset!r}")
        object.__setattr__(self, "offset", off)
        if self.direction not in DIRECTIONS:
            raise FlowkitError(f"`direction` must be '+', '-' or 'both'; got {self.direction!r}")
        if self.axis1 is not None:
            a = _unit(self.axis1, "axis1")
            if abs(a @ n) > 1 - 1e-9:
                raise FlowkitError("`axis1` is parallel to `normal`; give a direction that lies (partly) in the plane")
            object.__setattr__(self, "axis1", tuple(float(c) for c in a))

    @property
    def n(self) -> np.ndarray:
        return np.array(self.normal)

    @property
    def basis(self) -> tuple[np.ndarray, np.ndarray]:
        """The orthonormal in-plane basis (e1, e2), right-handed with the normal."""
        n = self.n
        if self.axis1 is not None:
            ref = np.array(self.axis1)
        else:
            ref = np.zeros(3)
            ref[int(np.argmin(np.abs(n)))] = 1.0
        e1 = ref - (ref @ n) * n
        e1 /= np.linalg.norm(e1)
        e1[np.abs(e1) < 1e-15] = 0.0
        e2 = np.cross(n, e1)
        e2[np.abs(e2) < 1e-15] = 0.0
        return e1, e2

    @property
    def origin(self) -> np.ndarray:
        return self.offset * self.n

    def coords(self, points) -> np.ndarray:
        """In-plane coordinates (M, 2) of points (M, 3)."""
        e1, e2 = self.basis
        rel = np.asarray(points, dtype=np.float64) - self.origin
        return np.stack([rel @ e1, rel @ e2], axis=-1)

    def point(self, u, v) -> np.ndarray:
        """3-D points of in-plane coordinates ``u``, ``v`` (broadcast), shape (..., 3)."""
        e1, e2 = self.basis
        u = np.asarray(u, dtype=np.float64)[..., None]
        v = np.asarray(v, dtype=np.float64)[..., None]
        return self.origin + u * e1 + v * e2

    def as_dict(self) -> dict:
        e1, e2 = self.basis
        return {"kind": "plane", "normal": list(self.normal), "offset": self.offset, "direction": self.direction,
                "e1": e1.tolist(), "e2": e2.tolist()}


@dataclass(frozen=True, eq=False)
class Stroboscopic:
    """A stroboscopic section: the state at t0 + phase + k * period, k = 1, 2, ...

    Parameters
    ----------
    period : float, optional
        Sampling period; defaults to the flow's own period (time-periodic flows).
    phase : float
        Time of the first sample after t0 (0 means one period after t0).
    view : Plane, optional
        Plane whose in-plane basis gives the 2-D display coordinates (default z: (x, y)).
    """

    period: float | None = None
    phase: float = 0.0
    view: Plane | None = None

    def __post_init__(self):
        if self.period is not None and not (math.isfinite(self.period) and self.period > 0):
            raise FlowkitError(f"`period` must be a positive number; got {self.period!r}")
        if not (math.isfinite(self.phase) and self.phase >= 0):
            raise FlowkitError(f"`phase` must be a non-negative number; got {self.phase!r}")
        if self.view is None:
            object.__setattr__(self, "view", Plane((0.0, 0.0, 1.0), 0.0, "both"))

    def coords(self, points) -> np.ndarray:
        return self.view.coords(points)

    def as_dict(self, period: float | None = None) -> dict:
        e1, e2 = self.view.basis
        return {"kind": "stroboscopic", "period": period if period is not None else self.period,
                "phase": self.phase, "view_normal": list(self.view.normal), "e1": e1.tolist(), "e2": e2.tolist()}


def lattice_spacing(normal: np.ndarray, box: float = 2 * math.pi) -> float:
    """Spacing along ``normal`` of the images of a plane in a periodic box.

    The plane repeats in every periodic cell only if the normal is parallel to an
    integer vector k; then the images are ``box / |k|`` apart. Raises otherwise.
    """
    n = np.asarray(normal, dtype=np.float64)
    small = np.min(np.abs(n[np.abs(n) > 1e-12]))
    for mult in range(1, 13):
        k = n / small * mult
        if np.all(np.abs(k - np.round(k)) < 1e-9 * max(1.0, np.abs(k).max())) and np.abs(k).max() <= 24:
            return box / float(np.linalg.norm(np.round(k)))
    raise FlowkitError(
        f"`normal` {n.round(6).tolist()} is not parallel to a small integer vector, so the plane is not the same in "
        "every periodic cell; on a periodic domain use a normal such as (0, 0, 1) or (1, 1, 0)"
    )


#: In-plane axes (horizontal, vertical) of the coordinate planes: the other two coordinates in order.
PLANE_AXES = {"x": ("y", "z"), "y": ("x", "z"), "z": ("x", "y")}


def coordinate_plane(axis: str, offset: float = 0.0, direction: str = "both") -> Plane:
    """The plane ``axis = offset`` with in-plane coordinates named by the other two coordinates.

    ``x = c`` gives (y, z), ``y = c`` gives (x, z), ``z = c`` gives (x, y), each increasing to
    the right and upwards. ``direction`` refers to the coordinate ``axis`` itself: ``"+"`` keeps
    crossings where it increases. For ``y`` the plane is stored with normal -y (so that x, z is
    a right-handed in-plane basis), its offset and direction flipped to match.
    """
    if axis not in PLANE_AXES:
        raise FlowkitError(f"`axis` must be 'x', 'y' or 'z'; got {axis!r}")
    if axis == "y":
        flipped = {"+": "-", "-": "+", "both": "both"}[direction]
        return Plane((0.0, -1.0, 0.0), -float(offset), flipped, axis1=(1.0, 0.0, 0.0))
    return Plane(tuple(float(a == axis) for a in "xyz"), float(offset), direction)
