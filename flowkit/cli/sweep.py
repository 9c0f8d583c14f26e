"""``flowkit sweep FLOW --vary ... --measure ... --store PATH``: resumable parameter sweeps."""

import json

from flowkit.cli.common import add_flow_args, parse_params


def add(sub):
    p = sub.add_parser("sweep", help="compute measures over a parameter grid; resumes after interruption")
    add_flow_args(p)
    p.add_argument("--vary", action="append", default=[], metavar="NAME=START:STOP:COUNT",
                   help="a varied parameter (repeatable); NAME=V1,V2,... for explicit values")
    p.add_argument("--measure", action="append", default=[], metavar="M",
                   help="a measure to compute (repeatable); see --list-measures")
    p.add_argument("--option", action="append", default=[], metavar="MEASURE.NAME=VALUE",
                   help="an option of one measure, e.g. mean_ftle.particles=128")
    p.add_argument("--store", required=False, metavar="PATH", help="folder of the results store")
    p.add_argument("--seed", type=int, default=0, help="base random seed (default 0)")
    p.add_argument("--scheduler", metavar="ADDRESS", help="address of a running dask scheduler")
    p.add_argument("--local-cluster", type=int, metavar="N", help="start a local dask cluster with N workers")
    p.add_argument("--list-measures", action="store_true", help="list the available measures and exit")
    p.add_argument("--no-progress", action="store_true", help="hide the progress bar")
    return p


def _options(items):
    from flowkit.errors import FlowkitError

    out = {}
    for item in items:
        key, sep, val = item.partition("=")
        meas, dot, name = key.partition(".")
        if not sep or not dot:
            raise FlowkitError(f"--option expects MEASURE.NAME=VALUE, e.g. mean_ftle.particles=128; got {item!r}")
        try:
            value = json.loads(val)
        except json.JSONDecodeError:
            value = val
        out.setdefault(meas, {})[name] = value
    return out


def run(args) -> dict:
    from flowkit.errors import FlowkitError
    from flowkit.sweep import MEASURES, SweepSpec, parse_range, run_sweep

    if args.list_measures:
        return {"measures": {k: (v.__doc__ or "").strip().splitlines()[0] for k, v in sorted(MEASURES.items())}}
    if not args.store:
        raise FlowkitError("--store PATH is required (a new folder, or the folder of the sweep to resume)")
    axes = dict(parse_range(v) for v in args.vary)
    spec = SweepSpec(flow={"preset": args.flow}, base=parse_params(args.params), axes=axes,
                     measures=list(args.measure), options=_options(args.option), seed=args.seed)
    out = run_sweep(spec, args.store, scheduler=args.scheduler, local_cluster=args.local_cluster,
                    progress=not args.no_progress)
    return {
        "points": [{"params": r["params"], "measures": r["measures"]} for r in out["points"]],
        "seconds": out["seconds"],
        "computed": len(out["computed"]),
        "reused": out["reused"],
        "backend": out["backend"],
        "dashboard": out["dashboard"],
        "store": out["store"],
    }


def human(result: dict) -> str:
    if "measures" in result and "points" not in result:
        return "\n".join(f"{k:<18} {v}" for k, v in result["measures"].items())
    lines = [f"{len(result['points'])} points ({result['computed']} computed now, {result['reused']} reused) "
             f"in {result['seconds']:.2f} s -> {result['store']}"]
    for rec in result["points"]:
        pars = " ".join(f"{k}={v:g}" for k, v in rec["params"].items())
        meas = "  ".join(f"{k}={v['value']:.6g}±{(v.get('stderr') or 0):.2g}" if v.get("value") is not None
                         else f"{k}=nan" for k, v in rec["measures"].items())
        lines.append(f"  {pars}: {meas}")
    return "\n".join(lines)
