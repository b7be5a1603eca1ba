"""Radiation efficiency and peak gain of printed IFAs: our MoM currents against openEMS's
near-to-far-field transform.

Outside truth: openEMS (Debian package ``openems`` 0.0.35+git20190103, FDTD), solved by
``tests/fullwave/openems_ifa.py --radiation-mhz ...`` (copper as conducting sheets of annealed
copper, laminate loss as conductivity) and stored in ``tests/fullwave/radiation_results/``.
openEMS's figures are its own: radiated power ``Prad`` and ``Dmax`` from its NF2FF transform,
accepted power from its lumped port; efficiency ``Prad / P_acc`` and peak gain ``Dmax * Prad /
P_acc`` (IEEE gain, no mismatch).  Both codes are compared at the same frequency: the stored
frequency nearest openEMS's own resonance.
"""

from __future__ import annotations

import json
import math
import os
from pathlib import Path

import pytest
from conftest import load_fullwave_module

FULLWAVE_DIR = Path(__file__).resolve().parent / "fullwave"
RADIATION_DIR = FULLWAVE_DIR / "radiation_results"
# task requirements (issue 17)
EFFICIENCY_REL_TOL = 0.10
PEAK_GAIN_DB_TOL = 1.0
CASES = ("dev_straight_16", "val_meander_a")  # one straight, one meandered board
# openEMS's reported Prad against its own far field integrated over the sphere (our quadrature
# of its E_theta, E_phi): a self-consistency limit for the reference, common practice, no source
OPENEMS_SELF_CONSISTENCY_REL_TOL = 0.02
RERUN_EFFICIENCY_REL_TOL = 0.01
RERUN_GAIN_DB_TOL = 0.1


ifa_cases = load_fullwave_module("ifa_cases")


def _stored(name: str) -> dict:
    path = RADIATION_DIR / f"{name}.json"
    assert path.exists(), f"no stored openEMS radiation result {path}; run tests/fullwave/openems_ifa.py"
    return json.loads(path.read_text("utf-8"))


def _openems_at_resonance(record: dict) -> dict:
    f_res = record["derived"]["f_res_hz"]
    return min(record["radiation"]["frequencies"], key=lambda r: abs(r["freq_hz"] - f_res))


def _openems_figures(row: dict) -> tuple[float, float]:
    """openEMS's radiation efficiency and peak IEEE gain (dBi) from its own Prad and Dmax."""
    eff = row["p_rad_openems_w"] / row["p_acc_w"]
    return eff, 10.0 * math.log10(row["directivity_max_openems"] * eff)


def _ours(case: dict, freq_hz: float) -> tuple[float, float]:
    from footgen.radiation import mom_summary

    ifa = ifa_cases.case_to_ifa(case)
    summary = mom_summary(ifa, freq_hz, ifa_cases.sweep_band_hz(case)[1])
    gain_dbi = summary.peak_directivity_dbi + 10.0 * math.log10(summary.radiation_efficiency)
    return summary.radiation_efficiency, gain_dbi


def test_stored_radiation_runs_are_the_cases_and_boards_asked_for() -> None:
    meanders = 0
    for name in CASES:
        record = _stored(name)
        assert record["case"] == ifa_cases.case_by_name(name)
        assert "conducting sheets" in record["settings"]["copper"]
        assert record["settings"]["laminate_kappa_s_per_m"] > 0.0
        meanders += len(record["case"]["arm_path_mm"]) > 2
    assert meanders >= 1


@pytest.mark.parametrize("name", CASES)
def test_radiation_efficiency_and_peak_gain_match_openems(name: str) -> None:
    record = _stored(name)
    row = _openems_at_resonance(record)
    eff_ref, gain_ref = _openems_figures(row)
    eff, gain = _ours(record["case"], row["freq_hz"])
    msg = (f"{name} at {row['freq_hz'] / 1e6:.1f} MHz: efficiency ours {eff:.3f} openEMS {eff_ref:.3f}, "
           f"peak gain ours {gain:.2f} dBi openEMS {gain_ref:.2f} dBi")
    print(msg)
    # source: openEMS 0.0.35 (Debian package, FDTD) NF2FF, stored result
    assert abs(eff / eff_ref - 1.0) <= EFFICIENCY_REL_TOL, msg
    assert abs(gain - gain_ref) <= PEAK_GAIN_DB_TOL, msg


# measured: openEMS's far field integrated over the sphere exceeds its Prad (the Poynting flux
# through the near-field box, checked against our own integral of the stored box fields) by
# 7.0-7.3 % on dev_straight_16 and 3.1-3.5 % on val_meander_a (coarse mesh, -40 dB end)
OPENEMS_INCONSISTENCY = {"dev_straight_16": "7.0-7.3 %", "val_meander_a": "3.1-3.5 %"}


