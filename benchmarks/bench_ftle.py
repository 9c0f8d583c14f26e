"""FTLE field on a 256x256 grid: flowkit kernels against a vectorized-numpy RK4 of the same computation.

Both sides integrate the position and the deformation gradient J (dJ/dt = grad(u) J)
with classical RK4 at the same step from every grid point, then take
FTLE = log(largest singular value of J) / T. The numpy version is what a user would
write: positions (N, 3), J (N, 3, 3), the gradient as an (N, 3, 3) array and
``G @ J``. The two results are compared (they must agree to round-off), then timed
on one and two threads. A hand-tuned numpy variant (structure of arrays, einsum) is
timed for the 3-D case as a second, harder baseline. A last case compares at matched
accuracy (errors against a tight DOP853 reference): numpy RK4 with a step small
enough for ~1e-6 against flowkit's default adaptive DOP853.

Cases: the quadratic stretch-twist-fold Stokes flow in the unit ball (plane y = 0,
points outside the ball skipped by both), and the planar double gyre (2x2 block),
whose cost is dominated by sin/cos, where numpy's SIMD transcendental functions
are hard to beat.

Standalone: ``python benchmarks/bench_ftle.py`` prints a summary and writes
benchmarks/results/ftle.json. The machine may be shared: the load average is
recorded, and CPU seconds (process time) are reported beside wall seconds, since on
a loaded machine two threads cannot get two cores; the "projected" two-core figure
is numpy CPU time / (flowkit two-thread CPU time / 2), labelled as a projection.
"""

import math
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import best_of, machine, save, vector_math  # noqa: E402

import flowkit  # noqa: E402
from flowkit.chaos import GridPlane, ftle_field  # noqa: E402
from flowkit.integrate.batch import IntegratorSettings, integrate_states  # noqa: E402

N = 256


# -- numpy baselines (what a user would write) -------------------------------------
def stf_rhs(t, X, J, r):
    x, y, z = X[:, 0], X[:, 1], X[:, 2]
    U = np.stack([-8 * x * y + r * z, 11 * x**2 + 3 * y**2 + z**2 - 3, 2 * y * z - r * x], axis=1)
    one = np.ones_like(x)
    G = np.stack([np.stack([-8 * y, -8 * x, r * one], axis=1),
                  np.stack([22 * x, 6 * y, 2 * z], axis=1),
                  np.stack([-r * one, 2 * z, 2 * y], axis=1)], axis=1)
    return U, G @ J


def stf_rhs_soa(t, X, J, r):
    """A hand-tuned variant: structure-of-arrays J (3, 3, N) and einsum instead of stacked matmul."""
    x, y, z = X
    U = np.stack([-8 * x * y + r * z, 11 * x**2 + 3 * y**2 + z**2 - 3, 2 * y * z - r * x])
    G = np.array([[-8 * y, -8 * x, np.full_like(x, r)], [22 * x, 6 * y, 2 * z], [np.full_like(x, -r), 2 * z, 2 * y]])
    return U, np.einsum("ikn,kjn->ijn", G, J)


def numpy_rk4_ftle_soa(rhs, X, T, h):
    """RK4 on the structure-of-arrays layout (X (3, N), J (3, 3, N))."""
    J = np.zeros((3, 3, len(X)))
    for i in range(3):
        J[i, i] = 1.0
    J = rk4_loop(rhs, np.ascontiguousarray(X.T), J, T, h)
    return np.log(np.linalg.svd(J.transpose(2, 0, 1), compute_uv=False)[:, 0]) / T


def gyre_rhs(t, X, J, A=0.1, eps=0.25, om=2 * math.pi / 10):
    x, y = X[:, 0], X[:, 1]
    a = eps * math.sin(om * t)
    b = 1 - 2 * a
    f = a * x * x + b * x
    fx = 2 * a * x + b
    sf, cf = np.sin(np.pi * f), np.cos(np.pi * f)
    sy, cy = np.sin(np.pi * y), np.cos(np.pi * y)
    U = np.stack([-np.pi * A * sf * cy, np.pi * A * cf * sy * fx], axis=1)
    G = np.stack([np.stack([-np.pi**2 * A * cf * fx * cy, np.pi**2 * A * sf * sy], axis=1),
                  np.stack([np.pi * A * sy * (2 * a * cf - np.pi * sf * fx * fx), np.pi**2 * A * cf * cy * fx],
                           axis=1)], axis=1)
    return U, G @ J


