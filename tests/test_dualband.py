"""Dual-band IFA: spec section ``second_arm``, its geometry (both orders, straight and meandered,
arm gap, one pad), its wire model (a junction on the feed leg), refusals of impossible boxes, the
per-band figures, and the whole loop on the template (sizing, predict, retune)."""

from __future__ import annotations

import copy
import json
import re

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from conftest import ROOT
from footgen.errors import InfeasibleSpecError, SpecError
from footgen.geometry.dualband import arm_gap_min_mm, default_heights_mm
from footgen.geometry.layout import Sizing, build_layout, max_arm_height_mm
from footgen.model import printed_ifa
from footgen.rules import check
from footgen.spec import parse_spec

TEMPLATE = json.loads((ROOT / "templates" / "ism-2g4-wifi5-dual.json").read_text("utf-8"))
EXAMPLE = json.loads((ROOT / "examples" / "greenhouse-hub-dual.json").read_text("utf-8"))
#: Copper-gap slack of the geometry checks (mm): far below the 1 nm output grid.
GAP_SLACK_MM = 1e-6


def _spec(**second: object):
    data = copy.deepcopy(TEMPLATE)
    data["second_arm"] = {**data["second_arm"], **second}
    return parse_spec(data)


def _sizing(spec, length=18.0, spacing=3.0, second_length=6.0, main_h=None, second_h=None) -> Sizing:
    h1, h2 = default_heights_mm(spec, max_arm_height_mm(spec))
    return Sizing(length, main_h or h1, spacing, "test", second_arm_length_mm=second_length, second_arm_height_mm=second_h or h2)


@pytest.mark.parametrize("position", ["under", "above"])
@pytest.mark.parametrize("kind", ["straight", "meandered"])
def test_both_orders_and_both_kinds_build_one_pad_that_passes_the_rules(position: str, kind: str) -> None:
    data = copy.deepcopy(TEMPLATE)
    data["clearance"]["depth_mm"] = 9.0
    data["second_arm"].update(position=position, kind=kind)
    spec = parse_spec(data)
    second_length = 26.0 if kind == "meandered" else 6.0  # longer than the clearance: it needs turns
    layout = build_layout(spec, _sizing(spec, second_length=second_length))
    copper = layout.copper
    assert layout.antenna.geom_type == "Polygon"  # the whole antenna is one pad's outline
    assert not [v for v in check(layout, spec.fab) if v.severity == "error"]
    path = copper.second_arm_path
    main_y = copper.arm_path[0][1]
    assert (path[0][1] < main_y) == (position == "under")
    assert path[0][0] == pytest.approx(0.0, abs=1e-9)  # on the feed leg (the feed point is the origin)
    if kind == "meandered":
        assert len(path) > 2
        # turns run away from the main arm
        ys = [y for _, y in path]
        assert (min(ys) < path[0][1]) if position == "under" else (max(ys) > path[0][1])
    gap = copper.trace("second_arm").polygon().distance(copper.trace("arm").polygon())
    assert gap >= arm_gap_min_mm(spec) - GAP_SLACK_MM


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(second_h=st.floats(0.8, 6.3), second_length=st.floats(1.0, 16.0), kind=st.sampled_from(["straight", "meandered"]))
def test_any_second_arm_keeps_the_arm_gap_or_is_refused_naming_a_field(second_h: float, second_length: float, kind: str) -> None:
    """Property: any height and length either lays out with the arms' copper at least the fab
    clearance and a trace width apart (one pad), or is refused with one line naming a field."""
    spec = _spec(kind=kind)
    try:
        layout = build_layout(spec, _sizing(spec, second_length=second_length, second_h=second_h))
    except InfeasibleSpecError as exc:
        assert exc.path.startswith("$.") and "\n" not in str(exc)
        return
    copper = layout.copper
    gap = copper.trace("second_arm").polygon().distance(copper.trace("arm").polygon())
    assert gap >= max(spec.fab.min_clearance_mm, spec.trace_width_mm) - GAP_SLACK_MM
    assert layout.antenna.geom_type == "Polygon"


def test_arms_too_close_are_refused_in_the_spec_naming_the_field() -> None:
    data = copy.deepcopy(TEMPLATE)
    data["arm"] = {"height_mm": 6.0}
    data["second_arm"]["height_mm"] = 5.5
    with pytest.raises(SpecError) as info:
        parse_spec(data)
    assert info.value.path == "$.second_arm.height_mm" and "at most 4.400" in str(info.value)


def test_a_second_band_too_close_to_the_main_one_is_refused() -> None:
    data = copy.deepcopy(TEMPLATE)
    data["second_arm"]["target"] = {"low_mhz": 2500, "high_mhz": 2600}
    with pytest.raises(SpecError) as info:
        parse_spec(data)
    assert info.value.path == "$.second_arm.target"


def test_a_second_target_is_checked_like_the_main_one() -> None:
    data = copy.deepcopy(TEMPLATE)
    data["second_arm"]["target"] = {"low_mhz": 5800, "high_mhz": 5200}
    with pytest.raises(SpecError) as info:
        parse_spec(data)
    assert info.value.path == "$.second_arm.target.high_mhz"


