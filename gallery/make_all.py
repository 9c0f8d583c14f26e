"""Regenerate every gallery figure: ``bash run.sh gallery`` (or ``python gallery/make_all.py``).

Runs each gallery script in its own process and writes its PNG and PDF into
``gallery/output/`` (``FLOWKIT_GALLERY_OUT`` overrides). ``FLOWKIT_QUICK=1``
makes quick low-resolution versions. Exits 1 if any script fails; pass script
names to run only those.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
#: seconds one script may take before it counts as failed
TIMEOUT = 1800


def scripts() -> list[Path]:
    """The gallery scripts: every ``*.py`` here except this runner and ``_*.py`` helpers."""
    return sorted(p for p in HERE.glob("*.py") if p.name != "make_all.py" and not p.name.startswith("_"))


def main(argv: list[str]) -> int:
    chosen = [p for p in scripts() if not argv or p.stem in argv or p.name in argv]
    unknown = set(argv) - {p.stem for p in chosen} - {p.name for p in chosen}
    if unknown:
        print(f"unknown gallery scripts: {', '.join(sorted(unknown))}; known: "
              f"{', '.join(p.stem for p in scripts())}", file=sys.stderr)
        return 2
    env = dict(os.environ, MPLBACKEND="Agg")
    failed = []
    for path in chosen:
        tic = time.perf_counter()
        try:
            out = subprocess.run([sys.executable, str(path)], cwd=HERE, env=env, capture_output=True, text=True,
                                 timeout=TIMEOUT)
            ok, log = out.returncode == 0, out.stdout + out.stderr
        except subprocess.TimeoutExpired:
            ok, log = False, f"timed out after {TIMEOUT} s"
        print(f"{'ok  ' if ok else 'FAIL'} {path.name} ({time.perf_counter() - tic:.1f} s)", flush=True)
        if not ok:
            failed.append(path.name)
            print(log[-4000:], file=sys.stderr)
    print(f"{len(chosen) - len(failed)} of {len(chosen)} gallery scripts ran; figures in "
          f"{os.environ.get('FLOWKIT_GALLERY_OUT', HERE / 'output')}")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
