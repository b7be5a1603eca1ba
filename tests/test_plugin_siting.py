"""The placement core (footgen.geometry.siting): where a clearance area fits on a board.

Pure geometry on invented boards; the checks are geometric identities (the area a site
promises lies inside the outline, off every obstacle, in front of the ground), no outside source.
"""

from __future__ import annotations

import json
import math
import subprocess

from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import Point, Polygon, box

from conftest import footgen_cmd
from footgen.geometry import siting

#: Geometry tolerance (mm): outputs are rounded to 1 nm.
TOL_MM = 1e-5
WIDTH_MM, DEPTH_MM = 20.0, 6.0


def _board(w: float = 60.0, h: float = 40.0, obstacles=(), ground=None, focus=None) -> siting.BoardView:
    outline = box(100.0, 100.0, 100.0 + w, 100.0 + h)
    return siting.BoardView(outline, (ground if ground is not None else outline,), tuple(obstacles), focus)


def _area(site: siting.Site) -> Polygon:
    return siting.clearance_polygon(site.corner_mm, site.along, site.inward, WIDTH_MM, DEPTH_MM)


def test_a_plain_board_offers_a_site_on_every_long_enough_edge() -> None:
    sites = siting.propose_sites(_board(), width_mm=WIDTH_MM, depth_mm=DEPTH_MM)
    assert sorted(s.rotation_deg for s in sites) == [0.0, 90.0, 180.0, 270.0]
    for site in sites:
        assert site.edge_distance_mm == 0.0
        assert _board().outline.buffer(TOL_MM).contains(_area(site))


def test_rotation_points_the_footprints_ground_side_into_the_board() -> None:
    """KiCad rotates footprint (x, y) by t to (x cos t + y sin t, -x sin t + y cos t), y down."""
    for site in siting.propose_sites(_board(), width_mm=WIDTH_MM, depth_mm=DEPTH_MM):
        t = math.radians(site.rotation_deg)
        assert math.isclose(math.sin(t), site.inward[0], abs_tol=1e-9) and math.isclose(math.cos(t), site.inward[1], abs_tol=1e-9)
        # the clearance area sits between the ground edge and the board edge
        centre = _area(site).centroid
        assert (centre.x - site.corner_mm[0]) * site.inward[0] + (centre.y - site.corner_mm[1]) * site.inward[1] < 0


def test_sites_come_nearest_the_focus_first() -> None:
    sites = siting.propose_sites(_board(focus=(130.0, 141.0)), width_mm=WIDTH_MM, depth_mm=DEPTH_MM)
    assert sites[0].rotation_deg == 180.0  # the bottom edge (y = 140), antenna facing down
    assert [s.focus_distance_mm for s in sites] == sorted(s.focus_distance_mm for s in sites)


def test_an_obstacle_splits_an_edge_and_no_site_overlaps_it() -> None:
    part = siting.Obstacle("U3 pad 1", box(128.0, 101.0, 132.0, 104.0))
    view = _board(obstacles=[part])
    top = [s for s in siting.propose_sites(view, width_mm=WIDTH_MM, depth_mm=DEPTH_MM) if s.rotation_deg == 0.0]
    assert len(top) == 2  # one run each side of the part
    for site in top:
        assert _area(site).intersection(part.polygon).area < siting.TOUCH_AREA_MM2


def test_a_place_on_other_copper_is_refused_with_the_reason() -> None:
    part = siting.Obstacle("track on net SPI_CLK", box(110.0, 102.0, 140.0, 102.3))
    problems = siting.check_placement(_board(obstacles=[part]), feed_mm=(115.0, 106.0), rotation_deg=0.0, box_lo_mm=-3.0, width_mm=WIDTH_MM, depth_mm=DEPTH_MM)
    assert problems == ["the clearance area overlaps track on net SPI_CLK"]


