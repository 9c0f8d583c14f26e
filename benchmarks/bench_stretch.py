"""Frozen-in field vectors, material lines and flux: cost against plain trajectories of the same particles.

1. Field vectors on the stretch-twist-fold flow (rotation 0.3) to t = 50:
   :func:`flowkit.fields.stretch` (position + field vector, renormalized every
   step, 100 checkpoints, moments and jackknife) against the plain trajectory
   integration of the *same seeds* with the same DOP853 tolerances
   (:func:`flowkit.integrate.batch.integrate_states`), measured in the same run.
   The ratio is the overhead of carrying the field. A scipy ``solve_ivp(DOP853)``
   run of the same 6-component system on a few particles gives the per-particle
   cost a user would otherwise pay (extrapolated linearly to the ensemble).
2. Material lines with Lagrangian-label insertion: the cat map past 10^6 points
   and the stf flow to a point budget; wall time, points and memory.
3. Net/unsigned flux through the equatorial disc of stf (backward sweeps).

Standalone: ``python benchmarks/bench_stretch.py`` (default sizes run in a few
minutes on a shared 2-core machine) or ``--full`` (10^5 particles, stf line to
10^6 points). Prints a summary and writes benchmarks/results/stretch.json.
Timings on a shared machine are noisy: the load average is recorded.
"""

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import machine, save  # noqa: E402

import flowkit  # noqa: E402
from flowkit.integrate.batch import IntegratorSettings, integrate_states  # noqa: E402
from flowkit.fields import flux_growth, material_line, stretch  # noqa: E402
from flowkit.fields.particles import default_seeds  # noqa: E402

T = 50.0
SETTINGS = IntegratorSettings(rtol=1e-9, atol=1e-12)


def timed(fn):
    t0 = time.perf_counter()
    out = fn()
    return out, time.perf_counter() - t0


def field_vectors(n: int) -> dict:
    f = flowkit.flow("stf", rotation=0.3)
    seeds = default_seeds(f, n, np.random.default_rng(0))
    stretch(f, seeds=seeds[:4], time=0.5, samples=4, settings=SETTINGS)          # compile
    integrate_states(f, seeds[:4], 0.0, 0.5, SETTINGS)
    plain, t_plain = timed(lambda: integrate_states(f, seeds, 0.0, T, SETTINGS))
    res, t_field = timed(lambda: stretch(f, seeds=seeds, time=T, samples=100, p=(0.5, 3.0), settings=SETTINGS))
    ref = _scipy_field(f, seeds[:3])
    out = {
        "particles": n, "time": T, "rtol": SETTINGS.rtol, "atol": SETTINGS.atol,
        "plain_seconds": t_plain, "field_seconds": t_field, "overhead_ratio": t_field / t_plain,
        "plain_particle_time_per_s": n * T / t_plain, "field_particle_time_per_s": n * T / t_field,
        "plain_mean_steps": float(plain.steps.mean()),
        "scipy_seconds_per_particle": ref["seconds_per_particle"],
        "scipy_extrapolated_seconds": ref["seconds_per_particle"] * n,
        "speedup_vs_scipy": ref["seconds_per_particle"] * n / t_field,
        "scipy_max_log_field_difference": ref["max_log_field_difference"],
        "lyapunov": res.lyapunov.to_dict(), "L1": res.rate(1.0).to_dict(), "L2": res.rate(2.0).to_dict(),
        "effective_particles": {f"{k:g}": v for k, v in res.effective_particles.items()},
        "outcomes": res.outcomes,
    }
    print(f"field vectors: {n} particles to t = {T:g} on stf(rotation=0.3): {t_field:.2f} s with field vs "
          f"{t_plain:.2f} s plain -> overhead x{t_field / t_plain:.2f}; "
          f"{n * T / t_field:.3g} particle-time units/s; scipy DOP853 extrapolated {ref['seconds_per_particle'] * n:.0f} s "
          f"(x{out['speedup_vs_scipy']:.0f})")
    print(f"  Lyapunov {res.lyapunov}; L(1) {res.rate(1.0).value:.4g} ± {res.rate(1.0).stderr:.2g}; "
          f"L(2) {res.rate(2.0).value:.4g} ± {res.rate(2.0).stderr:.2g}")
    return out


