"""Geometry invariants (hypothesis property tests) over every registered generator."""

from __future__ import annotations

import copy
import itertools
import math

import pytest
import shapely
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from footgen.errors import InfeasibleSpecError
from footgen.geometry.layout import Sizing, build_layout, min_meander_pitch_mm
from footgen.geometry.registry import GENERATORS, get_generator
from footgen.errors import SpecError
from footgen.spec import parse_spec

from conftest import ROOT, load_json

BASE = load_json(ROOT / "examples" / "soil-probe-2g4.json")
#: Geometric slack for float comparisons (mm): far below the 1 nm grid's effect on distances.
GEOM_TOL_MM = 1e-5


def _spec(style: dict, width: float, depth: float, trace: float, direction: str, rotation: int):
    data = copy.deepcopy(BASE)
    data.update(style=style, trace_width_mm=trace)
    data["clearance"].update(width_mm=width, depth_mm=depth, arm_direction=direction)
    data["output"] = {"rotation_deg": rotation}
    data["feed"] = {"pad_width_mm": max(trace, 0.8)}
    return parse_spec(data)


styles = st.sampled_from(
    [
        {"kind": "straight"},
        {"kind": "meandered", "meander": "fit"},
        {"kind": "meandered", "meander_height_mm": 2.5, "meander_pitch_mm": 2.0},
    ]
)


@st.composite
def layouts(draw):
    spec = _spec(
        draw(styles),
        draw(st.floats(12.0, 60.0)),
        draw(st.floats(4.0, 12.0)),
        draw(st.sampled_from([0.3, 0.5, 0.8, 1.0])),
        draw(st.sampled_from(["right", "left"])),
        draw(st.sampled_from([0, 90, 180, 270])),
    )
    height = draw(st.floats(2.6, spec.clearance.depth_mm - spec.trace_width_mm / 2 - spec.fab.min_clearance_mm))
    spacing = draw(st.floats(1.2, 4.0))
    length = draw(st.floats(spacing + 3.0, 90.0))
    try:
        layout = build_layout(spec, Sizing(length, height, spacing, "test"))
    except InfeasibleSpecError:
        assume(False)
    return spec, layout, length


PROPERTY_SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.filter_too_much, HealthCheck.too_slow])


@PROPERTY_SETTINGS
@given(layouts())
def test_arm_length_exact_and_right_angles_only(case) -> None:
    spec, layout, length = case
    path = layout.copper.arm_path
    # snapping each vertex to the grid moves each segment's length by at most one grid step
    assert math.isclose(layout.copper.arm_length_mm, length, abs_tol=len(path) * spec.output.grid_nm * 1e-6)
    for (x0, y0), (x1, y1) in zip(path, path[1:]):
        assert abs(x0 - x1) < GEOM_TOL_MM or abs(y0 - y1) < GEOM_TOL_MM  # axis-parallel: no acute corner
    for t in layout.copper.traces:
        for (a, b), (c, d) in zip(t.segments(), t.segments()[1:]):
            v1 = (b[0] - a[0], b[1] - a[1])
            v2 = (d[0] - c[0], d[1] - c[1])
            assert v1[0] * v2[0] + v1[1] * v2[1] >= -GEOM_TOL_MM  # never folds back


@PROPERTY_SETTINGS
@given(layouts())
def test_meander_gaps_respect_fab_and_width(case) -> None:
    """Centreline distance of non-neighbouring parallel legs minus the trace width >= the
    larger of the fab clearance and one trace width (computed here from the path, not with the
    rule checker)."""
    spec, layout, _ = case
    path = layout.copper.arm_path
    segs = list(zip(path, path[1:]))
    gap_min = min_meander_pitch_mm(spec) - spec.trace_width_mm
    for i, j in itertools.combinations(range(len(segs)), 2):
        if j - i < 2:
            continue
        d = shapely.LineString(segs[i]).distance(shapely.LineString(segs[j]))
        assert d - spec.trace_width_mm >= gap_min - GEOM_TOL_MM


@PROPERTY_SETTINGS
@given(layouts())
def test_copper_connected_inside_clearance_and_on_grid(case) -> None:
    spec, layout, _ = case
    assert layout.antenna.geom_type == "Polygon" and layout.antenna.is_valid
    above = layout.antenna.intersection(layout.clearance_side)
    assert above.difference(layout.clearance_box).area < 1e-9
    coords = shapely.get_coordinates(layout.antenna)
    grid = spec.output.grid_nm * 1e-6
    assert (abs(coords / grid - (coords / grid).round()) < 1e-6).all()
    assert layout.antenna.intersects(layout.pad("2").polygon)  # the short reaches the ground pad


@settings(max_examples=25, deadline=None)
@given(st.sampled_from(["straight", "meandered"]), st.floats(15, 40))
def test_placement_is_rigid(kind: str, width: float) -> None:
    """Mirroring and rotating move copper rigidly: same area, same distances to the ground."""
    style = {"kind": "straight"} if kind == "straight" else {"kind": "meandered", "meander": "fit"}
    results = []
    for direction, rotation in itertools.product(["right", "left"], [0, 90, 180, 270]):
        spec = _spec(style, width, 7.0, 0.6, direction, rotation)
        try:
            layout = build_layout(spec, Sizing(24.0, 5.5, 2.0, "test"))
        except InfeasibleSpecError:
            assume(False)
        results.append((round(layout.antenna.area, 6), round(layout.antenna.distance(layout.board_edge), 6)))
    assert len(set(results)) == 1


def test_generators_registered_and_lookup_suggests() -> None:
    assert set(GENERATORS) == {"straight", "meandered", "path"}
    with pytest.raises(SpecError, match="did you mean 'meandered'"):
        get_generator("meandred")


@pytest.mark.parametrize("name", sorted(GENERATORS))
def test_every_generator_makes_one_connected_copper(name: str) -> None:
    params = dict(arm_length_mm=30.0, height_mm=5.0, feed_short_spacing_mm=2.0, trace_width_mm=0.5, short_width_mm=0.5)
    if name == "meandered":
        params.update(x_max_mm=15.0, min_pitch_mm=1.0, meander_height_mm=2.5)
    if name == "path":  # 29 mm drawn, the last segment lengthened by 1 mm to the 30 mm asked
        params.update(path_mm=((0.0, 5.0), (10.0, 5.0), (10.0, 2.0), (12.0, 2.0), (12.0, 5.0), (14.0, 5.0), (14.0, 2.0),
                               (16.0, 2.0), (16.0, 5.0), (17.0, 5.0)), min_pitch_mm=1.0)
    copper = get_generator(name)(**params)
    assert copper.polygon.geom_type == "Polygon"
    assert math.isclose(copper.arm_length_mm, 30.0, abs_tol=1e-9)
    assert max(x for x, _ in copper.arm_path) <= params.get("x_max_mm", 1e9) + 1e-9