def rk4_loop(rhs, X, J, T, h):
    """Classical RK4 on (X, J) with ``rhs(t, X, J) -> (dX, dJ)``; returns J at time T."""
    t = 0.0
    for _ in range(int(round(T / h))):
        k1, l1 = rhs(t, X, J)
        k2, l2 = rhs(t + h / 2, X + h / 2 * k1, J + h / 2 * l1)
        k3, l3 = rhs(t + h / 2, X + h / 2 * k2, J + h / 2 * l2)
        k4, l4 = rhs(t + h, X + h * k3, J + h * l3)
        X = X + h / 6 * (k1 + 2 * k2 + 2 * k3 + k4)
        J = J + h / 6 * (l1 + 2 * l2 + 2 * l3 + l4)
        t += h
    return J


def numpy_rk4_ftle(rhs, X, T, h, dim):
    """RK4 with positions (N, dim) and J (N, dim, dim); FTLE from numpy's SVD."""
    J = rk4_loop(rhs, X, np.broadcast_to(np.eye(dim), (len(X), dim, dim)).copy(), T, h)
    return np.log(np.linalg.svd(J, compute_uv=False)[:, 0]) / T


# -- cases -------------------------------------------------------------------------
def reference(flow, plane, n, T):
    """Tight DOP853 field (rtol 1e-12) on an n x n grid: the accuracy yardstick."""
    return ftle_field(flow, plane, (n, n), T, settings=IntegratorSettings(rtol=1e-12, atol=1e-14)).values


def same_step_case(name, flow, plane, T, h, numpy_fn, numpy_tuned=None):
    """256x256 field, RK4 with the same step on both sides: implementation speed and 2-thread scaling."""
    rk4 = IntegratorSettings(method="rk4", step=h)
    ftle_field(flow, plane, (4, 4), h, settings=rk4, threads=1)  # compile
    fields, cpu = {}, {}

    runs = {1: [], 2: []}
    for _ in range(5):  # alternate thread counts, keep the best of each (the machine is shared)
        for threads in (1, 2):
            w0, c0 = time.perf_counter(), time.process_time()
            fields[threads] = ftle_field(flow, plane, (N, N), T, settings=rk4, threads=threads)
            runs[threads].append((time.perf_counter() - w0, time.process_time() - c0))
    t_rk4 = {}
    for threads in (1, 2):
        t_rk4[threads], cpu[threads] = min(runs[threads])
    ours = fields[2]
    inside = np.isfinite(ours.values)
    pts = ours.points[inside]
    t0, c0 = time.perf_counter(), time.process_time()
    np_vals = numpy_fn(pts)
    t_numpy, cpu_numpy = time.perf_counter() - t0, time.process_time() - c0
    res = {
        "case": name, "grid": [N, N], "points_integrated": int(inside.sum()), "time": T, "rk4_step": h,
        "numpy_rk4_cpu_seconds": cpu_numpy, "cpu_time_ratio_vs_numpy_1_thread": cpu_numpy / cpu[1],
        "projected_speedup_vs_numpy_on_2_free_cores": cpu_numpy / (cpu[2] / 2),
        "numpy_rk4_seconds": t_numpy, "flowkit_rk4_seconds": {"1": t_rk4[1], "2": t_rk4[2]},
        "speedup_vs_numpy": {"1": t_numpy / t_rk4[1], "2": t_numpy / t_rk4[2]},
        "two_thread_scaling": t_rk4[1] / t_rk4[2],
        "cpu_seconds": {"1": cpu[1], "2": cpu[2]},
        "two_thread_cpu_efficiency": cpu[1] / cpu[2],
        "max_abs_diff_flowkit_vs_numpy": float(np.max(np.abs(ours.values[inside] - np_vals))),
        "threads_identical": bool(np.array_equal(fields[1].values, fields[2].values, equal_nan=True)),
    }
    print(f"{name}: {inside.sum()} points, T = {T}, RK4 step {h} on both sides")
    print(f"  numpy RK4 {t_numpy:.3f} s | flowkit RK4 {t_rk4[1]:.3f} s (1 thread), {t_rk4[2]:.3f} s (2 threads) "
          f"-> {t_numpy / t_rk4[1]:.1f}x / {t_numpy / t_rk4[2]:.1f}x; two-thread scaling {t_rk4[1] / t_rk4[2]:.2f}x; "
          f"fields agree to {res['max_abs_diff_flowkit_vs_numpy']:.1e}")
    print(f"  CPU seconds: numpy {cpu_numpy:.3f}, flowkit {cpu[1]:.3f} (1 thread) / {cpu[2]:.3f} (2 threads) -> "
          f"CPU-time ratio {cpu_numpy / cpu[1]:.1f}x; parallel work efficiency {cpu[1] / cpu[2]:.2f}; projected "
          f"{cpu_numpy / (cpu[2] / 2):.1f}x on two free cores")
    if numpy_tuned is not None:
        t0 = time.perf_counter()
        tuned = numpy_tuned(pts)
        t_tuned = time.perf_counter() - t0
        res.update(numpy_tuned_seconds=t_tuned, speedup_vs_numpy_tuned={"1": t_tuned / t_rk4[1], "2": t_tuned / t_rk4[2]},
                   max_abs_diff_numpy_tuned=float(np.max(np.abs(tuned - np_vals))))
        print(f"  hand-tuned numpy (einsum, structure of arrays) {t_tuned:.3f} s -> flowkit "
              f"{t_tuned / t_rk4[1]:.1f}x / {t_tuned / t_rk4[2]:.1f}x")
    return res


