"""The IPC-API front door (KiCad 9/10, kicad-python): the same placement and regeneration as
the SWIG action, through the running PCB editor.

KiCad starts this file as an API plugin (``plugin.json``; KiCad sets KICAD_API_SOCKET and
KICAD_API_TOKEN).  It reads the board through the API into the placement core's JSON (the same
data :mod:`.board_view` reads through SWIG), asks the core (``footgen sites``) for the site
nearest the selection, then saves the board, places or regenerates with the shared code of
:mod:`.placement` in KiCad's Python (a subprocess) and has the editor reload the saved board.
KiCad 9.0.8's API cannot put a library footprint on a board (ParseAndCreateItemsFromString
creates nothing), hence the save / place in the file / revert round trip; the editor's undo
history ends at that reload.

    python3 ipc_door.py [--spec SPEC.json] [--rf-net RF_ANT] [--gnd-net GND]
"""

from __future__ import annotations

import argparse
import json
import os
import shlex
import subprocess
import sys
from pathlib import Path

if __package__ in (None, ""):  # started by KiCad as a script from the plugin folder
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
    __package__ = Path(__file__).resolve().parent.name
    import importlib

    importlib.import_module(__package__)

from . import board_view, cli_runner, placement  # noqa: E402

NM_PER_MM = 1_000_000
#: Endpoints of outline segments closer than this join (mm).
JOIN_TOL_MM = 1e-3
#: Environment variable naming a Python that can import pcbnew (the placement subprocess).
KICAD_PYTHON_ENV = "FOOTGEN_KICAD_PYTHON"
PLACE_TIMEOUT_S = 600


def _mm(v) -> list[float]:
    return [round(v.x / NM_PER_MM, 6) + 0.0, round(v.y / NM_PER_MM, 6) + 0.0]


def _poly_rings(polygons) -> list[list[list[float]]]:
    return [[_mm(node.point) for node in poly.outline.nodes if node.has_point] for poly in polygons]


def _chain(segments: list[tuple[list[float], list[float]]]) -> list[list[list[float]]]:
    """Join outline segments end to end into closed rings."""
    left = list(segments)
    rings = []
    while left:
        a, b = left.pop(0)
        ring = [a, b]
        while left:
            for i, (p, q) in enumerate(left):
                if _near(p, ring[-1]) or _near(q, ring[-1]):
                    ring.append(q if _near(p, ring[-1]) else p)
                    left.pop(i)
                    break
            else:
                break
        if _near(ring[0], ring[-1]):
            ring.pop()
        if len(ring) >= 3:
            rings.append(ring)
    return rings


def _near(p, q) -> bool:
    return abs(p[0] - q[0]) <= JOIN_TOL_MM and abs(p[1] - q[1]) <= JOIN_TOL_MM


def _area(ring) -> float:
    return abs(sum(x0 * y1 - x1 * y0 for (x0, y0), (x1, y1) in zip(ring, ring[1:] + ring[:1]))) / 2


def board_view_ipc(board, gnd_net: str, *, rf_net: str | None = None, focus_mm=None) -> dict:
    """The board as the placement core's JSON, read through the IPC API (see
    :func:`.board_view.board_view` for the SWIG twin)."""
    from kipy.board_types import BoardPolygon, BoardRectangle, BoardSegment
    from kipy.proto.board.board_types_pb2 import BoardLayer

    segments, rings = [], []
    for shape in board.get_shapes():
        if shape.layer != BoardLayer.BL_Edge_Cuts:
            continue
        if isinstance(shape, BoardSegment):
            segments.append((_mm(shape.start), _mm(shape.end)))
        elif isinstance(shape, BoardRectangle):
            (x0, y0), (x1, y1) = _mm(shape.top_left), _mm(shape.bottom_right)
            rings.append([[x0, y0], [x1, y0], [x1, y1], [x0, y1]])
        elif isinstance(shape, BoardPolygon):
            rings += _poly_rings(shape.polygons)
    rings += _chain(segments)
    if not rings:
        raise cli_runner.FootgenFailed("the board outline (Edge.Cuts) is missing or not closed: draw a closed outline first", cli_runner.EXIT_INPUT, "")
    ground, obstacles = [], []
    for zone in board.get_zones():
        if zone.is_rule_area():
            continue
        for ring in _poly_rings([zone.outline]):
            if zone.net.name == gnd_net:
                ground.append(ring)
            else:
                obstacles.append({"label": f"zone on net {zone.net.name or '(none)'}", "polygon_mm": ring})
    for track in board.get_tracks():
        if rf_net and track.net.name == rf_net:
            continue
        obstacles.append({"label": f"track on net {track.net.name or '(none)'}", "polygon_mm": _stadium(_mm(track.start), _mm(track.end), track.width / NM_PER_MM)})
    for via in board.get_vias():
        c, r = _mm(via.position), via.diameter / NM_PER_MM / 2
        obstacles.append({"label": f"via on net {via.net.name or '(none)'}", "polygon_mm": [[c[0] - r, c[1] - r], [c[0] + r, c[1] - r], [c[0] + r, c[1] + r], [c[0] - r, c[1] + r]]})
    footprints = board.get_footprints()
    for fp, bbox in zip(footprints, board.get_item_bounding_box(footprints) if footprints else []):
        if bbox is None:
            continue
        (x0, y0), (w, h) = _mm(bbox.pos), _mm(bbox.size)
        obstacles.append({"label": f"footprint {fp.reference_field.text.value}", "polygon_mm": [[x0, y0], [x0 + w, y0], [x0 + w, y0 + h], [x0, y0 + h]]})
    return {"outline_mm": max(rings, key=_area), "ground_mm": ground, "obstacles": obstacles, "focus_mm": list(focus_mm) if focus_mm else None, "copper_clearance_mm": 0.0}


