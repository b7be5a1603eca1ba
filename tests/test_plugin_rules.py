"""The plugin's reading of a board's design rules against the footprint's fab limits, and the
band names its form shows.  Pure data, no KiCad: the defaults below are KiCad 9's default Board
Setup as observed in KiCad 9.0.8 (copper-to-hole 0.25 mm, net class clearance 0.2 mm,
copper-to-edge 0.5 mm), the fab values footgen's shipped "standard" profile.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from footgen.bands import BANDS
from footgen.plugin.placement import BOARD_RULES, fab_from_board, rules_warnings

KICAD_DEFAULT_RULES = {
    "copper_clearance_mm": 0.2, "hole_clearance_mm": 0.25, "track_width_mm": 0.0, "edge_clearance_mm": 0.5,
    "min_drill_mm": 0.3, "hole_to_hole_mm": 0.25, "annular_ring_mm": 0.1,
}
STANDARD = json.loads((Path(__file__).resolve().parent.parent / "footgen" / "data" / "fab_profiles.json").read_text("utf-8"))["standard"]


def test_rules_stricter_than_the_fab_are_named_with_both_values() -> None:
    warnings = rules_warnings(KICAD_DEFAULT_RULES, STANDARD)
    assert len(warnings) == 3  # copper clearance, copper-to-hole, copper-to-edge
    assert warnings[0].startswith("the board's copper clearance is 0.2 mm, the footprint was built to fab.min_clearance_mm 0.15 mm")
    assert any("copper to hole clearance is 0.25 mm" in w for w in warnings)
    assert any("copper to edge clearance is 0.5 mm" in w and "min_copper_to_edge_mm 0.3 mm" in w for w in warnings)


def test_a_fab_at_least_as_strict_as_the_board_gives_no_warning() -> None:
    fab = fab_from_board({"fab": {"profile": "standard"}}, KICAD_DEFAULT_RULES)["fab"]
    assert rules_warnings(KICAD_DEFAULT_RULES, dict(STANDARD, **fab)) == []


def test_board_rules_as_fab_limits_take_the_strictest_rule_per_limit() -> None:
    spec = {"name": "x", "fab": {"profile": "standard", "min_trace_mm": 0.15}}
    fab = fab_from_board(spec, KICAD_DEFAULT_RULES)["fab"]
    assert fab["min_clearance_mm"] == 0.25  # copper 0.2 and copper-to-hole 0.25 both bound it
    assert fab["min_copper_to_edge_mm"] == 0.5
    assert fab["min_trace_mm"] == 0.15  # the board's 0 track width changes nothing
    assert fab["profile"] == "standard"
    assert spec["fab"] == {"profile": "standard", "min_trace_mm": 0.15}  # a copy


def test_every_board_rule_bounds_a_fab_limit_of_the_spec_schema() -> None:
    schema = json.loads((Path(__file__).resolve().parent.parent / "schemas" / "footgen-spec-v1.schema.json").read_text("utf-8"))
    fab_fields = set(schema["properties"]["fab"]["properties"])
    assert {field for field, _label in BOARD_RULES.values()} <= fab_fields


def test_the_form_names_every_band_footgen_knows_with_its_edges() -> None:
    pytest.importorskip("pcbnew", reason="the action module needs KiCad's pcbnew")
    from footgen.plugin.action import BAND_NAMES

    assert set(BAND_NAMES) == set(BANDS)
    for key, band in BANDS.items():
        low, high = f"{band.low_hz / 1e6:g}", f"{band.high_hz / 1e6:g}"
        assert f"({low}-{high} MHz)" in BAND_NAMES[key], key
