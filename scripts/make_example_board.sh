#!/usr/bin/env bash
# Regenerate the bundled example KiCad project (examples/wren-probe-board/) from
# examples/soil-probe-2g4.json: footprint library, board with zones filled, DRC report.
# Needs the system's KiCad 9: the project stays in the format KiCad 9 reads (KiCad 10 loads it
# too).  The board keeps KiCad's default design rules.  Review the diff before committing.
set -euo pipefail
cd "$(dirname "$0")/.."
out=examples/wren-probe-board
rm -rf "$out"
FOOTGEN_KICAD_ROOT= KICAD_CONFIG_HOME=$(mktemp -d) python -m footgen testboard examples/soil-probe-2g4.json -o "$out" --board-name wren-probe
rm -f "$out"/*.kicad_prl "$out"/*.plan.json "$out"/*.drc.json
