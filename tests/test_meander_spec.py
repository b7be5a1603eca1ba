"""Meanders a designer can describe: where the meander starts (style.meander_start_mm), how many
legs (style.meander_legs), or an explicit centreline (style.path_mm).  Bad values give one line
naming the field, the value and the fix; any accepted spec gives one connected copper shape in
the clearance area that keeps the fab clearances (hypothesis property tests)."""

from __future__ import annotations

import math

import pytest
import shapely
from click.testing import CliRunner
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from footgen.cli import main
from footgen.errors import InfeasibleSpecError, SpecError
from footgen.geometry.layout import Sizing, build_layout, canonical_layout
from footgen.rules import check
from footgen.sizing import size
from footgen.spec import parse_spec

from conftest import ROOT, load_json, with_field, write_spec

LEGS = load_json(ROOT / "examples" / "trellis-sensor-2g4-legs.json")
PATH = load_json(ROOT / "examples" / "vineyard-node-2g4-path.json")
#: A legs spec with the whole arm fixed, so no sizing runs.
LEGS_FIXED = with_field(LEGS, "arm", {"height_mm": 6.0, "feed_short_spacing_mm": 3.0, "length_mm": 24.0})
PATH_FIXED = with_field(PATH, "arm", {"feed_short_spacing_mm": 3.0})
#: Slack on geometric comparisons (mm): shapely's round-off, far below the 1 nm output grid.
GEOMETRY_TOL_MM = 1e-6


def _layout(data: dict):
    spec = parse_spec(data)
    return spec, build_layout(spec, size(spec))


def _canonical(data: dict):
    spec = parse_spec(data)
    return spec, canonical_layout(spec, size(spec))


# --- the rule-built meander: start and legs ---------------------------------------------------


def test_meander_starts_where_the_spec_says_with_the_legs_it_asks_for() -> None:
    spec, layout = _canonical(LEGS_FIXED)
    path = layout.copper.arm_path
    short_x = -spec.arm.feed_short_spacing_mm
    legs = [(a, b) for a, b in zip(path, path[1:]) if abs(a[0] - b[0]) < GEOMETRY_TOL_MM]
    assert len(legs) == spec.style.meander_legs == 2
    # the straight run from the short leg's centre to the first leg's centre
    assert legs[0][0][0] - short_x == pytest.approx(spec.style.meander_start_mm)
    assert all(abs(a[1] - b[1]) == pytest.approx(spec.style.meander_height_mm) for a, b in legs)
    assert legs[1][0][0] - legs[0][0][0] == pytest.approx(spec.style.meander_pitch_mm)
    # the arm runs on after the last leg until it is as long as asked
    assert layout.copper.arm_length_mm == pytest.approx(24.0)
    assert path[-1][1] == pytest.approx(path[0][1])


def test_start_and_legs_leave_the_default_meander_alone() -> None:
    """Without the new fields the meander is built as before: first leg one minimum pitch past
    the feed, as many legs as the length needs (the goldens check the bytes of the examples)."""
    base = with_field(LEGS_FIXED, "style", {"kind": "meandered", "meander_height_mm": 2.5, "meander_pitch_mm": 1.6})
    spec, layout = _canonical(base)
    first_leg_x = next(a[0] for a, b in zip(layout.copper.arm_path, layout.copper.arm_path[1:]) if abs(a[0] - b[0]) < GEOMETRY_TOL_MM)
    assert first_leg_x == pytest.approx(0.8 + max(0.8, spec.fab.min_clearance_mm))  # trace + gap
    explicit = with_field(base, "style.meander_start_mm", 3.0 + first_leg_x)
    flat = [v for point in _canonical(explicit)[1].copper.arm_path for v in point]
    assert flat == pytest.approx([v for point in layout.copper.arm_path for v in point], abs=GEOMETRY_TOL_MM)


