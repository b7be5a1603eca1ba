#!/usr/bin/env bash
# Quick start for a new user: make a virtual environment `.venv` in the checkout, install footgen
# into it and build a bundled example into `build/`.  Works with only the system Python: on
# Debian and Ubuntu, whose Python keeps the venv module's pip in a separate package
# (python3-venv), that package is installed first (with sudo when not root).
#   bash scripts/quickstart.sh [SPEC.json] [OUTPUT_DIR]
set -euo pipefail
cd "$(dirname "$0")/.."
spec=${1:-examples/soil-probe-2g4.json}
out=${2:-build/}
venv=.venv
python=${PYTHON:-python3}

if [ ! -x "$venv/bin/python" ]; then
  if ! "$python" -m venv "$venv" >/dev/null 2>&1; then
    rm -rf "$venv"
    version=$("$python" -c 'import sys; print(f"{sys.version_info[0]}.{sys.version_info[1]}")')
    echo "== $python cannot make a venv with pip: installing Debian's python$version-venv"
    SUDO=""; [ "$(id -u)" = 0 ] || SUDO=sudo
    $SUDO apt-get update -qq
    $SUDO apt-get install -y -qq --no-install-recommends "python$version-venv" >/dev/null
    "$python" -m venv "$venv"
  fi
fi
echo "== installing footgen into $venv"
"$venv/bin/python" -m pip install --disable-pip-version-check .
echo "== building $spec"
"$venv/bin/footgen" build "$spec" -o "$out"
echo "== done: activate the environment with '. $venv/bin/activate' to use the footgen command"
