"""Writhe of a 10^5-point closed curve: the numba kernel against the numpy reference, two threads against one.

1. Writhe of a (2, 3) torus knot sampled at N = 10^5 points (5 * 10^9 segment pairs)
   with :func:`flowkit.topology.writhe.writhe_sum` on one thread and on two.
2. The numpy reference (tests/naive_topology.py: the same solid-angle formula over
   all ordered pairs, vectorized per block of rows) is O(N^2): 10^10 ordered pairs
   would take hours, so it runs on a subsample of N_ref points in the same run and
   its time is scaled by (N / N_ref)^2 (both codes do the same work per pair). The
   kernel is also timed at N_ref, so the per-pair cost of both is measured directly.
3. Linking number of the knot with its core circle, N x N pairs, for scale.

Standalone: ``python benchmarks/bench_topology.py`` (``--quick``: N = 2 * 10^4).
Writes benchmarks/results/topology.json. The machine may be shared: the load
average is recorded.
"""

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
sys.path.insert(0, str(Path(__file__).parents[1] / "tests"))
from _common import save  # noqa: E402

import naive_topology as naive  # noqa: E402
from flowkit.topology.writhe import linking_sum, writhe_sum  # noqa: E402


def knot(n: int) -> np.ndarray:
    t = 2 * np.pi * np.arange(n) / n
    rho = 1 + 0.3 * np.cos(3 * t)
    return np.stack([rho * np.cos(2 * t), rho * np.sin(2 * t), 0.3 * np.sin(3 * t)], axis=1)


def naive_writhe_blocked(P: np.ndarray, block: int = 64) -> float:
    """The numpy reference over all ordered pairs, in row blocks (bounded memory)."""
    n = len(P)
    P2 = np.roll(P, -1, axis=0)
    total = 0.0
    for a in range(0, n, block):
        rows = np.arange(a, min(a + block, n))
        om = naive.solid_angle_pairs(P[rows, None, :], P2[rows, None, :], P[None, :, :], P2[None, :, :])
        d = (np.arange(n)[None, :] - rows[:, None]) % n
        total += float(np.where((d == 0) | (d == 1) | (d == n - 1), 0.0, om).sum())
    return total / (4 * math.pi)


def timed(fn):
    t0 = time.perf_counter()
    out = fn()
    return out, time.perf_counter() - t0


def main(argv=None) -> dict:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="N = 2e4 instead of 1e5")
    ap.add_argument("--ref-points", type=int, default=2000, help="points of the numpy reference run")
    ap.add_argument("--points", type=int, default=None, help="curve points (default 1e5; --quick 2e4)")
    args = ap.parse_args(argv)
    n = args.points or (20_000 if args.quick else 100_000)
    nref = args.ref_points
    writhe_sum(knot(64), 1), writhe_sum(knot(64), 2), linking_sum(knot(64), knot(64) + 5.0)  # compile
    P, R = knot(n), knot(nref)

    (wr_ref_small, _), t_numpy = timed(lambda: (naive_writhe_blocked(R), None))
    (wr_small, *_), t_kernel_small = timed(lambda: writhe_sum(R, 1))
    pairs_small = nref * (nref - 3) / 2
    (w1, *_), t1 = timed(lambda: writhe_sum(P, 1))
    (w2, *_), t2 = timed(lambda: writhe_sum(P, 2))
    pairs = n * (n - 3) / 2
    t_numpy_scaled = t_numpy * (n / nref) ** 2
    core = np.stack([np.cos(2 * np.pi * np.arange(n) / n), np.sin(2 * np.pi * np.arange(n) / n), np.zeros(n)], 1)
    (lk, *_), t_lk = timed(lambda: linking_sum(P, core, 2))
    out = {
        "points": n, "ref_points": nref,
        "writhe": w1, "writhe_two_threads": w2, "same_on_both": w1 == w2,
        "kernel_matches_numpy_at_ref_points": abs(wr_small - wr_ref_small),
        "seconds_one_thread": t1, "seconds_two_threads": t2, "thread_speedup": t1 / t2,
        "ns_per_pair_one_thread": t1 / pairs * 1e9, "ns_per_pair_two_threads": t2 / pairs * 1e9,
        "numpy_seconds_at_ref_points": t_numpy, "kernel_seconds_at_ref_points": t_kernel_small,
        "numpy_ns_per_ordered_pair": t_numpy / (nref * nref) * 1e9,
        "numpy_seconds_scaled_to_points": t_numpy_scaled,
        "speedup_vs_numpy_one_thread": t_numpy_scaled / t1, "speedup_vs_numpy_two_threads": t_numpy_scaled / t2,
        "linking_with_core": lk, "linking_seconds_two_threads": t_lk,
        "note": "numpy reference measured at ref_points and scaled by (points/ref_points)^2 (O(N^2) work)",
        "per_pair_ratio_at_ref_points": (t_numpy / (nref * nref)) / (t_kernel_small / pairs_small),
    }
    for k, v in out.items():
        print(f"{k:40s} {v}")
    save("topology", out)
    return out


if __name__ == "__main__":
    main()
