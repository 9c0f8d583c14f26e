"""Small helpers shared by the benchmark scripts."""

import json
import os
import platform
import time
from pathlib import Path

RESULTS = Path(__file__).parent / "results"


def machine() -> dict:
    """What the numbers were measured on (load average included: the machine may be shared)."""
    load = os.getloadavg() if hasattr(os, "getloadavg") else None
    return {"cpus": os.cpu_count(), "python": platform.python_version(), "load_average": load,
            "when": time.strftime("%Y-%m-%d %H:%M:%S"), "vector_math": vector_math()}


def vector_math() -> dict:
    """Can numba vectorize sin/cos here? It needs an llvmlite built with Intel's short-vector
    math library (SVML) *and* that library's runtime installed; either alone changes nothing."""
    import importlib.metadata as md

    import llvmlite.binding as ll
    import numba

    try:
        runtime = md.version("intel-cmplr-lib-rt")
    except md.PackageNotFoundError:
        runtime = None
    return {"llvmlite_has_svml": bool(ll.targets.has_svml()), "numba_using_svml": bool(numba.config.USING_SVML),
            "intel_runtime": runtime}


def save(name: str, data: dict) -> Path:
    RESULTS.mkdir(exist_ok=True)
    path = RESULTS / f"{name}.json"
    path.write_text(json.dumps({"machine": machine(), **data}, indent=1))
    print(f"wrote {path}")
    return path


def best_of(fn, repeat: int = 3) -> float:
    """Smallest wall time of ``repeat`` calls (seconds)."""
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)
