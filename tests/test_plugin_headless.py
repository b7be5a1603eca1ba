"""Headless use of the plugin's board code on a board with an outline and ground pours: the
placement core proposes edge sites, the first is chosen, the antenna is placed, regenerated in
place, and the same process keeps using the board (zones, tracks, footprints), fills, saves.

Outside truth: KiCad 9.0.8 (Debian's pcbnew and kicad-cli) and KiCad 10 (Debian sid's, in the
chroot scripts/install_kicad10.sh makes) judge the saved board with their DRC under KiCad's
default Board Setup (the board is made with ``pcbnew.NewBoard``, no rules of ours).
"""

from __future__ import annotations

import json
import os
import shlex
import shutil
import subprocess
from pathlib import Path

import pytest

from plugin_boards import BOARD_H_MM, BOARD_W_MM, BOARD_X0_MM, BOARD_Y0_MM, board_script
from conftest import ROOT, footgen_cmd
from footgen.testrun import kicad_cli, kicad_python

TEMPLATE = ROOT / "templates" / "ism-2g4-straight.json"
KICAD10_ROOT = Path(os.environ.get("FOOTGEN_KICAD10_ROOT", "/opt/footgen-kicad10"))
KICAD10_READY = KICAD10_ROOT / ".footgen-kicad10-ready"
SUBPROCESS_TIMEOUT_S = 900
#: The test board (KiCad mm): outline corner and size, a signal track 3 mm inside the top edge.
#: Proposals are sorted from this point: just below the bottom edge's middle.
FOCUS_MM = (BOARD_X0_MM + BOARD_W_MM / 2, BOARD_Y0_MM + BOARD_H_MM + 5.0)
CHANGED_ARM_LENGTH_MM = 20.0

DRIVER = f"""
import json, sys
from pathlib import Path
import pcbnew
from footgen.plugin import placement, cli_runner
from footgen.plugin.board_view import propose

project, spec_path = Path(sys.argv[1]), Path(sys.argv[2])
board_path = project / "board.kicad_pcb"
""" + board_script("str(board_path)") + f"""
board = pcbnew.LoadBoard(str(board_path))
spec = cli_runner.read_spec(spec_path)
sites = propose(board, spec, "GND", rf_net="RF_ANT", focus_mm={FOCUS_MM!r})
site = sites[0]
spec_file = cli_runner.write_spec(placement.apply_site(spec, site), project / "footgen" / (spec["name"] + ".json"))
first = placement.regenerate(board, spec_file, site=site, reference="AE1")
refused = ""
try:
    placement.regenerate(board, spec_file, placement=placement.Placement((X0 + W / 2, Y0 + 6.5), 0.0, "AE2"), reference="AE2")
except placement.PlacementError as exc:
    refused = str(exc)
changed = json.loads(spec_file.read_text()); changed["arm"] = {{"length_mm": {CHANGED_ARM_LENGTH_MM}}}
cli_runner.write_spec(changed, spec_file)
second = placement.regenerate(board, spec_file, reference="AE1")
# the same process keeps using the board
zones = sorted((z.GetNetname(), board.GetLayerName(z.GetLayer())) for z in board.Zones())
tracks = [t.GetNetname() for t in board.GetTracks()]
footprints = [(f.GetReference(), f.GetFPIDAsString()) for f in board.GetFootprints()]
pcbnew.ZONE_FILLER(board).Fill(board.Zones())
pcbnew.SaveBoard(str(board_path), board)
print(json.dumps({{"sites": sites, "first": first.placement.position_mm, "first_rotation": first.placement.rotation_deg,
    "second": second.placement.position_mm, "second_rotation": second.placement.rotation_deg, "replaced": second.replaced,
    "refused": refused, "zones": zones, "tracks": tracks, "footprints": footprints}}))
"""

# KiCad 10 runs in a Debian sid chroot: the test folder and the source tree are bound in at the
# same paths, the host's root at /host, so the footgen command runs on the host's Python.
CHROOT_RUN = """
set -e
root=$1; shared=$2; src=$3; shift 3
mount --make-rprivate /
mount -t proc proc "$root/proc"
mount --rbind /dev "$root/dev"
mkdir -p "$root/host" "$root$shared" "$root$src"
mount --rbind / "$root/host"
mount --bind "$shared" "$root$shared"
mount --bind -o ro "$src" "$root$src"
exec chroot "$root" "$@"
"""


def _kicad10(tmp: Path, args: list[str], env: dict) -> list[str]:
    return ["unshare", "-m", "sh", "-c", CHROOT_RUN, "sh", str(KICAD10_ROOT), str(tmp), str(ROOT), *args]


KICADS = {
    "9": lambda tmp, args, env: args,
    "10": _kicad10,
}


