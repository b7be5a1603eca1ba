"""Stored openEMS full-wave results for the printed IFA cases, and our predictor checked against them.

Outside truth: openEMS (Debian package ``openems`` 0.0.35+git20190103, FDTD), solved by
``tests/fullwave/openems_ifa.py`` and stored in ``tests/fullwave/results/<case>.json``.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest
from conftest import load_fullwave_module

FULLWAVE_DIR = Path(__file__).resolve().parent / "fullwave"

# Allowed error of our resonance prediction against openEMS (task requirement, +-3 %).
RESONANCE_REL_TOL = 0.03
# Stored derived figures must match the stored curve to float round-off.
SELF_CONSISTENCY_REL_TOL = 1e-9
# -10 dB band edges are interpolated linearly in dB between grid points; the curve at the edge
# must read -10 dB within this (dB).
BAND_EDGE_DB_TOL = 1e-6
# Coarse-mesh rerun vs stored result: the coarse mesh (w/4 at copper edges) may differ from the
# stored mesh by this much in f_res (/work/shared/notes/openems-0.0.35.md measured 0.13 % for
# w/4 -> w/8 on a strip; we allow the grid step of the stored sweep on top).
COARSE_RERUN_REL_TOL = 0.01
SLOW_CASE = "dev_straight_16"
# Mesh convergence of the stored references: coarse (w/4 at copper edges) vs the stored mesh.
# The openEMS notes (/work/shared/notes/openems-0.0.35.md) measured 0.13 % for w/4 -> w/8 on a
# printed strip; we require the resonance within 0.5 % and the -10 dB band edges within 1 %.
MESH_CONVERGENCE_REL_TOL = 0.005
MESH_CONVERGENCE_BAND_REL_TOL = 0.01
CONVERGENCE_DIR = FULLWAVE_DIR / "convergence"
MIN_CELLS_ACROSS_TRACE = 4
MIN_CELLS_ACROSS_PORT_GAP = 3  # common practice for a lumped port, no source


ifa_cases = load_fullwave_module("ifa_cases")
driver = load_fullwave_module("openems_ifa")
CASES = ifa_cases.load_cases()
CASE_IDS = [c["name"] for c in CASES]
VALIDATION = [c for c in CASES if c["role"] == "validation"]


def _result(name: str) -> dict:
    path = ifa_cases.result_path(name)
    assert path.exists(), f"no stored openEMS result {path}; run tests/fullwave/openems_ifa.py"
    with open(path, encoding="utf-8") as handle:
        return json.load(handle)


def _curve(result: dict) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    freqs = np.array(result["freq_hz"])
    s11 = np.array(result["s11_re"]) + 1j * np.array(result["s11_im"])
    zin = np.array(result["zin_re"]) + 1j * np.array(result["zin_im"])
    return freqs, s11, zin


def test_case_set_is_as_specified() -> None:
    """At least 6 single-band cases, >= 4 straight and >= 2 meandered; development and
    validation roles (plus the dual-band references, tests/test_fullwave_dualband.py), at least
    4 validation cases (held out) and at least 2 meandered among them."""
    roles = [c["role"] for c in CASES]
    assert {"development", "validation"} <= set(roles) <= {"development", "validation", "dualband"}
    assert roles.count("validation") >= 4
    assert sum(len(c["arm_path_mm"]) > 2 for c in VALIDATION) >= 2
    single = [c for c in CASES if c["role"] != "dualband"]
    n_meander = sum(len(c["arm_path_mm"]) > 2 for c in single)
    assert len(single) >= 6 and n_meander >= 2 and len(single) - n_meander >= 4
    assert len(set(CASE_IDS)) == len(CASE_IDS)


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
def test_stored_result_matches_case_inputs(case: dict) -> None:
    """A stored result records the inputs it was solved for; any edit of cases.json makes it stale."""
    result = _result(case["name"])
    assert result["case"] == case, "stored openEMS result is stale: rerun openems_ifa.py"
    assert result["source"].startswith("openEMS")
    ifa_cases.case_to_ifa(case)  # the case converts to the SI model


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
def test_stored_curve_is_self_consistent(case: dict) -> None:
    """Derived figures (f_res, Im Zin zero, -10 dB band) agree with the stored curves."""
    result = _result(case["name"])
    freqs, s11, zin = _curve(result)
    derived = result["derived"]
    f_lo, f_hi = ifa_cases.sweep_band_hz(case)
    assert freqs[0] == pytest.approx(f_lo) and freqs[-1] == pytest.approx(f_hi)
    assert np.all(np.diff(freqs) > 0)
    # passive one-port: |S11| <= 1 and Re(Zin) >= 0
    assert np.all(np.abs(s11) <= 1.0 + 1e-6)
    assert np.all(zin.real >= -1e-6)
    # S11 and Zin describe the same port (50 ohm reference)
    z_from_s = 50.0 * (1 + s11) / (1 - s11)
    np.testing.assert_allclose(z_from_s, zin, rtol=1e-6, atol=1e-6)
    s11_db = 20 * np.log10(np.abs(s11))
    i_min = int(np.argmin(s11_db))
    assert derived["f_res_hz"] == pytest.approx(freqs[i_min], rel=SELF_CONSISTENCY_REL_TOL)
    assert derived["s11_min_db"] == pytest.approx(s11_db[i_min], rel=SELF_CONSISTENCY_REL_TOL)
    # the resonance lies inside the sweep, not at its end
    assert 0 < i_min < freqs.size - 1
    f_zero = derived["f_im_zin_zero_hz"]
    if f_zero is not None:
        i = int(np.searchsorted(freqs, f_zero))
        assert np.sign(zin.imag[i - 1]) != np.sign(zin.imag[i])
    band = derived["band_10db_hz"]
    if s11_db[i_min] < -10.0:
        assert band is not None
        assert band["f_lo_hz"] < derived["f_res_hz"] < band["f_hi_hz"]
        inside = (freqs > band["f_lo_hz"]) & (freqs < band["f_hi_hz"])
        assert np.all(s11_db[inside] < -10.0)
        for edge in (band["f_lo_hz"], band["f_hi_hz"]):
            if freqs[0] < edge < freqs[-1]:
                assert np.interp(edge, freqs, s11_db) == pytest.approx(-10.0, abs=BAND_EDGE_DB_TOL)
    else:
        assert band is None


@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
def test_openems_copper_matches_centreline_model(case: dict) -> None:
    """The solved copper equals the case's centrelines widened by shapely (an independent build)."""
    from shapely.geometry import LineString, box
    from shapely.ops import unary_union

    ifa = ifa_cases.case_to_ifa(case)
    w, ws = ifa.trace_width_m, ifa.short_width_m
    arm = LineString(ifa.arm_path_m).buffer(0.5 * w, cap_style="flat", join_style="mitre")
    (x0, h), (x1, _) = ifa.arm_path_m[0], ifa.arm_path_m[1]
    back = -1.0 if x1 > x0 else 1.0
    cap_x = sorted((x0, x0 + back * max(0.5 * w, 0.5 * ws)))
    start_cap = box(cap_x[0], h - 0.5 * w, cap_x[1], h + 0.5 * w)
    short_leg = box(ifa.short_x_m - 0.5 * ws, 0.0, ifa.short_x_m + 0.5 * ws, h)
    y_feed = ifa_cases.arm_y_above_x_m(ifa, ifa.feed_x_m)
    parts = [arm, start_cap, short_leg]
    if ifa.second_arm_path_m:  # dual-band: the second arm off the feed leg, which runs up to it
        (sx0, sy0), (sx1, sy1) = ifa.second_arm_path_m[:2]
        back = (0.5 * w * np.sign(sx0 - sx1), 0.5 * w * np.sign(sy0 - sy1))  # reaches across the leg
        path = [(sx0 + back[0], sy0 + back[1])] + list(ifa.second_arm_path_m[1:])
        parts.append(LineString(path).buffer(0.5 * w, cap_style="flat", join_style="mitre"))
        y_feed = max(y_feed, ifa.second_arm_path_m[0][1])
    feed_leg = box(ifa.feed_x_m - 0.5 * w, ifa.port_gap_m, ifa.feed_x_m + 0.5 * w, y_feed)
    expected = unary_union(parts + [feed_leg])
    built = unary_union([box(*b) for b in driver.copper_boxes_m(ifa)])
    assert built.symmetric_difference(expected).area <= 1e-6 * expected.area
    # the antenna stays in the clearance, inside the laminate, off the ground plane
    bx0, by0, bx1, by1 = driver.board_extent_m(ifa, case["board_margin_mm"] * 1e-3)
    assert box(bx0, by0, bx1, by1).contains(built)
    assert built.bounds[1] == pytest.approx(0.0, abs=1e-12)


