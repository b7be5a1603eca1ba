"""The KiCad plugin's non-GUI part: placing and regenerating the antenna on a board.

Outside truth: KiCad 9 itself (pcbnew 9.0 loads, rotates and saves the footprint; ``kicad-cli
pcb drc --format json --severity-all`` judges the board).  pcbnew runs only in subprocesses
(KiCad can take the process down on bad input, and importing it warns).
"""

from __future__ import annotations

import json
import os
import shlex
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import ROOT, footgen_cmd
from plugin_boards import run_under_xvfb
from footgen.testrun import DrcReport, kicad_python, run_drc
from footgen.plugin import cli_runner
from footgen.plugin.placement import PlacementError, ensure_project_library, install_footprint, library_table_names, stackup_laminate

TEMPLATE = ROOT / "templates" / "ism-2g4-straight.json"
#: Where footgen's test board puts the feed point (footgen/testboard.py BOARD_ORIGIN_MM).
FEED_POINT_MM = (100.0, 100.0)
#: Board coordinates agree to KiCad's internal unit (1 nm) after rounding to 1 nm in mm; the
#: pad outline is polygonised by KiCad with 1 um maximum error (placement.OUTLINE_MAX_ERROR_MM).
POSITION_TOL_MM = 1e-6
COPPER_TOL_MM = 2e-3
#: Arm length given in the changed spec (mm), shorter than the sized one.
CHANGED_ARM_LENGTH_MM = 18.0
SUBPROCESS_TIMEOUT_S = 600


def _env(tmp: Path) -> dict[str, str]:
    env = dict(os.environ)
    env["KICAD_CONFIG_HOME"] = str(tmp / "kicad-config")
    env["PYTHONPATH"] = str(ROOT) + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
    env[cli_runner.FOOTGEN_CMD_ENV] = shlex.join(footgen_cmd())
    env["PYTHONWARNINGS"] = "ignore::DeprecationWarning"  # pcbnew's SWIG deprecation notice
    return env


def _kicad_py(args: list[str], tmp: Path, *, check: bool = True) -> subprocess.CompletedProcess:
    proc = subprocess.run([kicad_python(), *args], capture_output=True, text=True, env=_env(tmp), timeout=SUBPROCESS_TIMEOUT_S)
    if check and proc.returncode != 0:
        raise AssertionError(f"{args} failed ({proc.returncode}):\n{proc.stdout}\n{proc.stderr}")
    return proc


def _script(tmp: Path, code: str, *args: str) -> subprocess.CompletedProcess:
    path = tmp / "driver.py"
    path.write_text(code, "utf-8")
    return _kicad_py([str(path), *args], tmp)


def _describe(board: Path, tmp: Path) -> list[dict]:
    proc = _kicad_py(["-m", "footgen.plugin.placement", "--describe", str(board)], tmp)
    return json.loads(proc.stdout.strip().splitlines()[-1])


def _place(board: Path, spec: Path, tmp: Path, *extra: str, check: bool = True) -> subprocess.CompletedProcess:
    return _kicad_py(["-m", "footgen.plugin.placement", str(board), str(spec), *extra], tmp, check=check)


def _fill(board: Path, tmp: Path) -> None:
    _kicad_py(["-c", "import sys; from pathlib import Path; from footgen.plugin.board import fill_zones; fill_zones(Path(sys.argv[1]))", str(board)], tmp)


def _spec(tmp: Path, name: str, **changes) -> Path:
    data = json.loads(TEMPLATE.read_text("utf-8"))
    data["name"] = name
    for key, value in changes.items():
        data[key] = value
    path = tmp / f"{name}.json"
    path.write_text(json.dumps(data, indent=2), "utf-8")
    return path


def _drc(board: Path) -> DrcReport:
    return DrcReport(board, run_drc(board))


def _vertices(rings: list[list[list[float]]]) -> list[tuple[float, float]]:
    return sorted((round(x, 3), round(y, 3)) for ring in rings for x, y in ring)


def _span(rings: list[list[list[float]]]) -> tuple[float, float]:
    xs = [p[0] for r in rings for p in r]
    ys = [p[1] for r in rings for p in r]
    return max(xs) - min(xs), max(ys) - min(ys)


