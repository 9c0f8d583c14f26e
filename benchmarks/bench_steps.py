"""DOP853 step cost: flowkit's kernels against a plain C loop of the same algorithm.

Standalone: ``python benchmarks/bench_steps.py`` (or ``bash run.sh bench steps``).
Writes ``benchmarks/results/bench_steps.json``. All ratios are within this run; the
load average is recorded (the machine's two cores may be shared, so figures are noisy).

1. C reference: ``benchmarks/c/dop853_stf.c`` (same tableau, written from flowkit's table
   into a header; same error norm, step control and initial step; no dense output),
   compiled here with ``cc -O3 -march=native`` for 3, 6 and 12 components (``-DNCOL=0, 1, 3``
   tangent vectors). stf, rotation 0.1, rtol 1e-10, atol 1e-12. Skipped with a note if there
   is no compiler.
2. flowkit, one thread, ns per accepted step against the C loop (runs interleaved, best of
   five, so a change of machine load hits both): the section kernel (dense output and crossing
   location on the steps that may hold a crossing) and the plain batch stepper for 40,000
   upward crossings of y = 0 (3 components); the stepper with one field vector (6) and the full
   deformation gradient (12) over t = 2000 against the C loop with the same state. For 12 also
   the generic loops (``kernels.batch_solve``, the path before ``batch_solve_12``), interleaved too.
Two-thread scaling is measured by benchmarks/bench_threads.py.
"""

from __future__ import annotations

import math
import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import numba
import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import best_of, save  # noqa: E402

import flowkit  # noqa: E402
from flowkit.integrate.batch import IntegratorSettings, integrate_states, thread_limit  # noqa: E402
from flowkit.integrate.tableau import DOP_A, DOP_B, DOP_C, DOP_E3, DOP_E5  # noqa: E402
from flowkit.sections import Plane, poincare_section, warm_sections  # noqa: E402

RTOL, ATOL = 1e-10, 1e-12
ROT = 0.1
SEED = np.array([0.1, 0.0, 0.3])
PLANE = Plane((0, 1, 0), 0.0, "+")
K = 40_000
HERE = Path(__file__).parent
C_FLAGS = ["-O3", "-march=native"]
#: time span of the 6- and 12-component runs (tangent vectors grow like exp(0.1 t): no overflow)
T_TANGENT = 2000.0
REPEAT = 5


def _c_array(name: str, a: np.ndarray) -> str:
    if a.ndim == 1:
        return f"static const double {name}[{a.size}] = {{{', '.join(repr(float(v)) for v in a)}}};\n"
    rows = ",\n  ".join("{" + ", ".join(repr(float(v)) for v in row) + "}" for row in a)
    return f"static const double {name}[{a.shape[0]}][{a.shape[1]}] = {{\n  {rows}}};\n"


def c_build(tmp: str) -> dict:
    """Compile the C loop for 0, 1 and 3 tangent vectors; {ncol: exe} or {"skipped": reason}."""
    cc = shutil.which(os.environ.get("CC", "cc")) or shutil.which("gcc") or shutil.which("clang")
    if cc is None:
        return {"skipped": "no C compiler on PATH (set CC)"}
    header = Path(tmp) / "dop853_tableau.h"
    header.write_text("/* written by bench_steps.py from flowkit.integrate.tableau */\n"
                      + _c_array("A", DOP_A) + _c_array("B", DOP_B) + _c_array("C", DOP_C)
                      + _c_array("E5", DOP_E5) + _c_array("E3", DOP_E3))
    exes = {}
    for ncol in (0, 1, 3):
        exe = Path(tmp) / f"dop853_stf_{ncol}"
        proc = subprocess.run([cc, *C_FLAGS, f"-DNCOL={ncol}", "-I", tmp, str(HERE / "c" / "dop853_stf.c"), "-o",
                               str(exe), "-lm"], capture_output=True, text=True)
        if proc.returncode != 0:
            return {"skipped": f"compile failed: {proc.stderr.strip()[:300]}"}
        exes[ncol] = exe
    exes["compiler"] = f"{Path(cc).name} {' '.join(C_FLAGS)}"
    return exes


