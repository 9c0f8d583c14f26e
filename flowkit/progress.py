"""Progress bars, wall-clock budgets and Ctrl-C for analyses that run in chunks.

Every long analysis in flowkit works in chunks (a block of averaging intervals,
a chunk of particles or grid points, a pass of a material line, a dynamo time
slice) and calls the compiled kernels once per chunk. :class:`Budget` does the
bookkeeping between chunks, in one place:

* a ``tqdm.auto`` bar (terminal: on stderr; notebook: a widget) that appears only
  once the run has lasted ``delay`` seconds (2 s), so short calls stay silent;
  it is updated between chunks, never from inside a kernel;
* a wall-clock budget ``max_seconds``: the clock is read between chunks, so the
  run stops after the first chunk that ends past the budget (one chunk is
  always done, and a chunk is never cut short);
* Ctrl-C (KeyboardInterrupt) during a chunk ends the run keeping every chunk
  finished before it, once at least one chunk is finished (otherwise the
  interrupt propagates as usual).

After the ``with`` block, :attr:`Budget.partial` says whether the run stopped
early and :attr:`Budget.reason` says why, in words for the result's notes.

Example
-------
>>> from flowkit.progress import Budget
>>> done = []
>>> with Budget(total=4, desc="demo", unit="chunk", max_seconds=None) as run:
...     for piece in run.iterate(range(4)):
...         done.append(piece)          # one kernel call per chunk
>>> done, run.partial
([0, 1, 2, 3], False)

Chunks of unequal size: loop yourself, ask :meth:`Budget.expired` before each
chunk after the first, and call :meth:`Budget.advance` with the work finished::

    with Budget(total=n_points, desc="FTLE", unit="pt", progress=progress,
                max_seconds=max_seconds) as run:
        for start in range(0, n_points, chunk):
            if run.expired():
                break
            ...                             # compute the chunk
            run.advance(min(chunk, n_points - start))
    if run.partial:
        notes.append(run.reason)
"""

from __future__ import annotations

import math
import os
import sys
import time
from collections.abc import Iterable, Iterator
from typing import TypeVar

from flowkit.errors import FlowkitError

T = TypeVar("T")

#: seconds a run lasts before its progress bar appears (environment: FLOWKIT_PROGRESS_DELAY)
DEFAULT_DELAY = 2.0


def _delay() -> float:
    try:
        return float(os.environ.get("FLOWKIT_PROGRESS_DELAY", DEFAULT_DELAY))
    except ValueError:
        return DEFAULT_DELAY


def check_max_seconds(value, name: str = "max_seconds") -> float | None:
    """``None`` (no budget) or a positive, finite number of seconds."""
    if value is None:
        return None
    try:
        val = float(value)
    except (TypeError, ValueError):
        raise FlowkitError(f"`{name}` must be a positive number of seconds or None; got {value!r}") from None
    if not (math.isfinite(val) and val > 0):
        raise FlowkitError(f"`{name}` must be a positive number of seconds or None (no limit); got {value!r}")
    return val


