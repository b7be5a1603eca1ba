"""Meanders whose legs start far from the feed (a long straight run first) against openEMS.

Outside truth: openEMS (Debian package ``openems`` 0.0.35+git20190103, FDTD), solved by
``tests/fullwave/openems_ifa.py`` and stored in ``tests/fullwave/results/<case>.json`` (the
cases ``dev_meander_run_*`` of ``tests/fullwave/cases.json``, boards of our own design).
Compared: the resonance (frequency of minimum |S11|), the -10 dB bandwidth, and the input
impedance at the S11 minimum, each case printed with ours beside openEMS's and the worst case named.
"""

from __future__ import annotations

import json
import math
from functools import lru_cache

import numpy as np
import pytest
from conftest import load_fullwave_module

ifa_cases = load_fullwave_module("ifa_cases")
LONG_RUN = [c for c in ifa_cases.load_cases() if c["name"].startswith("dev_meander_run")]
IDS = [c["name"] for c in LONG_RUN]

#: Issue 12's requirements for these boards: resonance within +-2 % of openEMS, -10 dB
#: bandwidth within 15 %.
RESONANCE_REL_TOL = 0.02
BANDWIDTH_REL_TOL = 0.15
#: Input impedance at the S11 minimum: the two reflection coefficients (50 ohm) at most this far
#: apart (0.1 is the distance between a -20 dB and a -14 dB match in phase; common practice, no source).
GAMMA_DISTANCE_TOL = 0.1
#: "Long straight run": the first leg stands at least this many trace widths past the feed leg
#: (the default meander starts one pitch, two trace widths, past it).
MIN_RUN_PAST_FEED_WIDTHS = 8.0
#: Our sweep: points over the stored sweep band (the resonance is refined by a parabola).
SWEEP_POINTS = 241
Z0_OHM = 50.0


#: Known misses, kept visible as strict xfails (they fail the run once they pass, so the marker
#: must then go): (check, case) -> the measured values.  Diagnosis in DEVELOPERS.md ("Meanders
#: with a long straight run"): our model's Q at the S11 minimum is 10-31 % below openEMS's, on
#: board b from the default ground grid's discretisation.
KNOWN_MISSES = {
    ("resonance", "dev_meander_run_a"): "ours 2445.3 MHz vs openEMS 2344.7 MHz (+4.29 %); Q at the minimum 3.83 vs 4.24",
    ("bandwidth", "dev_meander_run_b"): "ours 226.8 MHz vs openEMS 189.6 MHz (+19.6 %); Q at the minimum 6.10 vs 8.85: "
                                        "the default ground grid (a lambda/30 grid with quarter-width edge rows: -7.0 %)",
    ("zin", "dev_meander_run_b"): "ours 57.1+6.9j vs openEMS 45.6-3.8j ohm, |dGamma| = 0.153",
}


def _cases(check: str) -> list:
    return [
        pytest.param(n, id=n, marks=pytest.mark.xfail(strict=True, reason=KNOWN_MISSES[(check, n)]))
        if (check, n) in KNOWN_MISSES else pytest.param(n, id=n)
        for n in IDS
    ]


def _gamma(z: complex) -> complex:
    return (z - Z0_OHM) / (z + Z0_OHM)


def _q_at(freqs: np.ndarray, zin: np.ndarray, i: int) -> float:
    """Q of a one-port at sample ``i`` from its impedance curve, omega |Z'| / (2 R) (Yaghjian and
    Best, IEEE Trans. Antennas Propag. 53(4), 2005, eq. 84; from memory): it separates the
    radiation resistance (R) from the reactance slope (|Z'|)."""
    omega = 2 * np.pi * freqs
    dz = np.gradient(zin, omega)
    return float(omega[i] * abs(dz[i]) / (2 * zin[i].real))


@lru_cache(maxsize=None)
def _row(name: str) -> dict:
    """Ours and openEMS's resonance, -10 dB band and Zin at the S11 minimum for one case."""
    from footgen.physics.predict import bandwidth_10db, min_s11_frequency_hz, s11_from_zin, zin_ohm

    case = ifa_cases.case_by_name(name)
    with open(ifa_cases.result_path(name), encoding="utf-8") as handle:
        result = json.load(handle)
    derived = result["derived"]
    band = derived["band_10db_hz"]
    ifa = ifa_cases.case_to_ifa(case)
    freqs = np.linspace(*ifa_cases.sweep_band_hz(case), SWEEP_POINTS)
    zin = zin_ohm(ifa, freqs)
    s11 = s11_from_zin(zin)
    ours_band = bandwidth_10db(freqs, s11)
    i_min = int(np.argmin(np.abs(s11)))
    f_ref = np.array(result["freq_hz"])
    z_ref = np.array(result["zin_re"]) + 1j * np.array(result["zin_im"])
    return {
        "q_ours": _q_at(freqs, zin, i_min),
        "q_ref": _q_at(f_ref, z_ref, int(np.argmin(np.abs(f_ref - derived["f_res_hz"])))),
        "name": name,
        "mesh": result["mesh_level"],
        "f_ours": min_s11_frequency_hz(freqs, s11),
        "f_ref": derived["f_res_hz"],
        "bw_ours": None if ours_band is None else ours_band[1] - ours_band[0],
        "bw_ref": None if band is None else band["f_hi_hz"] - band["f_lo_hz"],
        "z_ours": complex(zin[i_min]),
        "z_ref": complex(*derived["zin_at_f_res_ohm"]),
    }


