#!/usr/bin/env bash
# Install everything the tests need (Debian packages: KiCad 9, openEMS; a venv with the Python
# test dependencies) and run the whole test suite.  Safe to re-run: installed pieces are kept.
#   bash scripts/test.sh [pytest args]
set -euo pipefail
cd "$(dirname "$0")/.."
here=$(pwd)
export DEBIAN_FRONTEND=noninteractive

need_apt=0
command -v kicad-cli >/dev/null 2>&1 || need_apt=1
/usr/bin/python3 -c "import pcbnew" >/dev/null 2>&1 || need_apt=1
/usr/bin/python3 -c "import CSXCAD, openEMS" >/dev/null 2>&1 || need_apt=1
command -v xvfb-run >/dev/null 2>&1 || need_apt=1
if [ "$need_apt" = 1 ]; then
  echo "== installing KiCad 9 (bookworm-backports), openEMS (bookworm) and Xvfb"
  SUDO=""; [ "$(id -u)" = 0 ] || SUDO=sudo
  if ! grep -rqs bookworm-backports /etc/apt/sources.list /etc/apt/sources.list.d/; then
    printf 'Types: deb\nURIs: http://deb.debian.org/debian\nSuites: bookworm-backports\nComponents: main\nSigned-By: /usr/share/keyrings/debian-archive-keyring.gpg\n' \
      | $SUDO tee /etc/apt/sources.list.d/footgen-backports.sources >/dev/null
  fi
  $SUDO apt-get update -qq
  $SUDO apt-get install -y -qq -t bookworm-backports --no-install-recommends kicad >/dev/null
  $SUDO apt-get install -y -qq --no-install-recommends openems python3-openems \
    libhwloc-plugins/bookworm-backports >/dev/null
  # a virtual screen for the plugin's dialog test
  $SUDO apt-get install -y -qq --no-install-recommends xvfb xauth >/dev/null
fi

# pcbnew and openEMS exist only for Debian's /usr/bin/python3, so the test venv is made from it.
venv=${FOOTGEN_VENV:-$here/.venv-test}
if [ ! -x "$venv/bin/python" ]; then
  echo "== creating $venv"
  /usr/bin/python3 -m venv --system-site-packages "$venv"
fi
echo "== installing footgen and its test dependencies"
"$venv/bin/python" -m pip install -q --disable-pip-version-check -c scripts/test-constraints.txt -e ".[test]"
export OPENBLAS_NUM_THREADS=${OPENBLAS_NUM_THREADS:-1}  # small dense solves: one BLAS thread is faster
export PYTHONDONTWRITEBYTECODE=1  # no __pycache__ folders in the source tree
echo "== running the tests"
exec "$venv/bin/python" -m pytest "$@"
