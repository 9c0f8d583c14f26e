"""Planar grids in 3-D space for FTLE fields: :class:`GridPlane` and its checks."""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.validation import parse_vector, vector

__all__ = ["GridPlane", "default_span", "check_resolution"]


@dataclass(frozen=True)
class GridPlane:
    """A rectangle of a plane in 3-D space, on which an FTLE grid is laid.

    Grid point (i, j) sits at ``origin + s_j * u + r_i * v`` with ``s`` running
    over ``span[0]..span[1]`` and ``r`` over ``span[2]..span[3]``. ``u`` and ``v``
    are orthonormal (:meth:`through` makes them so).
    """

    origin: tuple
    u: tuple
    v: tuple
    span: tuple
    label: str = ""

    @classmethod
    def through(cls, origin, u, v, span) -> "GridPlane":
        """Plane through ``origin`` containing directions ``u`` and ``v``.

        ``v`` is made orthogonal to ``u`` (Gram–Schmidt), keeping its side; ``span``
        is (s_min, s_max, r_min, r_max), coordinates along ``u`` and ``v``.
        """
        o = vector(origin, "origin")
        uu = vector(u, "u", unit=True)
        vv = vector(v, "v", unit=True)
        vv = vv - (vv @ uu) * uu
        if np.linalg.norm(vv) < 1e-9:
            raise FlowkitError("plane directions `u` and `v` are parallel; give two independent in-plane vectors")
        vv /= np.linalg.norm(vv)
        sp = _check_span(span)
        fmt = lambda a: "(" + ", ".join(f"{float(c):.4g}" for c in a) + ")"  # noqa: E731
        return cls(tuple(float(c) for c in o), tuple(float(c) for c in uu), tuple(float(c) for c in vv), sp,
                   f"plane through {fmt(o)}, u {fmt(uu)}, v {fmt(vv)}")

    @classmethod
    def coordinate(cls, axis: str, value: float, span) -> "GridPlane":
        """The plane ``axis = value``; in-plane axes (y, z) for x, (x, z) for y, (x, y) for z."""
        axes = {"x": (1, 2), "y": (0, 2), "z": (0, 1)}
        if axis not in axes:
            raise FlowkitError(f"`axis` must be 'x', 'y' or 'z'; got {axis!r}")
        k = "xyz".index(axis)
        eye = np.eye(3)
        o = np.zeros(3)
        o[k] = float(value)
        a, b = axes[axis]
        plane = cls.through(o, eye[a], eye[b], span)
        return cls(plane.origin, plane.u, plane.v, plane.span, f"{axis} = {float(value):g}")

    @classmethod
    def parse(cls, text: str, span=None) -> "GridPlane":
        """Read ``"z=0.3"`` (a coordinate plane) or ``"P;U;V"`` (point and two directions).

        Each of P, U, V is three comma-separated numbers, e.g. ``"0,0,0;1,0,0;0,1,1"``.
        """
        text = str(text).strip()
        if "=" in text and ";" not in text:
            axis, _, value = text.partition("=")
            try:
                val = float(value)
            except ValueError:
                raise FlowkitError(f"--plane {text!r}: {value!r} is not a number (e.g. --plane z=0.3)") from None
            return cls.coordinate(axis.strip().lower(), val, span)
        parts = text.split(";")
        if len(parts) != 3:
            raise FlowkitError(
                f"--plane expects AXIS=VALUE (e.g. z=0.3) or POINT;U;V (e.g. 0,0,0;1,0,0;0,1,1); got {text!r}"
            )
        p, u, v = (parse_vector(s, f"--plane part {i + 1}") for i, s in enumerate(parts))
        return cls.through(p, u, v, span)

    def with_default_span(self, flow: Flow) -> "GridPlane":
        """Fill a missing span from the flow's domain (unit ball or 2*pi box)."""
        if self.span:
            return self
        return GridPlane(self.origin, self.u, self.v, default_span(flow), self.label)

    def grid(self, resolution) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(s (N,), r (M,), points (M, N, 3)) for ``resolution = (N, M)``."""
        n, m = check_resolution(resolution)
        s = np.linspace(self.span[0], self.span[1], n)
        r = np.linspace(self.span[2], self.span[3], m)
        pts = (np.asarray(self.origin)[None, None, :] + s[None, :, None] * np.asarray(self.u)[None, None, :]
               + r[:, None, None] * np.asarray(self.v)[None, None, :])
        return s, r, pts

    def as_dict(self) -> dict:
        return {k: (list(v) if isinstance(v, tuple) else v) for k, v in asdict(self).items()}


def _check_span(span) -> tuple:
    if span is None:
        return ()
    try:
        vals = tuple(float(x) for x in span)
    except (TypeError, ValueError):
        raise FlowkitError(f"`span` must be four numbers (s_min, s_max, r_min, r_max); got {span!r}") from None
    if len(vals) != 4 or not all(math.isfinite(x) for x in vals):
        raise FlowkitError(f"`span` must be four finite numbers (s_min, s_max, r_min, r_max); got {span!r}")
    if not (vals[1] > vals[0] and vals[3] > vals[2]):
        raise FlowkitError(f"`span` must have s_max > s_min and r_max > r_min; got {vals}")
    return vals


def default_span(flow: Flow) -> tuple:
    """In-plane coordinate ranges covering the flow's domain, or a clear error."""
    if flow.domain == "ball":
        return (-1.0, 1.0, -1.0, 1.0)
    if flow.domain == "periodic":
        return (0.0, 2 * math.pi, 0.0, 2 * math.pi)
    raise FlowkitError(
        f"flow '{flow.name}' lives on an unbounded domain: give the grid's `span` "
        "(s_min, s_max, r_min, r_max), e.g. span=(0, 2, 0, 1) for the double gyre (--span 0,2,0,1)"
    )


def check_resolution(resolution, name: str = "resolution") -> tuple[int, int]:
    """(N, M) grid size with both at least 2 that fits in memory, or a clear error."""
    from flowkit.validation import grid_shape, memory

    n, m = grid_shape(resolution, name)
    # per grid point: position, start, 3x3 deformation state, field values and outcomes (~40 doubles)
    memory(n * m * _GRID_POINT_BYTES, name, per_unit=_GRID_POINT_BYTES, value=f"{n}x{m}", power=2)
    return n, m


_GRID_POINT_BYTES = 320.0