def _scipy_field(f, seeds) -> dict:
    """solve_ivp(DOP853) on the 6-component system (position, field) of a few particles, B0 = x-hat."""
    from scipy.integrate import solve_ivp

    def rhs(t, s):
        return np.concatenate([f.velocity(s[None, :3])[0], f.gradient(s[None, :3])[0] @ s[3:]])

    logs = []
    t0 = time.perf_counter()
    for x in seeds:
        r = solve_ivp(rhs, (0.0, T), np.concatenate([x, [1.0, 0.0, 0.0]]), method="DOP853",
                      rtol=SETTINGS.rtol, atol=SETTINGS.atol)
        logs.append(math.log(np.linalg.norm(r.y[3:, -1])))
    sec = (time.perf_counter() - t0) / len(seeds)
    ours = stretch(f, seeds=seeds, time=T, field=[1.0, 0.0, 0.0], samples=10, settings=SETTINGS)
    return {"seconds_per_particle": sec, "max_log_field_difference": float(np.max(np.abs(ours.final_log_field - logs)))}


def lines(stf_points: int) -> dict:
    out = {}
    cat = flowkit.flow("cat-map")
    material_line(cat, 3)  # compile
    res, sec = timed(lambda: material_line(cat, 16, max_points=3_000_000, snapshot_points=2000))
    out["cat_map"] = {"seconds": sec, "iterations": float(res.times[-1]), "points": int(res.npoints[-1]),
                      "memory_bytes": res.memory_bytes, "peak_bytes": res.peak_bytes,
                      "peak_rss_bytes": res.peak_rss_bytes, "rate": res.rate.to_dict(),
                      "exact_rate": math.log((3 + math.sqrt(5)) / 2)}
    print(f"material line, cat map: {res.npoints[-1]} points after {res.times[-1]:g} iterations in {sec:.1f} s; "
          f"line arrays {res.memory_bytes / 1e6:.1f} MB (peak {res.peak_bytes / 1e6:.1f} MB, process RSS "
          f"{res.peak_rss_bytes / 1e6:.0f} MB); rate {res.rate.value:.6f} (exact {out['cat_map']['exact_rate']:.6f})")
    f = flowkit.flow("stf", rotation=0.3)
    material_line(f, 0.2, max_points=200)  # compile
    res, sec = timed(lambda: material_line(f, 20.0, max_points=stf_points, snapshot_points=2000))
    out["stf"] = {"seconds": sec, "time_reached": float(res.times[-1]), "points": int(res.npoints[-1]),
                  "memory_bytes": res.memory_bytes, "peak_bytes": res.peak_bytes,
                  "peak_rss_bytes": res.peak_rss_bytes, "rate": res.rate.to_dict(), "stopped": res.stopped,
                  "cut_segments": res.cut_segments, "cut_length": res.cut_length,
                  "final_length": float(res.lengths[-1]), "length_error": float(res.length_error[-1])}
    print(f"material line, stf: {res.npoints[-1]} points at t = {res.times[-1]:.3g} ({res.stopped}) in {sec:.1f} s; "
          f"length {res.lengths[-1]:.4g}; line arrays {res.memory_bytes / 1e6:.1f} MB; rate {res.rate}")
    return out


def flux(samples: int) -> dict:
    f = flowkit.flow("stf", rotation=0.3)
    flux_growth(f, 0.5, samples=8, checkpoints=4)  # compile
    res, sec = timed(lambda: flux_growth(f, 10.0, samples=samples, settings=SETTINGS))
    print(f"flux through the equatorial disc of stf, {samples} samples to t = 10: {sec:.1f} s; {res}")
    return {"samples": samples, "time": 10.0, "seconds": sec, "flux_rate": res.flux_rate.to_dict(),
            "unsigned_rate": res.unsigned_rate.to_dict(), "final_ratio": float(res.ratio[-1])}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--full", action="store_true", help="10^5 particles and an stf line to 10^6 points")
    ap.add_argument("--particles", type=int, default=None, help="override the ensemble size")
    args = ap.parse_args(argv)
    n = args.particles or (100_000 if args.full else 4000)
    stf_points = 1_000_000 if args.full else 100_000
    print(f"machine: {machine()}")
    data = {"full": args.full, "field_vectors": field_vectors(n), "lines": lines(stf_points), "flux": flux(2000)}
    save("stretch", data)
    return 0


if __name__ == "__main__":
    sys.exit(main())
