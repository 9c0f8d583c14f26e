"""``flowkit check FLOW``: divergence, wall-normal and Stokes residuals at random points."""

import time

from flowkit.cli.common import add_flow_args, flow_from_args


def add(sub):
    p = sub.add_parser("check", help="residuals: divergence, u.n on the wall, curl of lap u")
    add_flow_args(p)
    p.add_argument("--points", type=int, default=2000, help="number of random points (default 2000)")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    return p


def run(args) -> dict:
    from flowkit.errors import FlowkitError
    from flowkit.flows.checks import check_flow

    if args.points < 1:
        raise FlowkitError(f"--points must be at least 1; got {args.points}")
    flow = flow_from_args(args)
    t0 = time.perf_counter()
    compile_s = flow.family.warm()
    out = check_flow(flow, n=args.points, seed=args.seed)
    out["compile_seconds"] = compile_s
    out["seconds"] = time.perf_counter() - t0 - compile_s
    return out
