"""Read a pcbnew board into the plain data footgen's placement core takes, and ask the core.

The core (footgen.geometry.siting, shapely) runs in the footgen command (``footgen sites``):
KiCad's own Python has no shapely.  This module is the SWIG front door's thin adapter; the
IPC-API front door writes the same JSON from kicad-python objects.
"""

from __future__ import annotations

import json
import tempfile
from pathlib import Path

from . import cli_runner

#: Largest deviation of a polygon from KiCad's true shape when read for placement (mm).
SHAPE_MAX_ERROR_MM = 0.005
#: Name of the footprint rule area footgen writes around the antenna (footgen's layout).
CLEARANCE_ZONE_NAME = "antenna_clearance"


def _mm(value: int) -> float:
    import pcbnew

    return round(pcbnew.ToMM(value), 6) + 0.0


def _rings(poly_set) -> list[list[list[float]]]:
    out = []
    for i in range(poly_set.OutlineCount()):
        ring = poly_set.Outline(i)
        out.append([[_mm(ring.CPoint(j).x), _mm(ring.CPoint(j).y)] for j in range(ring.PointCount())])
    return out


def _shape_rings(item, layer) -> list[list[list[float]]]:
    import pcbnew

    poly = pcbnew.SHAPE_POLY_SET()
    item.TransformShapeToPolygon(poly, layer, 0, pcbnew.FromMM(SHAPE_MAX_ERROR_MM), pcbnew.ERROR_OUTSIDE)
    return _rings(poly)


def _board_outline(board, outline) -> bool:
    """The Edge.Cuts outline as polygons; KiCad 10 added a required "infer if missing" flag."""
    try:
        return board.GetBoardPolygonOutlines(outline)
    except TypeError:
        return board.GetBoardPolygonOutlines(outline, False)


def board_view(board, gnd_net: str, *, rf_net: str | None = None, focus_mm: tuple[float, float] | None = None, skip_reference: str | None = None) -> dict:
    """The board as the placement core's JSON: outline, ground pours (zones on ``gnd_net``),
    obstacles (other zones, tracks and vias, footprint courtyards), focus, copper clearance.
    Tracks on ``rf_net`` (the antenna's own feed) are not obstacles."""
    import pcbnew

    outline = pcbnew.SHAPE_POLY_SET()
    if not _board_outline(board, outline):
        raise cli_runner.FootgenFailed("the board outline (Edge.Cuts) is missing or not closed: draw a closed outline first", cli_runner.EXIT_INPUT, "")
    rings = _rings(outline)
    ground, obstacles = [], []
    for zone in board.Zones():
        if zone.GetIsRuleArea():
            continue
        target = ground if zone.GetNetname() == gnd_net else None
        for ring in _rings(zone.Outline()):
            if target is not None:
                target.append(ring)
            else:
                obstacles.append({"label": f"zone on net {zone.GetNetname() or '(none)'}", "polygon_mm": ring})
    for track in board.GetTracks():
        if rf_net and track.GetNetname() == rf_net:
            continue
        for ring in _shape_rings(track, track.GetLayer() if track.GetClass() != "PCB_VIA" else pcbnew.F_Cu):
            kind = "via" if track.GetClass() == "PCB_VIA" else "track"
            obstacles.append({"label": f"{kind} on net {track.GetNetname() or '(none)'}", "polygon_mm": ring})
    for fp in board.GetFootprints():
        if skip_reference and fp.GetReference() == skip_reference:
            continue
        court = fp.GetCourtyard(pcbnew.B_CrtYd if fp.IsFlipped() else pcbnew.F_CrtYd)
        rings_fp = _rings(court) if court.OutlineCount() else []
        if not rings_fp:
            bbox = fp.GetBoundingBox(False, False)
            x0, y0, x1, y1 = _mm(bbox.GetLeft()), _mm(bbox.GetTop()), _mm(bbox.GetRight()), _mm(bbox.GetBottom())
            rings_fp = [[[x0, y0], [x1, y0], [x1, y1], [x0, y1]]]
        for ring in rings_fp:
            obstacles.append({"label": f"footprint {fp.GetReference()}", "polygon_mm": ring})
    settings = board.GetDesignSettings()
    return {
        "outline_mm": max(rings, key=len) if len(rings) > 1 else rings[0],
        "ground_mm": ground,
        "obstacles": obstacles,
        "focus_mm": list(focus_mm) if focus_mm else None,
        "copper_clearance_mm": _mm(settings.m_MinClearance),
    }


