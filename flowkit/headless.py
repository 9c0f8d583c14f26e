"""Headless main job: check the flagship flow and write paper-ready output to ``out/``.

Run with ``bash run.sh headless``. Writes

* ``out/flowkit-check.json``: residual checks and provenance of the stf flow;
* ``out/section-stf.png`` and ``out/section-stf.pdf``: a Poincaré section of the
  stretch-twist-fold flow (point layer rasterized, axes vector);
* ``out/section-stf.npz``: the raw crossings with provenance (reload with
  ``flowkit.sections.Section.load``).

``FLOWKIT_QUICK=1`` shrinks the section (fewer orbits and crossings).
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path


def _section_figure(out: Path) -> dict:
    """Compute and draw the stf section; return a JSON-ready summary."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from flowkit import flow, seeding
    from flowkit.plot import plot_section
    from flowkit.sections import Plane, poincare_section

    quick = os.environ.get("FLOWKIT_QUICK") == "1"
    # rotation 0.1: a mixed phase space (islands in a chaotic sea) makes a telling figure.
    # Normal -y with axis1 = x gives in-plane coordinates (x, z) of the plane y = 0.
    f = flow("stf", rotation=0.1)
    plane = Plane((0, -1, 0), 0.0, "both", axis1=(1, 0, 0))
    seeds = seeding.across_domain(f, plane, 8 if quick else 20)
    sec = poincare_section(f, seeds, plane, crossings=300 if quick else 2000, rtol=1e-10, atol=1e-12)
    npz = sec.save(out / "section-stf.npz")
    fig, ax = plt.subplots(figsize=(4.5, 4.5), layout="constrained")
    plot_section(ax, sec, size=0.25)
    ax.set_title("stretch-twist-fold flow, rotation 0.1: section y = 0", fontsize=9)
    paths = []
    for ext, dpi in (("png", 300), ("pdf", 300)):
        path = out / f"section-stf.{ext}"
        fig.savefig(path, dpi=dpi)
        paths.append(str(path))
    plt.close(fig)
    return {"figures": paths, "crossings": str(npz), **sec.summary(),
            "integration_seconds": sec.provenance["seconds"]}


def main(argv: list[str] | None = None) -> int:
    from flowkit import flow
    from flowkit.flows.checks import check_flow

    out = Path("out")
    out.mkdir(exist_ok=True)
    f = flow("stf", rotation=0.3)
    report = {"provenance": f.provenance(), "checks": check_flow(f)}
    path = out / "flowkit-check.json"
    path.write_text(json.dumps(report, indent=2))
    print(f"wrote {path}")
    section = _section_figure(out)
    for item in section["figures"] + [section["crossings"]]:
        print(f"wrote {item}")
    print(f"section: {section['crossings_total']} crossings of {section['orbits']} orbits, "
          f"outcomes {({k: v for k, v in section['outcomes'].items() if v})}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
