"""The board both plugin front doors are tried on (KiCad mm): a 70 x 50 mm outline, GND pours on
F.Cu and B.Cu, and a signal track 3 mm inside the top edge (an invented test board)."""

from __future__ import annotations

BOARD_X0_MM, BOARD_Y0_MM, BOARD_W_MM, BOARD_H_MM = 100.0, 100.0, 70.0, 50.0


def board_script(path_expr: str) -> str:
    """pcbnew code (``import pcbnew`` done before it) that builds the board as ``board`` and saves
    it to the file named by the Python expression ``path_expr``."""
    return f"""
board = pcbnew.NewBoard({path_expr})
gnd = pcbnew.NETINFO_ITEM(board, "GND"); board.Add(gnd)
sig = pcbnew.NETINFO_ITEM(board, "SIG"); board.Add(sig)
X0, Y0, W, H = {BOARD_X0_MM}, {BOARD_Y0_MM}, {BOARD_W_MM}, {BOARD_H_MM}
pts = [(X0, Y0), (X0 + W, Y0), (X0 + W, Y0 + H), (X0, Y0 + H)]
for a, b in zip(pts, pts[1:] + pts[:1]):
    seg = pcbnew.PCB_SHAPE(board); seg.SetShape(pcbnew.SHAPE_T_SEGMENT); seg.SetLayer(pcbnew.Edge_Cuts)
    seg.SetStart(pcbnew.VECTOR2I_MM(*a)); seg.SetEnd(pcbnew.VECTOR2I_MM(*b)); seg.SetWidth(pcbnew.FromMM(0.1)); board.Add(seg)
for layer in (pcbnew.F_Cu, pcbnew.B_Cu):
    zone = pcbnew.ZONE(board); zone.SetLayer(layer); zone.SetNet(gnd)
    outline = zone.Outline(); outline.NewOutline()
    for x, y in pts:
        outline.Append(pcbnew.FromMM(x), pcbnew.FromMM(y))
    board.Add(zone)
track = pcbnew.PCB_TRACK(board); track.SetLayer(pcbnew.F_Cu); track.SetNet(sig); track.SetWidth(pcbnew.FromMM(0.25))
track.SetStart(pcbnew.VECTOR2I_MM(X0 + 5, Y0 + 3)); track.SetEnd(pcbnew.VECTOR2I_MM(X0 + W - 5, Y0 + 3)); board.Add(track)
pcbnew.SaveBoard({path_expr}, board)
"""


#: How often a GUI driver is started under Xvfb when the virtual display was not up yet.
XVFB_ATTEMPTS = 3


def run_under_xvfb(argv: list[str], env: dict[str, str], kill_after_s: float) -> tuple[str, str]:
    """Run ``argv`` (a wx driver) on a virtual display; retry only a display that was not up
    when wx connected (seen on a loaded machine), fail the test on a hang or a non-zero exit.
    Returns stdout and stderr."""
    import os
    import signal
    import subprocess

    import pytest

    for _attempt in range(XVFB_ATTEMPTS):
        proc = subprocess.Popen(["xvfb-run", "-a", "-s", "-screen 0 1280x1024x24", *argv],
                                stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env, start_new_session=True)
        try:
            out, err = proc.communicate(timeout=kill_after_s)
        except subprocess.TimeoutExpired:
            os.killpg(proc.pid, signal.SIGKILL)  # xvfb-run, Xvfb and the driver: its own session
            out, err = proc.communicate()
            pytest.fail(f"the action's dialogs did not finish within {kill_after_s} s:\n{err[-3000:]}")
        if proc.returncode == 0 or "wxEntryStart failed" not in err:
            break
    assert proc.returncode == 0, err[-3000:]
    return out, err
