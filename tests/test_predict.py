"""Prediction API (footgen.physics.predict) and the wire model of a printed IFA
(footgen.physics.wires): S11 algebra, -10 dB band, resonance, laminate effect, openEMS dev case."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from footgen.errors import SolverError
from footgen.physics import predict
from footgen.physics.ifa import GroundPlane, Laminate, PrintedIfa
from footgen.physics.mom import MomSolver
from footgen.physics.wires import ifa_wire_model, strip_equivalent_radius_m

FULLWAVE_DIR = Path(__file__).parent / "fullwave"
MM = 1e-3
Z0 = 50.0
BAND_EDGE_REL_TOL = 1e-3
# Development-role openEMS case (tests/fullwave, helper H3): our resonance within 2 % (common
# practice for a quick estimate vs FDTD, no source) and the -10 dB band overlapping.
FULLWAVE_F_RES_REL_TOL = 0.02


def demo_ifa(eps_r: float = 4.3, thickness_mm: float = 1.6, loss_tangent: float = 0.02) -> PrintedIfa:
    """Invented demo geometry (not a vendor design)."""
    return PrintedIfa(
        arm_path_m=((-13 * MM, 5 * MM), (7 * MM, 5 * MM)),
        feed_x_m=-9.5 * MM,
        short_x_m=-13 * MM,
        trace_width_m=0.8 * MM,
        short_width_m=0.8 * MM,
        port_gap_m=0.6 * MM,
        ground=GroundPlane(x_min_m=-18 * MM, x_max_m=18 * MM, length_m=36 * MM),
        laminate=Laminate(eps_r=eps_r, thickness_m=thickness_mm * MM, loss_tangent=loss_tangent),
    )


def test_s11_from_zin_definition() -> None:
    # Pozar, Microwave Engineering, 4th ed., eq. 2.35, Gamma = (Z_L - Z_0)/(Z_L + Z_0) (from memory)
    s = predict.s11_from_zin(np.array([Z0, 0.0, 1e12, 100.0]), Z0)
    assert s == pytest.approx(np.array([0.0, -1.0, 1.0, 1.0 / 3.0]), abs=1e-9)
    with pytest.raises(SolverError):
        predict.s11_from_zin(np.array([50.0]), 0.0)


@settings(max_examples=50, deadline=None)
@given(r=st.floats(min_value=0.0, max_value=1e4), x=st.floats(min_value=-1e4, max_value=1e4))
def test_passive_load_reflects_at_most_unity(r: float, x: float) -> None:
    # passivity: Re(Z) >= 0 gives |Gamma| <= 1 (Pozar 4th ed. sec. 2.3, from memory)
    assert abs(predict.s11_from_zin(np.array([complex(r, x)]))[0]) <= 1.0 + 1e-12


def test_bandwidth_of_series_rlc_matches_closed_form() -> None:
    """Series RLC with R = Z0: |Gamma| = 1/sqrt(10) where |X| = 2 Z0 / 3, X = wL - 1/(wC)
    (series resonant circuit, Pozar 4th ed. sec. 6.1, from memory)."""
    f0, q = 2.45e9, 8.0
    w0 = 2 * math.pi * f0
    ind = q * Z0 / w0
    cap = 1.0 / (w0**2 * ind)
    freqs = np.linspace(2.0e9, 3.0e9, 20001)
    w = 2 * math.pi * freqs
    zin = Z0 + 1j * (w * ind - 1.0 / (w * cap))
    band = predict.bandwidth_10db(freqs, predict.s11_from_zin(zin))
    x_edge = 2.0 * Z0 / 3.0
    edges = []
    for sign in (-1.0, 1.0):  # w L - 1/(w C) = sign * x_edge  ->  L w^2 - sign x w - 1/C = 0
        w_e = (sign * x_edge + math.sqrt(x_edge**2 + 4 * ind / cap)) / (2 * ind)
        edges.append(w_e / (2 * math.pi))
    assert band is not None
    assert band[0] == pytest.approx(edges[0], rel=BAND_EDGE_REL_TOL)
    assert band[1] == pytest.approx(edges[1], rel=BAND_EDGE_REL_TOL)
    assert predict.min_s11_frequency_hz(freqs, predict.s11_from_zin(zin)) == pytest.approx(f0, rel=1e-5)
    assert predict.im_zin_zero_crossings_hz(freqs, zin) == pytest.approx([f0], rel=1e-6)
    assert predict.bandwidth_10db(freqs, predict.s11_from_zin(zin * 5.0)) is None


def test_strip_radius_rule() -> None:
    # Balanis, Antenna Theory, 4th ed., ch. 9 table of equivalent radii: flat strip a = w/4 (from memory)
    assert strip_equivalent_radius_m(0.8e-3) == pytest.approx(0.2e-3)


def test_wire_model_topology() -> None:
    ifa = demo_ifa()
    model = ifa_wire_model(ifa, 3.0e9)
    solver = MomSolver(model)
    src = model.wires[model.source_wire]
    assert src.start_m == (ifa.feed_x_m, 0.0, 0.0)
    assert src.end_m[1] == pytest.approx(ifa.port_gap_m)
    # the feed leg bottom, the short leg bottom and the ground edge share nodes (junctions)
    nodes = solver.mesh.node_xyz
    for x in (ifa.feed_x_m, ifa.short_x_m):
        at = np.nonzero(np.linalg.norm(nodes - np.array([x, 0.0, 0.0]), axis=1) < 1e-9)[0]
        assert at.shape[0] == 1
        degree = int(np.sum(solver.mesh.seg_nodes == at[0]))
        assert degree >= 3
    # segments no longer than lambda/20 at f_max (task rule)
    assert np.max(solver.mesh.lengths) <= 3e8 / 3.0e9 / 20.0


def test_laminate_slows_the_antenna_partially() -> None:
    """Copper on a slab resonates lower than in free space, but not as low as fully immersed in the
    dielectric: 1 < eps_eff < eps_r (Pozar 4th ed. sec. 3.8 for printed lines, from memory)."""
    f_free = predict.resonance_hz(demo_ifa(eps_r=1.0, loss_tangent=0.0), 2.0e9, 4.5e9)
    f_fr4 = predict.resonance_hz(demo_ifa(eps_r=4.3), 1.5e9, 4.0e9)
    assert f_free / math.sqrt(4.3) < f_fr4 < f_free


@pytest.mark.parametrize("case_name", ["dev_straight_16", "dev_meander_08"])
def test_predict_matches_openems_development_case(case_name: str) -> None:
    sys.path.insert(0, str(FULLWAVE_DIR))
    try:
        from ifa_cases import case_by_name, case_to_ifa, result_path
    finally:
        sys.path.remove(str(FULLWAVE_DIR))
    path = result_path(case_name)
    if not path.exists():
        pytest.skip(f"openEMS development result {path.name} not stored yet")
    ref = json.loads(path.read_text(encoding="utf-8"))
    assert ref["case"]["role"] == "development" and case_by_name(case_name)["role"] == "development"
    ifa = case_to_ifa(ref["case"])
    freqs = np.asarray(ref["freq_hz"], float)[::4]
    zin = predict.zin_ohm(ifa, freqs)
    s11 = predict.s11_from_zin(zin)
    f_ours = predict.min_s11_frequency_hz(freqs, s11)
    f_ref = ref["derived"]["f_res_hz"]
    # reference: openEMS FDTD (tests/fullwave/results/<case>.json, development role)
    assert abs(f_ours / f_ref - 1.0) <= FULLWAVE_F_RES_REL_TOL, f"{f_ours:.4g} vs openEMS {f_ref:.4g} Hz"
    band = predict.bandwidth_10db(freqs, s11)
    ref_band = ref["derived"]["band_10db_hz"]
    # reference: openEMS FDTD, the -10 dB bands overlap
    assert band is not None and band[0] < ref_band["f_hi_hz"] and band[1] > ref_band["f_lo_hz"]


def test_zin_progress_and_resonance_definitions() -> None:
    ifa = demo_ifa()
    calls = []
    freqs = np.linspace(2.0e9, 3.2e9, 25)
    zin = predict.zin_ohm(ifa, freqs, progress=lambda done, total: calls.append((done, total)))
    assert calls[-1] == (25, 25) and all(d <= t for d, t in calls)
    f_res = predict.resonance_hz(ifa, 2.0e9, 3.2e9)
    coarse = predict.min_s11_frequency_hz(freqs, predict.s11_from_zin(zin))
    assert abs(f_res - coarse) <= freqs[1] - freqs[0]
    f_x0 = predict.resonance_im_zero_hz(ifa, 2.0e9, 3.2e9)
    assert f_x0 is None or 2.0e9 <= f_x0 <= 3.2e9


def test_bad_inputs_raise_solver_error() -> None:
    with pytest.raises(SolverError):
        predict.zin_ohm(demo_ifa(), np.array([-1.0]))
    with pytest.raises(SolverError):
        predict.resonance_hz(demo_ifa(), 3e9, 2e9)
    bad = PrintedIfa(**{**demo_ifa().__dict__, "feed_x_m": 20 * MM})
    with pytest.raises(SolverError):
        predict.zin_ohm(bad, np.array([2.4e9]))


# Dense sweeps are solved on fewer points and Zin interpolated (predict.zin_resampled).  The
# allowance is ours (common practice, no source): far below what a VNA resolves.
RESAMPLE_DB_TOL = 0.002


def test_resampled_sweep_matches_the_full_sweep() -> None:
    solver = MomSolver(ifa_wire_model(demo_ifa(), 2.94e9))
    freqs = np.linspace(0.8 * 2.45e9, 1.2 * 2.45e9, 201)
    solved: list[int] = []

    def sweep(f: np.ndarray) -> np.ndarray:
        solved.append(f.shape[0])
        return solver.sweep_interpolated(f)

    full = solver.sweep_interpolated(freqs)
    fast = predict.zin_resampled(sweep, freqs)
    db = lambda z: 20 * np.log10(np.abs(predict.s11_from_zin(z)))  # noqa: E731
    assert solved == [predict.RESAMPLE_POINTS]
    assert np.max(np.abs(db(fast) - db(full))) < RESAMPLE_DB_TOL
    assert predict.min_s11_frequency_hz(freqs, predict.s11_from_zin(fast)) == pytest.approx(
        predict.min_s11_frequency_hz(freqs, predict.s11_from_zin(full)), rel=1e-4)


def test_short_sweeps_are_solved_point_by_point() -> None:
    freqs = np.linspace(2.0e9, 2.9e9, 2 * predict.RESAMPLE_POINTS - 1)
    assert predict.resampled_points(freqs) is None
    assert np.array_equal(predict.zin_resampled(lambda f: f + 0j, freqs), freqs + 0j)


# A narrow band: the 433 MHz meander template with the copper its sizing built (given here
# explicitly, so no sizing runs); -10 dB band about 1.6 % wide, under two of the 41 even points.
# Allowances are ours (common practice, no source): far below what a VNA resolves.
NARROW_BAND_DB_TOL = 0.05
NARROW_BAND_EDGE_REL_TOL = 1e-4  # of the band centre (0.04 MHz at 433.92 MHz)
NARROW_TEMPLATE_ARM = {"length_mm": 276.44, "height_mm": 16.9, "feed_short_spacing_mm": 1.4}


def test_narrow_band_resampled_sweep_matches_direct_solves() -> None:
    from scipy.interpolate import CubicSpline

    from footgen import prediction
    from footgen.sizing import mom_solver
    from footgen.spec import parse_spec

    data = json.loads((Path(__file__).resolve().parent.parent / "templates" / "ism-433-meander.json").read_text())
    spec = parse_spec({**data, "arm": NARROW_TEMPLATE_ARM})
    ifa = prediction.copper_ifa(spec, prediction.sized(spec))
    freqs = prediction.sweep_hz(spec)
    solver = mom_solver(ifa, float(freqs.max()), mixed_precision=True)  # as predict solves it
    solved: list[int] = []

    def sweep(f: np.ndarray) -> np.ndarray:
        solved.append(f.shape[0])
        return solver.sweep_interpolated(f)

    fast = predict.zin_resampled(sweep, freqs)
    assert solved[0] == predict.RESAMPLE_POINTS and len(solved) == 2  # the narrow band got its own points
    band = predict.bandwidth_10db(freqs, predict.s11_from_zin(fast))
    assert band is not None
    step = freqs[1] - freqs[0]
    near = (freqs >= band[0] - 4 * step) & (freqs <= band[1] + 4 * step)  # the band and its flanks
    direct = solver.sweep_direct(freqs[near])
    db = lambda z: 20 * np.log10(np.abs(predict.s11_from_zin(z)))  # noqa: E731
    f0 = spec.target.center_hz
    ref_band = predict.bandwidth_10db(freqs[near], predict.s11_from_zin(direct))
    assert np.max(np.abs(db(fast[near]) - db(direct))) <= NARROW_BAND_DB_TOL
    assert np.max(np.abs(np.subtract(predict.bandwidth_10db(freqs[near], predict.s11_from_zin(fast[near])), ref_band))) <= NARROW_BAND_EDGE_REL_TOL * f0
    # the 41 even points alone miss it (what the extra points are for)
    grid = np.linspace(freqs[0], freqs[-1], predict.RESAMPLE_POINTS)
    even = CubicSpline(grid, solver.sweep_interpolated(grid))(freqs[near])
    assert np.max(np.abs(db(even) - db(direct))) > NARROW_BAND_DB_TOL
