"""``flowkit section FLOW``: a Poincaré section, saved as npz and optionally plotted."""

from __future__ import annotations

import math
import time

from flowkit.cli.common import add_flow_args, flow_from_args, parse_vector
from flowkit.errors import FlowkitError


def add(sub):
    p = sub.add_parser("section", help="Poincaré section of orbits through a plane (or stroboscopic)")
    add_flow_args(p)
    p.add_argument("--normal", default="0,1,0", metavar="X,Y,Z", help="plane normal (default 0,1,0); a coordinate axis is drawn in the other two coordinates, "
                        "e.g. y = D in (x, z)")
    p.add_argument("--offset", type=float, default=0.0, metavar="D", help="plane offset along the unit normal (default 0)")
    p.add_argument("--direction", choices=["+", "-", "both"], default="both",
                   help="crossings kept: both (default, as the lab and `run.sh headless`), or + / - for one side "
                        "only (a one-sided return map)")
    p.add_argument("--stroboscopic", action="store_true", help="sample every period instead (time-periodic flows)")
    seeds = p.add_mutually_exclusive_group()
    seeds.add_argument("--seeds", type=int, default=None, metavar="N",
                       help="N seeds along the first in-plane axis across the domain (default 12)")
    seeds.add_argument("--seed-file", default=None, metavar="F", help="text file with one 'x y z' per line")
    p.add_argument("--random", action="store_true", help="with --seeds: random seeds in the domain instead of a line")
    p.add_argument("--crossings", type=int, required=True, metavar="K", help="crossing budget per orbit")
    p.add_argument("--rtol", type=float, default=1e-10, metavar="R", help="DOP853 relative tolerance (default 1e-10)")
    p.add_argument("--atol", type=float, default=None, metavar="A", help="absolute tolerance (default rtol/100)")
    p.add_argument("--method", choices=["dop853", "rk4", "splitting"], default="dop853", help="integrator (default dop853)")
    p.add_argument("--step", type=float, default=None, help="step size for rk4 / splitting")
    p.add_argument("--threads", type=int, default=None, help="threads (default: all)")
    p.add_argument("--out", default=None, metavar="FILE.npz", help="save the crossings and provenance")
    p.add_argument("--plot", default=None, metavar="PNG", help="save a figure (PNG, PDF or SVG by extension)")
    return p


def run(args) -> dict:
    import numpy as np

    from flowkit import seeding
    from flowkit.sections import Plane, Stroboscopic, poincare_section, warm_sections

    flow = flow_from_args(args)
    if args.crossings < 1:
        raise FlowkitError(f"--crossings must be a positive integer; got {args.crossings}")
    if not (math.isfinite(args.rtol) and args.rtol > 0):
        raise FlowkitError(f"--rtol must be a positive number; got {args.rtol}")
    plane = _plane(parse_vector(args.normal, "--normal"), args.offset, args.direction)
    geom = Stroboscopic() if args.stroboscopic else plane
    if args.seed_file:
        X0 = seeding.read_seed_file(args.seed_file)
    else:
        n = 12 if args.seeds is None else args.seeds
        if n < 1:
            raise FlowkitError(f"--seeds must be a positive integer; got {n}")
        X0 = seeding.random_in_domain(flow, n) if args.random else seeding.across_domain(flow, plane, n)
    compile_s = warm_sections(flow, args.method)
    tic = time.perf_counter()
    sec = poincare_section(
        flow, X0, geom, crossings=args.crossings, rtol=args.rtol,
        atol=args.atol if args.atol is not None else args.rtol * 1e-2,
        method=args.method, step=args.step, threads=args.threads,
    )
    wall = time.perf_counter() - tic
    out = {
        "flow": flow.name,
        "parameters": flow.param_dict,
        "section": sec.geometry,
        **sec.summary(),
        "seconds": sec.provenance["seconds"],
        "wall_seconds": wall,
        "compile_seconds": compile_s,
        "crossings_per_second": sec.crossings_total / sec.provenance["seconds"] if sec.provenance["seconds"] > 0 else None,
    }
    if isinstance(geom, Plane) and sec.crossings_total:
        out["plane_residual_max"] = float(np.abs(sec.points @ plane.n - plane.offset
                                                 - _levels(sec, plane)).max())
    if args.out:
        out["out"] = str(sec.save(args.out))
    if args.plot:
        out["plot"] = _figure(sec, args.plot)
    return out


def _plane(normal, offset: float, direction: str):
    """The section plane; a coordinate normal is drawn in the other two coordinates, in order
    (y = c in (x, z), as in the lab), other normals in the plane's own right-handed basis."""
    import numpy as np

    from flowkit.sections import Plane
    from flowkit.sections.geometry import coordinate_plane

    n = np.asarray(normal, dtype=float)
    for i, axis in enumerate("xyz"):
        if n[i] > 0 and np.count_nonzero(n) == 1:
            return coordinate_plane(axis, offset, direction)
    return Plane(n, offset, direction)


def _levels(sec, plane):
    """Nearest plane image of each crossing (periodic domains repeat the plane)."""
    import numpy as np

    lam = sec.geometry.get("lattice_spacing")
    s = sec.points @ plane.n - plane.offset
    return 0.0 if not lam else lam * np.round(s / lam)


def _figure(sec, path: str) -> str:
    import matplotlib

    matplotlib.use("Agg", force=False)
    import matplotlib.pyplot as plt

    from flowkit.plot import plot_section

    fig, ax = plt.subplots(figsize=(5, 5), layout="constrained")
    plot_section(ax, sec)
    pars = ", ".join(f"{k} = {v:g}" for k, v in sec.provenance["parameters"].items())
    ax.set_title(f"{sec.provenance['flow']} ({pars})" if pars else sec.provenance["flow"], fontsize=10)
    from flowkit.cli.common import save_figure

    path = save_figure(fig, path, dpi=200)
    plt.close(fig)
    return path


def human(result: dict) -> str:
    lines = [f"{result['flow']}: {result['crossings_total']} crossings of {result['orbits']} orbits "
             f"in {result['seconds']:.3g} s (compile {result['compile_seconds']:.3g} s)"]
    lines.append("outcomes: " + ", ".join(f"{k} {v}" for k, v in result["outcomes"].items() if v))
    for key in ("out", "plot"):
        if key in result:
            lines.append(f"wrote {result[key]}")
    return "\n".join(lines)
