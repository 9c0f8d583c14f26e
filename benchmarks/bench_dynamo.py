"""Spectral dynamo solver: operator cost against its own FFTs, growth-rate time, convergence.

1. One application of the induction operator at 64^3 (inverse FFT of B, u x B on
   the grid, forward FFT, curl and diffusion on the kept modes) against the two
   bare 3-component real FFTs it needs, timed in the same run (best of several).
2. Wall time of a 32^3 growth rate of the ABC flow at Rm = 10 (Arnoldi, no
   resolution check) and the same by time stepping.
3. Resolution convergence of the ABC (A = B = C = 1) growth rate at Rm = 7, 10, 12, 19
   (below, inside, inside, above the published window 8.9 < Rm < 17.5) at N = 16 and 24
   (Rm = 10 also at 32 from part 2), and the critical Rm at N = 16 and 24.
4. One vertical wavenumber: the Roberts flow at Rm = 8, kz = 1 solved on the N^2 grid
   against the same eigenvalue from the full N^3 box (the box's leading mode is the
   kz = 1 sector; both answers must agree), and a 64^2 growth rate at kz = 0.6.

Standalone: ``python benchmarks/bench_dynamo.py [--quick]`` prints a summary and
writes benchmarks/results/dynamo.json. The machine may be shared (load recorded).
"""

import sys
import time
from pathlib import Path

import numpy as np
import scipy.fft

sys.path.insert(0, str(Path(__file__).parent))
from _common import best_of, save  # noqa: E402

import flowkit  # noqa: E402
from flowkit.dynamo import InductionOperator, critical_rm, growth_rate  # noqa: E402


def operator_vs_fft(n: int) -> dict:
    op = InductionOperator(flowkit.flow("abc"), 10.0, n)
    g = op.grid
    c = g.random_field(np.random.default_rng(0))
    field = g.inverse(c)
    full = np.zeros((3,) + g.spectral_shape, dtype=complex)
    op.apply(c)  # compile

    def ffts():
        scipy.fft.irfftn(full, s=(n,) * 3, axes=(1, 2, 3), workers=g.workers)
        scipy.fft.rfftn(field, axes=(1, 2, 3), workers=g.workers)

    t_fft = best_of(ffts, repeat=15)
    t_op = best_of(lambda: op.apply(c), repeat=15)
    return {"n": n, "fft_pair_ms": 1e3 * t_fft, "operator_ms": 1e3 * t_op, "ratio": t_op / t_fft}


def timed_growth(n: int, method: str) -> dict:
    r = growth_rate(flowkit.flow("abc"), 10.0, n, method, check_resolution=None, keep_mode=False)
    return {"n": n, "method": method, "growth_rate": r.growth_rate, "frequency": r.frequency,
            "seconds": r.seconds, "matvecs": r.diagnostics.get("matvecs")}


def convergence(resolutions, rms) -> list:
    rows = []
    for rm in rms:
        for n in resolutions:
            r = growth_rate(flowkit.flow("abc"), rm, n, "eigen", check_resolution=None, keep_mode=False)
            rows.append({"rm": rm, "n": n, "growth_rate": r.growth_rate, "frequency": r.frequency,
                         "seconds": r.seconds})
            print(f"  Rm={rm:5.1f} N={n:3d}  sigma={r.growth_rate:+.6f}  omega={r.frequency:.5f}  "
                  f"({r.seconds:.1f} s)", flush=True)
    return rows


def single_kz_vs_box(n: int) -> dict:
    roberts = flowkit.flow("roberts")
    box = growth_rate(roberts, 8.0, n, "eigen", check_resolution=None, keep_mode=False)
    one = growth_rate(roberts, 8.0, n, "eigen", kz=1.0, check_resolution=None, keep_mode=False)
    return {"n": n, "box_seconds": box.seconds, "kz_seconds": one.seconds, "speedup": box.seconds / one.seconds,
            "box_growth_rate": box.growth_rate, "kz_growth_rate": one.growth_rate}


def main(quick: bool) -> None:
    out = {}
    print("operator application vs its FFTs (best of 15):")
    out["operator"] = [operator_vs_fft(n) for n in ((32,) if quick else (32, 64))]
    for row in out["operator"]:
        print(f"  N={row['n']}: operator {row['operator_ms']:.2f} ms, FFT pair {row['fft_pair_ms']:.2f} ms, "
              f"ratio {row['ratio']:.2f}")
    print("growth rate, ABC, Rm = 10:")
    out["growth"] = [timed_growth(32 if not quick else 16, m) for m in ("eigen", "march")]
    for row in out["growth"]:
        print(f"  N={row['n']} {row['method']:>5}: sigma={row['growth_rate']:+.6f} omega={row['frequency']:.5f} "
              f"in {row['seconds']:.1f} s ({row['matvecs']} operator applications)")
    print("ABC A=B=C=1 convergence (published window 8.9 < Rm < 17.5):")
    out["convergence"] = convergence((16,) if quick else (16, 24), (7.0, 10.0, 12.0, 19.0))
    out["critical"] = []
    for n in ((16,) if quick else (16, 24)):
        t0 = time.perf_counter()
        c = critical_rm(flowkit.flow("abc"), rm_list=[8.5, 9.5], resolution=n, xtol=1e-3,
                        check_resolution=None, progress=False)
        out["critical"].append({"n": n, "rm_critical": c.rm_critical, "uncertainty": c.uncertainty,
                                "frequency": c.frequency, "seconds": time.perf_counter() - t0})
        print(f"  N={n}: Rm_c = {c.rm_critical:.4f} +/- {c.uncertainty:.1e} (frequency {c.frequency:.4f})")
    print("one vertical wavenumber (Roberts, Rm = 8): N^2 grid at kz = 1 vs the full N^3 box:")
    row = single_kz_vs_box(16 if quick else 24)
    out["single_kz"] = row
    print(f"  N={row['n']}: box {row['box_seconds']:.2f} s (sigma={row['box_growth_rate']:+.8f}), kz=1 "
          f"{row['kz_seconds']:.3f} s (sigma={row['kz_growth_rate']:+.8f}): {row['speedup']:.0f}x")
    r = growth_rate(flowkit.flow("roberts"), 8.0, 32 if quick else 64, "eigen", kz=0.6, keep_mode=False)
    out["single_kz_fine"] = {"n": r.resolution, "growth_rate": r.growth_rate, "error_estimate": r.error_estimate,
                             "seconds": r.seconds}
    print(f"  kz=0.6, N={r.resolution}: sigma={r.growth_rate:+.6f} +/- {r.error_estimate:.1e} (vs 2N/3) "
          f"in {r.seconds:.2f} s")
    save("dynamo", out)


if __name__ == "__main__":
    main("--quick" in sys.argv[1:])
