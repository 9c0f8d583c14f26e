"""Writhe of a 10^5-point closed curve: fast path, exact kernel and numpy reference, two threads against one.

1. Writhe of a (2, 3) torus knot sampled at N = 10^5 points (5 * 10^9 segment pairs)
   with the fast path (:func:`flowkit.topology.writhe.fast_writhe_sum`: corrected
   midpoint rule over all pairs, exact solid angles within 8 segments) on one
   thread and on two, with its bound on |fast - exact polygon sum|.
2. The exact solid-angle kernel (:func:`~flowkit.topology.writhe.writhe_sum`) is
   O(N^2) at ~100x the cost per pair, so it runs at N_exact points in the same run;
   its time is scaled by (N / N_exact)^2, and the fast path is compared with it there
   (difference against the stated bound).
3. The numpy reference (tests/naive_topology.py: the same solid-angle formula over all
   ordered pairs, vectorized per block of rows) runs at N_ref points, scaled likewise.
4. Linking number of the knot with its core circle: exact kernel at N_exact x N_exact, and
   the fast sum there (difference against its bound) and at N x N on two threads.

Standalone: ``python benchmarks/bench_topology.py`` (``--quick``: N = 2 * 10^4).
Writes benchmarks/results/topology.json. The machine may be shared: the load
average is recorded before and after.
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
from flowkit.topology.writhe import fast_linking_sum, fast_writhe_sum, linking_sum, writhe_sum  # noqa: E402


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
    import os

    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="N = 2e4 instead of 1e5")
    ap.add_argument("--ref-points", type=int, default=2000, help="points of the numpy reference run")
    ap.add_argument("--exact-points", type=int, default=10000, help="points of the exact-kernel run")
    ap.add_argument("--points", type=int, default=None, help="curve points (default 1e5; --quick 2e4)")
    args = ap.parse_args(argv)
    n = args.points or (20_000 if args.quick else 100_000)
    nref, nex = args.ref_points, args.exact_points
    load_before = os.getloadavg()
    for th in (1, 2):  # compile
        writhe_sum(knot(64), th), fast_writhe_sum(knot(64), th)
    linking_sum(knot(64), knot(64) + 5.0), fast_linking_sum(knot(64), knot(64) + 5.0)
    P, R, E = knot(n), knot(nref), knot(nex)
    pairs = n * (n - 3) / 2

    (wr_numpy, _), t_numpy = timed(lambda: (naive_writhe_blocked(R), None))
    (wr_kernel_ref, *_), t_kernel_ref = timed(lambda: writhe_sum(R, 1))
    (wr_exact, *_), t_exact = timed(lambda: writhe_sum(E, 2))
    (wr_fast_e, bound_e, *_), t_fast_e = timed(lambda: fast_writhe_sum(E, 2))
    (f1, b1, *_, near_pairs), t1 = timed(lambda: fast_writhe_sum(P, 1))
    (f2, *_), t2 = timed(lambda: fast_writhe_sum(P, 2))
    t_numpy_scaled = t_numpy * (n / nref) ** 2
    t_exact_scaled = t_exact * (n / nex) ** 2
    th = 2 * np.pi * np.arange(nex) / nex
    core = np.stack([np.cos(th), np.sin(th), np.zeros(nex)], 1)
    (lk, *_), t_lk = timed(lambda: linking_sum(E, core, 2))
    (lk_fast_e, lk_bound_e, *_), t_lk_fast_e = timed(lambda: fast_linking_sum(E, core, 2))
    core_n = np.stack([np.cos(2 * np.pi * np.arange(n) / n), np.sin(2 * np.pi * np.arange(n) / n), np.zeros(n)], 1)
    (lk_fast, lk_bound, *_), t_lk_fast = timed(lambda: fast_linking_sum(P, core_n, 2))
    out = {
        "points": n, "ref_points": nref, "exact_points": nex,
        "fast_writhe": f1, "fast_bound": b1, "near_pairs": near_pairs,
        "fast_same_on_one_and_two_threads": f1 == f2,
        "fast_seconds_one_thread": t1, "fast_seconds_two_threads": t2, "thread_speedup": t1 / t2,
        "fast_ns_per_pair_one_thread": t1 / pairs * 1e9, "fast_ns_per_pair_two_threads": t2 / pairs * 1e9,
        "exact_writhe_at_exact_points": wr_exact, "fast_writhe_at_exact_points": wr_fast_e,
        "fast_minus_exact_at_exact_points": wr_fast_e - wr_exact, "fast_bound_at_exact_points": bound_e,
        "exact_seconds_at_exact_points_two_threads": t_exact, "fast_seconds_at_exact_points_two_threads": t_fast_e,
        "exact_seconds_scaled_to_points_two_threads": t_exact_scaled,
        "speedup_fast_vs_exact_two_threads": t_exact_scaled / t2,
        "kernel_matches_numpy_at_ref_points": abs(wr_kernel_ref - wr_numpy),
        "numpy_seconds_at_ref_points": t_numpy, "exact_kernel_seconds_at_ref_points_one_thread": t_kernel_ref,
        "numpy_seconds_scaled_to_points": t_numpy_scaled,
        "speedup_fast_vs_numpy_one_thread": t_numpy_scaled / t1,
        "speedup_fast_vs_numpy_two_threads": t_numpy_scaled / t2,
        "linking_with_core_at_exact_points": lk, "linking_seconds_two_threads": t_lk,
        "fast_linking_at_exact_points": lk_fast_e, "fast_linking_bound_at_exact_points": lk_bound_e,
        "fast_linking_seconds_at_exact_points_two_threads": t_lk_fast_e,
        "fast_linking_at_points": lk_fast, "fast_linking_bound_at_points": lk_bound,
        "fast_linking_seconds_at_points_two_threads": t_lk_fast,
        "load_before": load_before, "load_after": os.getloadavg(),
        "note": "numpy and exact-kernel times measured at their own sizes and scaled by the square of the size "
                "ratio (O(N^2) work, same work per pair)",
    }
    for k, v in out.items():
        print(f"{k:45s} {v}")
    save("topology", out)
    return out


if __name__ == "__main__":
    main()
