"""Run every benchmark script in this folder (``bash run.sh bench``).

Each ``bench_*.py`` is standalone: it measures flowkit against a baseline in the
same run, prints a summary and writes JSON into ``benchmarks/results/``.
Pass names to run a subset: ``bash run.sh bench sections ftle``.
"""

import subprocess
import sys
from pathlib import Path

here = Path(__file__).parent


def main(argv):
    scripts = sorted(here.glob("bench_*.py"))
    if argv:
        scripts = [s for s in scripts if any(a in s.stem for a in argv)]
    failed = []
    for script in scripts:
        print(f"== {script.stem} ==", flush=True)
        if subprocess.run([sys.executable, str(script)]).returncode != 0:
            failed.append(script.stem)
    if failed:
        print(f"failed: {', '.join(failed)}")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