def test_sized_legs_meander_is_matched_at_the_band_centre() -> None:
    """The bundled legs example is sized by the model (arm length and tap free) to S11 <= -10 dB
    at the band centre, keeping its two legs (our own model, not outside truth)."""
    import numpy as np

    from footgen.model import printed_ifa
    from footgen.physics.predict import s11_from_zin, zin_ohm

    spec = parse_spec(LEGS)
    sizing = size(spec)
    ifa = printed_ifa(spec, canonical_layout(spec, sizing).copper)
    s11 = s11_from_zin(zin_ohm(ifa, np.array([spec.target.center_hz])))
    assert 20 * np.log10(abs(s11[0])) <= -10.0
    legs = sum(1 for a, b in zip(ifa.arm_path_m, ifa.arm_path_m[1:]) if abs(a[0] - b[0]) < 1e-12)
    assert legs == 2
    assert sizing.arm_length_mm > 13.0 + 2 * 2.5 + 1.6  # the arm runs on past the last leg


# --- the drawn centreline -----------------------------------------------------------------------


def test_path_is_the_arm_centreline_from_the_short() -> None:
    spec, layout = _canonical(PATH_FIXED)
    s = spec.arm.feed_short_spacing_mm
    assert layout.copper.arm_path == tuple((x - s, y) for x, y in spec.style.path_mm)
    assert layout.copper.arm_length_mm == pytest.approx(12 + 2.5 + 1.6 + 2.5 + 1.6 + 2.0)
    assert spec.arm.height_mm == 6.0


def test_arm_length_trims_the_path_last_segment() -> None:
    """retune writes arm.length_mm: it shortens or lengthens the path's last segment."""
    spec, layout = _canonical(with_field(PATH_FIXED, "arm.length_mm", 21.2))
    assert layout.copper.arm_length_mm == pytest.approx(21.2)
    assert layout.copper.arm_path[-1][1] == pytest.approx(5.0)  # the last leg is 1 mm shorter
    with pytest.raises(InfeasibleSpecError, match=r"\$\.arm\.length_mm = 19\.0: shorter than the path without its last segment"):
        _canonical(with_field(PATH_FIXED, "arm.length_mm", 19.0))


def test_path_sizes_the_feed_tap_under_its_first_segment() -> None:
    spec = parse_spec(PATH)
    sizing = size(spec)
    assert sizing.arm_length_mm == pytest.approx(22.2)
    # the feed stays one pitch (trace + fab clearance) before the first leg at x = 12 mm
    assert 0.0 < sizing.feed_short_spacing_mm <= 12.0 - (0.8 + spec.fab.min_clearance_mm) + GEOMETRY_TOL_MM


