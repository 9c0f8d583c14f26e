"""Headless main job: check the flagship flow and write a report to ``out/``.

Run with ``bash run.sh headless``. Writes ``out/flowkit-check.json``; as more
analysis lands this grows into the paper-figure run (section, spectra, growth).
"""

from __future__ import annotations

import json
import sys
from pathlib import Path


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
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
