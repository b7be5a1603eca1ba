#!/usr/bin/env bash
# Print the Debian archive URI this machine's apt sources already use (deb822 .sources files or
# one-line sources.list entries), so extra suites come from the same mirror.  Exit 1 if none.
set -euo pipefail
mirror=$(cat /etc/apt/sources.list.d/*.sources 2>/dev/null | awk '/^URIs:/ && $2 ~ /debian\/?$/ {print $2; exit}')
if [ -z "$mirror" ]; then
  mirror=$(cat /etc/apt/sources.list /etc/apt/sources.list.d/*.list 2>/dev/null \
    | awk '$1 == "deb" {for (i = 2; i <= NF; i++) if ($i ~ /^(https?|file):.*debian\/?$/) {print $i; exit}}' | head -n1)
fi
if [ -z "$mirror" ]; then
  echo "no Debian archive found in /etc/apt/sources.list*: add your Debian mirror to apt's sources" >&2
  exit 1
fi
echo "$mirror"
