"""The copper drawing: labels never overlap, every sizing number is dimensioned, KiCad's frame,
violation markers, SVG without a plotting library, PNG only when asked; S11 markers and the
Smith chart's values."""

from __future__ import annotations

import copy
import itertools
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from hypothesis import assume, given
from hypothesis import strategies as st
from shapely.geometry import LineString, Point, box

from footgen import canvas
from footgen.build import run
from footgen.draw import drawing, drawing_subtitle, rotation_of
from footgen.geometry.layout import Sizing, build_layout
from footgen.rules import check
from footgen.spec import load_spec, parse_spec

from conftest import EXAMPLES, ROOT, TEMPLATES, load_json
from test_geometry import PROPERTY_SETTINGS, layouts

SPECS = EXAMPLES + TEMPLATES
_BUILT: dict[Path, object] = {}


def built(path: Path):
    """One build per spec for the whole module (sizing is the slow part)."""
    if path not in _BUILT:
        _BUILT[path] = run(load_spec(path))
    return _BUILT[path]


def assert_labels_clear(cv: canvas.Canvas) -> None:
    boxes = [(t.text, t.box) for t in cv.texts]
    assert boxes
    for (ta, a), (tb, b) in itertools.combinations(boxes, 2):
        assert not a.intersects(b), f"{ta!r} overlaps {tb!r}"
    for text, b in boxes:
        assert b.inside(cv.bounds), f"{text!r} leaves the canvas"


def assert_lines_clear_of_labels(cv: canvas.Canvas) -> None:
    """No line (dimension, extension or leader) runs through a label, but for a dimension line
    through its own label's centre (where the label sits on it, on a white background)."""
    for item in cv.items:
        if not isinstance(item, canvas.Shape) or item.closed:
            continue
        for a, b in zip(item.points, item.points[1:]):
            segment = LineString([a, b])
            for t in cv.texts:
                inner = t.box.grow(-1.0)
                centre = Point((t.box.x0 + t.box.x1) / 2, (t.box.y0 + t.box.y1) / 2)
                if segment.intersects(box(inner.x0, inner.y0, inner.x1, inner.y1)) and segment.distance(centre) > 0.5:
                    raise AssertionError(f"a line from {a} to {b} runs through {t.text!r}")


@pytest.mark.parametrize("spec_path", SPECS, ids=[f"{p.parent.name}/{p.stem}" for p in SPECS])
def test_no_two_labels_overlap_and_none_leaves_the_canvas(spec_path: Path) -> None:
    result = built(spec_path)
    cv = drawing(result.layout, result.spec.name, result.spec.target.label, result.violations)
    assert_labels_clear(cv)
    assert_lines_clear_of_labels(cv)


@pytest.mark.parametrize("spec_path", SPECS, ids=[f"{p.parent.name}/{p.stem}" for p in SPECS])
def test_every_sizing_number_is_dimensioned(spec_path: Path) -> None:
    result = built(spec_path)
    d, spec = result.layout.dims, result.spec
    texts = [t.text for t in drawing(result.layout, spec.name, "", result.violations).texts]
    labels = "\n".join(texts)
    expected = [
        f"feed tap {d['feed_short_spacing_mm']:.2f}",
        f"height {d['arm_height_mm']:.2f}",
        f"clearance area width {d['clearance_width_mm']:.2f}",
        f"depth {d['clearance_depth_mm']:.2f}",
        f"trace {d['trace_width_mm']:.2f}",
        f"arm {d['arm_length_mm']:.2f}",
        "inset ",
        f"pad 1 (feed) {spec.feed.pad_width_mm:.2f} wide x {spec.feed.pad_length_mm:.2f} long, port gap {spec.feed.port_gap_mm:.2f}",
        "pad 2 (ground)",
        "board edge",
        "KiCad footprint frame, mm, y down, origin at the feed point",
    ]
    if spec.clearance.edge_distance_mm > 0:
        expected.append(f"edge {spec.clearance.edge_distance_mm:.2f}")
    if d["meander_turns"]:
        expected += [f"pitch {result.layout.copper.meander_pitch_mm:.2f}", "meander height "]
    if spec.style.meander_height_mm is not None and d["meander_turns"] > 1:
        expected.append(f"meander height {spec.style.meander_height_mm:.2f}")
    if spec.second_arm is not None:
        expected += [f"second arm height {d['second_arm_height_mm']:.2f}", "arm gap ", "Second arm ",
                     f"second arm {d['second_arm_length_mm']:.2f}"]
    missing = [e for e in expected if e not in labels]
    assert not missing, missing
    rotation = spec.output.rotation_deg
    assert (f"rotated {rotation} deg counter-clockwise" in labels) == (rotation != 0)


