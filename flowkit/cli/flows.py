"""``flowkit flows``: list the preset flows."""


def add(sub):
    return sub.add_parser("flows", help="list preset flows with their domains and parameters")


def run(args) -> dict:
    from flowkit.flows.registry import family, preset_summary

    out = []
    for name, summary in preset_summary().items():
        fam = family(name)
        out.append({
            "name": name,
            "summary": summary,
            "domain": fam.domain,
            "kind": fam.kind,
            "time_dependence": "steady" if fam.period is None else "time-periodic",
            "parameters": dict(zip(fam.param_names, fam.defaults)),
        })
    return {"flows": out}


def human(result: dict) -> str:
    rows = []
    for f in result["flows"]:
        pars = ", ".join(f"{k}={v:g}" for k, v in f["parameters"].items()) or "-"
        rows.append(f"{f['name']:<12} {f['domain']:<10} {f['time_dependence']:<14} {pars:<36} {f['summary']}")
    return "\n".join(rows)
