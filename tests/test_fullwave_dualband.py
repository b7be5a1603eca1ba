"""Dual-band IFAs: our MoM (both arms and their coupling in one wire model) against openEMS.

Outside truth: openEMS (Debian package ``openems``, FDTD), solved by
``tests/fullwave/openems_ifa.py`` and stored in ``tests/fullwave/results/<case>.json`` for the
``role: dualband`` cases of ``tests/fullwave/cases.json`` (boards of our own design).  Each band
is read in its own window (``bands_mhz``): the resonance (min |S11|), the -10 dB band around it
and Zin there.

openEMS models the laminate's loss as a conductivity fixed at ``f_design_mhz`` (the lower band),
so its loss tangent falls as 1/f: at a band centred on f it is ``tan d x f_design / f``.  Our
model takes a loss tangent per solve, so each band is solved with that band's equivalent one.
"""

from __future__ import annotations

import dataclasses
import json

import numpy as np
import pytest
from conftest import load_fullwave_module

ifa_cases = load_fullwave_module("ifa_cases")
CASES = [c for c in ifa_cases.load_cases() if c["role"] == "dualband"]
CASE_IDS = [c["name"] for c in CASES]

#: Resonance of each band against openEMS (the issue's goal, +-2 %).
RESONANCE_REL_TOL = 0.02
#: -10 dB bandwidth of each band against openEMS (the issue's bound, 15 %).
BANDWIDTH_REL_TOL = 0.15
#: Sweep of our model in each band's window (points).
WINDOW_POINTS = 201
#: At least two dual-band boards (the issue).
MIN_CASES = 2


def _result(name: str) -> dict:
    path = ifa_cases.result_path(name)
    assert path.exists(), f"no stored openEMS result {path}; run tests/fullwave/openems_ifa.py --case {name}"
    with open(path, encoding="utf-8") as handle:
        return json.load(handle)


def _band_figures(freqs: np.ndarray, zin: np.ndarray) -> dict:
    from footgen.physics.predict import bandwidth_10db, min_s11_frequency_hz, s11_from_zin

    s11 = s11_from_zin(zin)
    db = 20 * np.log10(np.abs(s11))
    i = int(np.argmin(db))
    band = bandwidth_10db(freqs, s11)
    # the minimum between grid points (a parabola through the three lowest samples in dB), the
    # same reading for both solvers
    return {"f_res_hz": min_s11_frequency_hz(freqs, s11), "s11_min_db": float(db[i]), "zin": complex(zin[i]),
            "bandwidth_hz": None if band is None else band[1] - band[0], "band": band, "at_edge": i in (0, freqs.size - 1)}


def _ours(case: dict) -> list[dict]:
    """Our MoM's figures of each band (one wire model meshed for the top of the sweep)."""
    from footgen.physics.mom import MomSolver
    from footgen.physics.wires import ifa_wire_model

    ifa = ifa_cases.case_to_ifa(case)
    f_top = ifa_cases.sweep_band_hz(case)[1]
    out = []
    for lo, hi in ifa_cases.band_windows_hz(case):
        f_centre = 0.5 * (lo + hi)
        lam = dataclasses.replace(ifa.laminate, loss_tangent=ifa.laminate.loss_tangent * case["f_design_mhz"] * 1e6 / f_centre)
        solver = MomSolver(ifa_wire_model(dataclasses.replace(ifa, laminate=lam), f_top))
        freqs = np.linspace(lo, hi, WINDOW_POINTS)
        out.append(_band_figures(freqs, solver.sweep_interpolated(freqs)))
    return out


def _openems(case: dict) -> list[dict]:
    result = _result(case["name"])
    freqs = np.array(result["freq_hz"])
    zin = np.array(result["zin_re"]) + 1j * np.array(result["zin_im"])
    out = []
    for lo, hi in ifa_cases.band_windows_hz(case):
        keep = (freqs >= lo) & (freqs <= hi)
        out.append(_band_figures(freqs[keep], zin[keep]))
    return out


