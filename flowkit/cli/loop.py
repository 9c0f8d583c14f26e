"""``flowkit loop``: writhe, twist and linking of a closed curve from a file, or of a ribbon carried by a flow."""

from __future__ import annotations


def add(sub):
    p = sub.add_parser(
        "loop",
        help="closed curves: writhe, twist, linking (from a point file, or a ribbon carried by a flow)",
        description="Topology of closed curves. With --file: length, curvature, writhe of the curve in FILE "
        "(one 'x y z' line per point, in order; the last point joins the first), its ribbon's twist with "
        "--normals, and its linking number with the curve in --link. With --flow: carry a closed ribbon through "
        "the flow and report Wr, Tw, Lk over time. With --mode: the linking number of two field lines of a saved "
        "dynamo mode (box or ball), traced from --seeds to their --returns-th return and closed by chords.",
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
    p.add_argument("--mode", default=None, metavar="MODE.npz",
                   help="saved dynamo result with its mode (growth_rate(..., keep_mode=True).save(...))")
    p.add_argument("--seeds", nargs=2, default=None, metavar="X,Y,Z", help="with --mode: seeds of the two field lines")
    p.add_argument("--returns", default="1,1", metavar="KA,KB",
                   help="with --mode: returns of each line to the plane through its seed (default 1,1)")
    p.add_argument("--samples", type=int, default=2000, help="with --mode: points per field line (default 2000)")
    p.add_argument("--save", default=None, metavar="OUT.npz", help="save the result (.npz, .nc or .json)")
    return p


def run(args) -> dict:
    from flowkit.cli.common import parse_params
    from flowkit.errors import FlowkitError
    from flowkit.validation import output_path

    if sum(v is not None for v in (args.file, args.flow, args.mode)) != 1:
        raise FlowkitError("give exactly one of --file CURVE.txt, --flow FLOW and --mode MODE.npz")
    if args.save:
        output_path(args.save, "--save")
    if args.mode is not None:
        return _field_lines(args)
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


def _numbers(text: str, n: int, option: str, kind=float) -> list:
    from flowkit.errors import FlowkitError

    try:
        vals = [kind(v) for v in text.split(",")]
    except ValueError:
        vals = []
    if len(vals) != n:
        raise FlowkitError(f"{option} takes {n} comma-separated numbers (e.g. {','.join(['1'] * n)}); got {text!r}")
    return vals


def _field_lines(args) -> dict:
    from flowkit.errors import FlowkitError
    from flowkit.results import load
    from flowkit.topology.fieldlines import mode_field_flow
    from flowkit.topology.fieldlinks import field_line_linking

    if not args.seeds:
        raise FlowkitError("--mode needs --seeds X,Y,Z X,Y,Z (one seed per field line)")
    res = load(args.mode)
    if getattr(res, "mode", None) is None:
        raise FlowkitError(f"--mode {args.mode} holds no mode: save a growth_rate(..., keep_mode=True) result")
    a, b = (_numbers(s, 3, "--seeds") for s in args.seeds)
    returns = _numbers(args.returns, 2, "--returns", int)
    lk = field_line_linking(mode_field_flow(res), a, b, returns=returns, samples=args.samples)
    if args.save:
        lk.save(args.save)
    return {"field_line_linking": lk.summary(), "mode": str(args.mode), "seeds": [a, b], "returns": returns}