@pytest.mark.parametrize("level", sorted(driver.CELLS_PER_WIDTH))
@pytest.mark.parametrize("case", CASES, ids=CASE_IDS)
def test_openems_mesh_resolves_the_model(case: dict, level: str) -> None:
    """Mesh lines on every copper edge, >= 4 cells through the laminate, <= lambda/20 cells in air.

    Mesh rules: /work/shared/notes/openems-0.0.35.md (measured on this machine) and common
    FDTD practice (lambda/20 at the highest excited frequency, no source).
    """
    ifa = ifa_cases.case_to_ifa(case)
    mesh = driver.build_mesh(ifa, case, level)
    boxes = driver.copper_boxes_m(ifa)
    g = ifa.ground
    x_edges = [b[0] for b in boxes] + [b[2] for b in boxes] + [g.x_min_m, g.x_max_m]
    y_edges = [b[1] for b in boxes] + [b[3] for b in boxes] + [-g.length_m, ifa.port_gap_m]
    for axis, edges in (("x", x_edges), ("y", y_edges)):
        for edge in edges:
            assert np.min(np.abs(mesh[axis] - edge)) <= 1e-12, (axis, edge)
    t = ifa.laminate.thickness_m
    z = mesh["z"]
    assert np.min(np.abs(z)) <= 1e-12 and np.min(np.abs(z + t)) <= 1e-12
    assert np.count_nonzero((z > -t - 1e-12) & (z < 1e-12)) - 1 >= driver.MIN_LAMINATE_CELLS
    f_max = sum(driver.excitation_hz(case))  # design frequency x (1 + fc fraction), or a dual-band sweep's top
    lam_min = driver.C0_M_PER_S / f_max
    for axis in "xyz":
        assert np.max(np.diff(mesh[axis])) <= lam_min / 20 * (1 + 1e-9)
    # cells across the feed trace and across the port gap (the notes' w/4 mesh read 0.13 % off
    # a w/8 mesh, so 4 cells across a trace is the least we accept)
    w = ifa.trace_width_m
    x = mesh["x"]
    across = np.count_nonzero((x > ifa.feed_x_m - 0.5 * w - 1e-12) & (x < ifa.feed_x_m + 0.5 * w + 1e-12))
    assert across - 1 >= MIN_CELLS_ACROSS_TRACE
    y = mesh["y"]
    in_gap = np.count_nonzero((y > -1e-12) & (y < ifa.port_gap_m + 1e-12))
    assert in_gap - 1 >= MIN_CELLS_ACROSS_PORT_GAP