# (id, spec data, the field in the one-line error, text of the fix)
BAD = [
    ("path_not_axis_parallel", with_field(PATH_FIXED, "style.path_mm", [[0, 6], [12, 6], [13, 4]]), "$.style.path_mm[2] = [13.0, 4.0]", "not axis-parallel"),
    ("path_turns_back", with_field(PATH_FIXED, "style.path_mm", [[0, 6], [12, 6], [12, 3], [12, 5]]), "$.style.path_mm[3]", "self-overlap"),
    ("path_crosses_itself", with_field(PATH_FIXED, "style.path_mm", [[0, 6], [12, 6], [12, 3], [10, 3], [10, 6.5]]),
     "$.style.path_mm[4]", "overlaps"),
    ("path_legs_too_close", with_field(PATH_FIXED, "style.path_mm", [[0, 6], [12, 6], [12, 3], [12.9, 3], [12.9, 6]]),
     "$.style.path_mm[4]", "legs too close"),
    ("path_below_ground_clearance", with_field(PATH_FIXED, "style.path_mm", [[0, 6], [12, 6], [12, 0.4]]), "$.style.path_mm[2]", "ground edge"),
    ("path_leaves_clearance_depth", with_field(PATH_FIXED, "style.path_mm", [[0, 6], [12, 6], [12, 6.9]]), "$.style.path_mm[2]", "leaves the clearance area"),
    ("path_leaves_clearance_width", with_field(PATH_FIXED, "style.path_mm", [[0, 6], [19, 6]]), "$.style.path_mm[1]", "leaves the clearance area"),
    ("path_not_from_short", with_field(PATH_FIXED, "style.path_mm", [[1, 6], [12, 6]]), "$.style.path_mm[0]", "starts above the short leg"),
    ("path_first_segment_leg", with_field(PATH_FIXED, "style.path_mm", [[0, 6], [0, 3]]), "$.style.path_mm[1]", "along the ground edge"),
    ("path_near_short_leg", with_field(PATH_FIXED, "style.path_mm", [[0, 6], [3, 6], [3, 2], [0.6, 2]]), "$.style.path_mm[3]", "short leg"),
    ("path_height_disagrees", with_field(PATH_FIXED, "arm.height_mm", 5.0), "$.arm.height_mm = 5.0", "path_mm sets the arm height"),
    ("path_repeats_point", with_field(PATH_FIXED, "style.path_mm", [[0, 6], [12, 6], [12, 6]]), "$.style.path_mm[2]", "repeats point 1"),
    ("start_before_feed", with_field(LEGS_FIXED, "style.meander_start_mm", 4.0), "$.style.meander_start_mm = 4.0", "past the feed leg"),
    ("start_beyond_arm", with_field(LEGS_FIXED, "style.meander_start_mm", 30.0), "$.style.meander_start_mm = 30.0", "shorter than the arm"),
    ("too_many_legs", with_field(LEGS_FIXED, "style.meander_legs", 8), "$.style.meander_legs = 8", "at most"),
    ("legs_zero", with_field(LEGS_FIXED, "style.meander_legs", 0), "$.style.meander_legs", ">= 1"),
    ("legs_not_integer", with_field(LEGS_FIXED, "style.meander_legs", 2.5), "$.style.meander_legs", "integer"),
    ("path_one_point", with_field(PATH_FIXED, "style.path_mm", [[0, 6]]), "$.style.path_mm", "at least 2 items"),
    ("arm_too_short_for_legs", with_field(LEGS_FIXED, "arm.length_mm", 18.0), "$.arm.length_mm = 18.0", "too short for 2 meander legs"),
]


@pytest.mark.parametrize("data, field, fix", [b[1:] for b in BAD], ids=[b[0] for b in BAD])
def test_bad_meander_gives_one_line_naming_field_value_and_fix(data: dict, field: str, fix: str, tmp_path) -> None:
    with pytest.raises(SpecError) as err:
        _layout(data)
    message = str(err.value)
    assert "\n" not in message
    assert message.startswith(field), message
    assert fix in message, message
    spec_path = write_spec(tmp_path, data)
    out = tmp_path / "out"
    result = CliRunner().invoke(main, ["build", str(spec_path), "-o", str(out)])
    assert result.exit_code == 2, result.output
    lines = [line for line in result.output.splitlines() if line.strip()]
    assert len(lines) == 1 and field in lines[0] and "Traceback" not in result.output
    assert not out.exists() or not any(out.rglob("*.kicad_mod"))


# --- property tests -----------------------------------------------------------------------------


def _assert_sound(data: dict) -> None:
    """Accepted copper: one connected net-tied shape, inside the clearance area, every fab rule kept."""
    spec, layout = _canonical(data)
    assert layout.antenna.geom_type == "Polygon"  # one connected shape (pad 1)
    pad2 = layout.pad("2").polygon
    assert layout.antenna.intersects(pad2)  # the short joins the ground pad: the net tie
    above = layout.antenna.intersection(layout.clearance_side)
    assert above.difference(layout.clearance_box).area <= GEOMETRY_TOL_MM
    violations = check(layout, spec.fab)
    assert violations == [], [v.line() for v in violations]
    # copper clearance inside the antenna: no two non-adjacent arm segments closer than the fab allows
    half = spec.trace_width_mm / 2
    segs = [shapely.geometry.LineString(s) for s in zip(layout.copper.arm_path, layout.copper.arm_path[1:])]
    for i in range(len(segs)):
        for j in range(i + 2, len(segs)):
            assert segs[i].distance(segs[j]) - 2 * half >= spec.fab.min_clearance_mm - GEOMETRY_TOL_MM


