"""The wire model of footgen.physics.wires accepts every printed IFA footgen's generator can lay out:
wide traces, port gaps wider than the trace, short tails, legs close together, meanders."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from footgen.errors import InfeasibleSpecError, SpecError
from footgen.geometry.layout import max_arm_height_mm
from footgen.physics.ifa import GroundPlane, Laminate, PrintedIfa
from footgen.physics.mom import MIN_SEGMENT_TO_RADIUS, MomSolver
from footgen.physics.wires import ifa_wire_model
from footgen.sizing import MODELS, _Evaluator, _size_with, min_spacing_mm, quarter_wave_first_estimate_mm
from footgen.spec import load_spec, parse_spec

ROOT = Path(__file__).resolve().parent.parent
MM = 1e-3
MESH_FACTOR = 1.2  # synthesis meshes for 1.2 f0 (footgen.sizing.PREDICTION_HALF_SPAN)
BANDS_MHZ = ((433.92, 1.74), (868.3, 0.6), (915.0, 26.0), (2441.75, 83.5))


def _solves(ifa: PrintedIfa, f_hz: float) -> complex:
    """Zin at ``f_hz`` on the synthesis mesh; every segment inside the solver's thin-wire limit."""
    model = ifa_wire_model(ifa, MESH_FACTOR * f_hz)
    solver = MomSolver(model)
    ratio = solver.mesh.lengths / solver.mesh.radii
    assert ratio.min() >= MIN_SEGMENT_TO_RADIUS
    return solver.zin_ohm(f_hz)


def _assert_passive(z: complex) -> None:
    # a passive one-port has Re(Zin) >= 0 (Pozar, Microwave Engineering, 4th ed., sec. 2.3 /
    # Foster's theorem context, from memory); also it must be a finite number
    assert math.isfinite(z.real) and math.isfinite(z.imag)
    assert z.real >= 0.0


@pytest.mark.parametrize("path", sorted((ROOT / "templates").glob("*.json")) + sorted((ROOT / "examples").glob("*.json")),
                         ids=lambda p: p.name)
def test_template_and_example_start_geometries_solve(path: Path) -> None:
    """The start sizing of every shipped template/example (433 MHz 1.2 mm meander included) solves."""
    spec = load_spec(path)
    if spec.second_arm is not None:  # dual-band: the start sizing of both arms, solved at both centres
        from footgen.geometry.layout import generate_copper
        from footgen.model import printed_ifa
        from footgen.sizing_dual import size_dual

        ifa = printed_ifa(spec, generate_copper(spec, size_dual(spec, "tline")))
        for target in spec.targets:
            _assert_passive(_solves(ifa, target.center_hz))
        return
    start = _size_with(spec, "tline")
    ifa = _Evaluator(spec, MODELS["tline"], start.meander_pitch_mm).ifa(start.arm_length_mm, start.height_mm,
                                                                       start.feed_short_spacing_mm)
    _assert_passive(_solves(ifa, spec.target.center_hz))