COARSE_RECORDS = sorted(CONVERGENCE_DIR.glob("*_coarse.json"))


def test_convergence_records_exist() -> None:
    assert COARSE_RECORDS, f"no coarse-mesh convergence records in {CONVERGENCE_DIR}"


#: Known misses, kept visible as strict xfails (they fail the run once they start passing, so the
#: marker must then be removed): measured values in the reasons.
KNOWN_UNCONVERGED = {
    "dev_meander_08_coarse": "coarse mesh 0.79 % from the stored fine result (limit 0.5 %): meanders need a finer reference mesh",
}


def _convergence_params():
    return [
        pytest.param(p, id=p.stem, marks=pytest.mark.xfail(strict=True, reason=KNOWN_UNCONVERGED[p.stem]))
        if p.stem in KNOWN_UNCONVERGED
        else pytest.param(p, id=p.stem)
        for p in COARSE_RECORDS
    ]


@pytest.mark.parametrize("path", _convergence_params())
def test_mesh_convergence_of_stored_result(path: Path) -> None:
    """A stored coarse-mesh solve agrees with the stored (finer) result of the same case inputs."""
    with open(path, encoding="utf-8") as handle:
        coarse = json.load(handle)
    name = coarse["case"]["name"]
    stored = _result(name)
    assert coarse["case"] == stored["case"], f"{path.name} is stale"
    assert coarse["metadata"]["cells"] < stored["metadata"]["cells"], "stored result is not finer"
    f_fine = stored["derived"]["f_res_hz"]
    f_coarse = coarse["derived"]["f_res_hz"]
    # source: openEMS 0.0.35 (Debian package, FDTD) on two meshes of the same model
    assert f_coarse == pytest.approx(f_fine, rel=MESH_CONVERGENCE_REL_TOL), (
        f"{name}: coarse {f_coarse / 1e6:.1f} MHz vs stored {f_fine / 1e6:.1f} MHz")
    band_f, band_c = stored["derived"]["band_10db_hz"], coarse["derived"]["band_10db_hz"]
    assert (band_f is None) == (band_c is None), name
    if band_f is not None:
        for key in ("f_lo_hz", "f_hi_hz"):
            assert band_c[key] == pytest.approx(band_f[key], rel=MESH_CONVERGENCE_BAND_REL_TOL)