REMOVE_ALL_FOOTPRINTS = """
import sys, pcbnew
board = pcbnew.LoadBoard(sys.argv[1])
for fp in list(board.GetFootprints()):
    board.Remove(fp)
pcbnew.SaveBoard(sys.argv[1], board)
"""

MOVE_RF_TO_NEW_NET = """
import sys, pcbnew
board = pcbnew.LoadBoard(sys.argv[1])
net = pcbnew.NETINFO_ITEM(board, sys.argv[2])
board.Add(net)
old = board.FindNet("RF_ANT")
for track in board.GetTracks():
    if track.GetNetCode() == old.GetNetCode():
        track.SetNet(net)
for fp in board.GetFootprints():
    for pad in fp.Pads():
        if pad.GetNumber() == "1":
            pad.SetNet(net)
pcbnew.SaveBoard(sys.argv[1], board)
"""


@pytest.fixture(scope="module")
def placed(kicad, tmp_path_factory: pytest.TempPathFactory) -> dict:
    """A footgen test board whose footprint was made rotated by footgen (output.rotation_deg
    90), stripped of it and of its library table, then given the unrotated footprint by the
    plugin's placement code at the feed point with KiCad rotation 90."""
    tmp = tmp_path_factory.mktemp("placed")
    spec_r90 = _spec(tmp, "ifa_r90", output={"rotation_deg": 90})
    project = tmp / "project"
    proc = subprocess.run(footgen_cmd() + ["testboard", str(spec_r90), "-o", str(project)], capture_output=True, text=True, env=_env(tmp), timeout=SUBPROCESS_TIMEOUT_S)
    assert proc.returncode == 0, proc.stderr
    board = project / "ifa_r90-test.kicad_pcb"
    reference_copper = _describe(board, tmp)[0]["feed_copper_mm"]
    _script(tmp, REMOVE_ALL_FOOTPRINTS, str(board))
    (project / "fp-lib-table").unlink()
    spec_r0 = _spec(tmp, "ifa_r0")
    proc = _place(board, spec_r0, tmp, "--at", *map(str, FEED_POINT_MM), "--rotation", "90", "--reference", "AE5")
    outcome = json.loads(proc.stdout.strip().splitlines()[-1])
    _fill(board, tmp)
    return {"tmp": tmp, "project": project, "board": board, "spec": spec_r0, "outcome": outcome, "reference_copper": reference_copper}


@pytest.mark.kicad
def test_placed_footprint_has_the_asked_position_rotation_reference_and_nets(placed: dict) -> None:
    (fp,) = _describe(placed["board"], placed["tmp"])
    assert fp["fpid"] == "footgen_antennas:ifa_r0"
    assert fp["reference"] == "AE5"
    assert fp["position_mm"] == pytest.approx(FEED_POINT_MM, abs=POSITION_TOL_MM)
    assert fp["rotation_deg"] == pytest.approx(90.0, abs=1e-9)
    assert fp["pad_nets"] == {"1": "RF_ANT", "2": "GND"}
    assert placed["outcome"]["replaced"] is False
    assert placed["outcome"]["library_added"] is True


@pytest.mark.kicad
def test_kicad_rotation_of_the_placed_copper_matches_footgens_rotated_footprint(placed: dict) -> None:
    """KiCad's orientation 90 (pcbnew 9 FOOTPRINT.SetOrientationDegrees) on the unrotated
    footprint must give the copper footgen writes for output.rotation_deg 90 ("degrees
    counter-clockwise as KiCad shows it", footgen spec schema)."""
    (fp,) = _describe(placed["board"], placed["tmp"])
    got, want = _vertices(fp["feed_copper_mm"]), _vertices(placed["reference_copper"])
    assert len(got) == len(want)
    for (gx, gy), (wx, wy) in zip(got, want):
        assert gx == pytest.approx(wx, abs=COPPER_TOL_MM) and gy == pytest.approx(wy, abs=COPPER_TOL_MM)


@pytest.mark.kicad
def test_placed_board_passes_kicad_drc_and_finds_its_library(placed: dict) -> None:
    """KiCad 9 DRC (kicad-cli pcb drc --severity-all): no errors, and no library warning, so the
    fp-lib-table entry the plugin added resolves to the footprint it placed."""
    report = _drc(placed["board"])
    assert report.drc_errors == []
    assert not report.types("warning") & {"lib_footprint_issues", "lib_footprint_mismatch"}
    table = (placed["project"] / "fp-lib-table").read_text("utf-8")
    assert library_table_names(table) == ["footgen_antennas"]


