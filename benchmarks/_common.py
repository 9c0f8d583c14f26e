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
            "when": time.strftime("%Y-%m-%d %H:%M:%S")}


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
