"""The ground grid of footgen.physics.wires, graded away from the antenna: fine where the ground
current is strong (the edge under the antenna), coarser far from it, never coarser than lambda/10,
wire radii by the local equal-area rule; a model too big to solve is refused before any sizing."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from footgen.physics.ifa import GroundPlane, Laminate, PrintedIfa
from footgen.physics.problem_size import MAX_UNKNOWNS, ModelTooLargeError
from footgen.physics.wires import (
    GRID_FAR_PITCH_PER_WAVELENGTH,
    MIN_SEGMENT_TO_GRID_RADIUS,
    MeshControl,
    antenna_wires,
    equal_area_grid_radius_m,
    ground_grid_wires,
)
from footgen.spec import parse_spec

ROOT = Path(__file__).resolve().parent.parent
MM = 1e-3
REL = 1e-9  # float slack on lengths (dimensionless)


def _ifa(width_mm: float, length_mm: float, arm_start_mm: float, arm_mm: float, height_mm: float = 4.0) -> PrintedIfa:
    """A straight IFA (invented test geometry) on a ground from x = 0 to ``width_mm``."""
    return PrintedIfa(
        arm_path_m=((arm_start_mm * MM, height_mm * MM), ((arm_start_mm + arm_mm) * MM, height_mm * MM)),
        feed_x_m=(arm_start_mm + 2.0) * MM, short_x_m=arm_start_mm * MM, trace_width_m=0.8 * MM,
        short_width_m=0.8 * MM, port_gap_m=0.5 * MM, ground=GroundPlane(0.0, width_mm * MM, length_mm * MM),
        laminate=Laminate(4.4, 1.6 * MM, 0.02))


def _lines(wires) -> tuple[list[float], list[float]]:
    xs = sorted({w.start_m[0] for w in wires if w.start_m[0] == w.end_m[0]})
    ys = sorted({w.start_m[1] for w in wires if w.start_m[1] == w.end_m[1]})
    return xs, ys


def _grid(ifa: PrintedIfa, control: MeshControl):
    _, detail = antenna_wires(ifa, control)
    return ground_grid_wires(ifa, control, detail)


@settings(max_examples=60, deadline=None)
@given(
    width_mm=st.floats(20.0, 120.0),
    length_mm=st.floats(15.0, 120.0),
    arm_start_frac=st.floats(0.0, 0.6),
    arm_mm=st.floats(6.0, 30.0),
    f_ghz=st.floats(0.8, 9.0),
)
def test_graded_grid_is_bounded_fine_near_the_antenna_and_never_finer_than_before(
        width_mm: float, length_mm: float, arm_start_frac: float, arm_mm: float, f_ghz: float) -> None:
    arm_start = arm_start_frac * width_mm
    arm_mm = min(arm_mm, width_mm - arm_start)
    ifa = _ifa(width_mm, length_mm, arm_start, arm_mm)
    control = MeshControl(f_max_hz=f_ghz * 1e9)
    graded = _grid(ifa, control)
    plain = _grid(ifa, MeshControl(f_max_hz=f_ghz * 1e9, grid_far_pitch_per_wavelength=None))
    # grading only ever removes lines
    assert sum(w.n_segments for w in graded) <= sum(w.n_segments for w in plain)
    xs, ys = _lines(graded)
    lam = control.wavelength_m
    far = min(lam / GRID_FAR_PITCH_PER_WAVELENGTH, width_mm * MM, length_mm * MM)
    pitch = min(control.grid_pitch_m, width_mm * MM, length_mm * MM)
    # lambda / 10 everywhere (common practice for wire-grid surfaces, no source); the ungraded
    # grid's stretched last gap (up to 1.5 pitch) is kept where grading saves nothing
    assert max(np.diff(xs).max(), np.diff(ys).max()) <= max(far, 1.5 * pitch) * (1 + REL)
    # within the near distance of the edge under the antenna: the near pitch
    near = control.grid_near_m
    x_lo, x_hi = arm_start * MM, (arm_start + arm_mm) * MM
    for a, b in zip(xs, xs[1:]):
        if x_lo - near < a and b < x_hi + near:
            assert b - a <= 1.5 * pitch * (1 + REL)
    for a, b in zip(ys, ys[1:]):
        if a > -near:
            assert b - a <= 1.5 * pitch * (1 + REL)
    # radius: equal-area rule with each line's own spacing, capped at a quarter segment
    for w in graded:
        length = math.dist(w.start_m, w.end_m)
        assert w.radius_m <= length / w.n_segments / MIN_SEGMENT_TO_GRID_RADIUS * (1 + REL)
        assert w.radius_m <= equal_area_grid_radius_m(1.5 * far) * (1 + REL)


def test_ground_small_in_wavelengths_keeps_the_ungraded_grid() -> None:
    """A ground within the near distance of the antenna everywhere is meshed as before, to the bit."""
    ifa = _ifa(40.0, 40.0, 6.0, 18.0)
    f_hz = 3.0e9  # lambda 100 mm: the whole 40 x 40 mm ground is within 0.3 lambda of the antenna
    assert _grid(ifa, MeshControl(f_max_hz=f_hz)) == _grid(ifa, MeshControl(f_max_hz=f_hz, grid_far_pitch_per_wavelength=None))


def test_5ghz_ground_of_40_by_45_mm_is_solvable() -> None:
    """The 5.25 GHz IFA on a 40 x 45 mm ground needed 1867 ground unknowns ungraded (over the
    guard); graded it fits with room to spare."""
    ifa = _ifa(40.0, 45.0, 4.0, 9.0, height_mm=3.0)
    control = MeshControl(f_max_hz=9.09e9)  # the synthesis mesh of that spec (1.4 x its quarter-wave estimate)
    plain = sum(w.n_segments for w in _grid(ifa, MeshControl(f_max_hz=9.09e9, grid_far_pitch_per_wavelength=None)))
    graded = sum(w.n_segments for w in _grid(ifa, control))
    assert plain > MAX_UNKNOWNS
    assert graded < 0.85 * MAX_UNKNOWNS


def test_oversize_model_is_refused_before_any_sizing_work(monkeypatch: pytest.MonkeyPatch) -> None:
    """A ground far too big for the solver at 5.25 GHz is refused from the start geometry, before
    the search solves anything."""
    from footgen import sizing

    data = json.loads((ROOT / "templates" / "ism-2g4-straight.json").read_text())
    data.update(name="big_ground_5g", target={"center_mhz": 5250},
                clearance={"width_mm": 14.0, "depth_mm": 4.0, "arm_direction": "right"},
                ground_plane={"width_mm": 60.0, "length_mm": 70.0})
    spec = parse_spec(data)

    def no_search(*args, **kwargs):
        raise AssertionError("the search ran before the size check")

    monkeypatch.setattr(sizing, "refine", no_search)
    monkeypatch.setattr(sizing.sizing_cache, "load", lambda key, model: None)
    with pytest.raises(ModelTooLargeError) as err:
        sizing.size.__wrapped__(spec)
    assert err.value.cause == "ground"
