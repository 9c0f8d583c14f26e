"""``flowkit dynamo FLOW``: growth rate of the leading magnetic mode at finite Rm (periodic box or ball).

A ball flow (``stf``, ``hill``, ``t1s1``, ``t2s2``, Lamb flows) goes to the
insulating-sphere solver: ``--resolution L,N`` (harmonic degree, radial nodes) and
``--m`` for one azimuthal order of an axisymmetric flow; the JSON keys are the box's.

One Rm (``--rm``), a curve (``--rm-list``), or the onset (``--critical``, which
scans ``--rm-list`` upward for the first sign change and refines it). For a flow
independent of z, ``--kz K`` solves for one vertical wavenumber (any real value)
and ``--kz-list`` scans wavenumbers at one ``--rm`` (the dispersion relation).
"""

from __future__ import annotations

from flowkit.cli.common import add_flow_args, flow_from_args
from flowkit.errors import FlowkitError


def add(sub):
    p = sub.add_parser("dynamo", help="diffusive dynamo growth rate vs magnetic Reynolds number (2*pi box or "
                                      "insulating ball)")
    add_flow_args(p)
    p.add_argument("--rm", type=float, help="magnetic Reynolds number Rm = 1/eta")
    p.add_argument("--rm-list", metavar="R1,R2,...", help="comma-separated Rm values for a sweep")
    p.add_argument("--critical", action="store_true",
                   help="find the critical Rm (first decay-to-growth sign change along --rm-list, then Brent)")
    p.add_argument("--kz", type=float, metavar="K",
                   help="z-independent flows: solve for fields exp(i K z), any real K >= 0 (N^2 grid)")
    p.add_argument("--kz-list", metavar="K1,K2,...",
                   help="z-independent flows: growth rate at each vertical wavenumber, at --rm")
    p.add_argument("--resolution", default=None,
                   help="box: grid points per side N (even, default 32); ball: L,N (default 16,16); or 'auto'")
    p.add_argument("--method", choices=["eigen", "march", "propagator"], default="eigen",
                   help="eigen: Arnoldi/shift-invert on the operator (Floquet map if time-periodic); march: time "
                        "stepping + fit; propagator (ball): Arnoldi on the time-stepped propagator")
    p.add_argument("--m", default=None, help="ball, axisymmetric flows: one azimuthal order, or 'all'")
    p.add_argument("--check-resolution", default="auto", metavar="M",
                   help="second resolution for the convergence estimate ('auto' = 2N/3 in the box, 3/4 (L,N) "
                        "in the ball; 'none' to skip)")
    p.add_argument("--tolerance", type=float, default=None,
                   help="growth rates at the two resolutions must agree within this to count as converged "
                        "(default 1e-3 box, 1e-2 ball)")
    p.add_argument("--save", metavar="PATH", help="save the result (.npz; single Rm keeps the mode on the grid)")
    p.add_argument("--no-progress", action="store_true", help="hide the progress bar of sweeps")
    return p


def _number_list(text: str | None, option: str, example: str) -> list[float] | None:
    if text is None:
        return None
    try:
        return [float(v) for v in text.split(",") if v.strip()]
    except ValueError:
        raise FlowkitError(f"{option} expects comma-separated numbers, e.g. {example}; got {text!r}") from None


def _resolution(text, option: str):
    """'auto', an integer (box) or 'L,N' (ball)."""
    if text is None or text == "auto":
        return text
    try:
        parts = [int(v) for v in str(text).split(",")]
    except ValueError:
        raise FlowkitError(f"{option} expects an integer (box), L,N (ball) or 'auto'; got {text!r}") from None
    if len(parts) not in (1, 2):
        raise FlowkitError(f"{option} expects an integer (box) or L,N (ball); got {text!r}")
    return parts[0] if len(parts) == 1 else tuple(parts)


def _check(text: str):
    if text in ("auto", None):
        return "auto"
    if text.lower() == "none":
        return None
    return _resolution(text, "--check-resolution")