def _validation_errors() -> list[tuple[str, float, float, float]]:
    """(case, predicted Hz, openEMS Hz, relative error) for every held-out validation case."""
    from footgen.physics.predict import resonance_hz

    rows = []
    for case in VALIDATION:
        result = _result(case["name"])
        ifa = ifa_cases.case_to_ifa(case)
        f_lo, f_hi = ifa_cases.sweep_band_hz(case)
        f_pred = resonance_hz(ifa, f_lo, f_hi)
        f_ref = result["derived"]["f_res_hz"]
        rows.append((case["name"], f_pred, f_ref, f_pred / f_ref - 1.0))
    return rows


def test_predicted_resonance_within_3_percent_of_openems(record_property) -> None:
    """footgen's resonance prediction vs openEMS full-wave, on the held-out validation cases."""
    rows = _validation_errors()
    worst = max(rows, key=lambda r: abs(r[3]))
    lines = [f"{n}: predicted {p / 1e6:.1f} MHz, openEMS {r / 1e6:.1f} MHz, error {e:+.2%}"
             for n, p, r, e in rows]
    print("\n".join(lines) + f"\nworst: {worst[0]} {worst[3]:+.2%}")
    record_property("worst_resonance_error", f"{worst[0]} {worst[3]:+.4f}")
    # source: openEMS 0.0.35 (Debian package, FDTD) stored results, f at min |S11|
    assert abs(worst[3]) <= RESONANCE_REL_TOL, "\n".join(lines)


@pytest.mark.slow
@pytest.mark.skipif(os.environ.get("FOOTGEN_SLOW") != "1", reason="set FOOTGEN_SLOW=1 (openEMS run)")
def test_coarse_rerun_reproduces_stored_result(tmp_path: Path) -> None:
    """Rerun one case with openEMS on the coarse mesh and compare with the stored result."""
    case = ifa_cases.case_by_name(SLOW_CASE)
    stored = _result(SLOW_CASE)
    driver.SIM_ROOT = tmp_path / "sim"
    rerun = driver.solve_case(case, "coarse")
    f_stored = stored["derived"]["f_res_hz"]
    f_rerun = rerun["derived"]["f_res_hz"]
    # source: openEMS 0.0.35 (Debian package, FDTD), same model on the coarse mesh
    assert f_rerun == pytest.approx(f_stored, rel=COARSE_RERUN_REL_TOL)
    assert rerun["case"] == stored["case"]


#: The board-edge model (footgen.physics.board_edge) must reproduce openEMS's resonance shift
#: between the same antenna on a laminate ending 2 mm and 15 mm beyond its copper within this
#: fraction of that shift (development pair; measured 1.54 % against openEMS 1.78 %).
BOARD_EDGE_SHIFT_REL_TOL = 0.25
BOARD_EDGE_PAIR = ("dev_straight_16", "dev_straight_16_wide")


def test_board_edge_shift_matches_openems() -> None:
    """Moving the board edge away from the arm lowers the resonance by what openEMS says."""
    from footgen.physics.predict import resonance_hz

    near, far = (ifa_cases.case_by_name(n) for n in BOARD_EDGE_PAIR)
    assert {k: v for k, v in near.items() if k not in ("name", "board_margin_mm")} == {
        k: v for k, v in far.items() if k not in ("name", "board_margin_mm")}
    ours = [resonance_hz(ifa_cases.case_to_ifa(c), *ifa_cases.sweep_band_hz(c)) for c in (near, far)]
    ref = [_result(c["name"])["derived"]["f_res_hz"] for c in (near, far)]
    shift_ours, shift_ref = ours[0] / ours[1] - 1.0, ref[0] / ref[1] - 1.0
    # source: openEMS 0.0.35 (Debian package, FDTD), the two stored development results
    assert shift_ref > 0.005  # the pair does measure a board-edge effect
    assert shift_ours == pytest.approx(shift_ref, rel=BOARD_EDGE_SHIFT_REL_TOL), (shift_ours, shift_ref)


#: The issue's goal (+-2 %) is tighter than its requirement (+-3 %, asserted above).
RESONANCE_GOAL_REL_TOL = 0.02