def matched_accuracy_case(name, flow, plane, n, T, h, rtol, numpy_fn):
    """The user's view: numpy RK4 at a step fine enough for ~1e-6, flowkit's adaptive DOP853 at least as accurate."""
    dop = IntegratorSettings(rtol=rtol, atol=rtol * 1e-2)
    ftle_field(flow, plane, (4, 4), 0.01, settings=dop, threads=1)  # compile
    ref = reference(flow, plane, n, T)
    inside = np.isfinite(ref)
    pts = ftle_field(flow, plane, (n, n), 1e-9, settings=dop).points[inside]
    t0 = time.perf_counter()
    np_vals = numpy_fn(pts)
    t_numpy = time.perf_counter() - t0
    out = {}
    t_dop = {th: best_of(lambda th=th: out.__setitem__(th, ftle_field(flow, plane, (n, n), T, settings=dop,
                                                                      threads=th)), 1) for th in (1, 2)}
    e_np = float(np.max(np.abs(np_vals - ref[inside])))
    e_dop = float(np.nanmax(np.abs(out[2].values[inside] - ref[inside])))
    res = {"case": name, "grid": [n, n], "time": T, "numpy_rk4_step": h, "numpy_rk4_seconds": t_numpy,
           "numpy_rk4_max_error": e_np, "flowkit_dop853_rtol": rtol, "flowkit_dop853_max_error": e_dop,
           "flowkit_dop853_seconds": {"1": t_dop[1], "2": t_dop[2]},
           "speedup_vs_numpy": {"1": t_numpy / t_dop[1], "2": t_numpy / t_dop[2]}}
    print(f"{name}: {n}x{n}, T = {T}; numpy RK4 h = {h}: {t_numpy:.3f} s, max error {e_np:.1e} | flowkit DOP853 "
          f"rtol {rtol:g}: {t_dop[1]:.3f} s / {t_dop[2]:.3f} s (1 / 2 threads), max error {e_dop:.1e} -> "
          f"{t_numpy / t_dop[1]:.1f}x / {t_numpy / t_dop[2]:.1f}x")
    return res


def generic_driver_ftle(flow, field, settings, threads=1):
    """The FTLE path before the FTLE kernels: the generic batch driver (3 + 3k components, loops,
    velocity and gradient called separately), timed on the points of ``field``."""
    from flowkit.chaos.ftle import ftle_from_states

    planar = flow.kind == "planar"
    ok = np.isfinite(field.values).ravel()
    k = 2 if planar else 3
    Y = np.zeros((int(ok.sum()), 3 + 3 * k))
    Y[:, :3] = field.points.reshape(-1, 3)[ok]
    for c in range(k):
        Y[:, 3 + 4 * c] = 1.0
    integrate_states(flow, Y[:2], 0.0, 0.1, settings, threads)  # compile
    t0 = time.perf_counter()
    res = integrate_states(flow, Y, 0.0, field.time, settings, threads)
    seconds = time.perf_counter() - t0
    vals = ftle_from_states(res.states, planar, field.time)
    return seconds, float(np.nanmax(np.abs(vals - field.values.ravel()[ok]))), float(res.steps.mean())


def _stats(d):
    d = np.abs(d[np.isfinite(d)])
    return {"max": float(d.max()), "p99": float(np.percentile(d, 99)), "median": float(np.median(d))}


