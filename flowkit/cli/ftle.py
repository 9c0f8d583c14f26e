"""``flowkit ftle FLOW --plane ... --resolution NxM --time T``: FTLE field on a planar grid.

The plane is ``AXIS=VALUE`` (a coordinate plane, e.g. ``z=0.3``: grid axes x, y;
for ``x=c`` they are y, z and for ``y=c`` x, z) or ``POINT;U;V`` (a point on the
plane and two in-plane directions, e.g. ``0,0,0;1,0,0;0,1,1``). ``--span`` gives
the coordinate ranges along the two grid axes, measured from the point; it
defaults to the flow's domain (unit ball or 2*pi box).
"""

from __future__ import annotations

import time

from flowkit.cli.common import add_flow_args, add_max_seconds, flow_from_args, parse_vector
from flowkit.errors import FlowkitError


def add(sub):
    p = sub.add_parser("ftle", help="finite-time Lyapunov exponent field on a planar grid")
    add_flow_args(p)
    p.add_argument("--plane", required=True, metavar="SPEC",
                   help="AXIS=VALUE (e.g. z=0) or POINT;U;V (e.g. '0,0,0;1,0,0;0,1,1')")
    p.add_argument("--span", metavar="S0,S1,R0,R1", help="grid ranges along the two plane axes (default: the domain)")
    p.add_argument("--resolution", default="128x128", metavar="NxM", help="grid points along the two axes (default 128x128)")
    p.add_argument("--time", required=True, type=float, metavar="T", help="integration time (positive)")
    p.add_argument("--t0", type=float, default=0.0, help="start time (default 0)")
    p.add_argument("--backward", action="store_true", help="integrate backward in time (attracting structures)")
    p.add_argument("--method", choices=["dop853", "rk4"], default="dop853", help="integrator (default dop853)")
    p.add_argument("--step", type=float, help="RK4 step (with --method rk4)")
    p.add_argument("--rtol", type=float, default=1e-9, help="DOP853 relative tolerance (default 1e-9)")
    p.add_argument("--gradient", choices=("variational", "flowmap"), default="variational",
                   help="deformation gradient from the variational equations (default) or from the flow map "
                        "by centred finite differences on the grid (cheaper; smears ridges)")
    p.add_argument("--error-norm", choices=("full", "position"), default="full",
                   help="what DOP853's step control measures with the variational gradient: the position and the "
                        "deformation gradient (default) or the position only (faster; the gradient goes unchecked "
                        "at stagnation points)")
    add_max_seconds(p)
    p.add_argument("--threads", type=int, help="threads (default: all cores)")
    p.add_argument("--out", metavar="FILE", help="save the field (.npz or .nc)")
    p.add_argument("--plot", metavar="PNG", help="draw the field with a colorbar into this image")
    return p


def run(args) -> dict:
    from flowkit.chaos import GridPlane, ftle_field
    from flowkit.chaos.grid import check_resolution
    from flowkit.integrate.batch import IntegratorSettings

    flow = flow_from_args(args)
    span = parse_vector(args.span, "--span", 4) if args.span else None
    plane = GridPlane.parse(args.plane, span)
    resolution = check_resolution(args.resolution, "--resolution")  # size and memory, before any compiling
    if args.method == "rk4":
        if args.step is None:
            raise FlowkitError("--method rk4 needs --step, e.g. --step 0.01")
        settings = IntegratorSettings(method="rk4", step=args.step)
    else:
        settings = IntegratorSettings(rtol=args.rtol, atol=args.rtol * 1e-2)
    t0 = time.perf_counter()
    try:  # compile on a tiny grid first, so that `seconds` measures the run alone
        ftle_field(flow, plane, (3, 3), args.time * 1e-6, t0=args.t0, settings=settings, threads=1,
                   method=args.gradient, error_norm=args.error_norm)
    except FlowkitError:
        pass  # the real call below reports the problem
    compile_s = time.perf_counter() - t0
    field = ftle_field(flow, plane, resolution, args.time, t0=args.t0, settings=settings, threads=args.threads,
                       direction="backward" if args.backward else "forward", method=args.gradient,
                       error_norm=args.error_norm, max_seconds=args.max_seconds)
    s = field.summary()
    res = {
        "flow": flow.name, "parameters": flow.param_dict, "resolution": list(resolution),
        "integrator": settings.as_dict(), **{k: s[k] for k in ("plane", "time", "t0", "direction")},
        "ftle_min": s["min"], "ftle_max": s["max"], "ftle_mean": s["mean"], "outcomes": s["outcomes"],
        "seconds": s["seconds"], "compile_seconds": compile_s,
    }
    if args.out:
        res["out"] = str(field.save(args.out))
    if args.plot:
        res["plot"] = _plot(field, args.plot)
    return res


def _plot(field, path: str) -> str:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit.plot import plot_ftle

    fig, ax = plt.subplots(figsize=(6.4, 4.8), layout="constrained")
    plot_ftle(ax, field)
    from flowkit.cli.common import save_figure

    path = save_figure(fig, path, dpi=150)
    plt.close(fig)
    return path


def human(res: dict) -> str:
    n, m = res["resolution"]
    return (f"{res['direction']} FTLE of {res['flow']} {res['parameters']} on {res['plane']['label']}, {n}x{m} grid, "
            f"T = {res['time']:g}: min {res['ftle_min']}, mean {res['ftle_mean']}, max {res['ftle_max']}\n"
            f"outcomes {res['outcomes']}\n{res['seconds']:.2f} s (+ {res['compile_seconds']:.1f} s compile)"
            + (f"\nsaved {res['out']}" if "out" in res else "") + (f"\nplot {res['plot']}" if "plot" in res else ""))
