"""``flowkit periodic FLOW``: periodic orbits of a section map (find from a point, scan, follow, manifolds).

Examples::

    flowkit periodic lorenz --normal 0,0,1 --offset 27 --start=-13.7,-19.5 --period 2 --json
    flowkit periodic stf --set rotation=1 --scan --grid 12 --max-period 2
    flowkit periodic stf --set rotation=2.6 --start=-0.81,0 --period 2 --follow rotation=2.6:3.0:5
    flowkit periodic stf --set rotation=1 --start=-0.93,0 --period 2 --manifolds --plot skeleton.png
"""

from __future__ import annotations

import numpy as np

from flowkit.cli.common import add_flow_args, flow_from_args, parse_vector
from flowkit.errors import FlowkitError


def add(sub):
    p = sub.add_parser("periodic", help="periodic orbits, their type, manifolds and continuation (section map)")
    add_flow_args(p)
    p.add_argument("--normal", default="0,1,0", metavar="X,Y,Z", help="section plane normal (default 0,1,0)")
    p.add_argument("--offset", type=float, default=0.0, metavar="D", help="plane offset along the unit normal")
    p.add_argument("--direction", choices=["+", "-", "both"], default="+",
                   help="crossings that count as returns (default +: a one-sided return map)")
    p.add_argument("--stroboscopic", action="store_true", help="stroboscopic map of a time-periodic flow")
    what = p.add_mutually_exclusive_group(required=True)
    what.add_argument("--start", metavar="U,V", help="starting point in section coordinates (or X,Y,Z); "
                      "write --start=-0.9,0 when it begins with a minus sign")
    what.add_argument("--scan", action="store_true", help="scan a region with a seed grid")
    p.add_argument("--period", type=int, default=1, metavar="K", help="returns per period (default 1)")
    p.add_argument("--tol", type=float, default=1e-10, help="Newton tolerance on |P^k(xi) - xi| (default 1e-10)")
    p.add_argument("--max-iter", type=int, default=40, help="Newton iterations (default 40)")
    p.add_argument("--region", metavar="U0,U1,V0,V1", help="scan region in section coordinates")
    p.add_argument("--grid", type=int, default=20, help="scan seeds per direction (default 20)")
    p.add_argument("--max-period", type=int, default=3, help="scan: largest period (default 3)")
    p.add_argument("--follow", metavar="NAME=A:B:N", help="continue the orbit in parameter NAME over N values A..B")
    p.add_argument("--manifolds", action="store_true", help="grow the stable/unstable manifolds (hyperbolic orbit)")
    p.add_argument("--length", type=float, default=1.5, help="manifold branch length (default 1.5)")
    p.add_argument("--rtol", type=float, default=1e-12, help="DOP853 relative tolerance (default 1e-12)")
    p.add_argument("--out", metavar="FILE", help="save the result (.npz, .nc or .json)")
    p.add_argument("--plot", metavar="PNG", help="save a figure of the skeleton over a section")
    return p


def _follow_spec(text: str):
    name, sep, rng = text.partition("=")
    parts = rng.split(":")
    if not sep or len(parts) != 3:
        raise FlowkitError(f"--follow expects NAME=A:B:N, e.g. rotation=0.5:1.0:11; got {text!r}")
    try:
        a, b, n = float(parts[0]), float(parts[1]), int(parts[2])
    except ValueError:
        raise FlowkitError(f"--follow: A and B must be numbers and N an integer; got {text!r}") from None
    if n < 2:
        raise FlowkitError(f"--follow: N must be at least 2; got {n}")
    return name.strip(), np.linspace(a, b, n)


def run(args) -> dict:
    from flowkit.sections import Plane, Stroboscopic
    from flowkit.sections.continuation import continue_orbit
    from flowkit.sections.manifolds import invariant_manifolds
    from flowkit.sections.periodic import find_periodic_orbit
    from flowkit.sections.scan import scan_periodic_orbits

    flow = flow_from_args(args)
    plane = Plane(parse_vector(args.normal, "--normal"), args.offset, args.direction)
    section = Stroboscopic() if args.stroboscopic else plane
    out: dict = {"flow": flow.name, "parameters": flow.param_dict}
    result = None
    orbit = None
    man = None
    if args.scan:
        region = None
        if args.region:
            region = [float(v) for v in args.region.split(",")] if args.region.count(",") == 3 else None
            if region is None:
                raise FlowkitError(f"--region expects U0,U1,V0,V1; got {args.region!r}")
        result = scan_periodic_orbits(flow, section, region=region, grid=args.grid, max_period=args.max_period,
                                      tol=args.tol, rtol=args.rtol)
        out["scan"] = result.summary()
    else:
        start = [float(v) for v in args.start.split(",")] if args.start else None
        if start is None or len(start) not in (2, 3):
            raise FlowkitError(f"--start expects U,V (or X,Y,Z); got {args.start!r}")
        if args.follow:
            name, values = _follow_spec(args.follow)
            result = continue_orbit(flow, start, name, values, section, period=args.period, tol=args.tol,
                                    rtol=args.rtol)
            out["continuation"] = result.summary()
        else:
            orbit = result = find_periodic_orbit(flow, start, section, period=args.period, tol=args.tol,
                                                 max_iter=args.max_iter, rtol=args.rtol)
            out["orbit"] = orbit.summary()
            if args.manifolds:
                man = invariant_manifolds(orbit, length=args.length)
                out["manifolds"] = man.summary()
                result = man
    if args.out:
        out["out"] = str(result.save(args.out))
    if args.plot:
        out["plot"] = _plot(args, flow, section, result, orbit, man)
    return out


def _plot(args, flow, section, result, orbit, man) -> str:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.sections.plot_skeleton import plot_manifold, plot_periodic_orbits

    fig, ax = plt.subplots(figsize=(6, 6))
    target = orbit if orbit is not None else result
    if hasattr(target, "period") and hasattr(target, "xi") and not hasattr(target, "bifurcations"):
        plot_periodic_orbits(ax, target)
    if man is not None:
        plot_manifold(ax, man)
    ax.set_aspect("equal")
    ax.legend(loc="upper right", fontsize=7)
    from flowkit.cli.common import save_figure

    path = save_figure(fig, args.plot, dpi=150)
    plt.close(fig)
    return path


def human(result: dict) -> str:
    if "orbit" in result:
        o = result["orbit"]
        lines = [o["message"]]
        if o["converged"]:
            lines.append(f"point {o['point']}  period time {o['period_time']:.10g}  trace {o['trace']:.6g}  "
                         f"residue {o['residue']:.6g}  det {o['det']:.6g}")
        if "manifolds" in result:
            lines.append(f"manifolds: {len(result['manifolds']['branches'])} branches, "
                         f"{result['manifolds']['homoclinic_points']} homoclinic points")
        return "\n".join(lines)
    if "scan" in result:
        s = result["scan"]
        rows = [f"{s['orbits']} periodic orbits: {s['by_type_and_period']}"]
        rows += [f"  {o['type']:<10} period {o['period']}  at {np.round(o['point'], 6).tolist()}  "
                 f"T = {o['period_time']:.6g}  R = {o['residue']:.4g}" for o in s["orbits_list"]]
        return "\n".join(rows)
    c = result["continuation"]
    return (f"followed {c['parameter']} to {c['followed_to']} ({c['steps']} steps, lost: {c['lost']}); "
            f"bifurcations: {c['bifurcations']}")