def _available(version: str) -> str | None:
    """Why KiCad ``version`` cannot run here (None: it can)."""
    if version == "9":
        return None if shutil.which("kicad-cli") else "kicad-cli (KiCad 9) is not installed"
    if not KICAD10_READY.exists():
        return f"no KiCad 10 chroot at {KICAD10_ROOT} (scripts/install_kicad10.sh makes it)"
    if os.geteuid() != 0 or shutil.which("unshare") is None:
        return "running KiCad 10 in its chroot needs root and unshare"
    return None


@pytest.fixture(scope="module", params=sorted(KICADS))
def headless(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> dict:
    version = request.param
    why = _available(version)
    if why:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(why)
        pytest.skip(why)
    tmp = tmp_path_factory.mktemp(f"headless-kicad{version}")
    (tmp / "project").mkdir()
    (tmp / "tmp").mkdir()
    spec = json.loads(TEMPLATE.read_text("utf-8"))
    spec["name"] = "edge_ifa"
    # the template's own fab profile: its footprint keeps KiCad's default Board Setup by itself
    spec_path = tmp / "spec.json"
    spec_path.write_text(json.dumps(spec, indent=2), "utf-8")
    driver = tmp / "driver.py"
    driver.write_text(DRIVER, "utf-8")
    cmd = shlex.join(footgen_cmd())
    env = dict(os.environ, KICAD_CONFIG_HOME=str(tmp / "kicad-config"), PYTHONPATH=str(ROOT), TMPDIR=str(tmp / "tmp"),
               PYTHONWARNINGS="ignore::DeprecationWarning", PYTHONDONTWRITEBYTECODE="1",
               FOOTGEN_CMD=cmd if version == "9" else f"chroot /host {cmd}")
    python = kicad_python() if version == "9" else "python3"
    run = KICADS[version]
    proc = subprocess.run(run(tmp, [python, str(driver), str(tmp / "project"), str(spec_path)], env), capture_output=True, text=True, env=env, timeout=SUBPROCESS_TIMEOUT_S)
    assert proc.returncode == 0, proc.stderr[-3000:]
    result = json.loads(proc.stdout.strip().splitlines()[-1])
    board = tmp / "project" / "board.kicad_pcb"
    report = tmp / "drc.json"
    cli = kicad_cli() if version == "9" else "kicad-cli"
    drc = subprocess.run(run(tmp, [cli, "pcb", "drc", "--format", "json", "--severity-all", "--units", "mm", "-o", str(report), str(board)], env), capture_output=True, text=True, env=env, timeout=SUBPROCESS_TIMEOUT_S)
    assert drc.returncode == 0, drc.stderr[-2000:]
    result["drc"] = json.loads(report.read_text("utf-8"))
    result["version"] = version
    return result


@pytest.mark.kicad
def test_sites_skip_the_edge_with_a_signal_track_and_start_nearest_the_focus(headless: dict) -> None:
    sites = headless["sites"]
    assert [s["rotation_deg"] for s in sites] == [180.0, 270.0, 90.0]  # bottom, right, left; no top
    assert sites[0]["focus_distance_mm"] == 8.0  # clearance area centre 3 mm inside, focus 5 mm outside
    assert sites[0]["ground_length_mm"] == pytest.approx(BOARD_H_MM - 6.0)  # the template's depth


@pytest.mark.kicad
def test_placed_at_the_chosen_site_and_regenerated_in_place(headless: dict) -> None:
    site = headless["sites"][0]
    assert headless["first_rotation"] == site["rotation_deg"]
    assert headless["first"][1] == pytest.approx(site["corner_mm"][1], abs=1e-6)  # on the ground edge
    assert headless["second"] == headless["first"] and headless["second_rotation"] == headless["first_rotation"]
    assert headless["replaced"] is True


@pytest.mark.kicad
def test_a_place_over_other_copper_is_refused_with_the_reason(headless: dict) -> None:
    assert "the clearance area overlaps track on net SIG" in headless["refused"]


@pytest.mark.kicad
def test_the_board_stays_usable_in_the_same_process(headless: dict) -> None:
    assert headless["zones"] == [["GND", "B.Cu"], ["GND", "F.Cu"]]
    assert headless["tracks"] == ["SIG"]
    assert headless["footprints"] == [["AE1", "footgen_antennas:edge_ifa"]]


@pytest.mark.kicad
def test_kicad_drc_finds_no_error_under_default_rules(headless: dict) -> None:
    """KiCad 9.0.8 / 10 DRC, default Board Setup; only the deliberately dangling signal track warns."""
    drc = headless["drc"]
    errors = [f"{v['type']}: {v['description']}" for v in drc["violations"] if v["severity"] == "error"]
    assert errors == []
    assert drc["unconnected_items"] == []
    assert {v["type"] for v in drc["violations"]} == {"track_dangling"}
    assert drc["kicad_version"].startswith(headless["version"] + ".")