def clearance_box_lo(footprint) -> float:
    """Where the footprint's clearance area starts along its own x (mm, footprint frame, as
    loaded: position 0, rotation 0)."""
    for zone in footprint.Zones():
        if zone.GetZoneName() == CLEARANCE_ZONE_NAME:
            return min(pt[0] for ring in _rings(zone.Outline()) for pt in ring)
    raise cli_runner.FootgenFailed(f"{footprint.GetFPIDAsString()}: no {CLEARANCE_ZONE_NAME} rule area; rebuild it with footgen", cli_runner.EXIT_INPUT, "")


def ask_core(view: dict, args: list[str], cmd: list[str] | None = None) -> dict:
    """Run ``footgen sites`` on ``view`` with ``args``; its JSON answer."""
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "board-view.json"
        path.write_text(json.dumps(view), "utf-8")
        proc = cli_runner._run((cmd or cli_runner.find_footgen()) + ["sites", str(path), *args])
    if proc.returncode != cli_runner.EXIT_OK:
        raise cli_runner.FootgenFailed(f"footgen sites: {cli_runner._last_error(proc)}", proc.returncode, proc.stderr)
    return json.loads(proc.stdout)


def size_args(spec: dict) -> list[str]:
    clearance = spec.get("clearance", {})
    args = ["--width-mm", repr(float(clearance["width_mm"])), "--depth-mm", repr(float(clearance["depth_mm"]))]
    return args + ["--edge-distance-mm", repr(float(clearance.get("edge_distance_mm", 0.0)))]


def propose(board, spec: dict, gnd_net: str, *, rf_net: str | None = None, focus_mm=None, cmd=None) -> list[dict]:
    """The core's sites for ``spec``'s clearance area on ``board``, nearest the focus first."""
    return ask_core(board_view(board, gnd_net, rf_net=rf_net, focus_mm=focus_mm), size_args(spec), cmd)["sites"]


def board_rules(board) -> dict:
    """Board Setup values (mm) that bound a footprint's fab limits, keyed as
    :data:`.placement.BOARD_RULES`; the copper clearance is the larger of the board minimum
    and the Default net class clearance."""
    settings = board.GetDesignSettings()
    clearance = _mm(settings.m_MinClearance)
    try:
        clearance = max(clearance, _mm(settings.m_NetSettings.GetDefaultNetclass().GetClearance()))
    except (AttributeError, TypeError):  # net class API differs between KiCad versions
        pass
    return {
        "copper_clearance_mm": clearance,
        "hole_clearance_mm": _mm(settings.m_HoleClearance),
        "track_width_mm": _mm(settings.m_TrackMinWidth),
        "edge_clearance_mm": _mm(settings.m_CopperEdgeClearance),
        "min_drill_mm": _mm(settings.m_MinThroughDrill),
        "hole_to_hole_mm": _mm(settings.m_HoleToHoleMin),
        "annular_ring_mm": _mm(settings.m_ViasMinAnnularWidth),
    }


def focus_of_selection(board) -> tuple[float, float] | None:
    """Centre of the selected footprints, tracks and drawings (None: nothing selected)."""
    boxes = [item.GetBoundingBox() for group in (board.GetFootprints(), board.GetTracks(), board.GetDrawings()) for item in group if item.IsSelected()]
    if not boxes:
        return None
    xs = [b.GetLeft() for b in boxes] + [b.GetRight() for b in boxes]
    ys = [b.GetTop() for b in boxes] + [b.GetBottom() for b in boxes]
    return ((_mm(min(xs)) + _mm(max(xs))) / 2, (_mm(min(ys)) + _mm(max(ys))) / 2)
