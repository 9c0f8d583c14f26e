"""Ball dynamo solver: operator cost against its transforms, eigenvalue times, convergence tables.

1. One application of the ball induction operator (all orders coupled, stf at L = N = 16)
   against the spherical-harmonic transforms it needs (one vector synthesis + one
   vector analysis of the same sizes), best of several, in the same run.
2. One eigenvalue of an axisymmetric flow (t2s2, Rm = 54, m = 1) at L = N = 24: first call
   (builds the parts D and K), a second Rm (parts kept: D + Rm K only), and the default
   call (orders m = 0..4 and the resolution check); the same before the parts were kept
   is not re-measured here (the README gives the old figure).
3. Convergence tables (L, N, growth rate, frequency) of the benchmark flows t2s2 at
   Rm = 54 and t1s1 at Rm = 155 (Proc. R. Soc. Lond. A 425, 1989, 407-429; onsets near
   54 and 155 cited from memory), and their critical Rm at the finest resolution.
4. The onset of stf (all orders coupled) at rotation 0.3 and the growth rates at rotation
   0.1 (new; no published value): per resolution, secant iterations on the growth rate
   (Rm_c and the seconds per eigenvalue).
5. Warm starts (flowkit.dynamo.sphere.warm) against none, in the same run, interleaved: the
   critical Rm of t2s2 and t1s1 (every digit of both compared) and the convergence table
   carried across resolutions; and one BLAS thread against two in the eigen work
   (flowkit.dynamo.sphere.threads): stf and t2s2 eigenvalues, wall and CPU seconds.

Standalone: ``python benchmarks/bench_dynamo_sphere.py [--quick] [--stf-only | --warm-threads]``;
writes benchmarks/results/dynamo_sphere.json (``dynamo_sphere_stf.json`` for ``--stf-only``,
``dynamo_sphere_warm_threads.json`` for ``--warm-threads``).
The machine may be shared (load recorded with every part).
"""

import os
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import best_of, save  # noqa: E402

import flowkit  # noqa: E402
from flowkit.dynamo import benchmark_flow, critical_rm, growth_rate  # noqa: E402
from flowkit.dynamo.sphere import BallOperator  # noqa: E402


def load() -> list:
    return [round(v, 2) for v in os.getloadavg()]


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
            "ratio_to_transforms": t_apply / (t_synth + t_anal), "load": load()}


def timed(flow, rm, res, check=None, **kw) -> dict:
    t0 = time.perf_counter()
    r = growth_rate(flow, rm, res, check_resolution=check, keep_mode=False, **kw)
    return {"resolution": list(res), "rm": rm, "growth_rate": r.growth_rate, "frequency": r.frequency,
            "m": r.diagnostics.get("m"), "families": r.diagnostics.get("families"),
            "seconds": time.perf_counter() - t0, "load": load(),
            "eigenvalue": r.diagnostics.get("eigenvalue")}


def breakdown(flow, rm, res, m=None) -> dict:
    """Where one eigenvalue's time goes: building the parts D, K (transforms), the real form and
    families, and the shift-invert solve (LU + ARPACK), each timed on its own."""
    from flowkit.dynamo.sphere import parts as store
    from flowkit.dynamo.sphere.eigen import guesses_from_coarse, solve_families

    store._STORE.clear()
    op = BallOperator(flow, rm, *res, m=m)
    t0 = time.perf_counter()
    parts = store.operator_parts(op)
    t1 = time.perf_counter()
    blocks, _ = store.real_blocks(op, parts)
    t2 = time.perf_counter()
    guesses = guesses_from_coarse(op)
    t3 = time.perf_counter()
    out = solve_families(op, guesses=guesses)
    t4 = time.perf_counter()
    return {"resolution": list(res), "m": m, "dof": op.dof, "families": [b.shape[0] for _, b in blocks],
            "parts_s": t1 - t0, "real_form_s": t2 - t1, "coarse_guesses_s": t3 - t2, "solve_s": t4 - t3,
            "growth_rate": out["eigenvalue"].real, "load": load()}


def lu_choice(res) -> dict:
    """One stf family (all orders coupled): SuperLU (COLAMD) against a dense real LU of the same shifted block."""
    import scipy.sparse as sps
    from scipy.linalg import lu_factor
    from scipy.sparse.linalg import splu

    from flowkit.dynamo.sphere import parts as store

    op = BallOperator(flowkit.flow("stf", rotation=0.3), 140.0, *res)
    blocks, _ = store.real_blocks(op, store.operator_parts(op))
    B = blocks[0][1].tocsc()
    n = B.shape[0]
    t0 = time.perf_counter()
    lu = splu((B - 0.5 * sps.identity(n, format="csc")).tocsc())
    t1 = time.perf_counter()
    dense = B.toarray()
    dense.flat[:: n + 1] -= 0.5
    t2 = time.perf_counter()
    lu_factor(dense, overwrite_a=True, check_finite=False)
    t3 = time.perf_counter()
    return {"resolution": list(res), "unknowns": n, "nnz": int(B.nnz), "superlu_s": t1 - t0,
            "superlu_fill": int(lu.L.nnz + lu.U.nnz), "dense_lu_s": t3 - t2, "load": load()}


