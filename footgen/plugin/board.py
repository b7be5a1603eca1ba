"""Build a KiCad board from a footgen board plan, with KiCad's own ``pcbnew`` module.

This package (``footgen.plugin``) is the only place that imports ``pcbnew``; it runs under
KiCad's Python (Debian: /usr/bin/python3).  Run as a script so a KiCad crash cannot take the
caller down::

    python3 -m footgen.plugin.board PLAN.json BOARD.kicad_pcb

It writes BOARD.kicad_pcb, the project file beside it (design rules from the plan) and a
project ``fp-lib-table`` pointing at the footprint's library, places the footprint, assigns the
RF and GND nets, draws the outline, pours and feed track, fills the zones and saves.
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path

import pcbnew

#: DRC checks raised from KiCad 9's default "ignore" so the test boards check them.
RAISED_SEVERITIES = {"missing_courtyard": "error", "connection_width": "error"}


def _mm(value: float) -> int:
    return pcbnew.FromMM(float(value))


def _vec(pt: list[float]) -> "pcbnew.VECTOR2I":
    return pcbnew.VECTOR2I(_mm(pt[0]), _mm(pt[1]))


def write_project(board_path: Path, plan: dict) -> None:
    """The .kicad_pro (design rules) and the project fp-lib-table."""
    rules = dict(plan["rules"])
    project = {
        "board": {
            "design_settings": {
                "rules": rules,
                "rule_severities": RAISED_SEVERITIES,
            }
        },
        "meta": {"filename": board_path.with_suffix(".kicad_pro").name, "version": 1},
        "net_settings": {
            "classes": [
                {
                    "name": "Default",
                    "clearance": plan["netclass_clearance_mm"],
                    "track_width": plan["feed_track"]["width_mm"],
                    "via_diameter": plan["stitch_vias"]["size_mm"],
                    "via_drill": plan["stitch_vias"]["drill_mm"],
                }
            ],
            "meta": {"version": 3},
        },
    }
    board_path.with_suffix(".kicad_pro").write_text(json.dumps(project, indent=2) + "\n", "utf-8")
    fp = plan["footprint"]
    lib_dir = Path(fp["file"]).parent
    rel = os.path.relpath(lib_dir, board_path.parent)
    table = f'(fp_lib_table\n  (version 7)\n  (lib (name "{fp["library"]}")(type "KiCad")(uri "${{KIPRJMOD}}/{rel}")(options "")(descr ""))\n)\n'
    (board_path.parent / "fp-lib-table").write_text(table, "utf-8")


def place_footprint(board: "pcbnew.BOARD", plan_fp: dict, nets: dict[str, "pcbnew.NETINFO_ITEM"]) -> "pcbnew.FOOTPRINT":
    """Load the footprint from its library, put its origin at the plan's point, wire its nets."""
    lib_dir = str(Path(plan_fp["file"]).parent)
    footprint = pcbnew.FootprintLoad(lib_dir, plan_fp["name"])
    if footprint is None:
        raise RuntimeError(f"KiCad could not load footprint {plan_fp['name']!r} from {lib_dir}")
    footprint.SetFPID(pcbnew.LIB_ID(plan_fp["library"], plan_fp["name"]))
    footprint.SetPosition(_vec(plan_fp["position_mm"]))
    footprint.SetReference(plan_fp.get("reference", "AE1"))
    board.Add(footprint)
    assign_nets(footprint, nets)
    return footprint


def assign_nets(footprint: "pcbnew.FOOTPRINT", nets: dict[str, "pcbnew.NETINFO_ITEM"]) -> None:
    """Pad 1 (feed) on the RF net, every pad 2 (short, shunt vias) on GND.  With matching pads
    (a pad 3), the radio side (pad 3) takes the RF net and the antenna node (pad 1) a net of its
    own (``nets["antenna"]``, else "<RF net>_ANT_NODE", added to the board)."""
    pads = list(footprint.Pads())
    roles = {"1": nets["rf"]}
    if any(pad.GetNumber() == "3" for pad in pads):
        antenna = nets.get("antenna")
        if antenna is None:
            board = footprint.GetBoard()
            name = f"{nets['rf'].GetNetname()}_ANT_NODE"
            antenna = board.FindNet(name) or pcbnew.NETINFO_ITEM(board, name)
            if antenna.GetNetCode() <= 0:
                board.Add(antenna)
        roles = {"1": antenna, "3": nets["rf"]}
    for pad in pads:
        pad.SetNet(roles.get(pad.GetNumber(), nets["gnd"]))


