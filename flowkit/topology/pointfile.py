"""Plain-text point files: one ``x y z`` line per point (``#`` comments and blank lines skipped).

Files are data: the text is split and parsed as floats, nothing else.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from flowkit.errors import FlowkitError


def read_points(path, name: str = "file") -> np.ndarray:
    """Points (N, 3) from a UTF-8 text file of ``x y z`` lines; errors name the file and line."""
    p = Path(path)
    try:
        text = p.read_bytes().decode("utf-8")
    except FileNotFoundError:
        raise FlowkitError(f"{name} {p}: no such file") from None
    except UnicodeDecodeError as exc:
        raise FlowkitError(f"{name} {p}: not UTF-8 text (byte {exc.start}); write plain 'x y z' lines") from None
    except OSError as exc:
        raise FlowkitError(f"{name} {p}: cannot read ({exc.strerror})") from None
    rows = []
    for no, line in enumerate(text.splitlines(), start=1):
        body = line.split("#", 1)[0].replace(",", " ").split()
        if not body:
            continue
        if len(body) != 3:
            raise FlowkitError(f"{p}, line {no}: expected 3 numbers 'x y z', found {len(body)} fields")
        try:
            vals = [float(v) for v in body]
        except ValueError:
            raise FlowkitError(f"{p}, line {no}: {line.strip()!r} is not three numbers") from None
        if not all(math.isfinite(v) for v in vals):
            raise FlowkitError(f"{p}, line {no}: coordinates must be finite; got {line.strip()!r}")
        rows.append(vals)
    if not rows:
        raise FlowkitError(f"{name} {p}: holds no points; write one 'x y z' line per point")
    return np.array(rows, dtype=np.float64)
