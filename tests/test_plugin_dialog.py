"""The toolbar action's form placing a new antenna at a proposed board-edge site (pcbnew 9 and
wxPython under Xvfb; a timer presses OK on each dialog, message boxes answer Yes).

Outside truth: KiCad 9.0.8's pcbnew reads the board, runs the form and saves the placed board.
The form's screenshot is kept in the test's temporary folder.
"""

from __future__ import annotations

import json
import os
import shlex
import shutil
import subprocess
from pathlib import Path

import pytest

from conftest import ROOT, footgen_cmd
from footgen.testrun import kicad_python
from test_plugin_ipc import MAKE_BOARD, TEMPLATE
from plugin_boards import run_under_xvfb

GUI_KILL_S = 300

DRIVER = """
import json, sys
import wx, pcbnew
app = wx.App(False)
from footgen.plugin import action
seen, waited = [], set()
action._message = lambda text, caption="", error=False: seen.append({"title": "message", "text": text})
wx.MessageBox = lambda *args, **kwargs: wx.YES  # "the spec file has other values: replace it?"

def shoot(window, path):
    window.Raise()
    for _ in range(10):
        window.Update(); wx.SafeYield(); wx.MilliSleep(50)
    x, y = window.GetScreenPosition(); w, h = window.GetSize()
    bmp = wx.Bitmap(w, h); mem = wx.MemoryDC(bmp); mem.Blit(0, 0, w, h, wx.ScreenDC(), x, y); mem.SelectObject(wx.NullBitmap)
    bmp.SaveFile(path, wx.BITMAP_TYPE_PNG)

def tick(_event):
    for window in wx.GetTopLevelWindows():
        if isinstance(window, wx.Dialog) and window.IsModal():
            if id(window) not in waited:  # one tick for the dialog to be painted
                waited.add(id(window))
                return
            entry = {"title": window.GetTitle(), "choices": [c.GetStringSelection() for c in window.GetChildren() if isinstance(c, wx.Choice)],
                     "labels": [c.GetLabel() for c in window.GetChildren() if isinstance(c, wx.StaticText)]}
            if not seen:
                shoot(window, sys.argv[2])
            seen.append(entry)
            window.EndModal(wx.ID_OK)

timer = wx.Timer(); timer.Bind(wx.EVT_TIMER, tick); timer.Start(300)
board = pcbnew.LoadBoard(sys.argv[1])
action.run_action(board)
timer.Stop()
fps = [(f.GetReference(), f.GetFPIDAsString(), pcbnew.ToMM(f.GetPosition().x), pcbnew.ToMM(f.GetPosition().y), f.GetOrientationDegrees()) for f in board.GetFootprints()]
pcbnew.SaveBoard(sys.argv[1], board)
print(json.dumps({"seen": seen, "footprints": fps}), flush=True)
"""


@pytest.mark.kicad
def test_the_form_proposes_edge_sites_and_places_at_the_chosen_one(kicad, tmp_path: Path) -> None:
    if shutil.which("xvfb-run") is None:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail("xvfb-run (Debian package xvfb) is required in CI; scripts/test.sh installs it")
        pytest.skip("xvfb-run (Debian package xvfb) is needed to drive the wx dialogs headless")
    project = tmp_path / "project"
    (project / "footgen").mkdir(parents=True)
    spec = json.loads(TEMPLATE.read_text("utf-8"))
    spec["name"] = "edge_ifa"
    (project / "footgen" / "edge_ifa.json").write_text(json.dumps(spec, indent=2), "utf-8")
    env = dict(os.environ, KICAD_CONFIG_HOME=str(tmp_path / "kicad-config"), PYTHONPATH=str(ROOT), PYTHONWARNINGS="ignore::DeprecationWarning",
               FOOTGEN_CMD=shlex.join(footgen_cmd()), PYTHONDONTWRITEBYTECODE="1")
    board = project / "board.kicad_pcb"
    subprocess.run([kicad_python(), "-c", MAKE_BOARD, str(board)], check=True, env=env, capture_output=True, timeout=120)
    driver = tmp_path / "gui.py"
    driver.write_text(DRIVER, "utf-8")
    shot = tmp_path / "plugin-form-new.png"
    out, _ = run_under_xvfb([kicad_python(), str(driver), str(board), str(shot)], env, GUI_KILL_S)
    got = json.loads(out.strip().splitlines()[-1])
    form, result = got["seen"][0], got["seen"][-1]
    assert [s["title"] for s in got["seen"]] == ["footgen: printed IFA antenna", "footgen: printed IFA antenna: result"]
    # the first proposal: the bottom edge (the top one carries a signal track), 22 mm from the board centre
    assert any(c.startswith("bottom edge near (121, 144) mm, 22 mm away") for c in form["choices"]), form["choices"]
    assert "RF_ANT (new net)" in form["choices"] and "GND" in form["choices"]
    assert "Laminate from the spec file." in "\n".join(form["labels"])
    (ref, fpid, x_mm, y_mm, rotation) = got["footprints"][0]
    assert (ref, fpid, rotation) == ("AE1", "footgen_antennas:edge_ifa", 180.0)
    assert y_mm == pytest.approx(144.0, abs=1e-6) and 121.0 < x_mm < 149.0  # on the ground edge, inside the site
    text = "\n".join(result["labels"])
    assert "Placed: AE1" in text and "never replace measurement" in text
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and shot.stat().st_size > 10_000
