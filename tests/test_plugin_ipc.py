"""The IPC-API front door against a running KiCad 9 PCB editor (pcbnew under Xvfb, API server
enabled in a temporary KiCad configuration).

Outside truth: KiCad 9.0.8 itself, through kicad-python (the official IPC-API bindings): the
editor's own board, after the door ran, holds the footprint at the site the placement core
proposed, and still answers for its zones, tracks and footprints.  A screenshot of the editor
is kept in the test's temporary folder.
"""

from __future__ import annotations

import json
import os
import shlex
import shutil
import signal
import subprocess
import sys
import time
import zipfile
from pathlib import Path

import pytest

from conftest import ROOT, footgen_cmd
from plugin_boards import board_script
from footgen.testrun import kicad_python

kipy = pytest.importorskip("kipy", reason="kicad-python (pip install kicad-python) drives the IPC API")

TEMPLATE = ROOT / "templates" / "ism-2g4-straight.json"
#: How long KiCad may take to start and answer the API, and the door to finish (s).
KICAD_READY_S = 120
DOOR_TIMEOUT_S = 600
NM_PER_MM = 1_000_000

MAKE_BOARD = "import sys, pcbnew\n" + board_script("sys.argv[1]")

SCREENSHOT = """
import sys, wx
app = wx.App(False)
dc = wx.ScreenDC(); w, h = dc.GetSize()
bmp = wx.Bitmap(w, h); mem = wx.MemoryDC(bmp); mem.Blit(0, 0, w, h, dc, 0, 0); mem.SelectObject(wx.NullBitmap)
sys.exit(0 if bmp.SaveFile(sys.argv[1], wx.BITMAP_TYPE_PNG) else 1)
"""


def _kicad_config(tmp: Path) -> Path:
    """A KiCad 9 configuration with the API server on and empty global library tables (so no
    first-run dialog waits for an answer)."""
    cfg = tmp / "kicad-config"
    (cfg / "9.0").mkdir(parents=True)
    (cfg / "9.0" / "kicad_common.json").write_text(json.dumps({"api": {"enable_server": True}}), "utf-8")
    (cfg / "9.0" / "fp-lib-table").write_text("(fp_lib_table\n  (version 7)\n)\n", "utf-8")
    (cfg / "9.0" / "sym-lib-table").write_text("(sym_lib_table\n  (version 7)\n)\n", "utf-8")
    return cfg


def _socket(tmp: Path) -> str:
    found = sorted((tmp / "tmp" / "kicad").glob("api*.sock"), key=lambda p: p.stat().st_mtime)
    return f"ipc://{found[-1]}" if found else ""


@pytest.fixture(scope="module")
def editor(tmp_path_factory: pytest.TempPathFactory):
    """pcbnew 9 on a virtual display, showing a board with an outline, GND pours on both sides
    and a signal track along the top edge, with a footgen spec in the project's footgen folder."""
    for tool in ("Xvfb", "pcbnew"):
        if shutil.which(tool) is None:
            if os.environ.get("CI", "").lower() == "true":
                pytest.fail(f"{tool} is required in CI; scripts/test.sh installs it")
            pytest.skip(f"{tool} is needed to run the PCB editor headless")
    tmp = tmp_path_factory.mktemp("ipc")
    (tmp / "tmp").mkdir()
    project = tmp / "project"
    (project / "footgen").mkdir(parents=True)
    spec = json.loads(TEMPLATE.read_text("utf-8"))
    spec["name"] = "edge_ifa"
    (project / "footgen" / "edge_ifa.json").write_text(json.dumps(spec, indent=2), "utf-8")
    env = dict(os.environ, KICAD_CONFIG_HOME=str(_kicad_config(tmp)), TMPDIR=str(tmp / "tmp"), PYTHONWARNINGS="ignore::DeprecationWarning")
    board = project / "board.kicad_pcb"
    subprocess.run([kicad_python(), "-c", MAKE_BOARD, str(board)], check=True, env=env, capture_output=True, timeout=120)
    xvfb, display = _start_xvfb()
    env["DISPLAY"] = display
    log = open(tmp / "pcbnew.log", "w")
    pcb = subprocess.Popen(["pcbnew", str(board)], env=env, stdout=log, stderr=subprocess.STDOUT, start_new_session=True)
    try:
        kicad = _wait_for_api(tmp, pcb)
        yield {"tmp": tmp, "project": project, "board": board, "env": env, "kicad": kicad, "socket": _socket(tmp)}
    finally:
        for proc in (pcb, xvfb):
            if proc.poll() is None:
                os.killpg(proc.pid, signal.SIGTERM)
                try:
                    proc.wait(timeout=30)
                except subprocess.TimeoutExpired:
                    os.killpg(proc.pid, signal.SIGKILL)
        log.close()


#: Displays tried for the virtual X server, and how long it may take to come up (s).
DISPLAYS = range(90, 190)
XVFB_READY_S = 30


def _start_xvfb() -> tuple[subprocess.Popen, str]:
    """Xvfb on the first display number without a lock file; waits for its socket."""
    for n in DISPLAYS:
        if Path(f"/tmp/.X{n}-lock").exists() or Path(f"/tmp/.X11-unix/X{n}").exists():
            continue
        proc = subprocess.Popen(["Xvfb", f":{n}", "-screen", "0", "1280x1024x24", "-nolisten", "tcp"], start_new_session=True, stderr=subprocess.DEVNULL)
        deadline = time.monotonic() + XVFB_READY_S
        while time.monotonic() < deadline and proc.poll() is None:
            if Path(f"/tmp/.X11-unix/X{n}").exists():
                return proc, f":{n}"
            time.sleep(0.2)
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
    pytest.fail("no virtual X display could be started")


