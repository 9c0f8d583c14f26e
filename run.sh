#!/usr/bin/env bash
# flowkit's one entry point: sets up .venv on first use (or when pyproject.toml
# changes), then runs what you ask for.
#   bash run.sh            open JupyterLab on the explorer notebook (the main job)
#   bash run.sh headless   no browser: compute a Poincaré section and write figures to out/
#   bash run.sh tests      run the test suite
#   bash run.sh bench      run the benchmarks (figures go to benchmarks/results/)
#   bash run.sh gallery    regenerate every gallery figure
set -euo pipefail
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
[ $# -gt 0 ] && shift
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
    exec jupyter lab ${as_root[@]+"${as_root[@]}"} "$target" "$@"
    ;;
  headless)
    mkdir -p out
    exec python -m flowkit.headless "$@"
    ;;
  tests)
    exec python -m pytest -q "$@"
    ;;
  bench)
    exec python benchmarks/run_all.py "$@"
    ;;
  gallery)
    exec python gallery/make_all.py "$@"
    ;;
  *)
    echo "usage: bash run.sh [lab|headless|tests|bench|gallery]" >&2
    exit 2
    ;;
esac