def step_costs(flow, field, settings, repeat=2):
    """Accepted steps per orbit and CPU nanoseconds per accepted step of each method, one thread.

    The kernels ftle_field runs, called on the points of ``field``: the flow map's positions
    (generic batch driver, 3 components; the normal offsets of 3-D grids left out) and the FTLE
    kernel with either error norm (best of ``repeat`` interleaved runs). With the position-only
    norm each orbit should take its streamline's steps, those of the flow map.
    """
    import numba

    from flowkit.integrate.batch import thread_limit

    planar = flow.kind == "planar"
    pts = field.points.reshape(-1, 3)[np.isfinite(field.values).ravel()]
    k = 2 if planar else 3

    def run(key):
        if key == "flowmap":
            Y = pts.copy()  # integrated in place
        else:
            Y = np.zeros((len(pts), 3 + 3 * k))
            Y[:, :3] = pts
            for c in range(k):
                Y[:, 3 + 4 * c] = 1.0
        out = [np.zeros(len(Y), np.int8), np.zeros(len(Y)), np.zeros(len(Y), np.int64)]
        c0 = time.process_time()
        with thread_limit(1), numba.parallel_chunksize(1):
            if key == "flowmap":
                flow.kernels.batch_solve(Y, 0.0, field.time, flow.params, 0, settings.rtol, settings.atol,
                                         float(settings.max_step), int(settings.max_steps), 1,
                                         flow.domain == "ball", *out)
            else:
                flow.kernels.ftle_dop853_batch(Y, 0.0, field.time, flow.params, settings.rtol, settings.atol,
                                               float(settings.max_step), int(settings.max_steps),
                                               flow.domain == "ball", planar, key == "variational_position_error",
                                               *out)
        return time.process_time() - c0, out[2]

    cpu, steps = {}, {}
    for _ in range(repeat):
        for key in ("flowmap", "variational_position_error", "variational"):
            c, st = run(key)
            cpu[key] = min(cpu.get(key, math.inf), c)
            steps[key] = st
    out = {key: {"steps_per_orbit": float(steps[key].mean()), "cpu_ns_per_step": 1e9 * cpu[key] / steps[key].sum()}
           for key in cpu}
    out["orbits_position_steps_differ_from_flowmap"] = int(np.count_nonzero(
        steps["variational_position_error"] != steps["flowmap"]))
    return out


def variational_vs_flowmap_case(name, flow, plane, res, T, rtol, repeat=3):
    """ftle_field (variational, both error norms) against the flow map + centred differences, equal tolerance.

    One thread, the best of ``repeat`` interleaved runs. Also: the generic-driver path
    ftle_field used before (same points, same tolerance), and how far the flow-map field
    is from the variational one (ridge smearing), overall and on the ridges (grid points
    where the variational FTLE is in its top 5 %), and the accepted steps per orbit and CPU time per
    step of each method (:func:`step_costs`): the equal-tolerance ratio is their product.
    """
    settings = IntegratorSettings(rtol=rtol, atol=rtol * 1e-2)
    variants = {"variational": {}, "variational_position_error": {"error_norm": "position"},
                "flowmap": {"method": "flowmap"}}
    for kw in variants.values():
        ftle_field(flow, plane, (4, 4), 0.1, settings=settings, threads=1, progress=False, **kw)  # compile
    best, cpu, fields = {k: math.inf for k in variants}, {k: math.inf for k in variants}, {}
    for _ in range(repeat):
        for key, kw in variants.items():
            t0, c0 = time.perf_counter(), time.process_time()
            fields[key] = ftle_field(flow, plane, res, T, settings=settings, threads=1, progress=False, **kw)
            best[key] = min(best[key], time.perf_counter() - t0)
            cpu[key] = min(cpu[key], time.process_time() - c0)
    old_seconds, old_diff, old_steps = generic_driver_ftle(flow, fields["variational"], settings)
    per_step = step_costs(flow, fields["variational"], settings)
    var = fields["variational"].values
    ridge = var >= np.nanpercentile(var, 95)
    out = {"case": name, "grid": list(res), "time": T, "rtol": rtol, "threads": 1, "seconds": best,
           "generic_driver_seconds": old_seconds, "generic_driver_steps_mean": old_steps,
           "generic_driver_max_abs_diff": old_diff,
           "cpu_seconds": cpu, "speed_vs_flowmap": {k: best["flowmap"] / best[k] for k in best},
           "cpu_speed_vs_flowmap": {k: cpu["flowmap"] / cpu[k] for k in cpu},
           "speedup_vs_generic_driver": {k: old_seconds / best[k] for k in best if k != "flowmap"},
           "position_error_vs_full": _stats(fields["variational_position_error"].values - var),
           "flowmap_vs_variational": _stats(fields["flowmap"].values - var),
           "flowmap_vs_variational_on_ridges": _stats((fields["flowmap"].values - var)[ridge]),
           "ridge_max": {"variational": float(np.nanmax(var)), "flowmap": float(np.nanmax(fields["flowmap"].values))},
           "per_step": per_step}
    print(f"{name}: {res[0]}x{res[1]}, T = {T}, rtol {rtol:g}, one thread (best of {repeat})")
    print(f"  flow map + FD {best['flowmap']:.2f} s | variational {best['variational']:.2f} s "
          f"({out['speed_vs_flowmap']['variational']:.2f}x the flow map) | position-only error "
          f"{best['variational_position_error']:.2f} s ({out['speed_vs_flowmap']['variational_position_error']:.2f}x) | "
          f"before (generic driver) {old_seconds:.2f} s ({best['flowmap'] / old_seconds:.2f}x), same field to "
          f"{old_diff:.1e}")
    print(f"  CPU seconds (one thread; less sensitive to a shared machine): flow map {cpu['flowmap']:.2f}, variational "
          f"{cpu['variational']:.2f} ({out['cpu_speed_vs_flowmap']['variational']:.2f}x), position-only "
          f"{cpu['variational_position_error']:.2f} ({out['cpu_speed_vs_flowmap']['variational_position_error']:.2f}x)")
    print("  per orbit (the kernels alone, one thread): " + "; ".join(
        f"{key} {per_step[key]['steps_per_orbit']:.2f} steps, {per_step[key]['cpu_ns_per_step']:.0f} CPU ns/step"
        for key in ("flowmap", "variational_position_error", "variational"))
        + f"; position-only steps differ from the flow map's on {per_step['orbits_position_steps_differ_from_flowmap']}"
        f" of {int(np.isfinite(var).sum())} orbits")
    print(f"  position-only vs full: {out['position_error_vs_full']}; flow map vs variational: "
          f"{out['flowmap_vs_variational']}, on ridges {out['flowmap_vs_variational_on_ridges']}")
    return out