def _wait_for_api(tmp: Path, pcb: subprocess.Popen):
    from kipy import KiCad
    from kipy.errors import ApiError, ConnectionError as KipyConnectionError

    deadline = time.monotonic() + KICAD_READY_S
    while time.monotonic() < deadline:
        if pcb.poll() is not None:
            pytest.fail(f"pcbnew exited ({pcb.returncode}): {(tmp / 'pcbnew.log').read_text()[-2000:]}")
        socket = _socket(tmp)
        if socket:
            try:
                kicad = KiCad(socket_path=socket, timeout_ms=DOOR_TIMEOUT_S * 1000)
                kicad.get_board()
                return kicad
            except (ApiError, KipyConnectionError):
                pass
        time.sleep(1.0)
    pytest.fail(f"KiCad's API server did not answer within {KICAD_READY_S} s (socket {_socket(tmp) or 'none'})")


def _door(editor: dict, entry: Path | None = None) -> dict:
    """Run the door from footgen's source tree, or as KiCad starts it: ``entry``, the
    entry-point script in a folder extracted from the IPC archive (no footgen on the path)."""
    env = dict(editor["env"], KICAD_API_SOCKET=editor["socket"], FOOTGEN_CMD=shlex.join(footgen_cmd()), FOOTGEN_KICAD_PYTHON=kicad_python(), PYTHONPATH=str(ROOT))
    argv = [sys.executable, "-m", "footgen.plugin.ipc_door"]
    if entry is not None:
        env.pop("PYTHONPATH")
        argv = [sys.executable, str(entry)]
    proc = subprocess.run(argv, capture_output=True, text=True, env=env, timeout=DOOR_TIMEOUT_S, cwd=editor["tmp"])
    assert proc.returncode == 0, proc.stderr[-3000:]
    return json.loads(proc.stdout.strip().splitlines()[-1])


def _screenshot(editor: dict, name: str) -> Path:
    path = editor["tmp"] / name
    subprocess.run([kicad_python(), "-c", SCREENSHOT, str(path)], env=editor["env"], check=True, capture_output=True, timeout=60)
    return path


def _installed_ipc_plugin(tmp: Path) -> Path:
    """The IPC archive's plugins/ folder extracted where KiCad's plugin manager puts it
    (identifier with dots as underscores; from memory); its action's entry point."""
    dist = tmp / "dist"
    subprocess.run([sys.executable, str(ROOT / "scripts" / "build_plugin.py"), "-o", str(dist)], check=True, capture_output=True, timeout=300)
    (archive,) = dist.glob("footgen-kicad-ipc-plugin-*.zip")
    with zipfile.ZipFile(archive) as zf:
        identifier = json.loads(zf.read("metadata.json"))["identifier"]
        target = tmp / "3rdparty" / "plugins" / identifier.replace(".", "_")
        for name in zf.namelist():
            if name.startswith("plugins/"):
                dest = target / name[len("plugins/"):]
                dest.parent.mkdir(parents=True, exist_ok=True)
                dest.write_bytes(zf.read(name))
    (action,) = json.loads((target / "plugin.json").read_text("utf-8"))["actions"]
    return target / action["entrypoint"]


@pytest.fixture(scope="module")
def placed(editor: dict) -> dict:
    first = _door(editor)
    shot = _screenshot(editor, "ipc-placed.png")
    board = editor["kicad"].get_board()
    footprints = [(fp.reference_field.text.value, str(fp.definition.id), fp.position.x, fp.position.y, fp.orientation.degrees) for fp in board.get_footprints()]
    second = _door(editor, _installed_ipc_plugin(editor["tmp"]))
    board = editor["kicad"].get_board()
    after = [(fp.reference_field.text.value, str(fp.definition.id), fp.position.x, fp.position.y, fp.orientation.degrees) for fp in board.get_footprints()]
    return {"first": first, "second": second, "footprints": footprints, "after": after, "board": board, "shot": shot}


@pytest.mark.kicad
def test_the_door_places_at_the_proposed_site_in_the_running_editor(placed: dict) -> None:
    first = placed["first"]
    assert first["replaced"] is False and first["check_ok"] is True
    site = first["site"]
    assert site["rotation_deg"] == 180.0  # bottom edge: the top one carries the signal track
    (ref, fpid, x_nm, y_nm, rot) = placed["footprints"][0]
    assert (ref, fpid) == ("AE1", "footgen_antennas:edge_ifa")
    assert x_nm / NM_PER_MM == pytest.approx(first["placement"]["position_mm"][0], abs=1e-6)
    assert y_nm / NM_PER_MM == pytest.approx(site["corner_mm"][1], abs=1e-6)  # on the ground edge
    assert rot % 360.0 == pytest.approx(180.0)


@pytest.mark.kicad
def test_the_door_regenerates_in_place_and_the_editor_keeps_answering(placed: dict) -> None:
    """The second run is the door installed from the IPC archive, started as KiCad starts it."""
    assert placed["second"]["replaced"] is True
    assert placed["after"] == placed["footprints"]
    board = placed["board"]
    assert sorted(z.net.name for z in board.get_zones()) == ["GND", "GND"]
    assert [t.net.name for t in board.get_tracks()] == ["SIG"]


@pytest.mark.kicad
def test_a_screenshot_of_the_editor_is_kept(placed: dict) -> None:
    shot = placed["shot"]
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert shot.stat().st_size > 10_000  # a drawn editor window, not a blank screen
