"""Interactive budget of the section explorer: redraw after a parameter change, cold and cached first use.

Standalone: ``python benchmarks/bench_lab.py`` (or ``bash run.sh bench lab``);
``--skip-cold`` leaves out the cold first use (it compiles every section kernel
from scratch, a minute or more on a busy machine). Prints a summary and writes
``benchmarks/results/lab.json``. Wall and CPU times are both reported because
the cores may be shared (the load average is recorded).

1. Redraw after warm-up: the explorer (stf, 10 orbits x 1,000 crossings, rtol
   1e-10) gets a new ``rotation`` from its slider; we time the quick preview and
   the full section *including the redraw* (artists updated, the canvas drawn by
   Agg: a full render, as ipympl does when the browser asks for the new image). Budget:
   full redraw under 0.3 s. Baseline measured in the same run: what a notebook
   without the explorer does per slider move, i.e. the same section computed and
   a new figure built and drawn each time.
2. First use in a fresh process: *cold* (empty kernel cache: includes
   compilation) and *cached* (a second process with the disk cache warm), from
   the explorer's construction to its first full section on screen.
"""

from __future__ import annotations

import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

sys.path.insert(0, str(Path(__file__).parent))
from _common import save  # noqa: E402

ORBITS, CROSSINGS = 10, 1000
VALUES = [0.10, 0.13, 0.17, 0.22, 0.28, 0.35, 0.43, 0.52]

FIRST_USE = f"""
import json, time
t0 = time.perf_counter(); c0 = time.process_time()
import matplotlib
matplotlib.use("Agg")
from flowkit.lab import SectionExplorer
ex = SectionExplorer("stf", params={{"rotation": 0.1}}, n_seeds={ORBITS}, crossings={CROSSINGS})
ex.update()
ex.fig.canvas.draw()
print(json.dumps({{"wall": time.perf_counter() - t0, "cpu": time.process_time() - c0,
                  "compile_or_load": ex.timings["compile"], "crossings": ex.result.crossings_total}}))
"""


def first_use(cache: str) -> dict:
    """Construction to first full section in a fresh process with ``FLOWKIT_CACHE_DIR=cache``."""
    env = dict(os.environ, FLOWKIT_CACHE_DIR=cache, MPLBACKEND="Agg")
    out = subprocess.run([sys.executable, "-c", FIRST_USE], env=env, capture_output=True, text=True, timeout=1800)
    if out.returncode != 0:
        raise RuntimeError(out.stderr[-3000:])
    return json.loads(out.stdout.strip().splitlines()[-1])


def timed(fn) -> tuple[float, float]:
    w, c = time.perf_counter(), time.process_time()
    fn()
    return time.perf_counter() - w, time.process_time() - c


def redraws() -> dict:
    """Preview and full redraw of the explorer after warm-up, and the rebuild-the-figure baseline."""
    import matplotlib.pyplot as plt

    from flowkit.lab import SectionExplorer
    from flowkit.plot import plot_section
    from flowkit.sections import poincare_section

    ex = SectionExplorer("stf", params={"rotation": VALUES[0]}, n_seeds=ORBITS, crossings=CROSSINGS)
    ex.update()  # warm-up: kernels compiled or loaded
    ex.fig.canvas.draw()
    slider = ex.sliders["rotation"]
    preview, full, full_cpu, baseline, baseline_cpu, parts = [], [], [], [], [], []
    for value in VALUES[1:]:
        w, _ = timed(lambda: setattr(slider, "value", value))  # preview path (no event loop: runs at once)
        preview.append(w)
        w, c = timed(ex.flush)  # the slider rests: full section, artists updated, canvas drawn (Agg draws at once)
        full.append(w)
        full_cpu.append(c)
        parts.append((ex.timings["full"], ex.timings["draw"]))
        assert ex.result.crossings_total == ORBITS * CROSSINGS

        def rebuild(value=value):
            sec = poincare_section(ex.flow.with_params(rotation=value), ex.seeds, ex.geometry, crossings=CROSSINGS)
            fig, ax = plt.subplots(figsize=(5.5, 5.0), layout="constrained")
            plot_section(ax, sec, size=4.0)
            fig.canvas.draw()
            plt.close(fig)

        w, c = timed(rebuild)
        baseline.append(w)
        baseline_cpu.append(c)
    ex.close()
    med = statistics.median
    return {
        "preview_wall_median": med(preview), "full_redraw_wall_median": med(full),
        "full_redraw_wall_max": max(full), "full_redraw_cpu_median": med(full_cpu),
        "compute_wall_median": med(p[0] for p in parts), "draw_wall_median": med(p[1] for p in parts),
        "baseline_rebuild_wall_median": med(baseline), "baseline_rebuild_cpu_median": med(baseline_cpu),
        "speedup_vs_rebuild_wall": med(baseline) / med(full),
        "budget_s": 0.3, "within_budget": med(full) < 0.3,
        "values": VALUES, "orbits": ORBITS, "crossings_per_orbit": CROSSINGS, "preview_crossings": CROSSINGS // 10,
    }


def main(argv: list[str]) -> int:
    out: dict = {}
    with tempfile.TemporaryDirectory(prefix="flowkit-bench-lab-") as cache:
        if "--skip-cold" not in argv:
            out["cold_first_use"] = first_use(cache)
            out["cached_first_use"] = first_use(cache)
        os.environ["FLOWKIT_CACHE_DIR"] = cache  # warm from the runs above (or compile now)
        out["redraw"] = redraws()
    r = out["redraw"]
    print(f"full redraw after a parameter change ({ORBITS} orbits x {CROSSINGS} crossings): median "
          f"{r['full_redraw_wall_median']:.3f} s wall ({r['full_redraw_cpu_median']:.3f} s CPU), max "
          f"{r['full_redraw_wall_max']:.3f} s; budget 0.3 s: {'met' if r['within_budget'] else 'MISSED'}")
    print(f"  of which section {r['compute_wall_median']:.3f} s, artists + draw {r['draw_wall_median']:.3f} s")
    print(f"preview while dragging ({CROSSINGS // 10} crossings per orbit): median {r['preview_wall_median']:.3f} s")
    print(f"baseline, figure rebuilt per move: median {r['baseline_rebuild_wall_median']:.3f} s wall "
          f"-> explorer {r['speedup_vs_rebuild_wall']:.2f}x faster")
    for key in ("cold_first_use", "cached_first_use"):
        if key in out:
            d = out[key]
            print(f"{key.replace('_', ' ')}: {d['wall']:.1f} s wall ({d['cpu']:.1f} s CPU), of which kernels "
                  f"{d['compile_or_load']:.1f} s")
    save("lab", out)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
