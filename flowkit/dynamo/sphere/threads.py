"""BLAS threads during the ball solver's eigen work (LU factorisations, ARPACK, dense ``eig``).

On a shared 2-core machine OpenBLAS's second thread spins while it waits for work, so
the eigen solves run faster on one thread (benchmarks/bench_dynamo_sphere.py measures
both in the same run). :func:`eigen_threads` limits the BLAS libraries that numpy and
scipy loaded (through ``threadpoolctl``) while the block is running and restores the
previous count when the outermost block leaves. OpenBLAS ignores a thread count set from
any thread but the main one (measured: a worker's set, and so its restore, has no effect),
so only blocks on the main thread limit; a block on a worker thread (the lab's explorers
solve in threads) runs with whatever count is in force and changes nothing. Nothing is
changed outside these blocks.
"""

from __future__ import annotations

import os
import threading
from contextlib import contextmanager

#: BLAS threads inside the eigen work (``None``: leave BLAS alone). Chosen by the measured figure
#: (benchmarks/bench_dynamo_sphere.py); ``FLOWKIT_EIGEN_BLAS_THREADS`` overrides it (0: leave alone).
BLAS_THREADS: int | None = 1

_LOCK = threading.Lock()
_STATE = {"depth": 0, "limiter": None, "controller": None}


def _threads() -> int | None:
    text = os.environ.get("FLOWKIT_EIGEN_BLAS_THREADS", "").strip()
    if text:
        try:
            value = int(text)
        except ValueError:
            return BLAS_THREADS  # a malformed override is ignored, not fatal inside a solve
        return value if value > 0 else None
    return BLAS_THREADS


@contextmanager
def eigen_threads():
    """Run the block with BLAS limited to :data:`BLAS_THREADS` threads (module docstring)."""
    limit = _threads()
    entered = False
    if limit is not None and threading.current_thread() is threading.main_thread():
        with _LOCK:
            if _STATE["depth"] == 0:
                try:
                    from threadpoolctl import ThreadpoolController
                except ImportError:  # an older environment without it: run unlimited
                    ThreadpoolController = None
                if ThreadpoolController is not None:
                    if _STATE["controller"] is None:
                        _STATE["controller"] = ThreadpoolController()
                    _STATE["limiter"] = _STATE["controller"].limit(limits=limit, user_api="blas")
            _STATE["depth"] += 1
            entered = True
    try:
        yield
    finally:
        if entered:
            with _LOCK:
                _STATE["depth"] -= 1
                if _STATE["depth"] == 0 and _STATE["limiter"] is not None:
                    _STATE["limiter"].restore_original_limits()
                    _STATE["limiter"] = None