def table(flow, rm, ladder, **kw) -> list:
    return [timed(flow, rm, res, **kw) for res in ladder]


def stf_onset(rotation: float, ladder, rm_pair, iterations: int = 5, rm_tol: float = 0.02) -> list:
    """Per resolution: growth rates at ``rm_pair`` and secant steps to the zero of the growth rate."""
    f = flowkit.flow("stf", rotation=rotation)
    rows, guess = [], None
    for res in ladder:
        evals = []

        def sigma(rm):
            nonlocal guess
            kw = {} if guess is None else {"guesses": [guess]}
            out = timed(f, rm, res, **kw)
            lam = out["eigenvalue"]
            guess = complex(lam[0], abs(lam[1]))
            evals.append(out)
            print(rotation, res, rm, out["growth_rate"], f"{out['seconds']:.1f}s", out["load"], flush=True)
            return out["growth_rate"]

        a, b = rm_pair
        sa, sb = sigma(a), sigma(b)
        root = None
        for _ in range(iterations):
            if sb == sa:
                break
            c = b - sb * (b - a) / (sb - sa)
            if not (0.5 * a < c < 2 * b):
                break
            a, sa, b, sb = b, sb, c, sigma(c)
            if abs(b - a) < rm_tol:
                root = b
                break
        below = [e["rm"] for e in evals if e["growth_rate"] < 0]
        above = [e["rm"] for e in evals if e["growth_rate"] > 0]
        rows.append({"resolution": list(res), "rm_critical": root, "evaluations": evals,
                     "bracketed": bool(below and above and max(below) < min(above)),
                     "seconds_per_eigenvalue": float(np.mean([e["seconds"] for e in evals]))})
    return rows


def stf_rates(rotation: float, ladder, rms) -> list:
    f = flowkit.flow("stf", rotation=rotation)
    rows = []
    for res in ladder:
        for rm in rms:
            out = timed(f, rm, res)
            print(rotation, res, rm, out["growth_rate"], f"{out['seconds']:.1f}s", out["load"], flush=True)
            rows.append(out)
    return rows


def stf_study(quick: bool) -> dict:
    ladder = [(8, 8), (10, 10)] if quick else [(12, 12), (14, 14), (16, 16), (18, 18)]
    out = {"stf_0.3_onset": stf_onset(0.3, ladder, (136.0, 142.0))}
    save("dynamo_sphere_stf", out)  # keep the onset table if the rates below are interrupted
    out["stf_0.1_rates"] = stf_rates(0.1, ladder[:3], (160.0, 240.0, 320.0))
    return out


def clocked(fn) -> tuple:
    """``(result, wall seconds, CPU seconds of this process, load)`` of one call."""
    w0, c0 = time.perf_counter(), time.process_time()
    out = fn()
    return out, time.perf_counter() - w0, time.process_time() - c0, load()


def warm_vs_cold(quick: bool, repeat: int = 2) -> dict:
    """Critical Rm with and without warm starts (parts built once beforehand: both pay only the solves),
    interleaved, best of ``repeat``; every digit of Rm_c, its uncertainty and frequency kept."""
    res = (16, 16) if quick else (24, 24)
    out = {}
    for name, rms in (("t2s2", [50.0, 58.0]), ("t1s1", [145.0, 165.0])):
        flow = benchmark_flow(name)
        critical_rm(flow, rms, resolution=res, progress=False, xtol=1e-4, m=1)  # build the parts
        runs = {"cold": [], "warm": []}
        for _ in range(repeat):
            for label, kw in (("cold", {"warm_start": False}), ("warm", {})):
                c, wall, cpu, ld = clocked(lambda: critical_rm(flow, rms, resolution=res, progress=False, xtol=1e-4,
                                                               m=1, **kw))
                runs[label].append({"wall_s": wall, "cpu_s": cpu, "load": ld, "rm_critical": repr(c.rm_critical),
                                    "uncertainty": repr(c.uncertainty), "frequency": repr(c.frequency),
                                    "evaluations": len(c.evaluations)})
        best = {k: min(r["cpu_s"] for r in v) for k, v in runs.items()}
        out[name] = {"resolution": list(res), "runs": runs, "cpu_ratio_warm_to_cold": best["warm"] / best["cold"]}
        print(name, out[name], flush=True)
    # the convergence table carried across resolutions (one WarmStart) against fresh solves
    from flowkit.dynamo.sphere.warm import WarmStart

    ladder = [(12, 12), (16, 16), (20, 20)] if quick else [(12, 12), (16, 16), (20, 20), (24, 24)]
    t1s1 = benchmark_flow("t1s1")
    table(t1s1, 155.0, ladder, m=1)  # parts built
    for label, kw in (("cold", {"warm_start": False}), ("warm", {"warm_start": WarmStart()})):
        rows, wall, cpu, ld = clocked(lambda: table(t1s1, 155.0, ladder, m=1, **kw))
        out[f"t1s1_table_{label}"] = {"wall_s": wall, "cpu_s": cpu, "load": ld,
                                      "growth_rates": [repr(r["growth_rate"]) for r in rows]}
    return out


