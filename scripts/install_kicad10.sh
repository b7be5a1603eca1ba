#!/usr/bin/env bash
# KiCad 10 for the tests, beside the system's KiCad 9: a Debian sid chroot made with debootstrap,
# outside the repository (default /opt/footgen-kicad10, or $FOOTGEN_KICAD10_ROOT).  KiCad runs in
# it only as a subprocess (footgen/testrun.py).  Safe to re-run: a finished chroot is kept, an
# unfinished one is rebuilt.  Needs root (or sudo).
set -euo pipefail
root=${FOOTGEN_KICAD10_ROOT:-/opt/footgen-kicad10}
stamp="$root/.footgen-kicad10-ready"
[ -f "$stamp" ] && exit 0
SUDO=""; [ "$(id -u)" = 0 ] || SUDO=sudo
export DEBIAN_FRONTEND=noninteractive

# the Debian mirror this machine already uses
mirror=$(bash "$(dirname "$0")/debian_mirror.sh")

if ! command -v debootstrap >/dev/null 2>&1; then
  $SUDO apt-get install -y -qq --no-install-recommends debootstrap >/dev/null \
    || { $SUDO apt-get update -qq && $SUDO apt-get install -y -qq --no-install-recommends debootstrap >/dev/null; }
fi

echo "== KiCad 10: Debian sid chroot in $root from $mirror"
$SUDO rm -rf "$root"
$SUDO debootstrap --variant=minbase sid "$root" "$mirror" >/dev/null
apt_opts=(-o Acquire::Check-Valid-Until=false -o APT::Install-Recommends=false -qq)
$SUDO unshare -m sh -c '
  set -e
  mount -t proc proc "$1/proc"
  chroot "$1" apt-get "$2" "$3" "$4" "$5" "$6" update
  chroot "$1" env DEBIAN_FRONTEND=noninteractive apt-get "$2" "$3" "$4" "$5" "$6" install -y kicad python3 >/dev/null
  chroot "$1" apt-get clean
' sh "$root" "${apt_opts[@]}"
$SUDO touch "$stamp"