def c_run(exe: Path, crossings: int, t_end: float = math.inf) -> dict:
    """One run of the C loop: attempts, accepted steps, crossings, seconds, final time."""
    out = subprocess.run([str(exe), str(crossings), str(ROT), str(RTOL), str(ATOL), repr(t_end)], capture_output=True,
                         text=True, check=True).stdout.split()
    return {"attempts": int(out[0]), "accepted": int(out[1]), "crossings": int(out[2]), "seconds": float(out[3]),
            "t_end": float(out[4])}


def tangent_states(x0: np.ndarray, k: int) -> np.ndarray:
    Y = np.zeros((x0.shape[0], 3 + 3 * k))
    Y[:, :3] = x0
    for c in range(k):
        Y[:, 3 + 3 * c + c] = 1.0
    return Y


def generic_loops(flow, Y: np.ndarray, t_end: float) -> tuple[int, np.ndarray]:
    """The generic batch kernel (loops over the components) on one row: (steps, final states)."""
    Z = Y.copy()
    out = (np.zeros(1, np.int8), np.zeros(1), np.zeros(1, np.int64))
    with thread_limit(1), numba.parallel_chunksize(1):
        flow.kernels.batch_solve(Z, 0.0, t_end, flow.params, 0, RTOL, ATOL, np.inf, 10**7, 1, flow.domain == "ball", *out)
    return int(out[2][0]), Z


def _best(runs: list[dict]) -> dict:
    return min(runs, key=lambda r: r["seconds"])


