#!/usr/bin/env bash
# flowkit's one entry point: sets up .venv on first use (or when pyproject.toml
# changes), then runs what you ask for.
#   bash run.sh            open JupyterLab on the explorer notebook (the main job)
#   bash run.sh lab ARGS   the same, ARGS passed to JupyterLab (e.g. --no-browser --port 8899);
#                          `bash run.sh --no-browser ...` (an option first) means `lab` too
#   bash run.sh flowkit …  the flowkit command line from .venv (e.g. bash run.sh flowkit flows)
#   bash run.sh python …   .venv's Python (e.g. bash run.sh python my_script.py)
#   bash run.sh headless   no browser: compute a Poincaré section and write figures to out/
#   bash run.sh tests      run the test suite
#   bash run.sh bench      run the benchmarks (figures go to benchmarks/results/)
#   bash run.sh gallery    regenerate every gallery figure
set -euo pipefail
CALLER=$PWD  # flowkit and python tasks run where you called run.sh from (your relative paths work)
cd "$(dirname "$0")"
PY=${PYTHON:-python3}
VENV=${FLOWKIT_VENV:-.venv}

setup() {
  if [ ! -x "$VENV/bin/python" ]; then
    echo "flowkit: creating $VENV with $($PY --version)" >&2
    "$PY" -m venv "$VENV"
  fi
  local stamp="$VENV/.flowkit-installed"
  if [ ! -f "$stamp" ] || [ pyproject.toml -nt "$stamp" ]; then
    echo "flowkit: installing flowkit and its dependencies into $VENV" >&2
    "$VENV/bin/python" -m pip install --quiet --upgrade pip
    "$VENV/bin/python" -m pip install --quiet -e ".[lab,cluster,test]"
    touch "$stamp"
  fi
}

task=${1:-lab}
case "$task" in
  -*) task=lab ;;          # an option first: JupyterLab options, e.g. --no-browser --port 8899
  *) [ $# -gt 0 ] && shift ;;
esac
setup
case "$VENV" in
  /*) export PATH="$VENV/bin:$PATH" ;;
  *) export PATH="$PWD/$VENV/bin:$PATH" ;;
esac
case "$task" in
  lab)
    target=notebooks/explore.ipynb
    [ -f "$target" ] || target=notebooks
    as_root=()
    [ "$(id -u)" = 0 ] && as_root=(--allow-root)  # containers and cloud machines often run as root
    # The server serves the repository; its start page is the explorer notebook, so the URL it
    # prints (with the token) opens the notebook. jupyter/lab-settings holds this project's
    # defaults (no news pop-up, no update check); your own JupyterLab settings still win.
    echo "flowkit: starting JupyterLab; open the URL below that ends in /lab/tree/$target?token=..." >&2
    echo "flowkit: on a remote machine: bash run.sh --no-browser --port 8899, then on your computer" >&2
    echo "flowkit:   ssh -N -L 8899:localhost:8899 USER@HOST and open that URL in your browser" >&2
    exec jupyter lab ${as_root[@]+"${as_root[@]}"} --ServerApp.root_dir="$PWD" \
      --LabApp.default_url="/lab/tree/$target" --LabApp.app_settings_dir="$PWD/jupyter/lab-settings" "$@"
    ;;
  flowkit)
    cd "$CALLER"
    exec flowkit "$@"
    ;;
  python)
    cd "$CALLER"
    exec python "$@"
    ;;
  headless)
    mkdir -p out
    exec python -m flowkit.headless "$@"
    ;;
  tests)
    # one pytest worker per core (pytest-xdist); work stealing keeps a file's tests together
    # where it can, so module fixtures and compiled kernels are reused. `-n 0`: one process.
    exec python -m pytest -q -n auto --dist worksteal "$@"
    ;;
  bench)
    exec python benchmarks/run_all.py "$@"
    ;;
  gallery)
    exec python gallery/make_all.py "$@"
    ;;
  *)
    echo "usage: bash run.sh [lab [JUPYTERLAB OPTIONS]|headless|tests|bench|gallery|flowkit ARGS|python ARGS]" >&2
    exit 2
    ;;
esac
