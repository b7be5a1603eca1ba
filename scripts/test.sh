#!/usr/bin/env bash
# Install everything the tests need (Debian 12 or 13 packages: KiCad 9, openEMS; KiCad 10 in a
# Debian sid root; a venv with the Python test dependencies) and run the whole test suite.
# Safe to re-run: installed pieces are kept.
#   bash scripts/test.sh [pytest args]
set -euo pipefail
cd "$(dirname "$0")/.."
here=$(pwd)
export DEBIAN_FRONTEND=noninteractive

# Debian 12 (bookworm) or 13 (trixie): KiCad 9 comes from the release's backports suite.
codename=$(. /etc/os-release && echo "${VERSION_CODENAME:-}")
case "$codename" in
  bookworm|trixie) ;;
  *) echo "test.sh: Debian 12 (bookworm) or 13 (trixie) expected, /etc/os-release says '${codename:-unknown}'" >&2; exit 2 ;;
esac
backports="$codename-backports"
SUDO=""; [ "$(id -u)" = 0 ] || SUDO=sudo

need_apt=0
command -v kicad-cli >/dev/null 2>&1 || need_apt=1
/usr/bin/python3 -c "import pcbnew" >/dev/null 2>&1 || need_apt=1
/usr/bin/python3 -c "import CSXCAD, openEMS" >/dev/null 2>&1 || need_apt=1
command -v xvfb-run >/dev/null 2>&1 || need_apt=1
command -v debootstrap >/dev/null 2>&1 || need_apt=1
if [ "$need_apt" = 1 ]; then
  echo "== installing KiCad 9 ($backports), openEMS ($codename), Xvfb and debootstrap"
  if ! grep -rqs "$backports" /etc/apt/sources.list /etc/apt/sources.list.d/; then
    mirror=$(bash scripts/debian_mirror.sh)
    printf 'Types: deb\nURIs: %s\nSuites: %s\nComponents: main\nSigned-By: /usr/share/keyrings/debian-archive-keyring.gpg\n' "$mirror" "$backports" \
      | $SUDO tee /etc/apt/sources.list.d/footgen-backports.sources >/dev/null
  fi
  $SUDO apt-get update -qq
  $SUDO apt-get install -y -qq -t "$backports" --no-install-recommends kicad >/dev/null
  # openEMS with KiCad's hwloc from backports: one install, so apt resolves them together
  # (where backports has no newer hwloc, the plain install resolves)
  $SUDO apt-get install -y -qq --no-install-recommends openems python3-openems \
    "libhwloc-plugins/$backports" xvfb xauth debootstrap >/dev/null \
    || $SUDO apt-get install -y -qq --no-install-recommends openems python3-openems xvfb xauth debootstrap >/dev/null
fi
# KiCad 10 (Debian sid) in its own root outside the repository, beside the system's KiCad 9
FOOTGEN_KICAD10_ROOT=${FOOTGEN_KICAD10_ROOT:-/opt/footgen-kicad10} bash scripts/install_kicad10.sh
export FOOTGEN_KICAD10_ROOT=${FOOTGEN_KICAD10_ROOT:-/opt/footgen-kicad10}

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