def main() -> int:
    load_before = os.getloadavg()
    flow = flowkit.flow("stf", rotation=ROT)
    warm_sections(flow, wait=True)
    S = IntegratorSettings(rtol=RTOL, atol=ATOL)
    with tempfile.TemporaryDirectory() as tmp:
        exes = c_build(tmp)
        have_c = "skipped" not in exes
        # 1. 3 components, 40,000 crossings: the section kernel and the plain stepper against the C loop,
        #    runs interleaved (C, section, stepper, C, ...) so a change of machine load hits all alike
        sec = poincare_section(flow, SEED[None], PLANE, crossings=K, rtol=RTOL, atol=ATOL, threads=1)
        t_span = float(sec.t_end[0])
        Y3 = tangent_states(SEED[None], 0)
        integrate_states(flow, Y3, 0.0, 1.0, S, threads=1)  # compile
        c_runs, sec_s, step_s = [], [], []
        for _ in range(REPEAT):
            if have_c:
                c_runs.append(c_run(exes[0], K))
            sec_s.append(best_of(lambda: poincare_section(flow, SEED[None], PLANE, crossings=K, rtol=RTOL, atol=ATOL,
                                                          threads=1), repeat=1))
            step_s.append(best_of(lambda: integrate_states(flow, Y3.copy(), 0.0, t_span, S, threads=1), repeat=1))
        res3 = integrate_states(flow, Y3.copy(), 0.0, t_span, S, threads=1)
        section = {"seconds": min(sec_s), "steps": int(sec.steps[0]), "ns_per_step": 1e9 * min(sec_s) / int(sec.steps[0]),
                   "crossings_per_second": K / min(sec_s), "t_end": t_span}
        stepper = {3: {"seconds": min(step_s), "steps": int(res3.steps[0]),
                       "ns_per_step": 1e9 * min(step_s) / int(res3.steps[0]), "t_end": t_span}}
        c = {}
        if have_c:
            b = _best(c_runs)
            c[3] = {**b, "ns_per_accepted_step": 1e9 * b["seconds"] / b["accepted"],
                    "ns_per_attempt": 1e9 * b["seconds"] / b["attempts"], "crossings_per_second": b["crossings"] / b["seconds"]}
        # 2. 6 and 12 components over T_TANGENT, again interleaved with the C loop
        for k in (1, 3):
            n = 3 + 3 * k
            Y = tangent_states(SEED[None], k)
            integrate_states(flow, Y.copy(), 0.0, 1.0, S, threads=1)  # compile
            runs, fk, gen = [], [], []
            if n == 12:
                generic_loops(flow, Y, 1.0)  # compile
            for _ in range(REPEAT):
                if have_c:
                    runs.append(c_run(exes[k], 10**12, T_TANGENT))
                fk.append(best_of(lambda: integrate_states(flow, Y.copy(), 0.0, T_TANGENT, S, threads=1), repeat=1))
                if n == 12:
                    gen.append(best_of(lambda: generic_loops(flow, Y, T_TANGENT), repeat=1))
            res = integrate_states(flow, Y.copy(), 0.0, T_TANGENT, S, threads=1)
            stepper[n] = {"seconds": min(fk), "steps": int(res.steps[0]), "ns_per_step": 1e9 * min(fk) / int(res.steps[0]),
                          "outcomes": res.outcomes, "t_end": T_TANGENT}
            if n == 12:
                g_steps = int(generic_loops(flow, Y, T_TANGENT)[0])
                stepper["12_generic_loops"] = {"seconds": min(gen), "steps": g_steps,
                                               "ns_per_step": 1e9 * min(gen) / g_steps, "t_end": T_TANGENT}
                short = integrate_states(flow, Y.copy(), 0.0, 20.0, S, threads=1).states
                ref = generic_loops(flow, Y, 20.0)[1]
                stepper["12_max_rel_diff_t20"] = float(np.abs(short - ref).max() / np.abs(ref).max())
            if have_c:
                b = _best(runs)
                c[n] = {**b, "ns_per_accepted_step": 1e9 * b["seconds"] / b["accepted"]}
    load_mid = os.getloadavg()

    data = {"flow": "stf", "rotation": ROT, "rtol": RTOL, "atol": ATOL, "crossings": K,
            "c_reference": c if have_c else exes, "c_compiler": exes.get("compiler") if have_c else None,
            "flowkit_section": section, "flowkit_stepper": stepper,
            "load_average_before": load_before, "load_average_after": load_mid}
    if have_c:
        data["c_over_flowkit_section_per_step"] = c[3]["ns_per_accepted_step"] / section["ns_per_step"]
        data["c_over_flowkit_stepper_per_step"] = {n: c[n]["ns_per_accepted_step"] / stepper[n]["ns_per_step"]
                                                   for n in stepper if not isinstance(n, str)}
        data["c_over_flowkit_stepper_per_step"]["12_generic_loops"] = (
            c[12]["ns_per_accepted_step"] / stepper["12_generic_loops"]["ns_per_step"])
        print(f"C loop ({exes['compiler']}), 3 components: {c[3]['ns_per_attempt']:.0f} ns/attempt, "
              f"{c[3]['ns_per_accepted_step']:.0f} ns/accepted step, {c[3]['crossings_per_second']:,.0f} crossings/s")
    else:
        print(f"C loop skipped: {exes['skipped']}")
    print(f"flowkit section kernel: {section['ns_per_step']:.0f} ns/step, {section['crossings_per_second']:,.0f} "
          f"crossings/s ({section['steps']} steps)")
    for n, r in stepper.items():
        if n == "12_max_rel_diff_t20":
            continue
        if n == "12_generic_loops":
            line = f"flowkit generic loops, 12 components: {r['ns_per_step']:.0f} ns/step ({r['steps']} steps)"
            if have_c:
                line += f" -> C/flowkit {data['c_over_flowkit_stepper_per_step'][n]:.2f}x"
            print(line)
            continue
        line = f"flowkit stepper, {n:2d} components: {r['ns_per_step']:.0f} ns/step ({r['steps']} steps)"
        if have_c:
            line += (f"; C {c[n]['ns_per_accepted_step']:.0f} ns/accepted step ({c[n]['accepted']} steps) -> "
                     f"C/flowkit {data['c_over_flowkit_stepper_per_step'][n]:.2f}x")
        print(line)
    if have_c:
        print(f"C / flowkit per step, section kernel: {data['c_over_flowkit_section_per_step']:.2f}x")
    print(f"12 components, batch_solve_12 against the generic loops at t = 20: max relative difference "
          f"{stepper['12_max_rel_diff_t20']:.1e}")
    print(f"load average before {load_before}, after {load_mid} (2 cores; others may share them)")
    save("bench_steps", data)
    return 0


if __name__ == "__main__":
    sys.exit(main())
