"""Periodic orbits of a section map: a click-to-orbit Newton solve and a seed-grid scan.

Standalone: ``python benchmarks/bench_periodic.py``. Writes ``benchmarks/results/bench_periodic.json``.

1. Click: the period-2 saddle of stf (rotation 1) on y = 0 from a start 0.01 away, after
   compilation (best of three). Baseline in the same run: the same Newton iteration on the
   same return map written with scipy (``solve_ivp`` DOP853 at the same tolerances with events,
   Jacobian by central differences - what a user would otherwise write).
2. Scan: a 20 x 20 seed grid over the section, periods 1..3, on two threads and on one.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

sys.path.insert(0, str(Path(__file__).parent))
from _common import best_of, save  # noqa: E402

import flowkit  # noqa: E402
from flowkit.sections import Plane, find_periodic_orbit, scan_periodic_orbits  # noqa: E402

RTOL, ATOL = 1e-12, 1e-12
PLANE = Plane((0, 1, 0), 0.0, "+")
START = (-0.92, 0.01)


def scipy_map(flow, xi, k):
    def rhs(t, s):
        return list(flow.velocity(np.asarray(s)[None])[0])

    def ev(t, s):
        return s[1]
    ev.direction = 1.0
    x0 = [xi[0], 0.0, -xi[1]]  # in-plane (x, -z) of y = 0
    sol = solve_ivp(rhs, (0, 20), x0, method="DOP853", rtol=RTOL, atol=ATOL, events=ev)
    pts = sol.y_events[0][sol.t_events[0] > 1e-3]
    return np.array([pts[k - 1][0], -pts[k - 1][2]])


def scipy_newton(flow, xi, k, tol=1e-9, h=1e-6):
    xi = np.array(xi, float)
    for _ in range(20):
        r = scipy_map(flow, xi, k) - xi
        if np.linalg.norm(r) < tol:
            return xi
        J = np.column_stack([(scipy_map(flow, xi + d, k) - scipy_map(flow, xi - d, k)) / (2 * h)
                             for d in (np.array([h, 0]), np.array([0, h]))]) - np.eye(2)
        xi = xi - np.linalg.solve(J, r)
    return xi


def main() -> dict:
    f = flowkit.flow("stf", rotation=1.0)
    tic = time.perf_counter()
    o = find_periodic_orbit(f, START, PLANE, period=2)
    compile_s = time.perf_counter() - tic
    click = best_of(lambda: find_periodic_orbit(f, START, PLANE, period=2))
    base = best_of(lambda: scipy_newton(f, START, 2), repeat=1)
    out = {"click_seconds": click, "click_compile_seconds": compile_s, "click_iterations": o.iterations,
           "scipy_newton_seconds": base, "speedup_vs_scipy": base / click, "orbit_type": o.type,
           "period_time": o.period_time}
    print(f"click -> period-2 {o.type} orbit: {click * 1e3:.1f} ms ({o.iterations} Newton steps; "
          f"scipy version {base:.2f} s, {base / click:.0f}x)")
    for threads in (2, 1):
        tic = time.perf_counter()
        s = scan_periodic_orbits(f, PLANE, grid=20, max_period=3, threads=threads)
        sec = time.perf_counter() - tic
        out[f"scan_20x20_k3_seconds_{threads}_threads"] = sec
        out["scan_orbits"] = s.counts()
        print(f"scan 20 x 20, periods 1-3, {threads} thread(s): {sec:.1f} s, {s.counts()}")
    out["scan_thread_speedup"] = out["scan_20x20_k3_seconds_1_threads"] / out["scan_20x20_k3_seconds_2_threads"]
    save("bench_periodic", out)
    return out


if __name__ == "__main__":
    main()