@PROPERTY_SETTINGS
@given(layouts())
def test_labels_stay_clear_on_any_layout_and_the_rotation_is_read_back(case) -> None:
    spec, layout, _ = case
    assert rotation_of(layout) == spec.output.rotation_deg
    violations = check(layout, spec.fab)
    cv = drawing(layout, spec.name, spec.target.label, violations)
    assert_labels_clear(cv)


def _soil_with(tmp_changes: dict):
    data = copy.deepcopy(load_json(ROOT / "examples" / "soil-probe-2g4.json"))
    for key, value in tmp_changes.items():
        data[key] = value
    spec = parse_spec(data)
    return spec, build_layout(spec, Sizing(18.0, 5.3, 1.9, "explicit"))


def test_violations_are_marked_numbered_and_listed() -> None:
    spec, layout = _soil_with({"short": {"via_drill_mm": 0.2, "via_count": 2}, "trace_width_mm": 0.1})
    violations = check(layout, spec.fab)
    assert len(violations) >= 2  # via drill and trace width
    cv = drawing(layout, spec.name, "", violations)
    assert_labels_clear(cv)
    rings = [i for i in cv.items if isinstance(i, canvas.Circle) and i.stroke == "#c53030"]
    assert len(rings) == len(violations) + 1  # one per violation, one in the legend
    texts = [t.text for t in cv.texts]
    for n, v in enumerate(violations, start=1):
        assert any(t.startswith(f"{n}. {v.rule}: ") for t in texts)
    assert "rule violation" in texts
    clean = drawing(layout, spec.name, "", ())
    assert "Rule check: no violations against the fab profile." in [t.text for t in clean.texts]


def test_feed_point_is_the_origin_and_kicad_y_points_down() -> None:
    spec, layout = _soil_with({})
    cv = drawing(layout, spec.name, "", ())
    # the arm lies above the ground edge on screen: KiCad y (down) is negative for the copper
    rings = sorted((i for i in cv.items if isinstance(i, canvas.Circle) and i.r == 4.0), key=lambda c: c.cy)
    assert len(rings) == 2  # the axes glyph in the title band, the origin in the copper view
    glyph, origin = rings
    copper = next(i for i in cv.items if isinstance(i, canvas.Shape) and i.fill == "#d9822b")
    assert min(y for _, y in copper.points) < origin.cy - 50  # the arm is drawn above the feed point
    assert min(x for x, _ in copper.points) < origin.cx < max(x for x, _ in copper.points)
    labels = [t for t in cv.texts if t.text in ("+x", "+y")]
    plus_x, plus_y = sorted(labels, key=lambda t: t.text)
    assert plus_x.x > glyph.cx and plus_y.y > glyph.cy  # x right, y down


def test_text_width_table_never_underestimates_the_font() -> None:
    """Checked against DejaVu Sans itself (the font the SVG names first and the PNG renders)."""
    from PIL import ImageFont

    font = ImageFont.truetype(canvas.font_path(), 1000)
    for char, em in canvas.CHAR_WIDTH_EM.items():
        measured = font.getlength(char) / 1000
        assert measured <= em + 1e-9, char
        assert em - measured < 0.011, char  # rounded up to 0.01 em, no more
    label = "clearance area width 70.00"
    assert font.getlength(label) / 1000 * 12 <= canvas.text_width(label, 12)


