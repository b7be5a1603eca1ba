"""Bad specs: each gives one line on stderr naming the JSON path, a non-zero exit, no traceback
and nothing written."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from footgen.cli import main
from footgen.errors import SpecError
from footgen.spec import parse_spec

from conftest import ROOT, load_json, with_field

BASE = load_json(ROOT / "examples" / "soil-probe-2g4.json")


def _drop(data: dict, dotted: str) -> dict:
    out = copy.deepcopy(data)
    node = out
    keys = dotted.split(".")
    for key in keys[:-1]:
        node = node[key]
    del node[keys[-1]]
    return out


# (id, spec data, text the one-line error must contain)
BAD_SPECS: list[tuple[str, object, str]] = [
    ("no_schema_version", _drop(BASE, "schema_version"), "schema_version"),
    ("future_schema_version", with_field(BASE, "schema_version", 2), "$.schema_version"),
    ("name_with_space", with_field(BASE, "name", "my antenna"), "$.name"),
    ("name_empty", with_field(BASE, "name", ""), "$.name"),
    ("unknown_field", with_field(BASE, "colour", "red"), "colour"),
    ("typo_field", with_field(_drop(BASE, "trace_width_mm"), "trace_widht_mm", 0.8), "trace_width_mm"),
    ("unknown_band", with_field(BASE, "target", {"band": "ism_2g5"}), "ism_2g4"),
    ("center_too_low", with_field(BASE, "target", {"center_mhz": 50}), "$.target.center_mhz"),
    ("band_edges_reversed", with_field(BASE, "target", {"low_mhz": 930, "high_mhz": 900}), "$.target.high_mhz"),
    ("band_and_center", with_field(BASE, "target", {"band": "ism_2g4", "center_mhz": 2440}), "$.target"),
    ("bandwidth_too_wide", with_field(BASE, "target", {"center_mhz": 900, "bandwidth_mhz": 2000}), "$.target.bandwidth_mhz"),
    ("eps_r_below_one", with_field(BASE, "laminate.eps_r", 0.5), "$.laminate.eps_r"),
    ("thickness_negative", with_field(BASE, "laminate.thickness_mm", -1.6), "$.laminate.thickness_mm"),
    ("eps_r_string", with_field(BASE, "laminate.eps_r", "4.4"), "$.laminate.eps_r"),
    ("thickness_missing", _drop(BASE, "laminate.thickness_mm"), "thickness_mm"),
    ("loss_tangent_huge", with_field(BASE, "laminate.loss_tangent", 0.5), "$.laminate.loss_tangent"),
    ("clearance_too_narrow_schema", with_field(BASE, "clearance.width_mm", 1), "$.clearance.width_mm"),
    ("clearance_depth_zero", with_field(BASE, "clearance.depth_mm", 0), "$.clearance.depth_mm"),
    ("arm_direction_up", with_field(BASE, "clearance.arm_direction", "up"), "$.clearance.arm_direction"),
    ("style_unknown", with_field(BASE, "style", {"kind": "zigzag"}), "$.style"),
    ("meander_without_layout", with_field(BASE, "style", {"kind": "meandered"}), "$.style"),
    ("meander_min_height_above_arm", with_field(BASE, "style", {"kind": "meandered", "meander": "fit", "min_height_mm": 9.0}), "$.style.min_height_mm"),
    ("trace_width_zero", with_field(BASE, "trace_width_mm", 0), "$.trace_width_mm"),
    ("arm_above_clearance", with_field(BASE, "arm", {"height_mm": 7.5}), "$.arm.height_mm"),
    ("arm_length_negative", with_field(BASE, "arm", {"length_mm": -3}), "$.arm.length_mm"),
    ("feed_pad_narrower_than_trace", with_field(BASE, "feed.pad_width_mm", 0.3), "$.feed.pad_width_mm"),
    ("port_gap_zero", with_field(BASE, "feed.port_gap_mm", 0), "$.feed.port_gap_mm"),
    ("too_many_vias", with_field(BASE, "short.via_count", 9), "$.short.via_count"),
    ("via_count_fraction", with_field(BASE, "short.via_count", 1.5), "$.short.via_count"),
    ("via_drill_zero", with_field(BASE, "short.via_drill_mm", 0), "$.short.via_drill_mm"),
    ("fab_unknown", with_field(BASE, "fab", {"profile": "cheap"}), "$.fab.profile"),
    ("fab_limit_negative", with_field(BASE, "fab", {"profile": "standard", "min_trace_mm": -1}), "$.fab.min_trace_mm"),
    ("rotation_45", with_field(BASE, "output", {"rotation_deg": 45}), "$.output.rotation_deg"),
    ("grid_zero", with_field(BASE, "output", {"grid_nm": 0}), "$.output.grid_nm"),
    ("ground_plane_missing", _drop(BASE, "ground_plane"), "ground_plane"),
    ("history_ahead", with_field(BASE, "history", [{"revision": 3, "note": "x"}]), "$.history"),
    ("top_level_list", [1, 2, 3], "$"),
    ("straight_does_not_fit", with_field(BASE, "clearance.width_mm", 8.0), "$.clearance.width_mm"),
    ("clearance_too_shallow", with_field(with_field(BASE, "clearance.depth_mm", 1.0), "trace_width_mm", 1.5), "$.clearance.depth_mm"),
    ("fixed_arm_too_long", with_field(BASE, "arm", {"length_mm": 80.0}), "$.arm.length_mm"),
]


@pytest.mark.parametrize("case_id, data, expected", BAD_SPECS, ids=[c[0] for c in BAD_SPECS])
def test_bad_spec_one_line_error_nothing_written(tmp_path: Path, case_id: str, data: object, expected: str) -> None:
    spec = tmp_path / "bad.json"
    spec.write_text(json.dumps(data), "utf-8")
    out = tmp_path / "out"
    result = CliRunner().invoke(main, ["build", str(spec), "-o", str(out)])
    assert result.exit_code == 2, result.output
    assert isinstance(result.exception, SystemExit)  # a clean exit, never a traceback
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert len(lines) == 1, lines
    assert lines[0].startswith("footgen: error: ")
    assert expected in lines[0]
    assert not out.exists() or not any(out.rglob("*"))


def test_at_least_thirty_distinct_bad_specs() -> None:
    assert len(BAD_SPECS) >= 30
    assert len({json.dumps(d, sort_keys=True) for _, d, _ in BAD_SPECS}) == len(BAD_SPECS)


@pytest.mark.parametrize("text, expected", [("{ not json", "invalid JSON"), ("", "invalid JSON")])
def test_unparsable_file(tmp_path: Path, text: str, expected: str) -> None:
    spec = tmp_path / "broken.json"
    spec.write_text(text, "utf-8")
    result = CliRunner().invoke(main, ["validate", str(spec)])
    assert result.exit_code == 2
    assert expected in result.stderr and "broken.json:1:" in result.stderr


def test_missing_file(tmp_path: Path) -> None:
    result = CliRunner().invoke(main, ["check", str(tmp_path / "nope.json")])
    assert result.exit_code == 2
    assert "no such spec file" in result.stderr


def test_did_you_mean_for_typo() -> None:
    with pytest.raises(SpecError, match="did you mean 'trace_width_mm'"):
        parse_spec(with_field(_drop(BASE, "trace_width_mm"), "trace_widht_mm", 0.8))


def test_infeasible_box_names_the_smallest_box_that_works() -> None:
    with pytest.raises(SpecError) as err:
        from footgen.build import run

        run(parse_spec(with_field(BASE, "clearance.width_mm", 8.0)))
    assert "would work" in str(err.value) and "meandered" in str(err.value)


def test_valid_spec_is_accepted() -> None:
    spec = parse_spec(BASE)
    assert spec.name == "soil_probe_2g4" and spec.fab.name == "standard"


TEMPLATE_868 = load_json(ROOT / "templates" / "srd-868-meander.json")


def _box_hint_mm(message: str) -> float:
    import re

    found = re.search(r"a clearance area about (\d+) mm wide", message)
    assert found, message
    return float(found.group(1))


def test_box_hint_comes_from_a_real_search_not_its_limit() -> None:
    from footgen.sizing import WIDEST_BOX_MM, size

    data = with_field(with_field(TEMPLATE_868, "clearance.width_mm", 26.0), "style", {"kind": "straight"})
    with pytest.raises(SpecError) as err:
        size(parse_spec(data), "tline")
    width = _box_hint_mm(str(err.value))
    assert width < WIDEST_BOX_MM and "at least as wide" in str(err.value)
    # the hinted box works (its ground plane as wide as the hint says), one millimetre less does not
    wide_ground = with_field(data, "ground_plane.width_mm", width)
    assert size(parse_spec(with_field(wide_ground, "clearance.width_mm", width)), "tline").arm_length_mm > 0
    with pytest.raises(SpecError, match="too small"):
        size(parse_spec(with_field(wide_ground, "clearance.width_mm", width - 1)), "tline")


def test_clearance_wider_than_the_ground_plane_is_said() -> None:
    from footgen.sizing import size

    data = with_field(with_field(TEMPLATE_868, "clearance.width_mm", 60.0), "ground_plane.width_mm", 30.0)
    with pytest.raises(SpecError) as err:
        size(parse_spec(data), "tline")
    assert "wider than the ground plane" in str(err.value) and "$.ground_plane.width_mm" in str(err.value)
    assert "300" not in str(err.value)
