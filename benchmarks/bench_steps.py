"""DOP853 step cost: flowkit's kernels against a plain C loop of the same algorithm, and two-core scaling.

Standalone: ``python benchmarks/bench_steps.py`` (or ``bash run.sh bench steps``).
Writes ``benchmarks/results/bench_steps.json``. All ratios are within this run; the
load average is recorded (the machine's two cores may be shared, so figures are noisy).

1. C reference: ``benchmarks/c/dop853_stf.c`` (same tableau, written from flowkit's table
   into a header; same error norm, step control and initial step; no dense output),
   compiled here with ``cc -O3 -march=native``. stf, rotation 0.1, rtol 1e-10, atol 1e-12,
   40,000 upward crossings of y = 0 counted. Skipped with a note if there is no compiler.
2. flowkit, one thread: the section kernel (dense output and crossing location on steps
   near the plane) for the same 40,000 crossings, and the plain batch stepper over the
   same time span for 3, 6 and 12 components (position, + one field vector, + the full
   deformation gradient). ns per accepted step (flowkit counts accepted steps; the C loop
   reports attempts too, and rejections are rare at these tolerances).
3. Two threads against one: 16-seed sections and a 64-orbit field-vector batch.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
from _common import best_of, save  # noqa: E402

import flowkit  # noqa: E402
from flowkit.integrate.batch import IntegratorSettings, integrate_states  # noqa: E402
from flowkit.integrate.tableau import DOP_A, DOP_B, DOP_C, DOP_E3, DOP_E5  # noqa: E402
from flowkit.sections import Plane, poincare_section, warm_sections  # noqa: E402

RTOL, ATOL = 1e-10, 1e-12
ROT = 0.1
SEED = np.array([0.1, 0.0, 0.3])
PLANE = Plane((0, 1, 0), 0.0, "+")
K = 40_000
HERE = Path(__file__).parent


def _c_array(name: str, a: np.ndarray) -> str:
    if a.ndim == 1:
        return f"static const double {name}[{a.size}] = {{{', '.join(repr(float(v)) for v in a)}}};\n"
    rows = ",\n  ".join("{" + ", ".join(repr(float(v)) for v in row) + "}" for row in a)
    return f"static const double {name}[{a.shape[0]}][{a.shape[1]}] = {{\n  {rows}}};\n"


def c_reference() -> dict:
    """Compile and run the C loop; best of three. {} with a note when no compiler is found."""
    cc = shutil.which(os.environ.get("CC", "cc")) or shutil.which("gcc") or shutil.which("clang")
    if cc is None:
        return {"skipped": "no C compiler on PATH (set CC)"}
    with tempfile.TemporaryDirectory() as tmp:
        header = Path(tmp) / "dop853_tableau.h"
        header.write_text("/* written by bench_steps.py from flowkit.integrate.tableau */\n"
                          + _c_array("A", DOP_A) + _c_array("B", DOP_B) + _c_array("C", DOP_C)
                          + _c_array("E5", DOP_E5) + _c_array("E3", DOP_E3))
        exe = Path(tmp) / "dop853_stf"
        flags = ["-O3", "-march=native"]
        proc = subprocess.run([cc, *flags, "-I", tmp, str(HERE / "c" / "dop853_stf.c"), "-o", str(exe), "-lm"],
                              capture_output=True, text=True)
        if proc.returncode != 0:
            return {"skipped": f"compile failed: {proc.stderr.strip()[:300]}"}
        best = None
        for _ in range(3):
            out = subprocess.run([str(exe), str(K), str(ROT), str(RTOL), str(ATOL)], capture_output=True,
                                 text=True, check=True).stdout.split()
            run = {"attempts": int(out[0]), "accepted": int(out[1]), "crossings": int(out[2]),
                   "seconds": float(out[3]), "t_end": float(out[4])}
            if best is None or run["seconds"] < best["seconds"]:
                best = run
    best.update(compiler=f"{Path(cc).name} {' '.join(flags)}",
                ns_per_attempt=1e9 * best["seconds"] / best["attempts"],
                ns_per_accepted_step=1e9 * best["seconds"] / best["accepted"],
                crossings_per_second=best["crossings"] / best["seconds"])
    return best


def tangent_states(x0: np.ndarray, k: int) -> np.ndarray:
    Y = np.zeros((x0.shape[0], 3 + 3 * k))
    Y[:, :3] = x0
    for c in range(k):
        Y[:, 3 + 3 * c + c] = 1.0
    return Y


def main() -> int:
    load_before = os.getloadavg()
    flow = flowkit.flow("stf", rotation=ROT)
    warm_sections(flow, wait=True)
    S = IntegratorSettings(rtol=RTOL, atol=ATOL)
    c = c_reference()

    # flowkit section kernel, one orbit, one thread
    secs = best_of(lambda: poincare_section(flow, SEED[None], PLANE, crossings=K, rtol=RTOL, atol=ATOL, threads=1))
    sec = poincare_section(flow, SEED[None], PLANE, crossings=K, rtol=RTOL, atol=ATOL, threads=1)
    t_span = float(sec.t_end[0])
    section = {"seconds": secs, "steps": int(sec.steps[0]), "ns_per_step": 1e9 * secs / int(sec.steps[0]),
               "crossings_per_second": K / secs, "t_end": t_span}

    # the plain stepper over the same span: 3, 6 and 12 components
    stepper = {}
    for k in (0, 1, 3):
        Y = tangent_states(SEED[None], k)
        integrate_states(flow, Y, 0.0, 1.0, S, threads=1)   # compile
        dt = best_of(lambda: integrate_states(flow, Y, 0.0, t_span, S, threads=1))
        res = integrate_states(flow, Y, 0.0, t_span, S, threads=1)
        stepper[3 + 3 * k] = {"seconds": dt, "steps": int(res.steps[0]), "ns_per_step": 1e9 * dt / int(res.steps[0])}

    # two threads against one
    rng = np.random.default_rng(0)
    seeds = rng.uniform(-0.6, 0.6, size=(16, 3))
    seeds[:, 1] = 0.0
    many = rng.uniform(-0.5, 0.5, size=(64, 3))
    scaling = {}
    for threads in (1, 2):
        scaling[threads] = {
            "sections_16x4000": best_of(lambda: poincare_section(flow, seeds, PLANE, crossings=4000, rtol=RTOL,
                                                                 atol=ATOL, threads=threads), repeat=2),
            "field_vectors_64": best_of(lambda: integrate_states(flow, tangent_states(many, 1), 0.0, 200.0, S,
                                                                 threads=threads), repeat=2),
        }
    load_after = os.getloadavg()

    data = {"flow": "stf", "rotation": ROT, "rtol": RTOL, "atol": ATOL, "crossings": K, "c_reference": c,
            "flowkit_section": section, "flowkit_stepper": stepper,
            "two_threads": {k: scaling[1][k] / scaling[2][k] for k in scaling[1]}, "one_two_seconds": scaling,
            "load_average_before": load_before, "load_average_after": load_after}
    if "ns_per_accepted_step" in c:
        data["c_over_flowkit_section_per_step"] = c["ns_per_accepted_step"] / section["ns_per_step"]
        data["c_over_flowkit_stepper3_per_step"] = c["ns_per_accepted_step"] / stepper[3]["ns_per_step"]
        print(f"C loop ({c['compiler']}): {c['ns_per_attempt']:.0f} ns/attempt, {c['ns_per_accepted_step']:.0f} "
              f"ns/accepted step, {c['crossings_per_second']:,.0f} crossings/s ({c['attempts']} attempts)")
    else:
        print(f"C loop skipped: {c['skipped']}")
    print(f"flowkit section kernel: {section['ns_per_step']:.0f} ns/step, {section['crossings_per_second']:,.0f} "
          f"crossings/s ({section['steps']} steps)")
    for n, r in stepper.items():
        print(f"flowkit stepper, {n:2d} components: {r['ns_per_step']:.0f} ns/step")
    if "ns_per_accepted_step" in c:
        print(f"C / flowkit per step: section {data['c_over_flowkit_section_per_step']:.2f}x, "
              f"plain stepper {data['c_over_flowkit_stepper3_per_step']:.2f}x")
    for k, v in data["two_threads"].items():
        print(f"two threads / one, {k}: {v:.2f}x")
    print(f"load average before {load_before}, after {load_after} (2 cores; others may share them)")
    save("bench_steps", data)
    return 0


if __name__ == "__main__":
    sys.exit(main())