@st.composite
def drawn_paths(draw) -> list[list[float]]:
    """Random axis-parallel paths from the short: along the edge first, then turns."""
    height = draw(st.sampled_from([4.0, 5.0, 6.0]))
    x = draw(st.sampled_from([6.0, 8.0, 10.0, 12.0]))
    points = [[0.0, height], [x, height]]
    y = height
    for k in range(draw(st.integers(0, 5))):
        if k % 2 == 0:
            y = draw(st.sampled_from([1.0, 1.5, 2.0, 3.0, 4.0, 5.0, 6.0]))
            if abs(y - points[-1][1]) < 1e-9:
                break
        else:
            x = points[-1][0] + draw(st.sampled_from([-3.0, -1.0, 0.6, 1.0, 1.2, 1.6, 2.5]))
        points.append([x, y])
    return points


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(path=drawn_paths(), tap=st.sampled_from([1.5, 2.0, 3.0, 4.5]), width=st.sampled_from([0.4, 0.6, 0.8]))
def test_any_accepted_path_gives_sound_copper(path: list[list[float]], tap: float, width: float) -> None:
    data = with_field(with_field(PATH_FIXED, "style.path_mm", path), "arm.feed_short_spacing_mm", tap)
    data = with_field(data, "trace_width_mm", width)
    data.pop("output", None)
    try:
        _assert_sound(data)
    except SpecError:
        assume(False)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])
@given(
    past_feed=st.floats(1.0, 9.0), legs=st.integers(1, 5), depth=st.sampled_from([1.2, 2.0, 2.5, 3.5, 4.5]),
    pitch=st.sampled_from([1.2, 1.6, 2.0, 2.4]), extra=st.floats(0.0, 5.0), tap=st.sampled_from([1.5, 3.0, 5.0]),
    width=st.sampled_from([0.4, 0.6, 0.8]), fitted=st.booleans(),
)
def test_any_accepted_start_and_legs_give_sound_copper(past_feed: float, legs: int, depth: float, pitch: float, extra: float,
                                                       tap: float, width: float, fitted: bool) -> None:
    start = round(tap + past_feed, 3)
    style = {"kind": "meandered", "meander_start_mm": start, "meander_legs": legs}
    style.update({"meander": "fit", "min_height_mm": round(6.0 - depth, 3)} if fitted else {"meander_height_mm": depth, "meander_pitch_mm": pitch})
    length = start + legs * depth + (legs - 1) * pitch + extra
    data = with_field(with_field(LEGS, "style", style), "arm", {"height_mm": 6.0, "feed_short_spacing_mm": tap, "length_mm": round(length, 3)})
    data = with_field(data, "trace_width_mm", width)
    try:
        _assert_sound(data)
    except SpecError:
        assume(False)


def test_property_strategies_reach_accepted_specs() -> None:
    """The property tests above are not vacuous: specs of their kinds are accepted."""
    _assert_sound(PATH_FIXED)
    _assert_sound(LEGS_FIXED)
    assert math.isfinite(parse_spec(PATH).arm.length_mm)


def test_retune_of_a_drawn_path_trims_its_last_segment(tmp_path) -> None:
    """retune writes arm.length_mm (and the tap) into the next revision; the drawn path itself
    stays, its last segment taking the new length (measurement: the invented demo sweep)."""
    spec_path = ROOT / "examples" / "vineyard-node-2g4-path.json"
    out = tmp_path / "r2.json"
    measured = ROOT / "examples" / "measured" / "demo-2g4-enclosure.s1p"
    result = CliRunner().invoke(main, ["retune", str(spec_path), "--measured", str(measured), "-o", str(out)])
    assert result.exit_code == 0, result.output
    data = load_json(out)
    assert data["style"]["path_mm"] == PATH["style"]["path_mm"]
    spec, layout = _canonical(data)
    assert layout.copper.arm_length_mm == pytest.approx(data["arm"]["length_mm"])
    assert data["arm"]["length_mm"] != pytest.approx(parse_spec(PATH).arm.length_mm)
    assert check(layout, spec.fab) == []