@pytest.mark.kicad
def test_regeneration_keeps_placement_reference_and_nets_and_changes_the_copper(placed: dict, tmp_path: Path) -> None:
    project = tmp_path / "project"
    shutil.copytree(placed["project"], project)
    board = project / placed["board"].name
    # the board's own choice of net name for the feed, which regeneration must keep
    _script(tmp_path, MOVE_RF_TO_NEW_NET, str(board), "ANT_FEED")
    (before,) = _describe(board, tmp_path)
    report = (project / "footgen" / "ifa_r0.report.md").read_text("utf-8")
    sized_arm_mm = float(next(line for line in report.splitlines() if line.startswith("| arm length")).split("|")[2].split()[0])
    spec = _spec(tmp_path, "ifa_r0", arm={"length_mm": CHANGED_ARM_LENGTH_MM})
    proc = _place(board, spec, tmp_path)
    outcome = json.loads(proc.stdout.strip().splitlines()[-1])
    _fill(board, tmp_path)
    (after,) = _describe(board, tmp_path)
    assert outcome["replaced"] is True and outcome["library_added"] is False
    for key in ("position_mm", "rotation_deg", "reference", "flipped", "locked", "fpid"):
        assert after[key] == before[key], key
    assert after["pad_nets"] == {"1": "ANT_FEED", "2": "GND"}
    # the arm runs along board y after the 90 degree rotation: its span shrinks by the change
    assert _span(before["feed_copper_mm"])[1] - _span(after["feed_copper_mm"])[1] == pytest.approx(sized_arm_mm - CHANGED_ARM_LENGTH_MM, abs=COPPER_TOL_MM)
    assert _span(after["feed_copper_mm"])[0] == pytest.approx(_span(before["feed_copper_mm"])[0], abs=COPPER_TOL_MM)
    drc = _drc(board)
    assert drc.drc_errors == []
    assert not drc.types("warning") & {"lib_footprint_issues", "lib_footprint_mismatch"}


@pytest.mark.kicad
def test_regeneration_refuses_a_hand_edited_library_footprint(placed: dict, tmp_path: Path) -> None:
    project = tmp_path / "project"
    shutil.copytree(placed["project"], project)
    board = project / placed["board"].name
    installed = project / "footgen_antennas.pretty" / "ifa_r0.kicad_mod"
    installed.write_text(installed.read_text("utf-8").replace("(descr ", "(descr \"hand edit \" ", 1), "utf-8")
    edited = installed.read_bytes()
    board_before = board.read_bytes()
    spec = _spec(tmp_path, "ifa_r0", arm={"length_mm": CHANGED_ARM_LENGTH_MM})
    proc = _place(board, spec, tmp_path, check=False)
    assert proc.returncode == 1
    assert "edited by hand" in proc.stderr
    assert installed.read_bytes() == edited
    assert board.read_bytes() == board_before


@pytest.mark.kicad
def test_placing_without_a_position_or_instance_is_refused(placed: dict, tmp_path: Path) -> None:
    project = tmp_path / "project"
    shutil.copytree(placed["project"], project)
    board = project / placed["board"].name
    proc = _place(board, _spec(tmp_path, "ifa_other"), tmp_path, check=False)
    assert proc.returncode == 1
    assert "give a position" in proc.stderr


RELABEL_AS_OTHER_PART = """
import sys, pcbnew
board = pcbnew.LoadBoard(sys.argv[1])
for fp in board.GetFootprints():
    fp.SetFPID(pcbnew.LIB_ID("other_parts", "R_0402"))
    fp.SetReference("R1")
pcbnew.SaveBoard(sys.argv[1], board)
"""


@pytest.mark.kicad
def test_a_reference_that_is_not_a_footgen_antenna_is_not_replaced(placed: dict, tmp_path: Path) -> None:
    project = tmp_path / "project"
    shutil.copytree(placed["project"], project)
    board = project / placed["board"].name
    _script(tmp_path, RELABEL_AS_OTHER_PART, str(board))
    board_before = board.read_bytes()
    proc = _place(board, placed["spec"], tmp_path, "--reference", "R1", check=False)
    assert proc.returncode == 1
    assert "R1 is other_parts:R_0402, not a footgen antenna" in proc.stderr
    assert board.read_bytes() == board_before