@pytest.mark.xfail(strict=True, reason="known miss of the +-2 % goal: worst -2.40 % (val_straight_a), +2.29 % (val_meander_a)")
def test_predicted_resonance_within_the_2_percent_goal() -> None:
    rows = _validation_errors()
    # source: openEMS 0.0.35 (Debian package, FDTD) stored results, f at min |S11|
    assert max(abs(r[3]) for r in rows) <= RESONANCE_GOAL_REL_TOL, rows


#: Our own MoM model's discretisation: the default mesh against a much finer one (lambda/30 grid,
#: w/4 edge rows, lambda/80 segments, no grading away from the antenna), f at min |S11| on the
#: development cases (measured 0.01 %, 0.03 %, 0.35 %).  A self-consistency check, not outside truth.
MOM_MESH_CONVERGENCE_REL_TOL = 0.005
FINE_MOM_MESH = {"grid_pitch_per_wavelength": 30.0, "grid_segments_per_wavelength": 30.0,
                 "edge_row_trace_widths": 0.25, "segments_per_wavelength": 80.0, "detail_segments": 8.0,
                 "grid_far_pitch_per_wavelength": None}


#: Known misses of the MoM self-convergence, kept visible as strict xfails (measured values).
KNOWN_MOM_UNCONVERGED = {
    "dev_meander_run_a": "default mesh 0.55 % above the fine one (limit 0.5 %): the ground grid and its edge rows "
                         "under the legs (fine grid alone -0.36 %, quarter-width edge rows alone -0.27 %)",
    "dev_meander_run_b": "default mesh 0.93 % above the fine one (limit 0.5 %): the same ground-grid refinement under "
                         "four legs 0.5 mm apart on a 0.8 mm laminate",
}


def _mom_convergence_params():
    return [
        pytest.param(c, id=c["name"], marks=pytest.mark.xfail(strict=True, reason=KNOWN_MOM_UNCONVERGED[c["name"]]))
        if c["name"] in KNOWN_MOM_UNCONVERGED
        else pytest.param(c, id=c["name"])
        for c in CASES if c["role"] == "development"
    ]


@pytest.mark.parametrize("case", _mom_convergence_params())
def test_our_mom_mesh_is_converged(case: dict) -> None:
    from footgen.physics.predict import resonance_hz
    from footgen.physics.wires import MeshControl

    ifa = ifa_cases.case_to_ifa(case)
    f_lo, f_hi = ifa_cases.sweep_band_hz(case)
    fine = resonance_hz(ifa, f_lo, f_hi, control=MeshControl(f_max_hz=f_hi, **FINE_MOM_MESH))
    assert resonance_hz(ifa, f_lo, f_hi) == pytest.approx(fine, rel=MOM_MESH_CONVERGENCE_REL_TOL)


# --- the enclosure wall (PrintedIfa.cover) ---------------------------------------------------------

#: Cases with an enclosure wall over the copper (``cover``), each paired with its twin: the case
#: with the same board and no wall.
COVERED = [c for c in CASES if "cover" in c]


def _uncovered_twin(case: dict) -> dict:
    strip = {k: v for k, v in case.items() if k not in ("name", "role", "cover")}
    twins = [c for c in CASES if "cover" not in c and {k: v for k, v in c.items() if k not in ("name", "role")} == strip]
    assert len(twins) == 1, f"{case['name']}: no single uncovered twin in cases.json"
    return twins[0]


#: Our wall's resonance shift must be openEMS's within this fraction of openEMS's shift (the
#: board-edge test's tolerance); the covered resonance must meet the +-3 % requirement
#: (RESONANCE_REL_TOL) and is held to the +-2 % goal (RESONANCE_GOAL_REL_TOL) by a strict xfail.
COVER_SHIFT_REL_TOL = 0.25
#: A pair whose openEMS shift is smaller than this measures no wall at all.
COVER_MIN_SHIFT = 0.005


def _cover_rows() -> list[tuple[str, float, float, float, float]]:
    """(case, ours bare Hz, ours covered Hz, openEMS bare Hz, openEMS covered Hz) per covered case."""
    from footgen.physics.predict import resonance_hz

    rows = []
    for case in COVERED:
        twin = _uncovered_twin(case)
        band = ifa_cases.sweep_band_hz(case)
        ours = [resonance_hz(ifa_cases.case_to_ifa(c), *band) for c in (twin, case)]
        ref = [_result(c["name"])["derived"]["f_res_hz"] for c in (twin, case)]
        rows.append((case["name"], *ours, *ref))
    return rows


