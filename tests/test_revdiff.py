"""Revision diff (footgen.revdiff): specs, builds and .kicad_mod footprints."""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import pytest

from footgen import build
from footgen.revdiff import (
    FootprintReadError,
    diff_builds,
    diff_files,
    diff_footprints,
    overlay_svg_png,
    parse_sexpr,
    read_pad_copper,
)
from footgen.errors import SpecError
from footgen.spec import parse_spec

TEMPLATES = Path(__file__).resolve().parents[1] / "templates"
#: The fast registered response model; the checks hold for any model of sizing.MODELS (the
#: default MoM model takes minutes per retune, so it is exercised only where marked slow).
MODEL = "tline"
#: Footprint coordinates are written to 1 nm (6 decimals in mm); areas of a ~25 mm^2 pad then
#: agree to well below this (mm^2), lengths to 1e-6 mm.
AREA_ABS_MM2 = 1e-5
LENGTH_ABS_MM = 1e-6
ARM_OLD_MM, ARM_NEW_MM = 18.0, 20.5


def spec_data(arm_mm: float | None = None) -> dict:
    data = json.loads((TEMPLATES / "ism-2g4-straight.json").read_text("utf-8"))
    if arm_mm is not None:
        data["arm"] = {"length_mm": arm_mm, "height_mm": 5.3, "feed_short_spacing_mm": 1.0}
    return data


def write_spec(path: Path, data: dict) -> Path:
    path.write_text(json.dumps(data, indent=2), "utf-8")
    return path


def write_footprint(folder: Path, data: dict) -> Path:
    result = build.run(parse_spec(data))
    folder.mkdir()
    path = folder / "ant.kicad_mod"
    path.write_text(result.footprint_text, "utf-8")
    return path


def test_spec_with_itself_reports_no_change(tmp_path):
    path = write_spec(tmp_path / "a.json", spec_data())
    diff = diff_files(path, path, model=MODEL)
    assert not diff.changed
    assert diff.spec_changes == ()
    assert diff.arm_change_mm == 0.0
    assert diff.copper_area_change_mm2 == 0.0


def test_known_arm_change_shows_with_the_right_mm(tmp_path):
    old = write_spec(tmp_path / "old.json", spec_data(ARM_OLD_MM))
    new_data = spec_data(ARM_NEW_MM)
    new_data["revision"] = 2
    new = write_spec(tmp_path / "new.json", new_data)
    diff = diff_files(old, new, model=MODEL)
    assert diff.changed
    assert diff.arm_change_mm == pytest.approx(ARM_NEW_MM - ARM_OLD_MM, abs=LENGTH_ABS_MM)
    # A straight strip of width w lengthened by dL at its open end gains w * dL of copper
    # (plane geometry, no source needed) and its bounding box grows by dL.
    width = new_data["trace_width_mm"]
    assert diff.copper_area_change_mm2 == pytest.approx(width * (ARM_NEW_MM - ARM_OLD_MM), abs=AREA_ABS_MM2)
    assert diff.bbox_change_mm[0] == pytest.approx(ARM_NEW_MM - ARM_OLD_MM, abs=LENGTH_ABS_MM)
    changed = {r.name: (r.old, r.new) for r in diff.spec_changes}
    assert changed["$.arm.length_mm"] == (ARM_OLD_MM, ARM_NEW_MM)
    assert changed["$.revision"] == (None, 2)
    assert "$.arm.height_mm" not in changed


def test_builds_compare_like_specs():
    a = build.run(parse_spec(spec_data(ARM_OLD_MM)))
    b = build.run(parse_spec(spec_data(ARM_NEW_MM)))
    assert diff_builds(a, b).arm_change_mm == pytest.approx(ARM_NEW_MM - ARM_OLD_MM, abs=LENGTH_ABS_MM)


