"""Revision report (footgen.loop_report): content, determinism, atomic writing, Smith chart."""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from footgen import loop_report
from footgen.build import SAFETY_NOTE
from footgen.rf import touchstone
from footgen.spec import parse_spec

TEMPLATES = Path(__file__).resolve().parents[1] / "templates"
#: The fast registered response model; the checks hold for any model of sizing.MODELS (the
#: default MoM model takes minutes per retune, so it is exercised only where marked slow).
MODEL = "tline"
#: A point on a circle: | |Gamma - c| - radius | below this (double-precision algebra).
ON_CIRCLE_ABS = 1e-9


def spec(revision: int = 1, arm_mm: float | None = None):
    data = json.loads((TEMPLATES / "ism-2g4-straight.json").read_text("utf-8"))
    data["revision"] = revision
    if arm_mm is not None:
        data["arm"] = {"length_mm": arm_mm, "height_mm": 5.3, "feed_short_spacing_mm": 1.0}
    return parse_spec(data)


def invented_measurement(tmp_path: Path) -> touchstone.Measurement:
    """Invented demo sweep (a series RLC, not a measurement) just to exercise the measured path."""
    f = np.linspace(2.1e9, 2.8e9, 281)
    omega = 2 * np.pi * f
    z = 42.0 + 1j * (omega * 8e-9 - 1 / (omega * 0.55e-12))
    path = touchstone.write_s1p(tmp_path / "demo.s1p", f, (z - 50) / (z + 50))
    return touchstone.read_s11(path)


def test_report_is_byte_identical_on_a_rerun(tmp_path):
    m = invented_measurement(tmp_path)
    a = loop_report.write_report(spec(2), tmp_path / "a", m, previous=spec(1), model=MODEL)
    b = loop_report.write_report(spec(2), tmp_path / "b", m, previous=spec(1), model=MODEL)
    assert [p.name for p in a] == [p.name for p in b]
    for pa, pb in zip(a, b):
        assert pa.read_bytes() == pb.read_bytes(), pa.name
    again = loop_report.write_report(spec(2), tmp_path / "a", m, previous=spec(1), model=MODEL)  # same folder
    assert [p.read_bytes() for p in again] == [p.read_bytes() for p in b]


def test_report_content(tmp_path):
    m = invented_measurement(tmp_path)
    messages: list[str] = []
    files = loop_report.report_files(spec(2, 20.0), m, previous=spec(1), model=MODEL, progress=messages.append)
    md = files["ifa_2g4_straight-r2.report.md"].decode("utf-8")
    for image in ("copper", "s11", "smith", "overlay"):
        assert f"ifa_2g4_straight-r2.{image}.png" in files and f"ifa_2g4_straight-r2.{image}.svg" in files
        assert f"ifa_2g4_straight-r2.{image}.png)" in md
    assert SAFETY_NOTE in md
    assert "## Rule check" in md and "Parts list of the chosen match" in md
    assert "| measured |" in md and "| predicted, bare model |" in md
    assert "$.arm.length_mm" in md  # the before/after table of the spec change
    assert len(messages) >= 5 and all(msg.startswith("report:") for msg in messages)


def test_report_writes_atomically(tmp_path, monkeypatch):
    """A failure half-way leaves every earlier file whole (old content), and no temp files."""
    monkeypatch.setenv("FOOTGEN_CACHE_DIR", "")  # only the report's own file replacements are counted
    out = tmp_path / "r"
    loop_report.write_report(spec(1), out, model=MODEL)
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    calls = {"n": 0}
    real_replace = os.replace

    def failing_replace(src, dst):
        calls["n"] += 1
        if calls["n"] == 3:
            raise OSError("disk full (simulated)")
        return real_replace(src, dst)

    monkeypatch.setattr(os, "replace", failing_replace)
    with pytest.raises(OSError):
        loop_report.write_report(spec(1, 21.0), out, model=MODEL)
    monkeypatch.setattr(os, "replace", real_replace)
    after = {p.name: p.read_bytes() for p in out.iterdir()}
    assert set(after) == set(before)  # no temporary file left behind
    changed = [name for name in before if after[name] != before[name]]
    assert len(changed) == 2  # two files replaced whole before the failure, the rest untouched