def test_a_place_off_the_ground_pour_is_refused() -> None:
    ground = box(100.0, 120.0, 160.0, 140.0)  # pour only on the lower half
    problems = siting.check_placement(_board(ground=ground), feed_mm=(115.0, 106.0), rotation_deg=0.0, box_lo_mm=-3.0, width_mm=WIDTH_MM, depth_mm=DEPTH_MM)
    assert problems == ["no ground pour behind the feed point"]


def test_a_pour_cut_back_from_the_edge_sets_the_edge_distance_and_ground_size() -> None:
    ground = box(105.0, 110.0, 155.0, 140.0)  # 10 mm free strip along the top edge
    top = [s for s in siting.propose_sites(_board(ground=ground), width_mm=WIDTH_MM, depth_mm=DEPTH_MM) if s.rotation_deg == 0.0]
    assert len(top) == 1
    assert math.isclose(top[0].edge_distance_mm, 10.0 - DEPTH_MM, abs_tol=TOL_MM)
    assert math.isclose(top[0].corner_mm[1], 110.0, abs_tol=TOL_MM)
    assert math.isclose(top[0].ground_width_mm, 50.0, abs_tol=1e-3)
    assert math.isclose(top[0].ground_length_mm, 30.0, abs_tol=1e-3)


@settings(max_examples=40, deadline=None)
@given(
    w=st.floats(25.0, 120.0), h=st.floats(25.0, 120.0), lo=st.floats(-WIDTH_MM + 0.5, -0.5),
    fx=st.floats(80.0, 240.0), fy=st.floats(80.0, 240.0),
)
def test_every_proposed_site_passes_the_check_of_its_own_feed_point(w: float, h: float, lo: float, fx: float, fy: float) -> None:
    view = _board(w, h, focus=(fx, fy))
    for site in siting.propose_sites(view, width_mm=WIDTH_MM, depth_mm=DEPTH_MM, feed_offset_mm=-lo):
        feed = siting.feed_point(site, box_lo_mm=lo, width_mm=WIDTH_MM)
        assert siting.check_placement(view, feed_mm=feed, rotation_deg=site.rotation_deg, box_lo_mm=lo, width_mm=WIDTH_MM, depth_mm=DEPTH_MM) == []
        # the feed lies on the ground edge inside the area's span
        assert _area(site).buffer(TOL_MM).contains(Point(feed))


def test_the_sites_command_lists_and_checks(tmp_path) -> None:
    view = {"outline_mm": [[100, 100], [160, 100], [160, 140], [100, 140]], "ground_mm": [[[100, 100], [160, 100], [160, 140], [100, 140]]],
            "obstacles": [{"label": "C4", "polygon_mm": [[110, 101], [113, 101], [113, 103], [110, 103]]}], "focus_mm": [130, 95]}
    path = tmp_path / "view.json"
    path.write_text(json.dumps(view), "utf-8")
    base = footgen_cmd() + ["sites", str(path), "--width-mm", str(WIDTH_MM), "--depth-mm", str(DEPTH_MM)]
    listed = json.loads(subprocess.run(base, capture_output=True, text=True, check=True).stdout)["sites"]
    assert listed[0]["rotation_deg"] == 0.0  # top edge, nearest the focus above the board
    site = json.dumps(listed[0])
    checked = json.loads(subprocess.run(base + ["--site", site, "--box-lo-mm", "-3"], capture_output=True, text=True, check=True).stdout)
    assert checked["problems"] == [] and checked["rotation_deg"] == 0.0
    refused = json.loads(subprocess.run(base + ["--at", "115", "106", "--rotation", "0", "--box-lo-mm", "-6"], capture_output=True, text=True, check=True).stdout)
    assert refused["problems"] == ["the clearance area overlaps C4"]
    bad = subprocess.run(footgen_cmd() + ["sites", str(tmp_path / "none.json"), "--width-mm", "20", "--depth-mm", "6"], capture_output=True, text=True)
    assert bad.returncode == 2 and len(bad.stderr.strip().splitlines()) == 1 and "not a board description" in bad.stderr
