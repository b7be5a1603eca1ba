"""KiCad 9 itself as the client: it loads every footprint, its DRC passes on a test board, and
it reports the same fab faults as our checker.  Needs kicad-cli and pcbnew (fails in CI without)."""

from __future__ import annotations

import copy
import json
import shutil
from pathlib import Path

import pytest
from shapely.geometry import Polygon

from footgen.build import run, write_build
from footgen.kicad.testrun import filled_zones, make_test_board, run_drc, upgrade_footprint
from footgen.rules import check
from footgen.spec import load_spec, parse_spec

from conftest import EXAMPLES, ROOT, TEMPLATES, load_json, write_spec

pytestmark = pytest.mark.kicad
SPECS = EXAMPLES + TEMPLATES


@pytest.mark.parametrize("spec_path", SPECS, ids=[p.stem for p in SPECS])
def test_kicad_loads_the_footprint(kicad, spec_path: Path, tmp_path: Path) -> None:
    result = run(load_spec(spec_path))
    write_build(result, tmp_path / "build")
    pretty = tmp_path / "build" / f"{result.spec.library}.pretty"
    upgrade_footprint(pretty, tmp_path / "upgraded.pretty")
    upgraded = (tmp_path / "upgraded.pretty" / f"{result.spec.name}.kicad_mod").read_text("utf-8")
    assert "(version 2024" in upgraded or "(version 2025" in upgraded  # re-saved by KiCad 9
    assert upgraded.count("(pad ") == len(result.layout.pads)
    assert "net_tie_pad_groups" in upgraded and 'name "antenna_clearance"' in upgraded


@pytest.mark.parametrize("spec_path", SPECS, ids=[p.stem for p in SPECS])
def test_test_board_drc_clean_and_pour_outside_keepout(kicad, spec_path: Path, tmp_path: Path) -> None:
    report = make_test_board(spec_path, tmp_path)
    assert report.drc_errors == []
    # KiCad does not flag a pour that floods a keep-out on too few layers: check the fill itself.
    result = run(load_spec(spec_path))
    ox, oy = 100.0, 100.0
    box = [(ox + x, oy - y) for x, y in result.layout.clearance_box.exterior.coords]
    keepout = Polygon(box)
    fills = filled_zones(report.board_path)
    assert set(fills) == {"F.Cu", "B.Cu"}
    for layer, polys in fills.items():
        for pts in polys:
            overlap = Polygon(pts).buffer(0).intersection(keepout).area
            assert overlap < 1e-6, f"{layer} pour floods the clearance by {overlap} mm^2"


# our rule -> the DRC check type KiCad 9 reports for the same fault
AGREEMENT = [
    ("drill", {"short": {"via_count": 2, "via_drill_mm": 0.2}}, "via_drill", "drill_out_of_range"),
    ("ring", {"short": {"via_count": 2, "via_annular_ring_mm": 0.08}}, "annular_ring", "annular_width"),
    ("width", {"trace_width_mm": 0.1, "feed": {"pad_width_mm": 0.6}}, "trace_width", "connection_width"),
    ("edge", {"arm": {"height_mm": 5.6, "length_mm": 20.0, "feed_short_spacing_mm": 2.0}}, "copper_to_edge", "copper_edge_clearance"),
]


@pytest.mark.parametrize("case, change, ours, theirs", AGREEMENT, ids=[a[0] for a in AGREEMENT])
def test_our_checker_and_kicad_drc_agree(kicad, tmp_path: Path, case: str, change: dict, ours: str, theirs: str) -> None:
    data = copy.deepcopy(load_json(ROOT / "examples" / "soil-probe-2g4.json"))
    data.update(change)
    data["name"] = f"fault_{case}"
    spec_path = write_spec(tmp_path, data)
    result = run(parse_spec(data))
    assert ours in {v.rule for v in check(result.layout, result.spec.fab)}
    report = make_test_board(spec_path, tmp_path / "board", allow_violations=True)
    assert theirs in report.types("error"), report.drc_errors


def test_bundled_example_board_is_drc_clean(kicad, tmp_path: Path) -> None:
    board_dir = ROOT / "examples" / "wren-probe-board"
    copy_dir = tmp_path / "wren"
    shutil.copytree(board_dir, copy_dir)
    board = next(copy_dir.glob("*.kicad_pcb"))
    drc = run_drc(board)
    errors = [v for v in drc["violations"] + drc["unconnected_items"] if v["severity"] == "error"]
    assert errors == []
    assert "soil_probe_2g4" in board.read_text("utf-8")
    json.dumps(drc)  # the report is plain JSON
