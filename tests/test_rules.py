"""The rule checker: each rule reports a crafted fault with rule, measured, allowed and place;
clean generator output passes (hypothesis)."""

from __future__ import annotations

import copy
from dataclasses import replace

import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from footgen.board_limits import design_limits
from footgen.build import run
from footgen.errors import InfeasibleSpecError
from footgen.geometry.layout import Sizing, build_layout
from footgen.rules import RULES, check, report_dict
from footgen.spec import parse_spec

from conftest import ROOT, load_json

BASE = load_json(ROOT / "examples" / "soil-probe-2g4.json")
SIZING = Sizing(20.0, 5.1, 2.0, "test")  # arm copper 0.5 mm from the board edge


def _layout(sizing: Sizing = SIZING, **changes):
    data = copy.deepcopy(BASE)
    for dotted, value in changes.items():
        node = data
        keys = dotted.split("__")
        for key in keys[:-1]:
            node = node.setdefault(key, {})
        node[keys[-1]] = value
    spec = parse_spec(data)
    return spec, build_layout(spec, sizing)


def _rules(violations) -> set[str]:
    return {v.rule for v in violations}


def test_clean_example_has_no_violations() -> None:
    spec, layout = _layout()
    assert check(layout, spec.fab) == []


@pytest.mark.parametrize(
    "changes, fab_changes, rule",
    [
        ({"trace_width_mm": 0.1}, {}, "trace_width"),
        ({}, {"min_clearance_mm": 1.6}, "copper_clearance"),  # feed and short legs 1.2 mm apart
        ({}, {"min_clearance_mm": 5.5}, "ground_edge_distance"),
        ({}, {"min_clearance_mm": 1.6}, "pad_clearance"),
        ({"sizing": replace(SIZING, height_mm=5.6)}, {}, "copper_to_edge"),  # arm copper flush with the edge
        ({"short__via_drill_mm": 0.2}, {}, "via_drill"),
        ({"short__via_annular_ring_mm": 0.08}, {}, "annular_ring"),
        ({}, {"min_hole_to_hole_mm": 0.9}, "hole_to_hole"),
        ({}, {"min_hole_clearance_mm": 0.6}, "hole_clearance"),
        ({"clearance__short_inset_mm": 0.45}, {}, "keepout_margin"),
        # 0402 lands: the two shunt places' pads are 1.0 - 0.6 = 0.4 mm apart
        ({"matching_network": {"network": "pi", "package": "0402"}}, {"min_clearance_mm": 0.45}, "matching_pad_clearance"),
    ],
)
def test_each_rule_reports_its_fault(changes: dict, fab_changes: dict, rule: str) -> None:
    spec, layout = _layout(**changes)
    fab = replace(spec.fab, **fab_changes)
    found = [v for v in check(layout, fab) if v.rule == rule]
    assert found, f"{rule} not reported; got {_rules(check(layout, fab))}"
    v = found[0]
    assert v.measured_mm < v.allowed_mm
    # distances a default board checks between the footprint's items: the stricter of fab and board
    design = design_limits(fab)
    assert v.allowed_mm == pytest.approx(
        {"trace_width": fab.min_trace_mm, "via_drill": design.min_drill_mm, "annular_ring": design.min_annular_ring_mm,
         "hole_to_hole": design.min_hole_to_hole_mm, "copper_to_edge": design.min_copper_to_edge_mm,
         "hole_clearance": design.min_hole_clearance_mm, "pad_clearance": design.min_clearance_mm,
         "matching_pad_clearance": design.min_clearance_mm}.get(rule, fab.min_clearance_mm)
    )
    x0, y0, x1, y1 = layout.courtyard.bounds
    # the location is on the footprint, in KiCad's footprint frame (y down)
    assert x0 - 1 <= v.x_mm <= x1 + 1 and -y1 - 1 <= v.y_mm <= -y0 + 1
    assert v.field.startswith("$.") and f"set {v.field} to " in v.line()


@pytest.mark.parametrize(
    "changes, rule, field",
    [
        ({"trace_width_mm": 0.1}, "trace_width", "$.trace_width_mm"),
        ({"sizing": replace(SIZING, height_mm=5.6)}, "copper_to_edge", "$.clearance.edge_distance_mm"),
        ({"short__via_drill_mm": 0.2}, "via_drill", "$.short.via_drill_mm"),
        ({"short__via_annular_ring_mm": 0.08}, "annular_ring", "$.short.via_annular_ring_mm"),
        ({"clearance__short_inset_mm": 0.45}, "keepout_margin", "$.clearance.short_inset_mm"),
    ],
)
def test_the_named_fix_passes_the_rule(changes: dict, rule: str, field: str) -> None:
    """Setting the named spec field to the suggested value clears that rule."""
    spec, layout = _layout(**changes)
    v = next(v for v in check(layout, spec.fab) if v.rule == rule)
    assert v.field == field
    keys = field.removeprefix("$.").split(".")
    fixed = {**changes, "__".join(keys): v.fix_value}
    spec2, layout2 = _layout(**fixed)
    assert rule not in _rules(check(layout2, spec2.fab)), [x.line() for x in check(layout2, spec2.fab)]


def test_violation_location_is_in_kicads_frame() -> None:
    """A via-drill fault sits on a via: its y is the via's, sign flipped (layout y up, KiCad y down)."""
    spec, layout = _layout(short__via_drill_mm=0.2)
    v = next(v for v in check(layout, spec.fab) if v.rule == "via_drill")
    via = layout.vias[0]
    assert (v.x_mm, v.y_mm) == pytest.approx((via.center[0], -via.center[1]))
    assert v.y_mm > 0  # the vias are below the ground edge: below the origin on screen


def test_every_rule_has_a_fault_test() -> None:
    tested = {"trace_width", "copper_clearance", "ground_edge_distance", "pad_clearance", "copper_to_edge", "via_drill",
              "annular_ring", "hole_to_hole", "hole_clearance", "keepout_margin", "matching_pad_clearance"}
    assert set(RULES) == tested


def test_report_json_shape() -> None:
    spec, layout = _layout(trace_width_mm=0.1)
    report = report_dict(check(layout, spec.fab), spec.fab)
    assert report["ok"] is False
    assert {"rule", "measured_mm", "allowed_mm", "x_mm", "y_mm", "message", "severity"} <= set(report["violations"][0])
    assert report["fab"]["name"] == "standard"


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.filter_too_much, HealthCheck.too_slow])
@given(
    st.sampled_from([{"kind": "straight"}, {"kind": "meandered", "meander": "fit"}]),
    st.floats(16.0, 50.0),
    st.floats(4.5, 10.0),
    st.sampled_from([0.3, 0.5, 0.8]),
    st.sampled_from(["fine", "standard", "relaxed"]),
)
def test_sized_designs_pass_their_own_rules(style: dict, width: float, depth: float, trace: float, profile: str) -> None:
    """Whatever the sizing produces inside its feasible range is fab-clean by construction."""
    data = copy.deepcopy(BASE)
    data.update(style=style, trace_width_mm=trace, fab={"profile": profile})
    data["clearance"].update(width_mm=width, depth_mm=depth)
    data["feed"] = {"pad_width_mm": max(trace, 0.6)}
    try:
        result = run(parse_spec(data))
    except InfeasibleSpecError:
        assume(False)
    assert [v.line() for v in result.violations] == []