@pytest.mark.parametrize("name", [
    pytest.param(n, marks=pytest.mark.xfail(strict=True, reason=(
        f"openEMS's sphere-integrated far field exceeds its box Poynting flux by {OPENEMS_INCONSISTENCY[n]}")))
    for n in CASES])
def test_openems_far_field_power_matches_its_reported_prad(name: str) -> None:
    """The reference's own consistency: its far field integrated over the sphere against its Prad."""
    for row in _stored(name)["radiation"]["frequencies"]:
        # source: openEMS 0.0.35 NF2FF output (E fields and Prad of the same transform)
        assert row["p_rad_w"] == pytest.approx(row["p_rad_openems_w"], rel=OPENEMS_SELF_CONSISTENCY_REL_TOL, abs=0.0), row["freq_hz"]


# the laminate-loss control: the straight board solved again with loss tangent 0 (same mesh)
LOSSLESS_CONTROL = ("dev_straight_16", "dev_straight_16_lossless")


def _ours_efficiency(case: dict, freq_hz: float) -> float:
    from footgen.radiation import mom_summary

    ifa = ifa_cases.case_to_ifa(case)
    return mom_summary(ifa, freq_hz, ifa_cases.sweep_band_hz(case)[1]).radiation_efficiency


def test_laminate_loss_matches_openems_against_its_lossless_control() -> None:
    """Efficiency of the lossy board over that of the same board with a lossless laminate, in
    both codes: the laminate's share of the loss, free of openEMS's port/box power calibration."""
    lossy, lossless = (_stored(n) for n in LOSSLESS_CONTROL)
    assert lossless["case"]["laminate"]["loss_tangent"] == 0.0
    assert {k: v for k, v in lossless["case"].items() if k != "laminate"} == {
        k: v for k, v in lossy["case"].items() if k != "laminate"}
    assert {**lossless["case"]["laminate"], "loss_tangent": None} == {**lossy["case"]["laminate"], "loss_tangent": None}
    by_f = {r["freq_hz"]: r for r in lossy["radiation"]["frequencies"]}
    for row in lossless["radiation"]["frequencies"]:
        ref = _openems_figures(by_f[row["freq_hz"]])[0] / _openems_figures(row)[0]
        ours = _ours_efficiency(lossy["case"], row["freq_hz"]) / _ours_efficiency(lossless["case"], row["freq_hz"])
        msg = f"{row['freq_hz'] / 1e6:.0f} MHz: lossy / lossless efficiency ours {ours:.4f}, openEMS {ref:.4f}"
        print(msg)
        # source: openEMS 0.0.35 (Debian package, FDTD) NF2FF, stored lossy and lossless runs
        assert abs(ours / ref - 1.0) <= EFFICIENCY_REL_TOL, msg


@pytest.mark.xfail(strict=True, reason=(
    "openEMS's Prad / P_acc of the lossless-laminate board is 1.056-1.060 (coarse mesh): its box "
    "Poynting flux and its lumped-port power disagree by about 6 %, so its absolute efficiencies "
    "read about 6 % high"))
def test_openems_lossless_board_radiates_no_more_than_it_accepts() -> None:
    for row in _stored(LOSSLESS_CONTROL[1])["radiation"]["frequencies"]:
        # source: openEMS 0.0.35 NF2FF and lumped port of the same run (energy conservation)
        assert _openems_figures(row)[0] <= 1.0, row["freq_hz"]


@pytest.mark.slow
@pytest.mark.skipif(os.environ.get("FOOTGEN_SLOW") != "1", reason="set FOOTGEN_SLOW=1 (openEMS run)")
def test_radiation_rerun_reproduces_stored_result(tmp_path: Path) -> None:
    """Rerun the straight board with the stored settings and compare the radiation figures."""
    driver = load_fullwave_module("openems_ifa")
    stored = _stored(CASES[0])
    driver.SIM_ROOT = tmp_path / "sim"
    driver.END_CRITERION = stored["settings"]["end_criterion"]
    freqs = [r["freq_hz"] for r in stored["radiation"]["frequencies"]]
    rerun = driver.solve_case(stored["case"], stored["mesh_level"], radiation_freqs_hz=freqs)
    for old, new in zip(stored["radiation"]["frequencies"], rerun["radiation"]["frequencies"]):
        eff_old, gain_old = _openems_figures(old)
        eff_new, gain_new = _openems_figures(new)
        # source: openEMS 0.0.35 (Debian package, FDTD), same model and mesh
        assert eff_new == pytest.approx(eff_old, rel=RERUN_EFFICIENCY_REL_TOL)
        assert abs(gain_new - gain_old) <= RERUN_GAIN_DB_TOL