def _zone(board: "pcbnew.BOARD", layer_name: str, polygon: list[list[float]], net: "pcbnew.NETINFO_ITEM", plan: dict) -> None:
    zone = pcbnew.ZONE(board)
    zone.SetLayer(board.GetLayerID(layer_name))
    zone.SetNet(net)
    outline = zone.Outline()
    outline.NewOutline()
    for pt in polygon:
        outline.Append(_mm(pt[0]), _mm(pt[1]))
    zone.SetLocalClearance(_mm(plan["zone_clearance_mm"]))
    zone.SetMinThickness(_mm(plan["zone_min_width_mm"]))
    zone.SetPadConnection(pcbnew.ZONE_CONNECTION_FULL)
    zone.SetIsFilled(False)
    board.Add(zone)


def build_board(plan: dict, board_path: Path) -> None:
    board_path = Path(board_path).resolve()
    board_path.parent.mkdir(parents=True, exist_ok=True)
    write_project(board_path, plan)
    board = pcbnew.NewBoard(str(board_path))
    nets = {}
    for role, name in plan["nets"].items():
        net = pcbnew.NETINFO_ITEM(board, name)
        board.Add(net)
        nets[role] = net
    pts = plan["outline_mm"]
    for a, b in zip(pts, pts[1:] + pts[:1]):
        seg = pcbnew.PCB_SHAPE(board)
        seg.SetShape(pcbnew.SHAPE_T_SEGMENT)
        seg.SetStart(_vec(a))
        seg.SetEnd(_vec(b))
        seg.SetLayer(pcbnew.Edge_Cuts)
        seg.SetWidth(_mm(0.1))
        board.Add(seg)
    for zone in plan["ground_zones"]:
        _zone(board, zone["layer"], zone["polygon_mm"], nets["gnd"], plan)
    track_pts = plan["feed_track"]["points_mm"]
    for a, b in zip(track_pts, track_pts[1:]):
        track = pcbnew.PCB_TRACK(board)
        track.SetStart(_vec(a))
        track.SetEnd(_vec(b))
        track.SetWidth(_mm(plan["feed_track"]["width_mm"]))
        track.SetLayer(pcbnew.F_Cu)
        track.SetNet(nets["rf"])
        board.Add(track)
    stitch = plan["stitch_vias"]
    for pt in stitch["points_mm"]:
        via = pcbnew.PCB_VIA(board)
        via.SetPosition(_vec(pt))
        via.SetDrill(_mm(stitch["drill_mm"]))
        via.SetWidth(_mm(stitch["size_mm"]))
        via.SetNet(nets["gnd"])
        board.Add(via)
    place_footprint(board, plan["footprint"], nets)
    pcbnew.SaveBoard(str(board_path), board)
    fill_zones(board_path)


def fill_zones(board_path: Path) -> None:
    """Reload the board with its project (so the rules apply), fill every zone, save."""
    board = pcbnew.LoadBoard(str(board_path))
    # The DRC engine must be initialised before filling, or the fill ignores edge clearance.
    report = board_path.with_suffix(".prefill-drc.txt")
    pcbnew.WriteDRCReport(board, str(report), pcbnew.EDA_UNITS_MM, False)
    report.unlink(missing_ok=True)
    filler = pcbnew.ZONE_FILLER(board)
    filler.Fill(board.Zones())
    pcbnew.SaveBoard(str(board_path), board)


def filled_polygons(board_path: Path) -> dict[str, list[list[list[float]]]]:
    """Outlines (KiCad mm) of every filled zone polygon, by layer name."""
    board = pcbnew.LoadBoard(str(board_path))
    out: dict[str, list[list[list[float]]]] = {}
    for zone in board.Zones():
        if zone.GetIsRuleArea():
            continue
        for layer in zone.GetLayerSet().Seq():
            poly_set = zone.GetFilledPolysList(layer)
            name = board.GetLayerName(layer)
            for i in range(poly_set.OutlineCount()):
                ring = poly_set.Outline(i)
                pts = [[pcbnew.ToMM(ring.CPoint(j).x), pcbnew.ToMM(ring.CPoint(j).y)] for j in range(ring.PointCount())]
                out.setdefault(name, []).append(pts)
    return out


USAGE = "usage: python3 -m footgen.plugin.board PLAN.json BOARD.kicad_pcb | --dump-fill BOARD.kicad_pcb"


def main(argv: list[str]) -> int:
    if len(argv) == 2 and argv[0] == "--dump-fill":
        print(json.dumps(filled_polygons(Path(argv[1]))))
        return 0
    if len(argv) != 2:
        print(USAGE, file=sys.stderr)
        return 2
    plan = json.loads(Path(argv[0]).read_text("utf-8"))
    build_board(plan, Path(argv[1]))
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
