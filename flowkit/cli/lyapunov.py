"""``flowkit lyapunov FLOW --point X,Y,Z --time T``: Lyapunov spectrum of one orbit."""

from __future__ import annotations

import time

from flowkit.cli.common import add_flow_args, add_max_seconds, flow_from_args, parse_vector


def add(sub):
    p = sub.add_parser("lyapunov", help="Lyapunov spectrum of one orbit with standard errors and a convergence verdict")
    add_flow_args(p)
    p.add_argument("--point", required=True, metavar="X,Y,Z", help="starting point, e.g. 0.1,0.2,0.3")
    p.add_argument("--time", required=True, type=float, metavar="T", help="averaging time after the transient")
    p.add_argument("--transient", type=float, default=None, metavar="T", help="discarded time first (default 0.1*T)")
    p.add_argument("--t0", type=float, default=0.0, help="start time (time-periodic flows; default 0)")
    p.add_argument("--blocks", type=int, default=20, help="blocks for the standard error (default 20)")
    p.add_argument("--rtol", type=float, default=1e-10, help="DOP853 relative tolerance (default 1e-10)")
    add_max_seconds(p)
    p.add_argument("--atol", type=float, default=1e-12, help="DOP853 absolute tolerance (default 1e-12)")
    p.add_argument("--out", metavar="FILE", help="save the result (.npz or .json, with the running estimate)")
    return p


def warm_tangent(flow) -> float:
    """Compile the tangent kernel for ``flow`` on a tiny run; return the seconds spent."""
    import numpy as np

    from flowkit.chaos.tangent import dop853_settings, n_exponents, run_tangent, tangent_states

    t0 = time.perf_counter()
    flow.family.warm()
    start = np.zeros((1, 3)) if flow.domain != "periodic" else np.ones((1, 3))
    run_tangent(flow, tangent_states(start, n_exponents(flow)), np.array([0.0, 1e-6]), dop853_settings(None), 1)
    return time.perf_counter() - t0


def run(args) -> dict:
    from flowkit.chaos import lyapunov_spectrum
    from flowkit.integrate.batch import IntegratorSettings

    flow = flow_from_args(args)
    point = parse_vector(args.point, "--point")
    settings = IntegratorSettings(rtol=args.rtol, atol=args.atol)
    compile_s = warm_tangent(flow)
    spec = lyapunov_spectrum(flow, point, args.time, transient=args.transient, t0=args.t0, blocks=args.blocks,
                             settings=settings, max_seconds=args.max_seconds)
    out = spec.summary()
    out.update(flow=flow.name, parameters=flow.param_dict, compile_seconds=compile_s,
               gradient=flow.family.gradient_method)
    if args.out:
        out["out"] = str(spec.save(args.out))
    return out


def human(res: dict) -> str:
    lines = [f"Lyapunov spectrum of {res['flow']} {res['parameters']} from {res['point']}:"]
    for i, (e, s) in enumerate(zip(res["exponents"], res["stderr"]), 1):
        e = float("nan") if e is None else e
        s = float("nan") if s is None else s
        lines.append(f"  lambda_{i} = {e:+.6f} ± {s:.2e}")
    lines.append(f"  sum {res['sum']:+.6f} (mean divergence {res['mean_divergence']:+.6f})")
    lines.append("  converged" if res["converged"] else f"  NOT converged: {res['reason']}")
    lines.append(f"  {res['seconds']:.2f} s (+ {res['compile_seconds']:.1f} s compile), {res['steps']} steps")
    return "\n".join(lines)