@settings(max_examples=200, deadline=None)
@given(st.floats(0.0, 50.0), st.floats(-50.0, 50.0).filter(lambda x: abs(x) > 1e-3))
def test_smith_circles_hold_their_impedances(r, x):
    """Gamma of z = r + jx lies on the constant-r circle and the constant-x circle
    (Pozar, Microwave Engineering, 4th ed., sec. 2.4, from memory)."""
    g = complex(loop_report.gamma_from_z(complex(r, x)))
    (cx, cy), radius = loop_report.smith_r_circle(r)
    assert abs(abs(g - complex(cx, cy)) - radius) < ON_CIRCLE_ABS
    (cx, cy), radius = loop_report.smith_x_circle(x)
    assert abs(abs(g - complex(cx, cy)) - radius) < ON_CIRCLE_ABS * max(1.0, radius)
    assert abs(g) <= 1.0 + ON_CIRCLE_ABS  # passive loads stay inside the unit circle


def test_band_centre_outside_the_sweep_is_a_measurement_error(tmp_path):
    f = np.linspace(1.0e9, 1.2e9, 51)
    path = touchstone.write_s1p(tmp_path / "far.s1p", f, np.full(f.size, 0.5 + 0j))
    with pytest.raises(touchstone.MeasurementError):
        loop_report.report_files(spec(1), touchstone.read_s11(path), model=MODEL)


#: The brief's tolerance for landing on a frequency (0.5 %).
LANDING_REL = 5e-3


def test_corrected_prediction_of_the_next_revision_follows_the_board(tmp_path):
    """Synthetic board (the model itself with eps_r 5.0 instead of 4.4, an invented detuning):
    revision 1 is measured, retuned; the report of revision 2, calibrated by the calibration the
    revision holds, puts the resonance where the same board would show it, and matches on that
    calibrated Zin."""
    import copy

    from footgen import sizing
    from footgen.retune import evaluator, retune

    def board_s11(s, numbers, f):
        raw = copy.deepcopy(s.raw)
        raw["laminate"]["eps_r"] = 5.0
        b = parse_spec(raw)
        z = sizing.MODELS[MODEL].zin_ohm(f, evaluator(b).ifa(numbers.arm_length_mm, numbers.height_mm, numbers.feed_short_spacing_mm))
        return (z - 50) / (z + 50)

    r1 = spec(1)
    f = np.linspace(2.0e9, 2.9e9, 901)
    m1 = touchstone.read_s11(touchstone.write_s1p(tmp_path / "r1.s1p", f, board_s11(r1, sizing.size(r1, model=MODEL), f),
                                                  comment="synthetic, measured 2026-11-20 (invented)"))
    r2 = retune(r1, m1, model=MODEL).new_spec
    data = loop_report.prepare(r2, model=MODEL)
    assert data.matched_on == "calibrated prediction"
    f_corrected = touchstone.min_s11_db(data.corrected_freq_hz, data.corrected_s11)[0]
    f_board = touchstone.min_s11_db(f, board_s11(r2, sizing.size(r2, model=MODEL), f))[0]
    assert abs(f_corrected / f_board - 1) < LANDING_REL
    z_board = touchstone.zin_at(f, board_s11(r2, sizing.size(r2, model=MODEL), f), r2.target.center_hz)
    # 2 %: the calibration scales R and the frequency only (an approximation)
    assert data.plan.z_at_f0_ohm.real == pytest.approx(z_board.real, rel=0.02)
    # --uncalibrated: the bare model, no calibrated curve, matched on the bare prediction
    bare = loop_report.prepare(r2, model=MODEL, uncalibrated=True)
    assert bare.corrected_s11 is None and bare.matched_on == "predicted"
    assert bare.calibration_line.startswith("uncalibrated")
