"""Seed points for orbits: along a line or on a grid in a section plane, random in the domain, from a file.

Every helper returns an (N, 3) float array. Helpers that work in a plane use
its in-plane coordinates (u, v) (see :mod:`flowkit.sections.geometry`) and, when
given a flow, keep only points inside its domain.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from flowkit.errors import FlowkitError
from flowkit.flows.base import Flow
from flowkit.sections.geometry import Plane
from flowkit.validation import count


def _inside(points: np.ndarray, flow: Flow | None) -> np.ndarray:
    if flow is None:
        return points
    kept = points[flow.contains(points)]
    if flow.domain == "ball":  # stay strictly inside, off the wall where u.n = 0
        kept = kept[np.einsum("ij,ij->i", kept, kept) < 1.0 - 1e-9]
    if kept.shape[0] == 0:
        raise FlowkitError(f"no seed lies inside the domain of '{flow.name}' ({flow.domain}); move the line or grid inside")
    return kept


def line_in_plane(plane: Plane, start, stop, n: int, flow: Flow | None = None) -> np.ndarray:
    """``n`` evenly spaced seeds from in-plane point ``start`` = (u0, v0) to ``stop`` = (u1, v1).

    With ``flow``, points outside its domain are dropped.
    """
    n = count(n, "n")
    a = np.asarray(start, dtype=np.float64)
    b = np.asarray(stop, dtype=np.float64)
    if a.shape != (2,) or b.shape != (2,):
        raise FlowkitError("`start` and `stop` must be in-plane coordinates (u, v)")
    s = np.linspace(0.0, 1.0, n)
    uv = a + s[:, None] * (b - a)
    return _inside(plane.point(uv[:, 0], uv[:, 1]), flow)


def line(start, stop, n: int, flow: Flow | None = None) -> np.ndarray:
    """``n`` evenly spaced seeds on the 3-D segment from ``start`` to ``stop``."""
    n = count(n, "n")
    a = np.asarray(start, dtype=np.float64).reshape(3)
    b = np.asarray(stop, dtype=np.float64).reshape(3)
    s = np.linspace(0.0, 1.0, n)
    return _inside(a + s[:, None] * (b - a), flow)


def grid_in_plane(plane: Plane, u_range, v_range, nu: int, nv: int, flow: Flow | None = None) -> np.ndarray:
    """A ``nu`` x ``nv`` grid of seeds over ``u_range`` x ``v_range`` of the plane (row-major in u)."""
    nu = count(nu, "nu")
    nv = count(nv, "nv")
    u = np.linspace(*u_range, nu)
    v = np.linspace(*v_range, nv)
    U, V = np.meshgrid(u, v, indexing="ij")
    return _inside(plane.point(U.ravel(), V.ravel()), flow)


def across_domain(flow: Flow, plane: Plane, n: int) -> np.ndarray:
    """``n`` seeds along the plane's first in-plane axis, spanning the flow's domain.

    Unit ball: the chord of the plane's disc through its centre (ends excluded);
    periodic box: one period; unbounded: u in [-2, 2]. The line is shifted by 2%
    of its half-length along the second in-plane axis, so that no seed sits on a
    symmetry axis through the centre (often an invariant line ending at a
    stagnation point, whose orbit never crosses the plane).
    """
    n = count(n, "n")
    if flow.domain == "ball":
        rad = math.sqrt(max(0.0, 1.0 - plane.offset**2))
        if rad == 0.0:
            raise FlowkitError(f"the plane at offset {plane.offset} does not cut the unit ball; use |offset| < 1")
        u = rad * (np.arange(n) + 0.5) / n * 2.0 - rad
        return plane.point(u, np.full_like(u, 0.02 * rad))
    if flow.domain == "periodic":
        u = 2 * math.pi * (np.arange(n) + 0.5) / n
        return plane.point(u, np.full_like(u, 0.02 * math.pi))
    u = np.linspace(-2.0, 2.0, n)
    return plane.point(u, np.full_like(u, 0.04))


def random_in_domain(flow: Flow, n: int, seed: int | None = 0) -> np.ndarray:
    """``n`` points uniformly distributed in the flow's domain (unbounded: the box [-2, 2]^3)."""
    n = count(n, "n")
    from flowkit.validation import memory

    memory(n * 96.0, "n", per_unit=96.0, value=n)  # the seeds and the temporaries drawing them (~12 doubles)
    rng = np.random.default_rng(seed)
    if flow.domain == "ball":
        v = rng.normal(size=(n, 3))
        v /= np.linalg.norm(v, axis=1)[:, None]
        return v * (rng.random(n) ** (1 / 3))[:, None] * (1.0 - 1e-9)
    if flow.domain == "periodic":
        return rng.random((n, 3)) * 2 * math.pi
    return (rng.random((n, 3)) - 0.5) * 4.0


def read_points_file(path, columns: int = 3, what: str = "points file") -> np.ndarray:
    """Rows of ``columns`` finite numbers from a UTF-8 text file (blank lines and ``#`` comments allowed).

    Numbers may be separated by blanks or commas. Errors name the file and line:
    text that is not UTF-8, a row with the wrong number of columns, a word that is
    not a number, NaN or infinity, an empty file, or a file too large for memory.
    """
    from flowkit.validation import memory

    path = Path(path)
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise FlowkitError(f"cannot read {what} {str(path)!r}: {exc.strerror}") from None
    memory(size * 12.0, f"{what} {str(path)!r}", value=f"{size:,} bytes")  # floats plus Python rows
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise FlowkitError(f"cannot read {what} {str(path)!r}: {exc.strerror}") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        lineno = raw[: exc.start].count(b"\n") + 1
        raise FlowkitError(f"{what} {str(path)!r} line {lineno}: not UTF-8 text (byte 0x{raw[exc.start]:02x}); "
                           "save it as plain UTF-8 text") from None
    names = "x y z" if columns == 3 else f"{columns} numbers"
    rows = []
    for lineno, line in enumerate(text.splitlines(), start=1):
        body = line.split("#", 1)[0].strip()
        if not body:
            continue
        parts = body.replace(",", " ").split()
        try:
            vals = [float(v) for v in parts]
        except ValueError:
            raise FlowkitError(f"{what} {str(path)!r} line {lineno}: expected {columns} numbers '{names}'; "
                               f"got {line.strip()[:80]!r}") from None
        if len(vals) != columns:
            raise FlowkitError(f"{what} {str(path)!r} line {lineno}: expected {columns} numbers '{names}', "
                               f"found {len(vals)}: {line.strip()[:80]!r}")
        if not all(math.isfinite(v) for v in vals):
            raise FlowkitError(f"{what} {str(path)!r} line {lineno}: holds NaN or infinity ({line.strip()[:80]!r}); "
                               "every number must be finite")
        rows.append(vals)
    if not rows:
        raise FlowkitError(f"{what} {str(path)!r} has no rows; write {columns} numbers per line")
    return np.array(rows, dtype=np.float64)


def read_seed_file(path) -> np.ndarray:
    """Seeds from a text file: one ``x y z`` per line (see :func:`read_points_file`)."""
    return read_points_file(path, 3, "seed file")


def write_seed_file(path, seeds) -> Path:
    """Write seeds (N, 3) as text, one ``x y z`` per line (round-trips exactly)."""
    arr = np.asarray(seeds, dtype=np.float64).reshape(-1, 3)
    path = Path(path)
    path.write_text("".join(f"{x!r} {y!r} {z!r}\n" for x, y, z in arr.tolist()))
    return path