def test_footprint_files_diff_area_and_bbox(tmp_path):
    old = write_footprint(tmp_path / "old", spec_data(ARM_OLD_MM))
    new = write_footprint(tmp_path / "new", spec_data(ARM_NEW_MM))
    diff = diff_footprints(old, new)
    width = spec_data()["trace_width_mm"]
    assert diff.copper_area_change_mm2 == pytest.approx(width * (ARM_NEW_MM - ARM_OLD_MM), abs=AREA_ABS_MM2)
    assert diff.bbox_change_mm == pytest.approx((ARM_NEW_MM - ARM_OLD_MM, 0.0), abs=LENGTH_ABS_MM)
    same = diff_footprints(old, old)
    assert not same.changed


@pytest.mark.parametrize("rotation_deg, direction", [(0, "right"), (90, "left"), (270, "right")])
def test_pad_copper_read_back_equals_the_layout(tmp_path, rotation_deg, direction):
    data = spec_data(ARM_NEW_MM)
    data["output"] = {"rotation_deg": rotation_deg}
    data["clearance"]["arm_direction"] = direction
    result = build.run(parse_spec(data))
    path = write_footprint(tmp_path / "fp", data)
    copper = read_pad_copper(path)
    assert copper.symmetric_difference(result.layout.antenna).area < AREA_ABS_MM2


@pytest.mark.kicad
def test_pad_copper_area_agrees_with_kicad(tmp_path, kicad):
    """Reference: KiCad 9's own footprint loader and pad polygon (pcbnew)."""
    with warnings.catch_warnings():
        # KiCad 9 announces the SWIG interface's deprecation on import; it works in 9.x.
        warnings.simplefilter("ignore", DeprecationWarning)
        import pcbnew
    lib = tmp_path / "lib.pretty"
    lib.mkdir()
    source = write_footprint(tmp_path / "fp", spec_data(ARM_NEW_MM))
    (lib / "ant.kicad_mod").write_text(source.read_text("utf-8"), "utf-8")
    fp = pcbnew.FootprintLoad(str(lib), "ant")
    pad = next(p for p in fp.Pads() if p.GetNumber() == "1")
    poly = pad.GetEffectivePolygon(pcbnew.F_Cu, pcbnew.ERROR_INSIDE)
    mine = read_pad_copper(source)
    nm2_per_mm2 = 1e12
    assert mine.area == pytest.approx(poly.Area() / nm2_per_mm2, abs=AREA_ABS_MM2)
    x0, y0, x1, y1 = mine.bounds
    assert x1 - x0 == pytest.approx(poly.BBox().GetWidth() / 1e6, abs=LENGTH_ABS_MM)
    assert y1 - y0 == pytest.approx(poly.BBox().GetHeight() / 1e6, abs=LENGTH_ABS_MM)


@pytest.mark.parametrize("text", ["(footprint \"a\" (pad \"1\"", "(footprint))", "(module \"x\")", "not a footprint"])
def test_damaged_footprints_are_one_line_errors(tmp_path, text):
    path = tmp_path / "bad.kicad_mod"
    path.write_text(text, "utf-8")
    with pytest.raises(FootprintReadError) as info:
        read_pad_copper(path)
    assert "\n" not in str(info.value) and "bad.kicad_mod" in str(info.value)


def test_sexpr_reader_handles_quotes_and_nesting():
    tree = parse_sexpr('(a "b c" (d 1.5 "e \\"q\\"") f)')
    assert tree == ["a", "b c", ["d", "1.5", 'e "q"'], "f"]


def test_mixed_kinds_are_refused(tmp_path):
    a = write_spec(tmp_path / "a.json", spec_data())
    with pytest.raises(SpecError):
        diff_files(a, tmp_path / "b.kicad_mod", model=MODEL)


def test_overlay_is_deterministic(tmp_path):
    a = write_spec(tmp_path / "a.json", spec_data(ARM_OLD_MM))
    b = write_spec(tmp_path / "b.json", spec_data(ARM_NEW_MM))
    first = overlay_svg_png(diff_files(a, b, model=MODEL))
    second = overlay_svg_png(diff_files(a, b, model=MODEL))
    assert first == second
    assert first[0].startswith(b"<?xml") and first[1].startswith(b"\x89PNG")