def test_the_wire_model_joins_the_second_arm_to_the_feed_leg() -> None:
    """The feed leg is split where the second arm branches off, and the second arm's first wire
    starts at that junction (a three-wire junction the MoM treats like the feed-arm one)."""
    from footgen.physics.wires import MeshControl, antenna_wires

    from footgen.geometry.layout import canonical_layout

    spec = _spec()
    layout = canonical_layout(spec, _sizing(spec))
    copper = layout.copper
    ifa = printed_ifa(spec, copper)
    wires, _ = antenna_wires(ifa, MeshControl(f_max_hz=6.5e9))
    junction = (ifa.feed_x_m, ifa.second_arm_path_m[0][1], 0.0)
    touching = [w for w in wires if np.allclose(w.start_m, junction) or np.allclose(w.end_m, junction)]
    assert len(touching) == 3  # feed leg below, feed leg above, second arm
    arm2 = [w for w in touching if w.end_m[0] > junction[0] + 1e-9]
    assert len(arm2) == 1 and arm2[0].end_m[1] == pytest.approx(junction[1])  # runs the main arm's way (+x)


def test_a_clearance_too_narrow_names_the_width_that_holds_both_arms() -> None:
    """Refused before any solve, with the smallest width whose arms fit (checked)."""
    from footgen.sizing_dual import size_dual

    data = copy.deepcopy(TEMPLATE)
    data["clearance"]["width_mm"] = 12.0
    with pytest.raises(InfeasibleSpecError) as info:
        size_dual(parse_spec(data), "tline")
    assert info.value.path == "$.clearance.width_mm"
    width = int(re.search(r"about (\d+) mm wide would work", str(info.value)).group(1))
    data["clearance"]["width_mm"] = float(width)
    assert size_dual(parse_spec(data), "tline").second_arm_length_mm > 0  # the named width holds both arms


def test_a_clearance_too_shallow_names_the_depth_that_holds_both_arms() -> None:
    from footgen.sizing_dual import size_dual

    data = copy.deepcopy(TEMPLATE)
    data["clearance"]["depth_mm"] = 2.0
    with pytest.raises(InfeasibleSpecError) as info:
        size_dual(parse_spec(data), "tline")
    assert info.value.path == "$.clearance.depth_mm"
    depth = float(re.search(r"at least ([0-9.]+) mm deep", str(info.value)).group(1))
    data["clearance"]["depth_mm"] = depth + 0.01
    assert size_dual(parse_spec(data), "tline").height_mm > 0


def test_band_figures_read_each_band_in_its_own_window() -> None:
    from footgen.bandfigures import band_figures, dual_sweep_hz

    spec = parse_spec(TEMPLATE)
    freqs = dual_sweep_hz(spec)
    centres = (2441.75e6, 5500.0e6)
    zin = np.zeros_like(freqs, dtype=complex)
    for f0 in centres:  # one parallel resonance of 50 ohm at each centre, far apart
        zin += 1.0 / (1.0 / 50.0 + 1j * 12.0 * (freqs / f0 - f0 / freqs) / 50.0)
    bands = band_figures(spec, freqs, zin)
    for band, f0 in zip(bands, centres):
        assert band.resonance_hz == pytest.approx(f0, rel=0.01)
        assert band.band_10db_hz is not None and band.band_10db_hz[0] < f0 < band.band_10db_hz[1]
    assert bands[0].coverage == pytest.approx(1.0)
    assert 0.0 < bands[1].coverage <= 1.0


def test_template_sizes_both_bands_and_predicts_and_retunes_each(tmp_path, monkeypatch) -> None:
    """The whole loop on the dual-band template with the MoM: the sizing puts both resonances on
    their band centres; predict reports both bands; a measurement of arms 3 % short (the model's
    own sweep of that copper, standing in for a VNA file) retunes each arm the right way."""
    from footgen.prediction import predict_spec, sized, touchstone_text
    from footgen.retune_dual import retune_dual
    from footgen.rf.touchstone import read_s11

    monkeypatch.setenv("FOOTGEN_CACHE_DIR", str(tmp_path / "cache"))
    spec = parse_spec(TEMPLATE)
    numbers = sized(spec)
    prediction = predict_spec(spec, numbers=numbers)
    bands = prediction.bands()
    assert len(bands) == 2
    for band in bands:
        # the sizing's own goal (common practice, no source): resonance on the band centre
        assert band.resonance_hz == pytest.approx(band.target.center_hz, rel=0.01)
    lines = prediction.summary_lines()
    assert sum(line.startswith("band ") for line in lines) == 2
    assert "bands" in json.loads(prediction.json_bytes())

    short = copy.deepcopy(TEMPLATE)
    short["arm"] = {"length_mm": round(numbers.arm_length_mm * 0.97, 4), "height_mm": numbers.height_mm,
                    "feed_short_spacing_mm": numbers.feed_short_spacing_mm}
    short["second_arm"].update(length_mm=round(numbers.second_arm_length_mm * 0.97, 4), height_mm=numbers.second_arm_height_mm)
    measured = tmp_path / "measured.s1p"
    measured.write_bytes(touchstone_text(predict_spec(parse_spec(short))))
    result = retune_dual(spec, read_s11(measured))
    # the measurement reads high in both bands: the model must lengthen both arms
    assert all(r > 1.0 for r in result.ratios)
    assert result.new_spec.arm.length_mm > numbers.arm_length_mm
    assert result.new_spec.second_arm.length_mm > numbers.second_arm_length_mm
    assert result.new_spec.revision == spec.revision + 1 and "measured resonances" in result.history_note