def _stadium(a, b, width: float) -> list[list[float]]:
    """A track as the rectangle around its centreline, grown by half its width at the ends."""
    dx, dy = b[0] - a[0], b[1] - a[1]
    length = (dx * dx + dy * dy) ** 0.5 or 1.0
    ux, uy, h = dx / length, dy / length, width / 2
    nx, ny = -uy * h, ux * h
    a = [a[0] - ux * h, a[1] - uy * h]
    b = [b[0] + ux * h, b[1] + uy * h]
    return [[a[0] + nx, a[1] + ny], [b[0] + nx, b[1] + ny], [b[0] - nx, b[1] - ny], [a[0] - nx, a[1] - ny]]


def focus_of_selection(board) -> list[float] | None:
    """Centre of the selected items' bounding box (None: nothing selected)."""
    items = list(board.get_selection())
    boxes = [b for b in (board.get_item_bounding_box(items) if items else []) if b is not None]
    if not boxes:
        return None
    xs = [b.pos.x for b in boxes] + [b.pos.x + b.size.x for b in boxes]
    ys = [b.pos.y for b in boxes] + [b.pos.y + b.size.y for b in boxes]
    return [(min(xs) + max(xs)) / 2 / NM_PER_MM, (min(ys) + max(ys)) / 2 / NM_PER_MM]


def kicad_python() -> str:
    """A Python that can import pcbnew: $FOOTGEN_KICAD_PYTHON, this one, or python3."""
    for exe in filter(None, (os.environ.get(KICAD_PYTHON_ENV), sys.executable, "python3")):
        try:
            if subprocess.run([exe, "-c", "import pcbnew"], capture_output=True, timeout=60).returncode == 0:
                return exe
        except (OSError, subprocess.TimeoutExpired):
            continue
    raise cli_runner.FootgenNotFound(f"no Python with KiCad's pcbnew module: set {KICAD_PYTHON_ENV} to one (e.g. /usr/bin/python3 on Debian)")


def run(kicad, spec_path: Path | None = None, *, rf_net: str = placement.DEFAULT_RF_NET, gnd_net: str = placement.DEFAULT_GND_NET, cmd: list[str] | None = None) -> dict:
    """Place (at the site nearest the selection) or regenerate in place the antenna of
    ``spec_path`` (default: the first spec in the project's footgen folder); returns what the
    shared placement code reported, plus the site used."""
    board = kicad.get_board()
    project = Path(board.document.project.path)
    board_file = project / board.document.board_filename
    if spec_path is None:
        specs = [p for p in sorted((project / placement.WORK_DIR_NAME).glob("*.json")) if _is_spec(p)]
        if not specs:
            raise placement.PlacementError(f"no footgen spec in {project / placement.WORK_DIR_NAME}: run footgen new there first")
        spec_path = specs[0]
    spec = cli_runner.read_spec(spec_path)
    cmd = cmd or cli_runner.find_footgen()
    name = str(spec["name"])
    existing = [fp for fp in board.get_footprints() if str(fp.definition.id) == f"{placement.PROJECT_LIBRARY}:{name}"]
    args = [str(board_file), str(spec_path)]
    site = None
    if not existing:
        view = board_view_ipc(board, gnd_net, rf_net=rf_net, focus_mm=focus_of_selection(board))
        sites = board_view.ask_core(view, board_view.size_args(spec), cmd)["sites"]
        if not sites:
            raise placement.PlacementError(f"no place along the board outline fits the {spec['clearance']['width_mm']:g} x {spec['clearance']['depth_mm']:g} mm clearance area clear of other copper")
        site = sites[0]
        spec_path = cli_runner.write_spec(placement.apply_site(spec, site), project / placement.WORK_DIR_NAME / f"{name}.json")
        args = [str(board_file), str(spec_path), "--site-json", json.dumps(site)]
    board.save()
    root = Path(__file__).resolve().parents[len(__package__.split("."))]  # folder holding this package
    env = dict(os.environ, **{cli_runner.FOOTGEN_CMD_ENV: shlex.join(cmd)}, PYTHONPATH=str(root))
    env.pop("KICAD_API_SOCKET", None)
    proc = subprocess.run([kicad_python(), "-m", f"{__package__}.placement", *args, "--rf-net", rf_net, "--gnd-net", gnd_net],
                          capture_output=True, text=True, timeout=PLACE_TIMEOUT_S, env=env, cwd=str(root))
    board.revert()
    if proc.returncode == 0:
        kicad.get_board().refill_zones()
    if proc.returncode != 0:
        raise placement.PlacementError(cli_runner._last_error(proc))
    result = json.loads(proc.stdout.strip().splitlines()[-1])
    result["site"] = site
    return result


def _is_spec(path: Path) -> bool:
    try:
        cli_runner.read_spec(path)
    except cli_runner.FootgenFailed:
        return False
    return True


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="footgen's IPC-API action: place or regenerate the antenna in the running PCB editor.")
    parser.add_argument("--spec", type=Path, default=None)
    parser.add_argument("--rf-net", default=placement.DEFAULT_RF_NET)
    parser.add_argument("--gnd-net", default=placement.DEFAULT_GND_NET)
    args = parser.parse_args(argv)
    from kipy import KiCad

    try:
        result = run(KiCad(timeout_ms=PLACE_TIMEOUT_S * 1000), args.spec, rf_net=args.rf_net, gnd_net=args.gnd_net)
    except (placement.PlacementError, cli_runner.FootgenFailed, cli_runner.FootgenNotFound) as exc:
        print(f"footgen plugin: error: {exc}", file=sys.stderr)
        return 1
    print(json.dumps(result))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