# --- board-free helpers (no KiCad needed) ---------------------------------------------------

def test_library_table_entry_is_added_once_and_keeps_other_libraries(tmp_path: Path) -> None:
    table = tmp_path / "fp-lib-table"
    table.write_text('(fp_lib_table\n  (version 7)\n  (lib (name "mine")(type "KiCad")(uri "${KIPRJMOD}/mine.pretty")(options "")(descr ""))\n)\n', "utf-8")
    assert ensure_project_library(tmp_path) is True
    assert ensure_project_library(tmp_path) is False
    text = table.read_text("utf-8")
    assert library_table_names(text) == ["mine", "footgen_antennas"]
    assert '(uri "${KIPRJMOD}/footgen_antennas.pretty")' in text
    assert text.count("(") == text.count(")")


def test_library_table_is_created_when_missing(tmp_path: Path) -> None:
    assert ensure_project_library(tmp_path) is True
    text = (tmp_path / "fp-lib-table").read_text("utf-8")
    assert text.startswith("(fp_lib_table") and library_table_names(text) == ["footgen_antennas"]


def test_library_table_that_is_not_one_is_refused(tmp_path: Path) -> None:
    (tmp_path / "fp-lib-table").write_text("garbage", "utf-8")
    with pytest.raises(PlacementError, match="not a KiCad footprint library table"):
        ensure_project_library(tmp_path)


def test_install_refuses_hand_edits_but_replaces_footgens_own_file(tmp_path: Path) -> None:
    built = tmp_path / "build" / "a.kicad_mod"
    built.parent.mkdir()
    built.write_text("(footprint new)", "utf-8")
    target = tmp_path / "footgen_antennas.pretty" / "a.kicad_mod"
    target.parent.mkdir()
    target.write_text("(footprint old)", "utf-8")
    assert install_footprint(built, tmp_path, previous=b"(footprint old)") == target
    assert target.read_text("utf-8") == "(footprint new)"
    target.write_text("(footprint edited)", "utf-8")
    with pytest.raises(PlacementError, match="edited by hand"):
        install_footprint(built, tmp_path, previous=b"(footprint old)")
    install_footprint(built, tmp_path, previous=None, force=True)
    assert target.read_text("utf-8") == "(footprint new)"


#: A 4-layer board with a user stackup in the form KiCad 9 writes it (from memory of KiCad 9
#: .kicad_pcb files; the KiCad round trip below checks the parser on what KiCad really writes).
STACKUP_BOARD = """(kicad_pcb (version 20241229) (generator "pcbnew") (generator_version "9.0")
  (general (thickness 1.5) (legacy_teardrops no))
  (paper "A4")
  (layers
    (0 "F.Cu" signal) (4 "In1.Cu" signal) (6 "In2.Cu" signal) (2 "B.Cu" signal)
    (5 "F.SilkS" user "F.Silkscreen") (7 "B.SilkS" user "B.Silkscreen")
    (1 "F.Mask" user) (3 "B.Mask" user) (25 "Edge.Cuts" user)
  )
  (setup
    (stackup
      (layer "F.SilkS" (type "Top Silk Screen"))
      (layer "F.Mask" (type "Top Solder Mask") (thickness 0.01))
      (layer "F.Cu" (type "copper") (thickness 0.035))
      (layer "dielectric 1" (type "prepreg") (thickness 0.2) (material "FR4") (epsilon_r 4.2) (loss_tangent 0.02)
        addsublayer (thickness 0.1) (material "FR4") (epsilon_r 3.6) (loss_tangent 0.01))
      (layer "In1.Cu" (type "copper") (thickness 0.035))
      (layer "dielectric 2" (type "core") (thickness 1.0) (material "FR4") (epsilon_r 4.5) (loss_tangent 0.02))
      (layer "In2.Cu" (type "copper") (thickness 0.035))
      (layer "dielectric 3" (type "prepreg") (thickness 0.2) (material "FR4") (epsilon_r 4.2) (loss_tangent 0.02))
      (layer "B.Cu" (type "copper") (thickness 0.035))
      (layer "B.Mask" (type "Bottom Solder Mask") (thickness 0.01))
      (layer "B.SilkS" (type "Bottom Silk Screen"))
      (copper_finish "None")
      (dielectric_constraints no)
    )
    (pad_to_mask_clearance 0)
  )
  (net 0 "")
)
"""
#: Dielectric (thickness mm, eps_r, loss tangent) of STACKUP_BOARD, as written above.
STACKUP_DIELECTRICS = ((0.2, 4.2, 0.02), (0.1, 3.6, 0.01), (1.0, 4.5, 0.02), (0.2, 4.2, 0.02))