def _spec_data(band: tuple[float, float], width_mm: float, gap_mm: float, meander: bool, eps_r: float,
               thickness_mm: float, clearance: tuple[float, float], ground_extra_mm: float, ground_len_mm: float,
               fab: str) -> dict:
    return {
        "schema_version": 1,
        "name": "robustness_case",
        "target": {"center_mhz": band[0], "bandwidth_mhz": band[1]},
        "laminate": {"eps_r": eps_r, "thickness_mm": thickness_mm},
        "clearance": {"width_mm": clearance[0], "depth_mm": clearance[1]},
        "style": {"kind": "meandered", "meander": "fit"} if meander else {"kind": "straight"},
        "trace_width_mm": width_mm,
        "feed": {"port_gap_mm": gap_mm},
        # the ground reaches under the whole clearance (a leg off the ground is refused, by design)
        "ground_plane": {"width_mm": clearance[0] + ground_extra_mm, "length_mm": ground_len_mm},
        "fab": {"profile": fab},
    }


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.filter_too_much, HealthCheck.too_slow])
@given(
    band=st.sampled_from(BANDS_MHZ),
    width_mm=st.one_of(st.sampled_from([0.2, 0.5, 1.2, 1.5, 2.0]), st.floats(0.15, 2.5)),
    gap_mm=st.one_of(st.sampled_from([0.1, 0.3, 0.5, 1.0]), st.floats(0.05, 2.0)),
    meander=st.booleans(),
    eps_r=st.floats(2.0, 10.0),
    thickness_mm=st.floats(0.2, 3.0),
    clearance=st.tuples(st.floats(8.0, 80.0), st.floats(3.0, 20.0)),
    ground_extra_mm=st.floats(0.0, 40.0),
    ground_len_mm=st.floats(10.0, 100.0),
    fab=st.sampled_from(["relaxed", "standard"]),
    height_frac=st.floats(0.3, 1.0),
    spacing_factor=st.floats(1.0, 4.0),
    length_factor=st.floats(0.3, 1.5),
)
def test_generated_geometries_always_solve(band, width_mm, gap_mm, meander, eps_r, thickness_mm, clearance,
                                           ground_extra_mm, ground_len_mm, fab, height_frac, spacing_factor,
                                           length_factor) -> None:
    try:
        spec = parse_spec(_spec_data(band, width_mm, gap_mm, meander, eps_r, thickness_mm, clearance,
                                     ground_extra_mm, ground_len_mm, fab))
        height = height_frac * max_arm_height_mm(spec)
        spacing = spacing_factor * min_spacing_mm(spec)
        length = length_factor * quarter_wave_first_estimate_mm(spec, height)
        ifa = _Evaluator(spec, MODELS["tline"]).ifa(length, height, spacing)
    except (InfeasibleSpecError, SpecError):
        assume(False)
        return
    _assert_passive(_solves(ifa, spec.target.center_hz))


def _hand_ifa(width_mm: float, gap_mm: float, height_mm: float, spacing_mm: float, tail_mm: float) -> PrintedIfa:
    """Invented corner cases: a meander whose last piece is ``tail_mm`` long."""
    x_s = -spacing_mm
    path = ((x_s, height_mm), (10.0, height_mm), (10.0, 0.5 * height_mm), (10.0 + 3 * width_mm, 0.5 * height_mm),
            (10.0 + 3 * width_mm, 0.5 * height_mm + tail_mm))
    return PrintedIfa(
        arm_path_m=tuple((x * MM, y * MM) for x, y in path),
        feed_x_m=0.0,
        short_x_m=x_s * MM,
        trace_width_m=width_mm * MM,
        short_width_m=width_mm * MM,
        port_gap_m=gap_mm * MM,
        ground=GroundPlane(x_min_m=(x_s - 0.2 * width_mm) * MM, x_max_m=30 * MM, length_m=40 * MM),
        laminate=Laminate(eps_r=4.4, thickness_m=1.6 * MM, loss_tangent=0.02),
    )


@pytest.mark.parametrize(
    ("width_mm", "gap_mm", "height_mm", "spacing_mm", "tail_mm"),
    [
        (2.0, 0.5, 6.0, 2.2, 0.3),  # wide trace, gap < 2 radii, tail shorter than the radius
        (1.5, 0.1, 4.0, 1.6, 0.8),  # tiny port gap
        (1.0, 3.5, 4.0, 1.1, 0.5),  # port gap near the arm height (source capped at half of it)
        (0.3, 0.5, 1.0, 0.35, 0.2),  # legs close together, low arm
    ],
)
def test_corner_geometries_solve(width_mm: float, gap_mm: float, height_mm: float, spacing_mm: float,
                                 tail_mm: float) -> None:
    _assert_passive(_solves(_hand_ifa(width_mm, gap_mm, height_mm, spacing_mm, tail_mm), 2.45e9))


def test_short_piece_radius_cap_keeps_valid_models_unchanged() -> None:
    """Pieces already inside the thin-wire limit keep the strip radius w/4 (Balanis 4th ed. ch. 9,
    from memory); only the too-short ones are thinned."""
    ifa = _hand_ifa(0.8, 0.6, 5.0, 3.0, 2.0)
    model = ifa_wire_model(ifa, 2.9e9)
    radii = {w.radius_m for w in model.wires[:5]}
    assert radii == {0.25 * 0.8 * MM}
    wide = ifa_wire_model(_hand_ifa(2.0, 0.5, 6.0, 2.2, 0.3), 2.9e9)
    src = wide.wires[wide.source_wire]
    assert src.radius_m < 0.25 * 2.0 * MM
    assert np.hypot(*np.subtract(src.end_m, src.start_m)[:2]) / src.radius_m >= MIN_SEGMENT_TO_RADIUS