def blas_threads(quick: bool, repeat: int = 3) -> dict:
    """One eigenvalue with one BLAS thread against two in the eigen work, interleaved, best of ``repeat``
    (parts built beforehand; no warm start, so each solve pays its factorisations)."""
    from flowkit.dynamo.sphere import threads

    cases = [("stf_0.3", flowkit.flow("stf", rotation=0.3), 140.0, (8, 8) if quick else (10, 10), None),
             ("t2s2_m1", benchmark_flow("t2s2"), 54.0, (16, 16) if quick else (24, 24), 1)]
    out, saved = {}, threads.BLAS_THREADS
    try:
        for name, flow, rm, res, m in cases:
            timed(flow, rm, res, m=m, warm_start=False)  # build the parts
            runs = {1: [], 2: []}
            for _ in range(repeat):
                for count in (1, 2):
                    threads.BLAS_THREADS = count
                    r, wall, cpu, ld = clocked(lambda: timed(flow, rm, res, m=m, warm_start=False))
                    runs[count].append({"wall_s": wall, "cpu_s": cpu, "load": ld, "growth_rate": repr(r["growth_rate"])})
            best = {k: min(x["wall_s"] for x in v) for k, v in runs.items()}
            out[name] = {"resolution": list(res), "runs": {str(k): v for k, v in runs.items()},
                         "best_wall_s": {str(k): v for k, v in best.items()}, "wall_ratio_1_to_2": best[1] / best[2]}
            print(name, out[name], flush=True)
    finally:
        threads.BLAS_THREADS = saved
    return out


def main(quick: bool, stf_only: bool, warm_threads: bool = False) -> None:
    if stf_only:
        save("dynamo_sphere_stf", stf_study(quick))
        return
    if warm_threads:
        save("dynamo_sphere_warm_threads", {"blas_threads": blas_threads(quick), "warm_starts": warm_vs_cold(quick)})
        return
    out = {"operator": operator_vs_transforms(12 if quick else 16, 12 if quick else 16)}
    t2s2, t1s1 = benchmark_flow("t2s2"), benchmark_flow("t1s1")
    timed(t2s2, 54.0, (8, 8), m=1)  # compile the flow's kernels outside the timings
    out["axisymmetric_L24_breakdown"] = breakdown(t2s2, 54.0, (24, 24), m=1)
    print(out["axisymmetric_L24_breakdown"], flush=True)
    from flowkit.dynamo.sphere import parts as store

    store._STORE.clear()
    out["axisymmetric_L24"] = {"first": timed(t2s2, 54.0, (24, 24), m=1),
                               "second_rm": timed(t2s2, 55.0, (24, 24), m=1),
                               "default_call": timed(t2s2, 56.0, (24, 24), check="auto")}
    print(out["axisymmetric_L24"], flush=True)
    ladder = [(12, 12), (16, 16), (20, 20)] if quick else [(12, 12), (16, 16), (20, 20), (24, 24), (28, 28)]
    out["t2s2_rm54"] = table(t2s2, 54.0, ladder, m=1)
    out["t1s1_rm155"] = table(t1s1, 155.0, ladder, m=1)
    fine = ladder[-2]
    for name, flow, rms in (("t2s2", t2s2, [50.0, 58.0]), ("t1s1", t1s1, [145.0, 165.0])):
        c = critical_rm(flow, rms, resolution=fine, progress=False, xtol=1e-4, m=1)
        out[f"{name}_critical"] = {"rm_critical": c.rm_critical, "uncertainty": c.uncertainty,
                                   "frequency": c.frequency, "resolution": list(fine), "seconds": c.seconds,
                                   "load": load()}
    print({k: out[k] for k in out if k.endswith("critical")}, flush=True)
    res = (8, 8) if quick else (14, 14)
    stf = flowkit.flow("stf", rotation=0.3)
    out["lu_choice"] = [lu_choice(r) for r in ([(10, 10)] if quick else [(14, 14), (16, 16)])]
    print(out["lu_choice"], flush=True)
    out["stf_breakdown"] = breakdown(stf, 140.0, res)
    store._STORE.clear()
    out["stf_eigenvalue"] = {"first": timed(stf, 140.0, res), "second_rm": timed(stf, 141.0, res)}
    print(out["stf_eigenvalue"], flush=True)
    out["blas_threads"] = blas_threads(quick)
    out["warm_starts"] = warm_vs_cold(quick)
    save("dynamo_sphere", out)


if __name__ == "__main__":
    main("--quick" in sys.argv[1:], "--stf-only" in sys.argv[1:], "--warm-threads" in sys.argv[1:])