def _expected_laminate() -> tuple[float, float, float]:
    total = sum(t for t, _, _ in STACKUP_DIELECTRICS)
    eps = sum(t * e for t, e, _ in STACKUP_DIELECTRICS) / total
    tan = sum(t * d for t, _, d in STACKUP_DIELECTRICS) / total
    return total, eps, tan


def _assert_laminate(got: dict) -> None:
    total, eps, tan = _expected_laminate()
    assert got["thickness_mm"] == pytest.approx(total, abs=1e-9)
    assert got["eps_r"] == pytest.approx(eps, abs=1e-4)  # rounded to 4 decimals
    assert got["loss_tangent"] == pytest.approx(tan, abs=1e-5)  # rounded to 5 decimals


def test_stackup_laminate_sums_dielectrics_and_weights_eps_by_thickness() -> None:
    _assert_laminate(stackup_laminate(STACKUP_BOARD))


def test_stackup_laminate_is_none_without_a_stackup() -> None:
    assert stackup_laminate('(kicad_pcb (version 20241229) (setup (pad_to_mask_clearance 0)) (net 0 ""))') is None
    assert stackup_laminate("(kicad_pcb (version 20241229))") is None


@pytest.mark.kicad
def test_stackup_parser_reads_the_stackup_as_kicad_writes_it(kicad, tmp_path: Path) -> None:
    """KiCad 9 (pcbnew LoadBoard + SaveBoard) rewrites the stackup in its own layout; the
    parser must read the same dielectrics from KiCad's file."""
    board = tmp_path / "stackup.kicad_pcb"
    board.write_text(STACKUP_BOARD, "utf-8")
    saved = tmp_path / "saved.kicad_pcb"
    _kicad_py(["-c", "import sys, pcbnew; pcbnew.SaveBoard(sys.argv[2], pcbnew.LoadBoard(sys.argv[1]))", str(board), str(saved)], tmp_path)
    text = saved.read_text("utf-8")
    assert text != STACKUP_BOARD and '"dielectric 3"' in text
    _assert_laminate(stackup_laminate(text))


def test_plugin_modules_need_no_kicad_at_import() -> None:
    """The board-free helpers are importable where pcbnew is not (this pytest process would
    turn pcbnew's import-time DeprecationWarning into an error)."""
    assert "pcbnew" not in sys.modules


# --- the footgen command as the plugin calls it (no KiCad needed) ---------------------------

