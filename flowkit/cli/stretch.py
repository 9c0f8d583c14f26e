"""``flowkit stretch FLOW``: frozen-in field growth rates (stretching, moments, material line, net flux)."""

from __future__ import annotations

import math
import time


def add(sub):
    p = sub.add_parser(
        "stretch",
        help="ideal frozen-in field: log-stretching rate, moment rates L(p), line stretching, net flux rate",
        description="Growth rates of a frozen-in field carried by FLOW (a flow or a map such as cat-map). "
        "Rates are per unit time (per iteration for maps).",
    )
    from flowkit.cli.common import add_flow_args, add_max_seconds

    add_flow_args(p)
    p.add_argument("--particles", type=int, default=1000, help="particles carrying field vectors (default 1000)")
    p.add_argument("--time", type=float, default=None,
                   help="duration (flows, default 20) or number of iterations (maps, default 20)")
    p.add_argument("--p", dest="orders", default="", metavar="P1,P2",
                   help="extra moment orders besides 1 and 2, e.g. --p 0.5,3")
    p.add_argument("--samples", type=int, default=100, help="checkpoints between 0 and --time (default 100)")
    p.add_argument("--transient", type=float, default=0.0,
                   help="advance the particles this long before attaching the field (e.g. onto an attractor)")
    p.add_argument("--line-points", type=int, default=50_000,
                   help="point budget of the material line (default 50000; 0 skips the line)")
    p.add_argument("--flux-samples", type=int, default=2000,
                   help="Monte Carlo points on the flux surface (default 2000; 0 skips the flux)")
    p.add_argument("--rtol", type=float, default=1e-9, help="DOP853 relative tolerance (default 1e-9)")
    add_max_seconds(p)
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    return p


def _orders(text: str) -> list[float]:
    from flowkit.errors import FlowkitError

    if not text.strip():
        return []
    try:
        return [float(v) for v in text.split(",")]
    except ValueError:
        raise FlowkitError(f"--p expects comma-separated numbers, e.g. --p 0.5,3; got {text!r}") from None


def _rate(d: dict) -> dict:
    """A rate from a result summary, as printed: value, error bar, fit window."""
    return {"value": d["value"], "stderr": d["stderr"], "window": d["window"]}


def run(args) -> dict:
    from flowkit.cli.common import flow_from_args
    from flowkit.errors import FlowkitError
    from flowkit.fields import stretch
    from flowkit.flows.maps import is_map
    from flowkit.integrate.batch import IntegratorSettings

    system = flow_from_args(args)
    mapping = is_map(system)
    duration = 20 if args.time is None else args.time
    if args.time is not None and not (math.isfinite(args.time) and args.time > 0):
        raise FlowkitError(f"--time must be positive; got {args.time:g}")
    if mapping:
        if float(duration) != int(duration):
            raise FlowkitError(f"--time is a number of iterations for map '{system.name}'; got {duration:g}")
        duration = int(duration)
    if args.particles < 1:
        raise FlowkitError(f"--particles must be at least 1; got {args.particles}")
    if args.line_points < 0 or args.flux_samples < 0:
        raise FlowkitError("--line-points and --flux-samples must be >= 0 (0 skips that part)")
    settings = None if mapping else IntegratorSettings(rtol=args.rtol, atol=1e-12)
    t0 = time.perf_counter()
    transient = int(args.transient) if mapping and float(args.transient).is_integer() else args.transient
    res = stretch(system, args.particles, duration, p=_orders(args.orders), samples=args.samples,
                  transient=transient, settings=settings, seed=args.seed, max_seconds=args.max_seconds)
    s = res.summary()
    out = {
        "flow": system.name, "parameters": system.param_dict, "units": s["units"], "time": duration,
        "lyapunov": _rate(s["lyapunov"]),
        "moment_rates": {k: _rate(v) for k, v in s["moment_rates"].items()},
        "effective_particles": s["effective_particles"],
        "particles": {"requested": s["particles"]["requested"], "used": s["particles"]["used"]},
        "outcomes": s["outcomes"], "mean_divergence": s["mean_divergence"], "partial": s["partial"],
        "notes": s["notes"],
    }
    out["line_stretching"], out["line"] = _line(system, duration, args, settings)
    out["flux_rate"], out["flux"] = _flux(system, duration, args, settings)
    out["seconds"] = time.perf_counter() - t0
    return out


def _skipped(reason: str) -> dict:
    return {"value": None, "stderr": None, "note": reason}


def _line(system, duration, args, settings):
    from flowkit.fields import material_line

    if args.line_points == 0:
        return _skipped("skipped (--line-points 0)"), None
    if getattr(system, "kind", "") == "system":
        return _skipped("not computed for ODE systems (no material lines); use a flow or a map"), None
    s = material_line(system, duration, max_points=max(args.line_points, 16), settings=settings,
                      max_seconds=args.max_seconds).summary()
    info = {k: s[k] for k in ("final_time", "final_points", "final_length", "stopped", "memory_bytes",
                              "cut_segments", "notes")}
    return _rate(s["line_stretching"]), info


def _flux(system, duration, args, settings):
    from flowkit.fields import flux_growth

    if args.flux_samples == 0:
        return _skipped("skipped (--flux-samples 0)"), None
    if getattr(system, "kind", "") == "system" or getattr(system, "domain", "") == "unbounded":
        return _skipped("not computed: needs a flow in a bounded or periodic domain, or a map"), None
    s = flux_growth(system, duration, samples=max(args.flux_samples, 2), settings=settings, seed=args.seed,
                    max_seconds=args.max_seconds).summary()
    info = {"unsigned_rate": _rate(s["unsigned_rate"]),
            **{k: s[k] for k in ("final_ratio", "final_ratio_stderr", "surface", "field", "notes")}}
    return _rate(s["flux_rate"]), info


def human(result: dict) -> str:
    def fmt(r):
        if r.get("value") is None:
            return r.get("note", "n/a")
        return f"{r['value']:.5g} ± {r['stderr']:.2g}" if r.get("stderr") is not None else f"{r['value']:.5g}"

    lines = [f"{result['flow']} {result['parameters']}  (rates {result['units']})",
             f"  mean log-stretching (Lyapunov)  {fmt(result['lyapunov'])}"]
    for p, r in result["moment_rates"].items():
        lines.append(f"  L({p}) moment rate           {fmt(r)}   [effective particles "
                     f"{result['effective_particles'][p]:.3g}]")
    if result["mean_divergence"]:
        lines.append(f"  (mean div u along the paths {result['mean_divergence']:.4g}: the field moments include "
                     "the density factor rho/rho0)")
    lines.append(f"  material line stretching       {fmt(result['line_stretching'])}")
    if result.get("flux"):
        lines.append(f"  net flux rate                  {fmt(result['flux_rate'])}   (unsigned "
                     f"{fmt(result['flux']['unsigned_rate'])}, final net/unsigned {result['flux']['final_ratio']})")
    else:
        lines.append(f"  net flux rate                  {fmt(result['flux_rate'])}")
    for n in result["notes"] + (result.get("line") or {}).get("notes", []) + (result.get("flux") or {}).get(
            "notes", []):
        lines.append(f"  note: {n}")
    lines.append(f"  ({result['seconds']:.1f} s)")
    return "\n".join(lines)