def equal_tolerance_main():
    """The goal-3 comparison alone (``python benchmarks/bench_ftle.py flowmap``)."""
    before = machine()["load_average"]
    cases = [variational_vs_flowmap_case("double-gyre, plane z=0", flowkit.flow("double-gyre"),
                                         GridPlane.coordinate("z", 0.0, (0.0, 2.0, 0.0, 1.0)), (400, 200), 15.0, 1e-8),
             variational_vs_flowmap_case("stf rotation=0.1, plane y=0", flowkit.flow("stf", rotation=0.1),
                                         GridPlane.coordinate("y", 0.0, None), (200, 200), 5.0, 1e-8)]
    save("ftle_equal_tolerance", {"load_average_before": before, "load_average_after": machine()["load_average"],
                                  "cases": cases})


def main():
    before = machine()["load_average"]
    vm = vector_math()
    print(f"vector sin/cos: llvmlite built with SVML {vm['llvmlite_has_svml']}, numba using it "
          f"{vm['numba_using_svml']}, Intel runtime {vm['intel_runtime'] or 'not installed'} (trig flows stay scalar "
          "unless the first two are True)")
    r = 0.3
    stf_flow, stf_plane = flowkit.flow("stf", rotation=r), GridPlane.coordinate("y", 0.0, None)
    stf = same_step_case("stf rotation=0.3, plane y=0", stf_flow, stf_plane, 2.0, 0.01,
                         lambda p: numpy_rk4_ftle(lambda t, X, J: stf_rhs(t, X, J, r), p, 2.0, 0.01, 3),
                         lambda p: numpy_rk4_ftle_soa(lambda t, X, J: stf_rhs_soa(t, X, J, r), p, 2.0, 0.01))
    gyre = same_step_case("double-gyre, plane z=0", flowkit.flow("double-gyre"),
                          GridPlane.coordinate("z", 0.0, (0.0, 2.0, 0.0, 1.0)), 5.0, 0.05,
                          lambda p: numpy_rk4_ftle(gyre_rhs, p[:, :2], 5.0, 0.05, 2))
    matched = matched_accuracy_case(
        "stf rotation=0.3, plane y=0, matched accuracy", stf_flow, stf_plane, 96, 2.0, 0.002, 1e-8,
        lambda p: numpy_rk4_ftle(lambda t, X, J: stf_rhs(t, X, J, r), p, 2.0, 0.002, 3))
    save("ftle", {"load_average_before": before, "load_average_after": machine()["load_average"],
                  "cases": [stf, gyre, matched]})


if __name__ == "__main__":
    if sys.argv[1:] == ["flowmap"]:
        equal_tolerance_main()
    else:
        main()
        equal_tolerance_main()
