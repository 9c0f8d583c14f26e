"""Argument checks shared by every analysis, the lab and the command line.

Each check returns the cleaned value or raises :class:`~flowkit.errors.FlowkitError`
with a message that names the argument and says how to fix it.
"""

from __future__ import annotations

import math
import os
from pathlib import Path
from typing import Iterable

import numpy as np

from flowkit.errors import FlowkitError

#: File formats flowkit writes, by suffix.
RESULT_FORMATS = (".npz", ".nc", ".json")


def positive(value, name: str, *, allow_zero: bool = False, what: str = "number") -> float:
    """A finite float > 0 (or >= 0 with ``allow_zero``)."""
    try:
        val = float(value)
    except (TypeError, ValueError):
        raise FlowkitError(f"`{name}` must be a positive {what}; got {value!r}") from None
    ok = math.isfinite(val) and (val >= 0 if allow_zero else val > 0)
    if not ok:
        bound = "non-negative" if allow_zero else "positive"
        raise FlowkitError(f"`{name}` must be a {bound}, finite {what}; got {value!r}")
    return val


def finite(value, name: str) -> float:
    """Any finite float."""
    try:
        val = float(value)
    except (TypeError, ValueError):
        raise FlowkitError(f"`{name}` must be a finite number; got {value!r}") from None
    if not math.isfinite(val):
        raise FlowkitError(f"`{name}` must be a finite number; got {value!r}")
    return val


def duration(value, name: str = "time", *, backward_hint: bool = True) -> float:
    """A positive finite duration (backward time is chosen by a direction option, not a sign).

    ``backward_hint=False`` leaves out the hint about direction='backward' (for
    analyses that have no such option).
    """
    try:
        val = float(value)
    except (TypeError, ValueError):
        raise FlowkitError(f"`{name}` must be a positive number; got {value!r}") from None
    if not (math.isfinite(val) and val > 0):
        hint = " (for backward time use direction='backward', or --backward on the command line)"
        raise FlowkitError(f"`{name}` must be a positive, finite duration; got {value!r}{hint if backward_hint else ''}")
    return val


def count(value, name: str, *, minimum: int = 1, maximum: int | None = None, what: str = "") -> int:
    """An integer in [minimum, maximum] (floats equal to an integer are accepted)."""
    if isinstance(value, bool):
        raise FlowkitError(f"`{name}` must be an integer >= {minimum}{what}; got {value!r}")
    if isinstance(value, (float, np.floating)) and float(value).is_integer():
        value = int(value)
    if not isinstance(value, (int, np.integer)):
        raise FlowkitError(f"`{name}` must be an integer >= {minimum}{what}; got {value!r}")
    value = int(value)
    if value < minimum or (maximum is not None and value > maximum):
        rng = f"between {minimum} and {maximum}" if maximum is not None else f">= {minimum}"
        raise FlowkitError(f"`{name}` must be an integer {rng}{what}; got {value}")
    return value


def one_of(value, name: str, choices: Iterable[str]) -> str:
    """One of a fixed set of strings."""
    choices = tuple(choices)
    if value not in choices:
        raise FlowkitError(f"`{name}` must be one of {', '.join(map(repr, choices))}; got {value!r}")
    return value


def vector(value, name: str, *, nonzero: bool = False, unit: bool = False) -> np.ndarray:
    """Three finite numbers as a float array (``nonzero``: not the zero vector; ``unit``: normalized)."""
    try:
        v = np.asarray(value, dtype=np.float64).reshape(-1)
    except (TypeError, ValueError):
        v = np.zeros(0)
    if v.shape != (3,) or not np.all(np.isfinite(v)):
        raise FlowkitError(f"`{name}` must be three finite numbers, e.g. (0, 0, 1); got {value!r}")
    n = float(np.linalg.norm(v))
    if (nonzero or unit) and n == 0:
        raise FlowkitError(f"`{name}` must not be the zero vector; give a direction, e.g. (0, 0, 1)")
    return v / n if unit else v


def points(value, name: str = "points", *, dim: int = 3) -> np.ndarray:
    """A non-empty (N, dim) float array of finite numbers (a single point becomes one row)."""
    arr = np.asarray(value, dtype=np.float64) if not isinstance(value, np.ndarray) else value.astype(np.float64)
    if arr.ndim == 1 and arr.size == dim:
        arr = arr[None, :]
    if arr.ndim != 2 or arr.shape[1] != dim or arr.shape[0] == 0:
        raise FlowkitError(f"`{name}` must be a non-empty array of shape (N, {dim}); got shape {np.shape(value)}")
    if not np.all(np.isfinite(arr)):
        bad = int(np.flatnonzero(~np.all(np.isfinite(arr), axis=1))[0])
        raise FlowkitError(f"`{name}` row {bad} holds NaN or infinite coordinates ({arr[bad].tolist()})")
    return np.ascontiguousarray(arr)


def points_in_domain(flow, value, name: str = "seeds") -> np.ndarray:
    """(N, 3) finite points inside ``flow``'s domain."""
    arr = points(value, name)
    inside = flow.contains(arr)
    if not np.all(inside):
        bad = np.flatnonzero(~inside)
        raise FlowkitError(
            f"`{name}` row {bad[0]} ({arr[bad[0]].tolist()}) lies outside the domain of '{flow.name}' "
            f"({flow.domain}); {len(bad)} point(s) in all. Move them inside (r <= 1 for the unit ball)."
        )
    return arr