class Budget:
    """Progress bar, wall-clock budget and interrupt handling for one chunked run.

    Parameters
    ----------
    total : int or None
        Units of work in the whole run (chunks, points, particles, ...), for the bar.
    desc : str
        Label of the bar.
    unit : str
        Name of one unit of work.
    progress : bool or None
        ``None`` (default) or ``True``: show a bar once the run has lasted
        ``delay`` seconds; ``False``: never.
    max_seconds : float or None
        Wall-clock budget; checked between chunks (:meth:`expired`).
    delay : float, optional
        Seconds before the bar appears (default :data:`DEFAULT_DELAY`, 2 s, or the
        environment variable ``FLOWKIT_PROGRESS_DELAY``).
    keep_empty : bool
        Also end quietly on Ctrl-C before the first chunk finished (for runs
        whose initial state is already a result, e.g. a material line at t0).

    Attributes
    ----------
    done : int
        Units finished so far.
    interrupted, timed_out : bool
        Why the run stopped early (at most one is true).
    seconds : float
        Wall-clock time of the run (set on leaving the ``with`` block).
    """

    def __init__(self, total: int | None = None, desc: str = "", unit: str = "chunk", *,
                 progress: bool | None = None, max_seconds: float | None = None,
                 delay: float | None = None, keep_empty: bool = False):
        self.total = total
        self.desc = desc
        self.unit = unit
        self.show = progress is None or bool(progress)
        self.max_seconds = check_max_seconds(max_seconds)
        self.delay = _delay() if delay is None else float(delay)
        self.keep_empty = bool(keep_empty)
        self.done = 0
        self.interrupted = False
        self.timed_out = False
        self.seconds = 0.0
        self._bar = None
        self._start = time.perf_counter()

    # -- context manager -------------------------------------------------------------------
    def __enter__(self) -> Budget:
        self._start = time.perf_counter()
        if self.show:
            from tqdm.auto import tqdm

            # stderr keeps stdout clean for `--json`; leave=False: the bar goes when the run ends
            self._bar = tqdm(total=self.total, desc=self.desc, unit=self.unit, delay=self.delay,
                             file=sys.stderr, leave=False, dynamic_ncols=True)
        return self

    def __exit__(self, exc_type, exc, tb) -> bool:
        self.seconds = time.perf_counter() - self._start
        if self._bar is not None:
            self._bar.close()
        if exc_type is KeyboardInterrupt and (self.done > 0 or self.keep_empty):
            self.interrupted = True
            return True  # keep the finished chunks: the caller assembles a partial result
        return False

    # -- between chunks --------------------------------------------------------------------
    def elapsed(self) -> float:
        """Seconds since the run started."""
        return time.perf_counter() - self._start

    def expired(self) -> bool:
        """True once ``max_seconds`` has passed and at least one unit is done (then stop).

        (With ``keep_empty`` the budget applies from the start.)
        """
        if self.max_seconds is None or (self.done == 0 and not self.keep_empty):
            return False
        if self.elapsed() >= self.max_seconds:
            self.timed_out = True
        return self.timed_out

    def advance(self, n: int = 1) -> None:
        """Record ``n`` finished units of work and update the bar."""
        self.done += int(n)
        if self._bar is not None:
            self._bar.update(int(n))

    def iterate(self, items: Iterable[T]) -> Iterator[T]:
        """Yield ``items`` one chunk at a time, each counted as finished when the next is asked for.

        Stops early (without error) once :meth:`expired`; a KeyboardInterrupt
        inside the loop body leaves :attr:`done` at the chunks that finished.
        """
        for item in items:
            if self.expired():
                return
            yield item
            self.advance(1)

    # -- outcome ---------------------------------------------------------------------------
    @property
    def partial(self) -> bool:
        """Did the run stop before all its work (interrupt or time budget)?"""
        return self.interrupted or self.timed_out

    @property
    def reason(self) -> str:
        """Why the run is partial, in words ('' when it is not)."""
        of = f" of {self.total}" if self.total is not None else ""
        if self.interrupted:
            return f"interrupted after {self.elapsed():.1f} s; {self.done}{of} {self.unit}s finished and kept"
        if self.timed_out:
            return (f"stopped at the time budget max_seconds = {self.max_seconds:g} "
                    f"({self.elapsed():.1f} s); {self.done}{of} {self.unit}s finished and kept")
        return ""


def progress_bar(iterable, enabled: bool, unit: str, desc: str | None = None):
    """``iterable`` wrapped in a tqdm bar (notebooks and terminals) when ``enabled``.

    The simple form for a loop that needs no time budget or interrupt handling
    (:class:`Budget` does both). The bar goes to stderr and appears only after
    the delay of :class:`Budget`.
    """
    if not enabled:
        return iterable
    from tqdm.auto import tqdm

    return tqdm(iterable, unit=unit, desc=desc, delay=_delay(), file=sys.stderr)
