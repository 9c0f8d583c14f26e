"""``flowkit loop``: writhe, twist and linking of a closed curve from a file, or of a ribbon carried by a flow."""

from __future__ import annotations


def add(sub):
    p = sub.add_parser(
        "loop",
        help="closed curves: writhe, twist, linking (from a point file, or a ribbon carried by a flow)",
        description="Topology of closed curves. With --file: length, curvature, writhe of the curve in FILE "
        "(one 'x y z' line per point, in order; the last point joins the first), its ribbon's twist with "
        "--normals, and its linking number with the curve in --link. With --flow: carry a closed ribbon through "
        "the flow and report Wr, Tw, Lk over time.",
    )
    p.add_argument("--file", default=None, metavar="CURVE.txt", help="closed curve, one 'x y z' line per point")
    p.add_argument("--normals", default=None, metavar="NORMALS.txt", help="ribbon normals, one per curve point")
    p.add_argument("--link", default=None, metavar="OTHER.txt", help="second closed curve for the linking number")
    p.add_argument("--flow", default=None, metavar="FLOW", help="carry a ribbon through this preset flow")
    p.add_argument("--set", dest="params", action="append", default=[], metavar="NAME=VALUE",
                   help="flow parameter (repeatable), e.g. --set rotation=0.3")
    p.add_argument("--time", type=float, default=None, help="duration for --flow (default 2)")
    p.add_argument("--periods", type=int, default=None, help="periods of a time-periodic --flow instead of --time")
    p.add_argument("--passes", type=int, default=10, help="insertion passes (per period with --periods)")
    p.add_argument("--max-points", type=int, default=20_000, help="point budget of the loop (default 20000)")
    p.add_argument("--save", default=None, metavar="OUT.npz", help="save the result (.npz, .nc or .json)")
    return p


def run(args) -> dict:
    from flowkit.cli.common import parse_params
    from flowkit.errors import FlowkitError
    from flowkit.validation import output_path

    if (args.file is None) == (args.flow is None):
        raise FlowkitError("give exactly one of --file CURVE.txt and --flow FLOW")
    if args.save:
        output_path(args.save, "--save")
    if args.flow is not None:
        from flowkit.flows import flow
        from flowkit.topology.material import material_ribbon

        f = flow(args.flow, **parse_params(args.params))
        kw = {"periods": args.periods} if args.periods is not None else {"time": args.time or 2.0}
        res = material_ribbon(f, passes=args.passes, max_points=args.max_points, **kw)
        if args.save:
            res.save(args.save)
        return {"ribbon_in_flow": res.summary(), "flow": args.flow, "parameters": f.param_dict}
    from flowkit.topology import closed_curve, linking_number, ribbon, ribbon_topology, writhe
    from flowkit.topology.curves import curve_geometry
    from flowkit.topology.pointfile import read_points

    pts = read_points(args.file, "--file")
    c = closed_curve(pts, name=str(args.file))
    out = {"curve": curve_geometry(c).summary(), "writhe": writhe(c).summary()}
    main = None
    if args.normals:
        main = ribbon_topology(ribbon(c, read_points(args.normals, "--normals")))
        out["ribbon"] = main.summary()
    if args.link:
        lk = linking_number(c, closed_curve(read_points(args.link, "--link"), name=str(args.link)))
        out["linking"] = lk.summary()
        main = main or lk
    if args.save:
        (main or writhe(c)).save(args.save)
    return out