def test_cover_cases_are_pairs() -> None:
    assert COVERED, "no case with an enclosure wall"
    for case in COVERED:
        assert _uncovered_twin(case)["role"] in ("development", "validation")


@pytest.mark.parametrize("case", COVERED, ids=[c["name"] for c in COVERED])
def test_openems_mesh_resolves_the_cover(case: dict) -> None:
    """Mesh lines on both faces of the wall and >= MIN_LAMINATE_CELLS cells through it."""
    eps_c, z_lo, z_hi = driver.cover_extent_m(case)
    assert eps_c == case["cover"]["eps_r"]
    for level in sorted(driver.CELLS_PER_WIDTH):
        z = driver.build_mesh(ifa_cases.case_to_ifa(case), case, level)["z"]
        assert np.min(np.abs(z - z_lo)) <= 1e-12 and np.min(np.abs(z - z_hi)) <= 1e-12
        assert np.count_nonzero((z > z_lo - 1e-12) & (z < z_hi + 1e-12)) - 1 >= driver.MIN_LAMINATE_CELLS


def test_cover_shift_matches_openems(record_property) -> None:
    """The enclosure wall lowers the resonance by what openEMS says, and the covered resonance
    meets the +-3 % requirement."""
    rows = _cover_rows()
    lines, worst_shift, worst_res = [], (None, 0.0), (None, 0.0)
    for name, ob, oc, rb, rc in rows:
        s_ours, s_ref = oc / ob - 1.0, rc / rb - 1.0
        shift_err, res_err = s_ours / s_ref - 1.0, oc / rc - 1.0
        lines.append(f"{name}: openEMS {rb / 1e6:.1f} -> {rc / 1e6:.1f} MHz ({s_ref:+.2%}), ours "
                     f"{ob / 1e6:.1f} -> {oc / 1e6:.1f} MHz ({s_ours:+.2%}); shift off by {shift_err:+.1%} "
                     f"of openEMS's, covered resonance {res_err:+.2%}")
        worst_shift = max(worst_shift, (name, shift_err), key=lambda r: abs(r[1]))
        worst_res = max(worst_res, (name, res_err), key=lambda r: abs(r[1]))
    print("\n".join(lines) + f"\nworst shift error: {worst_shift[0]} {worst_shift[1]:+.1%}; "
          f"worst covered resonance: {worst_res[0]} {worst_res[1]:+.2%}")
    record_property("worst_cover_shift_error", f"{worst_shift[0]} {worst_shift[1]:+.4f}")
    record_property("worst_cover_resonance_error", f"{worst_res[0]} {worst_res[1]:+.4f}")
    for name, ob, oc, rb, rc in rows:
        # source: openEMS 0.0.35 (Debian package, FDTD), stored results of each case and its twin
        assert rc / rb - 1.0 < -COVER_MIN_SHIFT, f"{name}: openEMS sees no wall"
        assert oc / ob - 1.0 == pytest.approx(rc / rb - 1.0, rel=COVER_SHIFT_REL_TOL), "\n".join(lines)
        assert oc == pytest.approx(rc, rel=RESONANCE_REL_TOL), "\n".join(lines)


@pytest.mark.xfail(strict=True, reason="val_straight_a_cover -2.24 % (its bare twin val_straight_a reads -2.40 %: "
                   "the wall's shift itself is within 6 % of openEMS's)")
def test_covered_resonance_within_the_2_percent_goal() -> None:
    rows = _cover_rows()
    # source: openEMS 0.0.35 (Debian package, FDTD) stored results, f at min |S11|
    assert max(abs(oc / rc - 1.0) for _, _, oc, _, rc in rows) <= RESONANCE_GOAL_REL_TOL, rows


def test_openems_wall_lowers_the_resonance_more_when_closer() -> None:
    """Known physics (quasi-static effective permittivity, from memory) seen in openEMS itself:
    the same wall nearer the copper lowers the resonance more."""
    same_wall = {}
    for case in COVERED:
        wall = case["cover"]
        same_wall.setdefault((_uncovered_twin(case)["name"], wall["eps_r"], wall["thickness_mm"]), []).append(case)
    pairs = [sorted(cs, key=lambda c: c["cover"]["distance_mm"]) for cs in same_wall.values() if len(cs) > 1]
    assert pairs, "no two cases with the same wall at two distances"
    for near, *_, far in pairs:
        # source: openEMS 0.0.35 (Debian package, FDTD)
        assert _result(near["name"])["derived"]["f_res_hz"] < _result(far["name"])["derived"]["f_res_hz"]