@pytest.fixture(scope="module")
def table() -> list[tuple[str, int, dict, dict]]:
    return [(case["name"], k, ours, ref) for case in CASES for k, (ours, ref) in enumerate(zip(_ours(case), _openems(case)))]


def test_at_least_two_dual_band_boards_with_stored_results() -> None:
    assert len(CASES) >= MIN_CASES
    for case in CASES:
        assert case["second_arm_path_mm"] and len(case["bands_mhz"]) == 2
        assert _result(case["name"])["case"] == case, "stored openEMS result is stale: rerun openems_ifa.py"


def test_stored_per_band_figures_match_the_curve() -> None:
    """The per-band figures stored with each result are those of its curve (window by window)."""
    for case in CASES:
        stored = _result(case["name"])["derived"]["bands"]
        for fig, again in zip(stored, _openems(case)):
            assert fig["f_res_hz"] == pytest.approx(again["f_res_hz"], abs=np.diff(_result(case["name"])["freq_hz"][:2])[0])


def _lines(table) -> list[str]:
    out = ["case band | resonance ours / openEMS (error) | -10 dB bandwidth ours / openEMS (error) | Zin at min ours / openEMS"]
    for name, k, ours, ref in table:
        bw = (f"{ours['bandwidth_hz'] / 1e6:.1f} / {ref['bandwidth_hz'] / 1e6:.1f} MHz "
              f"({ours['bandwidth_hz'] / ref['bandwidth_hz'] - 1:+.1%})" if ours["bandwidth_hz"] and ref["bandwidth_hz"] else
              f"{ours['bandwidth_hz']} / {ref['bandwidth_hz']}")
        out.append(f"{name} {k + 1} | {ours['f_res_hz'] / 1e6:.1f} / {ref['f_res_hz'] / 1e6:.1f} MHz "
                   f"({ours['f_res_hz'] / ref['f_res_hz'] - 1:+.2%}) | {bw} | "
                   f"{ours['zin'].real:.1f}{ours['zin'].imag:+.1f}j / {ref['zin'].real:.1f}{ref['zin'].imag:+.1f}j ohm")
    return out


#: Known misses, kept visible as strict xfails (they fail the run once they pass, so the marker
#: must then go): measured values in the reasons.  The lower band reads 2.5-2.8 % low with a
#: resistance at the minimum 18-21 ohm high on both boards, while the upper band is within
#: 1 % and 1.4-5 ohm; the same MoM puts single-band straight arms 1-2 % low with their
#: resistance within 4 ohm (tests/test_fullwave_reference.py), so the second arm's loading of
#: the main arm's mode is what the thin-wire model misses.
KNOWN_MISS_RESONANCE = ("lower band 2.5-2.8 % low: dual_under_a band 1 -2.82 %, dual_under_b band 1 -2.48 %; "
                        "upper bands -0.17 % and -0.98 %")
KNOWN_MISS_BANDWIDTH = ("dual_under_b band 1 -54.1 % (ours reaches only -10.5 dB, openEMS -15.2 dB), "
                        "dual_under_b band 2 +18.7 %, dual_under_a band 1 +18.1 %")
KNOWN_MISS_ZIN = "dual_under_a band 1: 67.8+5.6j against 46.6-0.6j ohm, |Gamma| apart by 0.192"


@pytest.mark.xfail(strict=True, reason=KNOWN_MISS_RESONANCE)
def test_each_band_resonance_within_2_percent_of_openems(table, record_property) -> None:
    """Each band's resonance (min |S11|) against openEMS; the table and the worst case are printed."""
    errors = [(name, k, ours["f_res_hz"] / ref["f_res_hz"] - 1.0) for name, k, ours, ref in table]
    worst = max(errors, key=lambda e: abs(e[2]))
    text = "\n".join(_lines(table)) + f"\nworst resonance error: {worst[0]} band {worst[1] + 1} {worst[2]:+.2%}"
    print(text)
    record_property("worst_dualband_resonance_error", f"{worst[0]} band {worst[1] + 1} {worst[2]:+.4f}")
    for name, k, ours, ref in table:
        assert not ref["at_edge"], f"{name} band {k + 1}: openEMS's minimum lies at the window edge"
    # source: openEMS (Debian package, FDTD), stored results of the dual-band cases
    assert abs(worst[2]) <= RESONANCE_REL_TOL, text