def _line(r: dict) -> str:
    return (f"{r['name']} ({r['mesh']} openEMS mesh): resonance {r['f_ours'] / 1e6:.1f} vs {r['f_ref'] / 1e6:.1f} MHz "
            f"({r['f_ours'] / r['f_ref'] - 1:+.2%}); -10 dB bandwidth {r['bw_ours'] / 1e6:.1f} vs {r['bw_ref'] / 1e6:.1f} MHz "
            f"({r['bw_ours'] / r['bw_ref'] - 1:+.1%}); Zin at the minimum {r['z_ours'].real:.1f}{r['z_ours'].imag:+.1f}j vs "
            f"{r['z_ref'].real:.1f}{r['z_ref'].imag:+.1f}j ohm; Q there {r['q_ours']:.2f} vs {r['q_ref']:.2f}")


def test_long_run_cases_have_their_legs_far_from_the_feed() -> None:
    """At least two such boards, each meandered, its first leg far past the feed leg."""
    assert len(LONG_RUN) >= 2
    for case in LONG_RUN:
        path = case["arm_path_mm"]
        first_leg_x = next(a[0] for a, b in zip(path, path[1:]) if a[0] == b[0])
        assert sum(1 for a, b in zip(path, path[1:]) if a[0] == b[0]) >= 2, case["name"]
        assert first_leg_x - case["feed_x_mm"] >= MIN_RUN_PAST_FEED_WIDTHS * case["trace_width_mm"], case["name"]


def _worst(key: str) -> tuple[dict, float]:
    rows = [_row(n) for n in IDS]
    errors = [(r, r[f"{key}_ours"] / r[f"{key}_ref"] - 1.0) for r in rows]
    return max(errors, key=lambda e: abs(e[1]))


def test_long_run_table(record_property) -> None:
    """The comparison table (printed, and recorded with the worst cases); every case has a
    -10 dB band in both, so the bandwidths compare."""
    rows = [_row(n) for n in IDS]
    print("\n" + "\n".join(_line(r) for r in rows))
    for r in rows:
        assert r["bw_ours"] is not None and r["bw_ref"] is not None, r["name"]
    (r_f, e_f), (r_b, e_b) = _worst("f"), _worst("bw")
    print(f"worst resonance: {r_f['name']} {e_f:+.2%}; worst bandwidth: {r_b['name']} {e_b:+.1%}")
    record_property("worst_resonance_error", f"{r_f['name']} {e_f:+.4f}")
    record_property("worst_bandwidth_error", f"{r_b['name']} {e_b:+.4f}")


@pytest.mark.parametrize("name", _cases("resonance"))
def test_long_run_resonance_within_2_percent(name: str) -> None:
    r = _row(name)
    # source: openEMS 0.0.35 (Debian package, FDTD), stored result, f at min |S11|
    assert r["f_ours"] == pytest.approx(r["f_ref"], rel=RESONANCE_REL_TOL), _line(r)


@pytest.mark.parametrize("name", _cases("bandwidth"))
def test_long_run_bandwidth_within_15_percent(name: str) -> None:
    r = _row(name)
    # source: openEMS 0.0.35 (Debian package, FDTD), stored result, -10 dB band around the minimum
    assert r["bw_ours"] == pytest.approx(r["bw_ref"], rel=BANDWIDTH_REL_TOL), _line(r)


@pytest.mark.parametrize("name", _cases("zin"))
def test_long_run_input_impedance_at_the_minimum(name: str) -> None:
    r = _row(name)
    distance = abs(_gamma(r["z_ours"]) - _gamma(r["z_ref"]))
    # source: openEMS 0.0.35 (Debian package, FDTD), stored Zin at the grid point of min |S11|
    assert math.isfinite(distance) and distance <= GAMMA_DISTANCE_TOL, f"{_line(r)}; |dGamma| = {distance:.3f}"