def test_svg_is_plain_xml_with_explicit_fonts_and_no_plotting_library(tmp_path: Path) -> None:
    code = (
        "import sys, json\n"
        "from footgen.build import run\n"
        "from footgen.draw import drawing\n"
        "from footgen.geometry.layout import Sizing, build_layout\n"
        "from footgen.spec import load_spec\n"
        f"spec = load_spec({str(ROOT / 'examples' / 'soil-probe-2g4.json')!r})\n"
        "svg = drawing(build_layout(spec, Sizing(18.0, 5.3, 1.9, 'explicit')), spec.name, '').svg()\n"
        f"open({str(tmp_path / 'a.svg')!r}, 'wb').write(svg)\n"
        "print(json.dumps(sorted(m for m in ('matplotlib', 'PIL') if m in sys.modules)))\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert proc.stdout.strip() == "[]"
    root = ET.fromstring((tmp_path / "a.svg").read_bytes())
    assert "DejaVu Sans" in root.get("font-family")
    texts = root.findall("{http://www.w3.org/2000/svg}text")
    assert texts and all(float(t.get("font-size")) >= 11 for t in texts)


def test_png_is_rasterised_only_when_asked(monkeypatch: pytest.MonkeyPatch) -> None:
    from footgen.build import BuildResult, output_files

    data = load_json(ROOT / "examples" / "soil-probe-2g4.json")
    data["output"] = {"drawing_png": False}
    spec = parse_spec(data)
    layout = build_layout(spec, Sizing(18.0, 5.3, 1.9, "explicit"))
    result = BuildResult(spec, Sizing(18.0, 5.3, 1.9, "explicit"), layout, ())

    def refuse(self):
        raise AssertionError("PNG rendered although drawing_png is false")

    monkeypatch.setattr(canvas.Canvas, "png", refuse)
    files = output_files(result, include_footprint=False)
    assert f"{spec.name}.svg" in files and f"{spec.name}.png" not in files


def test_png_bytes_are_stable_and_a_real_png() -> None:
    spec, layout = _soil_with({})
    a = drawing(layout, spec.name, "").png()
    b = drawing(layout, spec.name, "").png()
    assert a == b and a[:8] == b"\x89PNG\r\n\x1a\n"


# --------------------------------------------------------------------------------- S11, Smith


def _series_rlc_s11(f: np.ndarray, f0: float, q: float, z0: float = 50.0) -> np.ndarray:
    """A series RLC with R = Z0: Zin = R (1 + j Q (f/f0 - f0/f)) (circuit algebra)."""
    z = z0 * (1 + 1j * q * (f / f0 - f0 / f))
    return (z - z0) / (z + z0)


def test_s11_markers_find_resonance_band_edges_and_worst_in_band() -> None:
    from footgen.plots import s11_markers

    f0, q = 433.9e6, 40.0
    f = np.linspace(380e6, 490e6, 2201)
    s11 = _series_rlc_s11(f, f0, q)
    markers = {kind: [] for kind in ("resonance", "edge", "worst")}
    for kind, freq, level, _ in s11_markers(f, s11, (433.05e6, 434.79e6)):
        markers[kind].append((freq, level))
    (f_res, _), = markers["resonance"]
    assert abs(f_res - f0) < 0.5 * (f[1] - f[0])
    # |S11| = -10 dB where |Gamma|^2 = 0.1: with Gamma = jX/(2R + jX), X = 2R/3, i.e.
    # Q (f/f0 - f0/f) = +-2/3 (circuit algebra, no outside source)
    for (edge, level), sign in zip(sorted(markers["edge"]), (-1.0, 1.0)):
        a = sign * 2.0 / 3.0 / q
        exact = f0 * (a + np.sqrt(a * a + 4)) / 2
        assert abs(edge - exact) < 0.5 * (f[1] - f[0]) and level == -10.0
    (f_worst, worst), = markers["worst"]
    assert f_worst in (f[f >= 433.05e6][0], f[f <= 434.79e6][-1])
    inside = (f >= 433.05e6) & (f <= 434.79e6)
    assert worst == pytest.approx(20 * np.log10(np.maximum(np.abs(s11[inside]), 1e-15)).max())


def test_s11_plot_zooms_on_the_band() -> None:
    from footgen.plots import s11_figure

    f = np.linspace(325e6, 542e6, 201)
    fig = s11_figure("t", (433.05e6, 434.79e6), [(f, _series_rlc_s11(f, 434e6, 30.0), {"label": "predicted"})])
    full, zoom = fig.axes
    lo, hi = zoom.get_xlim()
    assert lo < 433.05 and hi > 434.79 and (hi - lo) < 0.1 * np.ptp(full.get_xlim())
    labels = [t.get_text() for t in full.get_legend().get_texts()]
    assert any(t.startswith("resonance ") for t in labels) and any(t.startswith("worst in band ") for t in labels)


def test_smith_chart_circles_carry_their_values() -> None:
    from matplotlib.figure import Figure

    from footgen import loop_report

    ax = Figure().add_subplot(1, 1, 1)
    loop_report._smith_axes(ax)
    texts = {t.get_text(): t.get_position() for t in ax.texts}
    for r in loop_report.SMITH_R[1:]:
        x, y = texts[f"{r:g}"]
        assert x == pytest.approx((r - 1) / (r + 1)) and y == 0.0  # on its circle, on the real axis
    for x in loop_report.SMITH_X:
        for sign in ("+", "-"):
            px, py = texts[f"{sign}j{x:g}"]
            assert px * px + py * py == pytest.approx(1.09**2)  # just outside the rim, where the arc ends


def test_predict_plot_is_deterministic_and_marks_the_resonance() -> None:
    from footgen.prediction import Prediction, plot_s11

    spec = load_spec(ROOT / "templates" / "ism-433-meander.json")
    f = np.linspace(0.8 * spec.target.center_hz, 1.2 * spec.target.center_hz, 201)
    s11 = _series_rlc_s11(f, spec.target.center_hz, 60.0)
    prediction = Prediction(spec, "series RLC (test)", f, 50.0 * (1 + s11) / (1 - s11))
    svg, png = plot_s11(prediction)
    assert (svg, png) == plot_s11(prediction)
    text = svg.decode("utf-8")
    assert f"resonance {spec.target.center_hz / 1e6:.1f} MHz" in text and "(zoom)" in text and "worst in band" in text


# --------------------------------------------------------------------------------- dual band


DUAL_TEMPLATE = ROOT / "templates" / "ism-2g4-wifi5-dual.json"


def _dual(position: str, kind: str, direction: str, rotation: int, length: float = 18.0, tap: float = 3.0,
          second_length: float | None = None):
    """A dual-band layout of the template with an explicit sizing (no solve): by default a
    meandered second arm is made longer than the clearance area is wide, so it needs legs."""
    from footgen.geometry.dualband import default_heights_mm
    from footgen.geometry.layout import max_arm_height_mm

    data = copy.deepcopy(load_json(DUAL_TEMPLATE))
    data["clearance"].update(depth_mm=9.0, arm_direction=direction)
    data["second_arm"].update(position=position, kind=kind)
    data["output"] = {"rotation_deg": rotation}
    spec = parse_spec(data)
    main_h, second_h = default_heights_mm(spec, max_arm_height_mm(spec))
    if second_length is None:
        second_length = 26.0 if kind == "meandered" else 6.0
    sizing = Sizing(length, main_h, tap, "explicit", second_arm_length_mm=second_length, second_arm_height_mm=second_h)
    return spec, sizing, build_layout(spec, sizing)


def _labels(cv: canvas.Canvas) -> str:
    return "\n".join(t.text for t in cv.texts)


@pytest.mark.parametrize("rotation", [0, 90])
@pytest.mark.parametrize("direction", ["right", "left"])
@pytest.mark.parametrize("position", ["under", "above"])
@pytest.mark.parametrize("kind", ["straight", "meandered"])
def test_the_second_arm_is_dimensioned_without_overlaps(kind: str, position: str, direction: str, rotation: int) -> None:
    spec, _, layout = _dual(position, kind, direction, rotation)
    cv = drawing(layout, spec.name, drawing_subtitle(spec), check(layout, spec.fab), second_arm_kind=kind)
    assert_labels_clear(cv)
    assert_lines_clear_of_labels(cv)
    labels = _labels(cv)
    d, w = layout.dims, spec.trace_width_mm
    path = layout.copper.second_arm_path
    main_h = layout.dims["arm_height_mm"]
    # the arms' copper gap measured on the copper itself (both arms run level where they face)
    gap = layout.copper.trace("second_arm").polygon().distance(layout.copper.trace("arm").polygon())
    assert gap == pytest.approx(abs(main_h - d["second_arm_height_mm"]) - w, abs=1e-6)
    assert f"arm gap {gap:.2f}" in labels
    assert f"second arm height {d['second_arm_height_mm']:.2f}" in labels
    if kind == "straight":
        assert f"second arm {d['second_arm_length_mm']:.2f}" in labels  # a straight arm's reach is its length
    else:
        assert d["second_arm_meander_legs"] >= 2
        assert f"second arm {d['second_arm_length_mm']:.2f} along the centreline, {int(d['second_arm_meander_legs'])} legs" in labels
        reach = max(abs(x) for x, _ in path) if rotation == 0 else max(abs(y) for _, y in path)
        assert f"second arm reach {reach:.2f}" in labels
    side = "under" if position == "under" else "above"
    assert f"{side} the main arm" in labels


def test_the_example_dual_band_drawing_states_both_bands_and_the_second_arm() -> None:
    from footgen.build import output_files, report_markdown

    result = built(ROOT / "examples" / "greenhouse-hub-dual.json")
    spec, d = result.spec, result.layout.dims
    svg = output_files(result, include_footprint=False)[f"{spec.name}.svg"]
    texts = [t.text or "" for t in ET.fromstring(svg).iter("{http://www.w3.org/2000/svg}text")]
    subtitle = texts[1]
    second = spec.second_arm.target
    assert f"{spec.target.low_hz / 1e6:g}-{spec.target.high_hz / 1e6:g} MHz" in subtitle
    assert f"{second.low_hz / 1e6:g}-{second.high_hz / 1e6:g} MHz" in subtitle
    labels = "\n".join(texts)
    # the example's arm needs no legs: a straight arm of its length fits the clearance area
    assert len(result.layout.copper.second_arm_path) == 2 and spec.second_arm.kind == "meandered"
    line = next(t for t in texts if t.startswith("Second arm "))
    assert line.startswith(f"Second arm {d['second_arm_length_mm']:.2f} mm along the centreline from the feed leg, "
                           f"{d['second_arm_height_mm']:.2f} mm above the ground edge, under the main arm, meandered style")
    assert f"second arm {d['second_arm_length_mm']:.2f}" in labels and f"second arm height {d['second_arm_height_mm']:.2f}" in labels
    assert "second arm (meandered style; fits straight, no legs needed, under the main arm)" in report_markdown(result)


def test_the_report_says_meandered_plainly_when_the_second_arm_has_legs() -> None:
    from footgen.build import BuildResult, report_markdown

    spec, sizing, layout = _dual("under", "meandered", "right", 0)
    report = report_markdown(BuildResult(spec, sizing, layout, ()))
    assert "| second arm (meandered, under the main arm) length from the feed leg |" in report
    assert "no legs needed" not in report


def test_single_band_subtitle_is_unchanged() -> None:
    spec = load_spec(ROOT / "examples" / "soil-probe-2g4.json")
    assert drawing_subtitle(spec) == (f"{spec.target.low_hz / 1e6:g}-{spec.target.high_hz / 1e6:g} MHz, "
                                      f"{spec.style.kind}, revision {spec.revision}")


@PROPERTY_SETTINGS
@given(st.sampled_from(["under", "above"]), st.sampled_from(["straight", "meandered"]), st.sampled_from(["right", "left"]),
       st.sampled_from([0, 90, 180, 270]), st.floats(12.0, 30.0), st.floats(1.5, 5.0), st.floats(2.0, 30.0))
def test_dual_band_labels_stay_clear_on_any_second_arm(position, kind, direction, rotation, length, tap, second_length) -> None:
    from footgen.errors import InfeasibleSpecError

    try:
        spec, _, layout = _dual(position, kind, direction, rotation, length, tap, second_length)
    except InfeasibleSpecError:
        assume(False)
    cv = drawing(layout, spec.name, drawing_subtitle(spec), check(layout, spec.fab), second_arm_kind=kind)
    assert_labels_clear(cv)
    assert f"second arm height {layout.dims['second_arm_height_mm']:.2f}" in _labels(cv)


def test_one_leg_is_said_in_the_singular() -> None:
    from footgen.draw_dual import legs_words

    assert (legs_words(1), legs_words(3)) == ("1 leg", "3 legs")