@pytest.mark.xfail(strict=True, reason=KNOWN_MISS_BANDWIDTH)
def test_each_band_bandwidth_within_15_percent_of_openems(table, record_property) -> None:
    """Each band's -10 dB bandwidth against openEMS; a band that never reaches -10 dB must do so
    in both solvers (then there is no bandwidth to compare)."""
    errors = []
    for name, k, ours, ref in table:
        assert (ours["bandwidth_hz"] is None) == (ref["bandwidth_hz"] is None), (
            f"{name} band {k + 1}: -10 dB band ours {ours['band']}, openEMS {ref['band']}")
        if ref["bandwidth_hz"] is not None:
            errors.append((name, k, ours["bandwidth_hz"] / ref["bandwidth_hz"] - 1.0))
    assert errors, "no band reaches -10 dB in both solvers"
    worst = max(errors, key=lambda e: abs(e[2]))
    text = "\n".join(_lines(table)) + f"\nworst bandwidth error: {worst[0]} band {worst[1] + 1} {worst[2]:+.1%}"
    print(text)
    record_property("worst_dualband_bandwidth_error", f"{worst[0]} band {worst[1] + 1} {worst[2]:+.4f}")
    # source: openEMS (Debian package, FDTD), stored results of the dual-band cases
    assert abs(worst[2]) <= BANDWIDTH_REL_TOL, text


#: Input impedance at each band's S11 minimum, compared as reflection coefficients (50 ohm):
#: |Gamma_ours - Gamma_openEMS| at most this (0.1 is about 1 dB of return loss near -10 dB;
#: common practice, no source).
ZIN_GAMMA_TOL = 0.1


@pytest.mark.xfail(strict=True, reason=KNOWN_MISS_ZIN)
def test_each_band_zin_at_the_minimum_matches_openems(table, record_property) -> None:
    def gamma(z: complex) -> complex:
        return (z - 50.0) / (z + 50.0)

    errors = [(name, k, abs(gamma(ours["zin"]) - gamma(ref["zin"]))) for name, k, ours, ref in table]
    worst = max(errors, key=lambda e: e[2])
    text = "\n".join(_lines(table)) + f"\nworst |Gamma| difference at the minimum: {worst[0]} band {worst[1] + 1} {worst[2]:.3f}"
    print(text)
    record_property("worst_dualband_gamma_difference", f"{worst[0]} band {worst[1] + 1} {worst[2]:.4f}")
    # source: openEMS (Debian package, FDTD), stored results of the dual-band cases
    assert worst[2] <= ZIN_GAMMA_TOL, text


#: The upper band (the second arm's) against openEMS: what the model does reach (measured
#: -0.17 % and -0.98 %, Zin within 5 ohm), asserted at the issue's +-2 % so a regression shows.
def test_upper_band_resonance_within_2_percent_of_openems(table) -> None:
    upper = [(name, ours["f_res_hz"] / ref["f_res_hz"] - 1.0) for name, k, ours, ref in table if k == 1]
    assert len(upper) >= MIN_CASES
    # source: openEMS (Debian package, FDTD), stored results of the dual-band cases
    assert all(abs(e) <= RESONANCE_REL_TOL for _, e in upper), upper


#: The lower band's resonance against openEMS within the +-3 % the single-band references are
#: held to (tests/test_fullwave_reference.py RESONANCE_REL_TOL): measured -2.82 % and -2.48 %.
LOWER_BAND_REL_TOL = 0.03


def test_lower_band_resonance_within_the_single_band_requirement(table) -> None:
    lower = [(name, ours["f_res_hz"] / ref["f_res_hz"] - 1.0) for name, k, ours, ref in table if k == 0]
    assert len(lower) >= MIN_CASES
    # source: openEMS (Debian package, FDTD), stored results of the dual-band cases
    assert all(abs(e) <= LOWER_BAND_REL_TOL for _, e in lower), lower
