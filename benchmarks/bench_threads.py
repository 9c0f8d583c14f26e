"""Two threads against one on the three batch jobs: sections, FTLE grids, field vectors.

Each job runs with ``threads=1`` and ``threads=2``, interleaved, seven times; the
figure is the ratio of the best times, with the median of the seven paired ratios
beside it. The results must be bitwise the same on both counts (the batch splits
seeds, never one orbit). The load average before and after is recorded, and a
control job measures what the machine gives at that moment: a compute-only loop
(no memory traffic, equal work per item) split over the same two threads. On a
quiet two-core machine the control reaches 1.9-2.0x; when a neighbour on the host
takes a core, the control drops too and the figures below it mean little.

0. The control: 2,000 items of 15,000 dependent multiply-add and sine steps each.

1. A Poincaré section of 16 seeds of ``stf`` (rotation 0.1), 6,000 crossings each.
2. The FTLE field of ``stf`` on a 96 x 96 grid of the plane y = 0, T = 10.
3. Field vectors of 2,000 particles of ``stf`` (rotation 0.3) to t = 20.

Standalone: ``python benchmarks/bench_threads.py``; writes benchmarks/results/threads.json.
"""

import os
import sys
import time
from pathlib import Path

import math

import numba
import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import save  # noqa: E402

import flowkit  # noqa: E402
from flowkit.chaos import GridPlane, ftle_field  # noqa: E402
from flowkit.fields import stretch  # noqa: E402
from flowkit.fields.particles import default_seeds  # noqa: E402
from flowkit.integrate.batch import IntegratorSettings  # noqa: E402
from flowkit.sections import Plane, poincare_section, warm_sections  # noqa: E402


def scaling(run, same) -> dict:
    """Best-of-seven wall time of ``run(threads)`` for 1 and 2 threads, interleaved."""
    run(1)  # compile and warm
    times = {1: [], 2: []}
    out = {}
    for _ in range(7):
        for th in (1, 2):
            t0 = time.perf_counter()
            out[th] = run(th)
            times[th].append(time.perf_counter() - t0)
    best = {th: min(v) for th, v in times.items()}
    paired = float(np.median(np.array(times[1]) / np.array(times[2])))
    return {"seconds_1_thread": best[1], "seconds_2_threads": best[2], "speedup": best[1] / best[2],
            "median_paired_speedup": paired, "identical": bool(same(out[1], out[2]))}


@numba.njit(parallel=True)
def _control_loop(n, m):
    out = np.zeros(n)
    for k in numba.prange(n):
        s, x = 0.0, k * 1e-3
        for _ in range(m):
            x = x * 0.999 + math.sin(x) * 1e-3
            s += x
        out[k] = s
    return out


def _control(threads: int) -> np.ndarray:
    numba.set_num_threads(threads)
    try:
        return _control_loop(2_000, 15_000)
    finally:
        numba.set_num_threads(numba.config.NUMBA_NUM_THREADS)


def main() -> int:
    load_before = os.getloadavg()
    stf = flowkit.flow("stf", rotation=0.1)
    plane = Plane((0, 1, 0), 0.0, "+")
    rng = np.random.default_rng(0)
    seeds = rng.uniform(-0.6, 0.6, size=(16, 3))
    seeds[:, 1] = 0.0
    warm_sections(stf, wait=True)  # the flow's own kernel, not the generic one compiling it in the background
    jobs = {"control_compute_loop": scaling(_control, np.array_equal)}
    jobs["section_16_seeds"] = scaling(
        lambda th: poincare_section(stf, seeds, plane, crossings=6_000, threads=th),
        lambda a, b: np.array_equal(a.points, b.points))
    grid = GridPlane.coordinate("y", 0.0, (-0.95, 0.95, -0.95, 0.95))
    jobs["ftle_96x96"] = scaling(
        lambda th: ftle_field(stf, grid, (96, 96), 10.0, settings=IntegratorSettings(rtol=1e-8, atol=1e-10),
                              threads=th, progress=False),
        lambda a, b: np.array_equal(a.values, b.values, equal_nan=True))
    stf3 = flowkit.flow("stf", rotation=0.3)
    pts = default_seeds(stf3, 2_000, np.random.default_rng(1))
    jobs["field_vectors_2000"] = scaling(
        lambda th: stretch(stf3, seeds=pts, time=20.0, samples=20, settings=IntegratorSettings(rtol=1e-9, atol=1e-12),
                           threads=th),
        lambda a, b: np.array_equal(a.final_log_field, b.final_log_field, equal_nan=True))
    load_after = os.getloadavg()
    for name, r in jobs.items():
        print(f"{name}: {r['seconds_1_thread']:.3f} s (1 thread) / {r['seconds_2_threads']:.3f} s (2 threads) "
              f"-> {r['speedup']:.2f}x (median of pairs {r['median_paired_speedup']:.2f}x), identical {r['identical']}")
    print(f"load average before {load_before[0]:.2f}, after {load_after[0]:.2f}")
    save("threads", {"jobs": jobs, "load_before": load_before, "load_after": load_after})
    return 0


if __name__ == "__main__":
    sys.exit(main())