def run(args) -> dict:
    from flowkit.dynamo import critical_rm, growth_rate, sweep_kz, sweep_rm  # also registers t1s1, t2s2

    flow = flow_from_args(args)
    rms = _number_list(args.rm_list, "--rm-list", "5,10,20")
    kzs = _number_list(args.kz_list, "--kz-list", "0.25,0.5,1")
    check = _check(args.check_resolution)
    resolution = _resolution(args.resolution, "--resolution")
    common = {"resolution": resolution, "method": args.method}
    if flow.domain == "ball":
        if args.kz is not None or kzs is not None:
            raise FlowkitError("--kz and --kz-list are for z-independent periodic flows; a ball flow has none")
        if resolution is None:
            common["resolution"] = (16, 16)
        if args.m is not None:
            common["m"] = args.m if args.m == "all" else int(args.m)
    elif args.m is not None:
        raise FlowkitError("--m (azimuthal order) is for ball flows")
    if args.method == "propagator" and flow.domain != "ball":
        raise FlowkitError("--method propagator is for ball flows; use eigen or march in the box")
    tol = {} if args.tolerance is None else {"tolerance": args.tolerance}
    if kzs is not None:
        if args.kz is not None or rms is not None or args.critical:
            raise FlowkitError("--kz-list scans wavenumbers at one --rm; drop --kz, --rm-list and --critical")
        if args.rm is None:
            raise FlowkitError("--kz-list needs the magnetic Reynolds number: add --rm R")
        res = sweep_kz(flow, args.rm, kzs, check_resolution=check, **tol,
                       progress=not args.no_progress, **common)
        out = res.summary()
        out["fastest"] = dict(zip(("kz", "growth_rate"), res.fastest)) if len(res.kz) else None
        if args.save:
            out["saved"] = str(res.save(args.save))
        return out
    if args.kz is not None:
        common["kz"] = args.kz
    if args.critical:
        kw = {} if rms is None else {"rm_list": rms}
        res = critical_rm(flow, check_resolution=check, progress=not args.no_progress, **common, **kw)
        out = res.summary()
    elif rms is not None:
        res = sweep_rm(flow, rms, check_resolution=check, **tol,
                       progress=not args.no_progress, **common)
        out = res.summary()
    elif args.rm is not None:
        res = growth_rate(flow, args.rm, check_resolution=check, **tol,
                          keep_mode=bool(args.save), **common)
        out = res.summary()
    else:
        raise FlowkitError("say what to compute: --rm R (one value), --rm-list R1,R2,... (a curve) or --critical")
    if args.save:
        out["saved"] = str(res.save(args.save))
    return out


def _num(value, spec: str) -> str:
    """Format a number; JSON turns NaN into None, shown as n/a."""
    width = spec.split(".")[0]
    return format(value, spec) if value is not None else format("n/a", f">{width}" if width else "")


def human(result: dict) -> str:
    if "rm_critical" in result:
        kz = result.get("provenance", {}).get("method_settings", {}).get("kz")
        return (f"critical Rm = {result['rm_critical']:.4f} +/- {result['uncertainty']:.2g} "
                f"(bracket {result['bracket']}, frequency {result['frequency']:.4g}, N = {result['resolution']}"
                + ("" if kz is None else f", kz = {kz:g}") + ")")
    if "points" in result:
        by_kz = "kz" in result and isinstance(result["kz"], list)
        axis = "kz" if by_kz else "rm"
        fixed_kz = result.get("provenance", {}).get("method_settings", {}).get("kz")
        lines = [f"Rm = {result['rm']:g}" if by_kz else ("" if fixed_kz is None else f"kz = {fixed_kz:g}"),
                 f"{'kz' if by_kz else 'Rm':>10} {'growth rate':>13} {'frequency':>10} "
                 f"{'error':>9} converged"]
        for p in result["points"]:
            lines.append(f"{p[axis]:>10.4g} {_num(p['growth_rate'], '13.6f')} {_num(p['frequency'], '10.5f')} "
                         f"{_num(p['error_estimate'], '9.2g')} {p['converged']}")
        fastest = result.get("fastest")
        if fastest:
            lines.append(f"fastest: kz = {fastest['kz']:g}, growth rate {fastest['growth_rate']:.6f}")
        return "\n".join(line for line in lines if line)
    kz = "" if result.get("kz") is None else f", kz = {result['kz']:g}"
    return (f"growth rate {_num(result['growth_rate'], '.6f')}, frequency {_num(result['frequency'], '.6f')} at "
            f"Rm = {result['rm']:g}{kz}, N = {result['resolution']} ({result['method']}); "
            f"error estimate {_num(result['error_estimate'], '.2g')} "
            f"vs N = {result['check'].get('resolution')}, converged: {result['converged']}; "
            f"{result['seconds']:.1f} s" + (f"\n{result['reason']}" if result.get("reason") else ""))
