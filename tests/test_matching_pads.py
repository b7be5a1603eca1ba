"""Matching-network pads on the feed (footgen.geometry.matching_pads, spec section
``matching_network``): geometry properties, the rule check, and KiCad 9 as the client."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from footgen.build import report_markdown, run
from footgen.errors import InfeasibleSpecError
from footgen.geometry.matching_pads import LANDS, SHUNT_NODES, matching_pads
from footgen.testrun import make_test_board, upgrade_footprint
from footgen.rules import check
from footgen.spec import parse_spec

from conftest import ROOT, load_json, write_spec

EXAMPLE = ROOT / "examples" / "kestrel-beacon-2g4-matched.json"
#: Geometric comparisons in mm (the layout snaps to 1 nm).
EPS_MM = 1e-6


@settings(max_examples=80, deadline=None)
@given(st.sampled_from(sorted(SHUNT_NODES)), st.sampled_from(sorted(LANDS)), st.floats(0.2, 1.6), st.floats(0.3, 3.0),
       st.floats(0.1, 0.3))
def test_pads_of_different_nodes_keep_the_clearance_and_join_their_node(kind, package, pad_w, pad_l, clearance):
    try:
        net = matching_pads(kind=kind, package=package, feed_pad_width_mm=pad_w, feed_pad_length_mm=pad_l, min_clearance_mm=clearance)
    except InfeasibleSpecError as err:
        assert err.path in ("$.feed.pad_width_mm", "$.matching_network.package")
        return
    feed = shapely.box(-pad_w / 2, -pad_l, pad_w / 2, 0.0)
    for i, a in enumerate(net.pads):
        assert a.rect.bounds[3] < 0.0  # below the ground edge
        for b in net.pads[i + 1:]:
            if a.number != b.number:
                assert a.rect.distance(b.rect) >= clearance - EPS_MM
        if a.number == "2":
            assert a.rect.distance(feed) >= clearance - EPS_MM
    # each node's pads form one piece of copper: the antenna node with the feed pad
    antenna = shapely.union_all([feed] + [p.rect for p in net.pads if p.number == "1"])
    radio = shapely.union_all([p.rect for p in net.pads if p.number == "3"])
    assert antenna.geom_type == "Polygon" and radio.geom_type == "Polygon"
    shunts = len(SHUNT_NODES[kind])
    assert [p.number for p in net.pads].count("2") == shunts and len(net.pads) == 2 + 2 * shunts


def matched(data_change: dict | None = None) -> dict:
    data = copy.deepcopy(load_json(EXAMPLE))
    data.update(data_change or {})
    return data


@pytest.mark.parametrize("network, package", [("pi", "0402"), ("pi", "0603"), ("L", "0402"), ("L", "0603")])
def test_layout_passes_the_rule_check_and_keeps_ground_pads_out_of_the_notch(network, package):
    spec = parse_spec(matched({"matching_network": {"network": network, "package": package}}))
    result = run(spec)
    assert check(result.layout, spec.fab) == []
    notch = next(k.polygon for k in result.layout.keepouts if k.name == "feed_notch")
    lands = [p for p in result.layout.pads if p.solderable]
    assert len(lands) == 2 + 2 * len(SHUNT_NODES[network])
    for pad in lands:
        if pad.number == "2":
            assert notch.intersection(pad.polygon).area < EPS_MM  # the pour reaches every ground land
        else:
            assert notch.buffer(EPS_MM).contains(pad.polygon.buffer(spec.feed.port_gap_mm - 1e-3))
    # the net tie stays the antenna's pad 1 with pad 2, and every land takes paste and mask
    text = result.footprint_text
    assert '(net_tie_pad_groups "1, 2")' in text
    assert text.count('(layers "F.Cu" "F.Paste" "F.Mask")') == len(lands)
    assert "| series | pad 1 (antenna) - pad 3 (radio) | 0 ohm link |" in report_markdown(result)


def test_a_spec_without_the_section_has_no_lands():
    data = matched()
    del data["matching_network"]
    layout = run(parse_spec(data)).layout
    assert not any(p.solderable or p.number == "3" for p in layout.pads)


def test_a_feed_pad_too_wide_for_the_lands_is_refused_in_one_line():
    with pytest.raises(InfeasibleSpecError) as info:
        run(parse_spec(matched({"feed": {"pad_length_mm": 1.0, "port_gap_mm": 0.5, "pad_width_mm": 2.4}})))
    assert info.value.path == "$.feed.pad_width_mm" and "\n" not in str(info.value)


@pytest.mark.kicad
@pytest.mark.parametrize("network, package", [("pi", "0402"), ("L", "0603")])
def test_matching_pads_are_drc_clean_in_kicad(kicad, tmp_path: Path, network: str, package: str) -> None:
    """KiCad 9 loads the footprint with its lands and its DRC passes on the test board: the RF
    track reaches pad 3, the antenna node (pad 1) is a net of its own, the ground lands join
    the pour (no unconnected item)."""
    data = matched({"name": f"matched_{network}_{package}", "matching_network": {"network": network, "package": package}})
    spec_path = write_spec(tmp_path, data)
    report = make_test_board(spec_path, tmp_path / "board")
    assert report.drc_errors == []
    assert report.drc["unconnected_items"] == []
    result = run(parse_spec(data))
    upgrade_footprint(tmp_path / "board" / f"{result.spec.library}.pretty", tmp_path / "upgraded.pretty")
    upgraded = (tmp_path / "upgraded.pretty" / f"{result.spec.name}.kicad_mod").read_text("utf-8")
    assert upgraded.count("(pad ") == len(result.layout.pads) and "net_tie_pad_groups" in upgraded
    board = report.board_path.read_text("utf-8")
    assert '"ANT_NODE"' in board and '"RF_ANT"' in board
    json.dumps(report.drc)
