"""Symbolic work of building a flow: the 1989 sphere benchmark flows written as a user writes them.

t1s1 and t2s2 of Proc. R. Soc. Lond. A 425 (1989) 407-429, toroidal part curl(T x) plus
eps times the poloidal part curl curl(T x), T = f(r) P_l(cos theta), in Cartesian sympy
with sqrt(x^2 + y^2 + z^2) left unsimplified (t1s1: l = 1, f = sin(pi r), eps = 0.17;
t2s2: l = 2, f = r sin(pi r), eps = 0.14).

Timed in one run:
* now: ``velocity_gradient_source`` (cse of the velocity once, the gradient by the chain rule
  on the shared pieces, the closed-form split skipped for large non-polynomial formulas) and
  the whole ``custom_flow`` call (which also compiles the gradient for its divergence check);
* before: the same formulas the way codegen handled every formula until this change
  (whole-expression derivatives, cse with its algebraic preprocessing, and the search for a
  closed-form split), in a subprocess with a time cap (sympy cannot be interrupted).

``python benchmarks/bench_build.py`` prints a summary and writes benchmarks/results/build.json.
"""

import json
import os
import subprocess
import sys
import time
import warnings
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))
from _common import machine, save  # noqa: E402

import sympy as sp  # noqa: E402

#: seconds the "before" build may run in its subprocess before it is reported as "more than"
BEFORE_CAP = float(os.environ.get("FLOWKIT_BENCH_BUILD_CAP", "240"))


def sphere_flow(l: int, eps):
    """(u, v, w) of the benchmark flow of degree l, as unsimplified Cartesian sympy expressions."""
    from flowkit.flows.codegen import X, Y, Z

    r = sp.sqrt(X**2 + Y**2 + Z**2)
    cos_theta = Z / r
    P = sp.legendre(l, cos_theta)
    f = sp.sin(sp.pi * r) * (r if l == 2 else 1)
    T = f * P
    pos = sp.Matrix([X, Y, Z])

    def curl(V):
        return sp.Matrix([sp.diff(V[2], Y) - sp.diff(V[1], Z), sp.diff(V[0], Z) - sp.diff(V[2], X),
                          sp.diff(V[1], X) - sp.diff(V[0], Y)])

    tor = sp.Matrix([sp.diff(T, c) for c in (X, Y, Z)]).cross(pos)
    return list(tor + eps * curl(tor))


CASES = {"t1s1": (1, sp.Rational(17, 100)), "t2s2": (2, sp.Rational(14, 100))}


def before_child(name: str) -> None:
    """Run in the subprocess: the previous code path (every formula treated as small)."""
    from flowkit.flows import codegen

    codegen.LARGE_OPS = 10**12  # whole-expression derivatives, cse preprocessing, closed-form split
    exprs = sphere_flow(*CASES[name])
    t0 = time.perf_counter()
    try:
        codegen.split_fields(exprs)
        split = "ok"
    except codegen.SplitUnavailable as exc:
        split = str(exc)[:80]
    t_split = time.perf_counter() - t0
    t0 = time.perf_counter()
    grads = [sp.diff(e, c) for e in exprs for c in codegen.COORDS]
    lines = codegen._function("velocity", exprs, []) + codegen._function("gradient", grads, [])
    t_code = time.perf_counter() - t0
    print(json.dumps({"split_seconds": t_split, "split": split, "derivatives_cse_print_seconds": t_code,
                      "lines": len(lines)}))


def before(name: str) -> dict:
    cmd = [sys.executable, __file__, "--before", name]
    t0 = time.perf_counter()
    try:
        out = subprocess.run(cmd, capture_output=True, text=True, timeout=BEFORE_CAP, check=True).stdout
        res = json.loads(out.strip().splitlines()[-1])
        res["seconds"] = time.perf_counter() - t0
    except subprocess.TimeoutExpired:
        res = {"seconds": None, "more_than_seconds": BEFORE_CAP}
    return res


def now(name: str) -> dict:
    import flowkit
    from flowkit.flows.codegen import velocity_gradient_source

    t0 = time.perf_counter()
    exprs = sphere_flow(*CASES[name])
    t_user = time.perf_counter() - t0
    ops = int(sum(sp.count_ops(e) for e in exprs))
    t0 = time.perf_counter()
    velocity_gradient_source(exprs, [])
    t_code = time.perf_counter() - t0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t0 = time.perf_counter()
        flowkit.custom_flow(exprs, domain="ball", name=name)
        t_flow = time.perf_counter() - t0
    return {"operations": ops, "user_sympy_construction_seconds": t_user, "codegen_seconds": t_code,
            "custom_flow_seconds_incl_gradient_compile": t_flow}


def main():
    load = machine()["load_average"]
    cases = {}
    for name in CASES:
        res = {"now": now(name), "before": before(name)}
        b = res["before"]
        b_total = b["seconds"] if b.get("seconds") is not None else None
        res["speedup_codegen"] = (b_total / res["now"]["codegen_seconds"]) if b_total else None
        cases[name] = res
        print(f"{name}: {res['now']['operations']} operations; codegen now {res['now']['codegen_seconds']:.2f} s, "
              f"custom_flow {res['now']['custom_flow_seconds_incl_gradient_compile']:.2f} s (with the gradient "
              f"compile); before: " + (f"{b_total:.1f} s (split search {b['split_seconds']:.1f} s, derivatives + cse "
                                       f"+ printing {b['derivatives_cse_print_seconds']:.1f} s)" if b_total else
                                       f"more than {BEFORE_CAP:.0f} s (stopped)"))
    save("build", {"load_average_before": load, "load_average_after": machine()["load_average"], "cases": cases})


if __name__ == "__main__":
    if len(sys.argv) == 3 and sys.argv[1] == "--before":
        before_child(sys.argv[2])
    else:
        main()
