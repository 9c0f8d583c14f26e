"""``flowkit describe FLOW``: formula, parameters, domain and check residuals."""

from flowkit.cli.common import add_flow_args, flow_from_args


def add(sub):
    p = sub.add_parser("describe", help="formula, parameters, domain and residual checks of a flow")
    add_flow_args(p)
    return p


def run(args) -> dict:
    from flowkit.flows.checks import check_flow

    flow = flow_from_args(args)
    fam = flow.family
    checks = check_flow(flow, n=500)
    return {
        "flow": flow.name,
        "description": fam.description,
        "formula": {"u": fam.formula[0], "v": fam.formula[1], "w": fam.formula[2]},
        "parameters": flow.param_dict,
        "defaults": dict(zip(fam.param_names, fam.defaults)),
        "domain": flow.domain,
        "kind": flow.kind,
        "period": flow.period,
        "gradient": fam.gradient_method,
        "structure": fam.structure,
        "checks": {k: checks[k] for k in ("divergence_max", "boundary_normal_max", "stokes_residual_max")},
    }
