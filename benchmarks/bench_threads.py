"""Two threads against one on the three batch jobs: sections, FTLE grids, field vectors.

Each job runs with ``threads=1`` and ``threads=2``, interleaved, seven times; the
figure is the ratio of the best times, with the median of the seven paired ratios
beside it. The results must be bitwise the same on both counts (the batch splits
seeds, never one orbit). The load average before and after is recorded, and a
control loop, timed in the same rounds as each job, measures what the machine gives
in those minutes: compute only (no memory traffic, equal work per item), split over
the same two threads. On this VM the DOP853 kernels slow down by up to half for
seconds at a time, on one thread as well (the same call on the same data: 118-165 ms
for field vectors, 48-70 ms for a section, in 25 alternating rounds), while a loop that
lives in registers varies by 8 %: the host's other tenants share caches and cores. The
control catches the worst of it only; best-of-seven cannot filter phases that last
seconds, so the spread between runs is part of the figure.

0. The control: 2,000 items of eight independent multiply-add chains, 60,000 steps each.

1. A Poincaré section of 16 seeds of ``stf`` (rotation 0.1), 6,000 crossings each.
2. The FTLE field of ``stf`` on a 96 x 96 grid of the plane y = 0, T = 10.
3. Field vectors of 2,000 particles of ``stf`` (rotation 0.3) to t = 20, and the same to
   t = 80: the short run spends about 17 ms of its 0.25 s (two threads) in the serial
   statistics between its eight chunks, a fixed cost the longer run spreads thinner.

Standalone: ``python benchmarks/bench_threads.py``; writes benchmarks/results/threads.json.
"""

import os
import sys
import time
from pathlib import Path

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


def scaling(run, same, control: bool = True) -> dict:
    """Best-of-seven wall time of ``run(threads)`` for 1 and 2 threads, interleaved.

    With ``control``, each of the seven rounds also times the control loop on 1 and 2
    threads, so the job's figure sits beside what the machine gave in the same minutes.
    """
    run(1)  # compile and warm
    times = {1: [], 2: []}
    ctrl = {1: [], 2: []}
    out = {}
    for _ in range(7):
        for th in (1, 2):
            t0 = time.perf_counter()
            out[th] = run(th)
            times[th].append(time.perf_counter() - t0)
            if control:
                t0 = time.perf_counter()
                _control(th)
                ctrl[th].append(time.perf_counter() - t0)
    best = {th: min(v) for th, v in times.items()}
    paired = float(np.median(np.array(times[1]) / np.array(times[2])))
    rec = {"seconds_1_thread": best[1], "seconds_2_threads": best[2], "speedup": best[1] / best[2],
           "median_paired_speedup": paired, "identical": bool(same(out[1], out[2]))}
    if control:
        rec["control_speedup"] = min(ctrl[1]) / min(ctrl[2])
    return rec


@numba.njit(parallel=True)
def _control_loop(n, m):
    # eight independent multiply-add chains: bound by the core's arithmetic throughput, as
    # the DOP853 kernels are (a single dependent chain is bound by latency and did not see
    # the slow phases of a core whose host sibling is busy)
    out = np.zeros(n)
    for k in numba.prange(n):
        a = np.empty(8)
        for j in range(8):
            a[j] = k * 1e-3 + 0.1 * j
        a0, a1, a2, a3, a4, a5, a6, a7 = a[0], a[1], a[2], a[3], a[4], a[5], a[6], a[7]
        for _ in range(m):
            a0 = a0 * 0.9999 + 1e-4
            a1 = a1 * 0.9999 + 1e-4
            a2 = a2 * 0.9999 + 1e-4
            a3 = a3 * 0.9999 + 1e-4
            a4 = a4 * 0.9999 + 1e-4
            a5 = a5 * 0.9999 + 1e-4
            a6 = a6 * 0.9999 + 1e-4
            a7 = a7 * 0.9999 + 1e-4
        out[k] = a0 + a1 + a2 + a3 + a4 + a5 + a6 + a7
    return out


def _control(threads: int) -> np.ndarray:
    numba.set_num_threads(threads)
    try:
        return _control_loop(2_000, 60_000)
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
    _control(1)  # compile
    jobs = {"control_compute_loop": scaling(_control, np.array_equal, control=False)}
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
    for name, T in (("field_vectors_2000", 20.0), ("field_vectors_2000_t80", 80.0)):
        jobs[name] = scaling(
            lambda th, T=T: stretch(stf3, seeds=pts, time=T, samples=20,
                                    settings=IntegratorSettings(rtol=1e-9, atol=1e-12), threads=th,
                                    progress=False),
            lambda a, b: np.array_equal(a.final_log_field, b.final_log_field, equal_nan=True))
    load_after = os.getloadavg()
    for name, r in jobs.items():
        print(f"{name}: {r['seconds_1_thread']:.3f} s (1 thread) / {r['seconds_2_threads']:.3f} s (2 threads) "
              f"-> {r['speedup']:.2f}x (median of pairs {r['median_paired_speedup']:.2f}x; control in the same rounds "
              f"{r.get('control_speedup', r['speedup']):.2f}x), identical {r['identical']}")
    print(f"load average before {load_before[0]:.2f}, after {load_after[0]:.2f}")
    save("threads", {"jobs": jobs, "load_before": load_before, "load_after": load_after})
    return 0


if __name__ == "__main__":
    sys.exit(main())
