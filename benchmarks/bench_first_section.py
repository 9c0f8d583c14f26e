"""Seconds to a first section: a new user formula, and a cold lab start, each in a fresh process.

Standalone: ``python benchmarks/bench_first_section.py`` (or ``bash run.sh bench first``).
Writes ``benchmarks/results/bench_first_section.json``. Every figure is measured in a new
Python process with its own ``FLOWKIT_CACHE_DIR`` (wall and CPU time: the machine may be
shared; the load average is recorded).

1. *Empty cache*: the first section of a new formula (stf's polynomial with a fresh
   coefficient, written as strings for ``custom_flow``) when nothing is compiled yet; with
   the generic kernels (flowkit/kernels/generic.py) this compiles them once for every flow.
2. *New formula*: the same with another coefficient in the same cache (flowkit's generic
   kernels cached, the formula's own kernels not): what a user meets for every new formula.
3. *Old way*: the same with ``FLOWKIT_GENERIC_KERNELS=0`` (the formula's own kernels compiled
   first), with numba's compile events: which kernels compile on the first call and how long
   each takes (inclusive of the functions it calls).
4. *Cold lab start*: a fresh process building the section explorer (stf, 10 orbits x 1,000
   crossings) to its first full section drawn, with the generic kernels cached.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))
from _common import save  # noqa: E402

FIRST = """
import json, sys, time
t0 = time.perf_counter(); c0 = time.process_time()
from numba.core import event
import flowkit
from flowkit.sections import Plane, poincare_section
t1 = time.perf_counter()
a = sys.argv[1]
f = flowkit.custom_flow([a + "*z - 8*x*y", "11*x**2 + 3*y**2 + z**2 - 3", "-" + a + "*x + 2*y*z"], domain="ball")
t2 = time.perf_counter()
with event.install_recorder("numba:compile") as rec:
    s = poincare_section(f, [[0.1, 0.0, 0.3]], Plane((0, 1, 0), 0.0, "+"), crossings=1000)
t3 = time.perf_counter()
starts, spans = {}, []
for ts, e in rec.buffer:
    key = (e.data["dispatcher"].py_func.__name__, str(e.data.get("args")))
    if e.is_start:
        starts[key] = ts
    elif key in starts:
        spans.append((ts - starts[key], key[0]))
spans.sort(reverse=True)
print(json.dumps({"import": t1 - t0, "build_flow": t2 - t1, "first_section": t3 - t2, "total": t3 - t0,
                  "cpu": time.process_time() - c0, "kernel": s.provenance["kernel"],
                  "compile_or_load": s.provenance["compile_seconds"], "crossings": int(s.counts.sum()),
                  "compiled": [[round(d, 3), n] for d, n in spans[:12]], "functions_compiled": len(spans)}))
"""

LAB = """
import json, time
t0 = time.perf_counter(); c0 = time.process_time()
import matplotlib
matplotlib.use("Agg")
from flowkit.lab import SectionExplorer
ex = SectionExplorer("stf", params={"rotation": 0.1}, n_seeds=10, crossings=1000)
ex.update()
ex.fig.canvas.draw()
print(json.dumps({"wall": time.perf_counter() - t0, "cpu": time.process_time() - c0,
                  "compile_or_load": ex.timings["compile"], "kernel": ex.result.provenance.get("kernel"),
                  "crossings": int(ex.result.crossings_total)}))
"""


def fresh(script: str, cache: str, *args: str, **env) -> dict:
    """Run ``script`` in a new process with FLOWKIT_CACHE_DIR=cache; its last line of JSON."""
    full = dict(os.environ, FLOWKIT_CACHE_DIR=cache, MPLBACKEND="Agg", **env)
    out = subprocess.run([sys.executable, "-c", script, *args], env=full, capture_output=True, text=True,
                         timeout=1800)
    if out.returncode != 0:
        raise RuntimeError(out.stderr[-3000:])
    data = json.loads(out.stdout.strip().splitlines()[-1])
    data["load_average"] = os.getloadavg()
    return data


def main() -> int:
    out: dict = {"load_average_before": os.getloadavg()}
    with tempfile.TemporaryDirectory(prefix="flowkit-bench-first-") as cache:
        out["empty_cache"] = fresh(FIRST, cache, "0.101")
        out["new_formula"] = fresh(FIRST, cache, "0.102")
        out["new_formula_again"] = fresh(FIRST, cache, "0.103")
        out["lab_cold_start"] = fresh(LAB, cache)
    with tempfile.TemporaryDirectory(prefix="flowkit-bench-first-old-") as cache:
        out["old_way_own_kernels_first"] = fresh(FIRST, cache, "0.104", FLOWKIT_GENERIC_KERNELS="0")
    out["load_average_after"] = os.getloadavg()
    for key in ("empty_cache", "new_formula", "new_formula_again", "old_way_own_kernels_first"):
        d = out[key]
        print(f"{key.replace('_', ' '):28s}: first section {d['first_section']:5.2f} s ({d['kernel']} kernel; "
              f"compile/load {d['compile_or_load']:.2f} s), flow built in {d['build_flow']:.2f} s, import "
              f"{d['import']:.2f} s, total {d['total']:.2f} s wall / {d['cpu']:.2f} s CPU; load {d['load_average'][0]:.1f}")
    d = out["lab_cold_start"]
    print(f"{'lab cold start':28s}: first full section drawn after {d['wall']:.2f} s wall ({d['cpu']:.2f} s CPU; "
          f"{d['kernel']} kernel, kernels {d['compile_or_load']:.2f} s); load {d['load_average'][0]:.1f}")
    print("old way, slowest compiles (inclusive of callees):")
    for secs, name in out["old_way_own_kernels_first"]["compiled"][:8]:
        print(f"  {secs:6.2f} s  {name}")
    print(f"load average before {out['load_average_before']}, after {out['load_average_after']} (2 cores, shared)")
    save("bench_first_section", out)
    return 0


if __name__ == "__main__":
    sys.exit(main())
