"""Poincaré-section speed against scipy's solve_ivp with events, thread scaling, one long orbit.

Standalone: ``python benchmarks/bench_sections.py`` (or ``bash run.sh bench sections``).
Prints a summary and writes ``benchmarks/results/bench_sections.json``. Every ratio
is against a baseline measured in the same run; the machine's load average is
recorded because the cores may be shared.

1. stf, rotation 0.1, plane y = 0 crossed upward, rtol 1e-10, atol 1e-12, one thread:
   crossings per second of flowkit versus ``solve_ivp(method="DOP853", events=...)``
   with the right-hand side a user writes: a plain Python function returning a list
   (the fair baseline). A second line calls flowkit's compiled ``flow.velocity``
   through its array-validating wrapper instead, which is slower per call and so
   flatters the ratio (kept only to show the difference).
2. 16 seeds: wall time on one thread versus two threads (dynamic scheduling).
3. 40,000 crossings of one orbit, after compilation (best of three, as in 1).
"""

from __future__ import annotations

import math
import os
import sys
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

sys.path.insert(0, str(Path(__file__).parent))
from _common import best_of, save  # noqa: E402

import flowkit  # noqa: E402
from flowkit.sections import Plane, poincare_section, warm_sections  # noqa: E402

RTOL, ATOL = 1e-10, 1e-12
SEED = np.array([0.1, 0.0, 0.3])
PLANE = Plane((0, 1, 0), 0.0, "+")


def plain_rhs(rotation: float):
    """stf as a user writes it for scipy: a plain Python function returning a list."""
    def rhs(t, y):
        x, yy, z = y
        return [rotation * z - 8.0 * x * yy, 11.0 * x * x + 3.0 * yy * yy + z * z - 3.0, -rotation * x + 2.0 * yy * z]

    return rhs


def scipy_rate(flow, n_cross: int = 100, wrapped: bool = False) -> tuple[float, int]:
    """Crossings per second of solve_ivp(DOP853) with a terminal-free event on y = 0.

    ``wrapped``: call flowkit's compiled velocity through its validating wrapper
    instead of the plain function (slower per call: not the fair baseline).
    """
    def event(t, y):
        return y[1]

    event.direction = 1

    if wrapped:
        def rhs(t, y):
            return flow.velocity(y[None], t)[0]
    else:
        rhs = plain_rhs(flow.param_dict["rotation"])

    # the time span that holds about n_cross crossings (from a flowkit run)
    ref = poincare_section(flow, SEED[None], PLANE, crossings=n_cross, rtol=RTOL, atol=ATOL, threads=1)
    T = float(ref.time[-1]) + 1e-3
    dt = math.inf
    for _ in range(3):  # best of three, as flowkit's figure (the machine may be shared)
        t0 = time.perf_counter()
        sol = solve_ivp(rhs, (0.0, T), SEED, method="DOP853", rtol=RTOL, atol=ATOL, events=event)
        dt = min(dt, time.perf_counter() - t0)
    n = len(sol.t_events[0])
    return n / dt, n


def main() -> int:
    load_before = os.getloadavg()
    flow = flowkit.flow("stf", rotation=0.1)
    compile_s = warm_sections(flow, wait=True)

    # 1. against scipy, one thread
    scipy_cps, n_scipy = scipy_rate(flow)
    wrapped_cps, _ = scipy_rate(flow, wrapped=True)
    K = 40_000
    secs = best_of(lambda: poincare_section(flow, SEED[None], PLANE, crossings=K, rtol=RTOL, atol=ATOL, threads=1))
    ours_cps = K / secs

    # 2. thread scaling on 16 seeds
    rng = np.random.default_rng(0)
    seeds = rng.uniform(-0.6, 0.6, size=(16, 3))
    seeds[:, 1] = 0.0
    run16 = {}
    for threads in (1, 2):
        run16[threads] = best_of(lambda: poincare_section(flow, seeds, PLANE, crossings=4_000, rtol=RTOL,
                                                          atol=ATOL, threads=threads), repeat=2)

    # 3. 40,000 crossings of one orbit: the run of part 1 (one orbit occupies one thread)
    long_orbit = secs
    sec = poincare_section(flow, SEED[None], PLANE, crossings=K, rtol=RTOL, atol=ATOL, threads=1)
    load_after = os.getloadavg()

    data = {
        "flow": flow.provenance()["flow"], "parameters": flow.param_dict, "rtol": RTOL, "atol": ATOL,
        "plane": PLANE.as_dict(), "compile_seconds": compile_s,
        "scipy_dop853_events": {"crossings": n_scipy, "crossings_per_second": scipy_cps,
                                "rhs": "plain Python function returning a list"},
        "scipy_dop853_events_wrapped_velocity": {"crossings_per_second": wrapped_cps,
                                                 "rhs": "flowkit's flow.velocity through its wrapper"},
        "flowkit_one_thread": {"crossings": K, "seconds": secs, "crossings_per_second": ours_cps},
        "speedup_vs_scipy": ours_cps / scipy_cps,
        "batch16": {"crossings_per_orbit": 4_000, "seconds_1_thread": run16[1], "seconds_2_threads": run16[2],
                    "speedup_2_threads": run16[1] / run16[2]},
        "long_orbit": {"crossings": K, "seconds": long_orbit, "steps": int(sec.steps[0]),
                       "outcome": sec.outcome_names()[0]},
        "load_average_before": load_before, "load_average_after": load_after,
    }
    print(f"compile (or cache load): {compile_s:.2f} s")
    print(f"scipy DOP853 + events : {scipy_cps:10.1f} crossings/s ({n_scipy} crossings; plain Python rhs)")
    print(f"  (wrapped flowkit rhs: {wrapped_cps:10.1f} crossings/s, {ours_cps / wrapped_cps:.0f}x; not fair)")
    print(f"flowkit, 1 thread     : {ours_cps:10.1f} crossings/s  -> {ours_cps / scipy_cps:.0f}x scipy")
    print(f"16 seeds x 4000       : 1 thread {run16[1]:.3f} s, 2 threads {run16[2]:.3f} s "
          f"-> {run16[1] / run16[2]:.2f}x")
    print(f"one orbit, {K} crossings: {long_orbit:.3f} s ({sec.steps[0]} steps)")
    print(f"load average before {load_before}, after {load_after} (2 cores; others may share them)")
    save("bench_sections", data)
    return 0


if __name__ == "__main__":
    sys.exit(main())