def parse_vector(text: str, name: str, length: int = 3) -> list[float]:
    """Parse ``"1,0,0"`` (command-line text) into ``length`` floats, naming the option on error."""
    try:
        vals = [float(v) for v in str(text).split(",")]
    except ValueError:
        raise FlowkitError(f"{name} expects {length} comma-separated numbers, e.g. 0,0,1; got {text!r}") from None
    if len(vals) != length:
        raise FlowkitError(f"{name} expects {length} comma-separated numbers; got {len(vals)} in {text!r}")
    return vals


def resolution(value, name: str = "resolution", *, minimum: int = 4, maximum: int | None = None) -> int:
    """A grid size: an integer >= ``minimum``."""
    return count(value, name, minimum=minimum, maximum=maximum, what=" (grid points per direction)")


def grid_shape(value, name: str = "resolution", *, minimum: int = 2) -> tuple[int, int]:
    """A planar grid size (N, M), from a pair of integers or command-line text ``"NxM"``."""
    if isinstance(value, str):
        parts = value.lower().split("x")
        try:
            value = tuple(int(v) for v in parts)
        except ValueError:
            raise FlowkitError(f"`{name}` expects NxM, e.g. 256x256; got {value!r}") from None
    try:
        n, m = value
    except (TypeError, ValueError):
        raise FlowkitError(f"`{name}` must be two integers (N, M), e.g. (256, 128); got {value!r}") from None
    what = " (grid points per axis)"
    n, m = count(n, name, minimum=1, what=what), count(m, name, minimum=1, what=what)
    if n < minimum or m < minimum:
        raise FlowkitError(f"`{name}` must be at least {minimum}x{minimum} grid points; got {value!r}")
    return n, m


def output_path(path, name: str = "path", formats: Iterable[str] = RESULT_FORMATS) -> Path:
    """Check a path a result will be written to, before the work starts.

    The folder must exist and be writable, and the suffix must name a format
    flowkit writes (``formats``; pass ``None`` to skip the suffix check).
    """
    if path is None or str(path) == "":
        raise FlowkitError(f"`{name}` must be a file path; got {path!r}")
    p = Path(path).expanduser()
    if formats is not None:
        formats = tuple(formats)
        if p.suffix.lower() not in formats:
            raise FlowkitError(f"`{name}` {str(p)!r} must end in one of {', '.join(formats)}; "
                               f"got suffix {p.suffix or '(none)'!r}")
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.exists():
        raise FlowkitError(f"`{name}`: folder {str(folder)!r} does not exist; create it first "
                           f"(mkdir -p {folder}) or choose another path")
    if not folder.is_dir():
        raise FlowkitError(f"`{name}`: {str(folder)!r} is not a folder")
    if not os.access(folder, os.W_OK):
        raise FlowkitError(f"`{name}`: folder {str(folder)!r} is not writable; choose another path")
    if p.is_dir():
        raise FlowkitError(f"`{name}` {str(p)!r} is a folder; give a file name")
    return p


def memory(nbytes: float, name: str, *, per_unit: float | None = None, value=None, power: int = 1) -> None:
    """Refuse an allocation of about ``nbytes`` that will not fit in available memory.

    ``per_unit`` (bytes per unit of the argument ``name``) lets the message state
    the largest value that fits; with ``power=2`` the memory grows as the square
    of the value (an N x N grid, ``per_unit`` bytes per point) and the largest N is
    stated. ``FLOWKIT_MAX_BYTES`` caps what flowkit allocates.
    """
    cap = available_memory()
    if nbytes <= cap:
        return
    fits = ""
    if per_unit:
        largest = int((cap / per_unit) ** (1.0 / power))
        fits = f"; the largest `{name}` that fits is about {largest:,}" + (" per side" if power == 2 else "")
    raise FlowkitError(f"`{name}`{'' if value is None else f' = {value!r}'} needs about {_human(nbytes)} "
                       f"of memory but {_human(cap)} is available{fits} (FLOWKIT_MAX_BYTES sets a cap)")


def available_memory() -> float:
    """Bytes flowkit may allocate: the machine's available memory, or ``FLOWKIT_MAX_BYTES`` if smaller."""
    cap = math.inf
    env = os.environ.get("FLOWKIT_MAX_BYTES")
    if env:
        try:
            cap = float(env)
        except ValueError:
            raise FlowkitError(f"FLOWKIT_MAX_BYTES must be a number of bytes; got {env!r}") from None
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    cap = min(cap, float(line.split()[1]) * 1024.0)
                    break
    except OSError:
        pass
    if not math.isfinite(cap):
        try:
            cap = float(os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_AVPHYS_PAGES"))
        except (ValueError, OSError, AttributeError):
            cap = 8e9
    return cap


def _human(n: float) -> str:
    for unit in ("B", "KiB", "MiB", "GiB", "TiB"):
        if n < 1024 or unit == "TiB":
            return f"{n:.1f} {unit}"
        n /= 1024
    return f"{n:.1f} TiB"