def test_missing_footgen_command_explains_how_to_install(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.delenv(cli_runner.FOOTGEN_CMD_ENV, raising=False)
    monkeypatch.setenv("PATH", str(tmp_path))
    monkeypatch.setattr(cli_runner, "USER_BIN_DIRS", (tmp_path,))
    with pytest.raises(cli_runner.FootgenNotFound) as info:
        cli_runner.find_footgen()
    text = str(info.value)
    # footgen is on no package index: the help names pipx or the checkout's venv script, and
    # where in KiCad the command's path is set
    assert "pipx install <footgen checkout>" in text and "scripts/quickstart.sh" in text
    assert "pip install footgen" not in text
    assert f"{cli_runner.FOOTGEN_CMD_ENV} to the full command" in text and "Configure Paths" in text


def test_a_footgen_command_that_does_not_exist_is_reported(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setenv(cli_runner.FOOTGEN_CMD_ENV, str(tmp_path / "nowhere" / "footgen"))
    with pytest.raises(cli_runner.FootgenNotFound, match="is not an executable"):
        cli_runner.find_footgen()


def test_footgen_command_from_the_environment_is_split_like_a_shell(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv(cli_runner.FOOTGEN_CMD_ENV, shlex.join(footgen_cmd()))
    assert cli_runner.find_footgen() == footgen_cmd()


def test_build_reads_the_rule_check_of_a_failing_spec(tmp_path: Path) -> None:
    """footgen's CLI contract: exit 1 and no footprint when the rule check fails; the plugin
    reports the violations from <name>.check.json."""
    # a stricter fab than the template's 0.8 mm traces (cheap: sizing is the template's own)
    spec = _spec(tmp_path, "too_thin", fab={"profile": "standard", "min_trace_mm": 1.0})
    result = cli_runner.build(spec, tmp_path / "out", footgen_cmd())
    assert result.returncode == cli_runner.EXIT_RULES and not result.ok
    assert not result.footprint_path.exists() and result.png_path.exists()
    assert result.violations and all(v["rule"] == "trace_width" for v in result.violations)
    summary = result.summary()
    assert f"{len(result.violations)} rule violation(s)" in summary
    assert all(v["message"] in summary for v in result.violations)


def test_build_of_a_good_spec_gives_the_footprint(tmp_path: Path) -> None:
    result = cli_runner.build(_spec(tmp_path, "good"), tmp_path / "out", footgen_cmd())
    assert result.ok and result.footprint_path.is_file() and result.report_path.is_file()
    assert result.footprint_path == tmp_path / "out" / "footgen_antennas.pretty" / "good.kicad_mod"


def test_build_of_a_bad_spec_raises_with_the_clis_message(tmp_path: Path) -> None:
    data = json.loads(TEMPLATE.read_text("utf-8"))
    data["laminate"]["eps_r"] = 99
    spec = tmp_path / "bad.json"
    spec.write_text(json.dumps(data), "utf-8")
    with pytest.raises(cli_runner.FootgenFailed, match="eps_r") as info:
        cli_runner.build(spec, tmp_path / "out", footgen_cmd())
    assert info.value.returncode == cli_runner.EXIT_INPUT


def test_templates_are_listed_from_the_cli() -> None:
    names = [name for name, _ in cli_runner.list_templates(footgen_cmd())]
    assert "ism-2g4-straight" in names
    assert sorted(names) == sorted(p.stem for p in (ROOT / "templates").glob("*.json"))


def test_dialog_fields_give_a_spec_the_cli_accepts(tmp_path: Path) -> None:
    spec = json.loads(TEMPLATE.read_text("utf-8"))
    texts = {"name": "edited", "center_mhz": "2450", "eps_r": "3,9", "thickness_mm": "0.8", "clearance_width_mm": "30",
             "clearance_depth_mm": "7", "arm_direction": "left", "style": "meandered"}
    fields = cli_runner.fields_from_text(texts)
    edited = cli_runner.apply_fields(spec, fields)
    assert edited["target"] == {"center_mhz": 2450.0}
    assert edited["style"] == {"kind": "meandered", "meander": "fit"}
    assert cli_runner.spec_fields(edited) | fields == cli_runner.spec_fields(edited)
    assert spec["name"] == "ifa_2g4_straight"  # the input is not changed
    path = cli_runner.write_spec(edited, tmp_path / "edited.json")
    proc = subprocess.run(footgen_cmd() + ["validate", str(path)], capture_output=True, text=True, timeout=SUBPROCESS_TIMEOUT_S)
    assert proc.returncode == 0, proc.stderr


def test_dialog_number_that_does_not_parse_names_the_field() -> None:
    with pytest.raises(ValueError, match="eps_r: 'four' is not a number"):
        cli_runner.fields_from_text({"eps_r": "four"})
    with pytest.raises(ValueError, match="unknown spec field"):
        cli_runner.apply_fields({}, {"colour": "red"})


# --- the action's GUI path, driven headless under a virtual X server ------------------------

#: The GUI driver gives up (and prints where it hung) after this; the test kills it after GUI_KILL_S.
GUI_HANG_S = 90
GUI_KILL_S = 120

RUN_ACTION_HEADLESS = f"""
import faulthandler
faulthandler.enable()
faulthandler.dump_traceback_later({GUI_HANG_S}, exit=True)
import json, sys
import wx
import pcbnew
app = wx.App(False)
from footgen.plugin import action
seen = []
# a native message box cannot be closed by the timer: record the text instead
action._message = lambda text, caption="", error=False: seen.append({{"title": "message", "texts": [text], "bitmaps": 0}})

def shoot(window, path):
    # the dialog as the screen shows it (a PNG beside the test's files)
    window.Raise()
    for _ in range(10):  # let the window manager-less X server paint it
        window.Update()
        wx.SafeYield()
        wx.MilliSleep(50)
    x, y = window.GetScreenPosition()
    w, h = window.GetSize()
    bmp = wx.Bitmap(w, h)
    mem = wx.MemoryDC(bmp)
    mem.Blit(0, 0, w, h, wx.ScreenDC(), x, y)
    mem.SelectObject(wx.NullBitmap)
    bmp.SaveFile(path, wx.BITMAP_TYPE_PNG)

waited = set()

def press_ok(_event):
    for window in wx.GetTopLevelWindows():
        if isinstance(window, wx.Dialog) and window.IsModal():
            if id(window) not in waited:  # one timer tick for the dialog to be painted
                waited.add(id(window))
                return
            texts = [c.GetValue() for c in window.GetChildren() if isinstance(c, wx.TextCtrl)]
            choices = [c.GetStringSelection() for c in window.GetChildren() if isinstance(c, wx.Choice)]
            labels = [c.GetLabel() for c in window.GetChildren() if isinstance(c, wx.StaticText)]
            # the form only: under Xvfb without a window manager the result dialog's pixels are
            # not on the screen yet when read back (its widgets are checked instead)
            shot = f"{{sys.argv[2]}}/plugin-form.png" if not seen else ""
            if shot:
                shoot(window, shot)
            seen.append({{"title": window.GetTitle(), "texts": texts, "choices": choices, "labels": labels, "shot": shot,
                         "bitmaps": sum(isinstance(c, wx.StaticBitmap) for c in window.GetChildren())}})
            window.EndModal(wx.ID_OK)

timer = wx.Timer()
timer.Bind(wx.EVT_TIMER, press_ok)
timer.Start(300)
board = pcbnew.LoadBoard(sys.argv[1])
action.run_action(board)
timer.Stop()
pcbnew.SaveBoard(sys.argv[1], board)
print(json.dumps(seen), flush=True)
"""




@pytest.mark.kicad
def test_the_action_regenerates_through_its_dialogs(placed: dict, tmp_path: Path) -> None:
    """The whole toolbar action (pcbnew 9 + wxPython 4.2 under Xvfb): the form opens on the
    project's spec prefilled with the existing instance, OK rebuilds it in place, and the
    result dialog shows the copper drawing.  A timer presses OK on each modal dialog."""
    if shutil.which("xvfb-run") is None:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail("xvfb-run (Debian package xvfb) is required in CI; scripts/test.sh installs it")
        pytest.skip("xvfb-run (Debian package xvfb) is needed to drive the wx dialogs headless")
    project = tmp_path / "project"
    shutil.copytree(placed["project"], project)
    board = project / placed["board"].name
    spec = _spec(tmp_path, "ifa_r0", arm={"length_mm": CHANGED_ARM_LENGTH_MM})
    shutil.copy(spec, project / "footgen" / "ifa_r0.json")
    (before,) = _describe(board, tmp_path)
    driver = tmp_path / "gui.py"
    driver.write_text(RUN_ACTION_HEADLESS, "utf-8")
    out, _ = run_under_xvfb([kicad_python(), str(driver), str(board), str(tmp_path)], _env(tmp_path), GUI_KILL_S)
    seen = json.loads(out.strip().splitlines()[-1])
    assert [d["title"] for d in seen] == ["footgen: printed IFA antenna", "footgen: printed IFA antenna: result"]
    form = seen[0]["texts"]
    assert "ifa_r0" in form and "AE5" in form and "100" in form  # name, reference, feed point
    # band by its name, nets picked from the board's nets, the instance regenerated in place
    assert "2.4 GHz ISM (2400-2483.5 MHz)" in seen[0]["choices"]
    assert "RF_ANT" in seen[0]["choices"] and "GND" in seen[0]["choices"]
    assert seen[1]["bitmaps"] == 2  # the copper drawing and the predicted S11
    result = "\n".join(seen[1]["labels"])
    assert "rule check passed" in result and "never replace measurement" in result
    shot = Path(seen[0]["shot"])  # the form's screenshot, kept in the test's folder
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and shot.parent == tmp_path and shot.stat().st_size > 10_000
    (after,) = _describe(board, tmp_path)
    for key in ("position_mm", "rotation_deg", "reference", "pad_nets", "fpid"):
        assert after[key] == before[key], key
    assert _span(after["feed_copper_mm"]) != _span(before["feed_copper_mm"])
