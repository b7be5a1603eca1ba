"""Touchstone reading/writing and S11 analysis (footgen.rf.touchstone).

Files are written into tmp_path.  Numbers in hand-written files are invented and serve only as
parser input; physics checks use closed-form loads named beside each check.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import skrf

from footgen.errors import MeasurementError, SpecError
from footgen.rf import touchstone as ts

# Round trip: the writer prints full repr precision, so only float rounding remains.
ROUND_TRIP_REL = 1e-12
# Renormalisation and two-port algebra in double precision.
ALGEBRA_ABS = 1e-12
# Sub-sample resonance refinement on a 10 MHz grid, relative to the resonant frequency.
RESONANCE_REL = 5e-5
# Linear interpolation of the -10 dB crossing on a 2 MHz grid, in Hz.
BAND_EDGE_HZ = 10e3
# Linear interpolation of S11 between 2 MHz samples, for the input impedance, in ohm.
ZIN_ABS_OHM = 5e-3

FORMATS = ("ri", "ma", "db")
UNITS = ("Hz", "kHz", "MHz", "GHz")


def series_rlc_ohm(freq_hz: np.ndarray, r_ohm: float, l_h: float, c_f: float) -> np.ndarray:
    """Z = R + j(wL - 1/(wC)) of a series RLC (Pozar, Microwave Engineering, 4th ed., sec. 6.1,
    from memory)."""
    omega = 2 * np.pi * freq_hz
    return r_ohm + 1j * (omega * l_h - 1.0 / (omega * c_f))


def gamma(z_ohm, z0_ohm: float = 50.0):
    """Gamma = (Z - Z0)/(Z + Z0) (Pozar, 4th ed., eq. 2.35, from memory)."""
    return (z_ohm - z0_ohm) / (z_ohm + z0_ohm)


def demo_sweep() -> tuple[np.ndarray, np.ndarray]:
    freq_hz = np.linspace(2.0e9, 2.8e9, 81)
    return freq_hz, gamma(series_rlc_ohm(freq_hz, 35.0, 12e-9, 0.36e-12))


# ----------------------------------------------------------------------------- round trip


@pytest.mark.parametrize("data_format", FORMATS)
@pytest.mark.parametrize("freq_unit", UNITS)
def test_round_trip_each_format_and_unit(tmp_path, data_format, freq_unit):
    freq_hz, s11 = demo_sweep()
    path = ts.write_s1p(
        tmp_path / "rt.s1p", freq_hz, s11, "demo", data_format=data_format, freq_unit=freq_unit
    )
    text = path.read_text()
    option = next(line for line in text.splitlines() if line.startswith("#"))
    assert option.split()[1:4] == [freq_unit, "S", data_format.upper()]
    measurement = ts.read_s11(path)
    np.testing.assert_allclose(measurement.freq_hz, freq_hz, rtol=ROUND_TRIP_REL)
    np.testing.assert_allclose(measurement.s11, s11, rtol=ROUND_TRIP_REL, atol=ROUND_TRIP_REL)
    assert measurement.z0_ohm == 50.0
    assert measurement.source == str(path)
    assert not measurement.s11.flags.writeable


def test_write_is_atomic_and_keeps_comment(tmp_path):
    freq_hz, s11 = demo_sweep()
    target = tmp_path / "out.s1p"
    target.write_text("old content\n")
    ts.write_s1p(target, freq_hz, s11, "first line\nsecond line")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.s1p"]
    lines = target.read_text().splitlines()
    assert lines[0] == "! first line" and lines[1] == "! second line"
    assert "old content" not in target.read_text()


def test_write_rejects_bad_requests_and_leaves_nothing(tmp_path):
    freq_hz, s11 = demo_sweep()
    with pytest.raises(SpecError, match="path"):
        ts.write_s1p(tmp_path / "out.s2p", freq_hz, s11, "")
    with pytest.raises(SpecError, match="freq_unit"):
        ts.write_s1p(tmp_path / "out.s1p", freq_hz, s11, "", freq_unit="THz")
    with pytest.raises(SpecError, match="data_format"):
        ts.write_s1p(tmp_path / "out.s1p", freq_hz, s11, "", data_format="xy")
    with pytest.raises(SpecError, match="dB"):
        ts.write_s1p(tmp_path / "out.s1p", freq_hz, np.zeros_like(s11), "", data_format="db")
    with pytest.raises(MeasurementError, match="not increasing"):
        ts.write_s1p(tmp_path / "out.s1p", freq_hz[::-1], s11, "")
    assert list(tmp_path.iterdir()) == []


def test_exact_zero_round_trips_in_ri(tmp_path):
    freq_hz, s11 = demo_sweep()
    s11 = s11.copy()
    s11[3] = 0.0
    m = ts.read_s11(ts.write_s1p(tmp_path / "zero.s1p", freq_hz, s11, ""))
    assert m.s11[3] == 0.0
    assert ts.s11_db(m.s11)[3] == pytest.approx(10 * math.log10(ts.POWER_FLOOR))


# ----------------------------------------------------------------------------- parsing


def test_hand_written_formats_decode_per_touchstone_definition(tmp_path):
    """Touchstone File Format Specification (IBIS), option line and data formats (from memory):
    RI = real, imaginary; MA = magnitude, angle in degrees; DB = 20 log10 |S|, angle in degrees;
    omitted option fields default to GHz S MA R 50."""
    ri = tmp_path / "ri.s1p"
    ri.write_text("! demo\n# kHz S RI R 50\n100 0.3 -0.4\n200 0.1 0.2 ! trailing comment\n")
    ma = tmp_path / "ma.s1p"
    ma.write_text("# Hz S MA R 50\n1e5 0.5 90\n2e5 0.25 -45\n")
    db = tmp_path / "db.s1p"
    db.write_text("# MHz S DB R 50\n0.1 -6.0206 180\n0.2 -20 0\n")
    defaults = tmp_path / "defaults.s1p"
    defaults.write_text("#\n0.0001 0.5 0\n0.0002 0.5 90\n")

    m = ts.read_s11(ri)
    np.testing.assert_allclose(m.freq_hz, [1e5, 2e5])
    np.testing.assert_allclose(m.s11, [0.3 - 0.4j, 0.1 + 0.2j], atol=ALGEBRA_ABS)
    m = ts.read_s11(ma)
    np.testing.assert_allclose(m.s11, [0.5j, 0.25 * np.exp(-1j * np.pi / 4)], atol=ALGEBRA_ABS)
    m = ts.read_s11(db)
    np.testing.assert_allclose(m.freq_hz, [1e5, 2e5])
    np.testing.assert_allclose(m.s11, [-10 ** (-6.0206 / 20), 0.1], atol=ALGEBRA_ABS)
    m = ts.read_s11(defaults)
    np.testing.assert_allclose(m.freq_hz, [1e5, 2e5])
    np.testing.assert_allclose(m.s11, [0.5, 0.5j], atol=ALGEBRA_ABS)


def test_reference_resistance_is_renormalised_to_50_ohm(tmp_path):
    """A 75 ohm file of the load Z: Gamma_75 = (Z-75)/(Z+75) must read as (Z-50)/(Z+50)
    (Pozar, 4th ed., eq. 2.35, from memory)."""
    freq_hz = np.linspace(1e9, 2e9, 11)
    z_load = series_rlc_ohm(freq_hz, 30.0, 8e-9, 1.5e-12)
    g75 = gamma(z_load, 75.0)
    data = [f"{f / 1e9!r} {g.real!r} {g.imag!r}" for f, g in zip(freq_hz, g75)]
    lines = ["# GHz S RI R 75", *data]
    path = tmp_path / "r75.s1p"
    path.write_text("\n".join(lines) + "\n")
    m = ts.read_s11(path)
    assert m.file_z0_ohm == 75.0 and m.z0_ohm == 50.0
    np.testing.assert_allclose(m.s11, gamma(z_load, 50.0), atol=ALGEBRA_ABS)


def _z_to_s(z: np.ndarray, z0_ohm: float) -> np.ndarray:
    """[S] = ([Z] - Z0[U]) ([Z] + Z0[U])^-1 for equal real port references (Pozar, 4th ed.,
    sec. 4.3, from memory)."""
    unit = np.eye(z.shape[-1])
    return (z - z0_ohm * unit) @ np.linalg.inv(z + z0_ohm * unit)


def test_s2p_gives_s11_with_port_two_in_50_ohm(tmp_path):
    """A two-port of Z-matrix Z seen at port 1 with port 2 in 50 ohm has
    Z_in = Z11 - Z12 Z21 / (Z22 + 50) (two-port algebra on Pozar's Z-matrix definition, sec. 4.2,
    from memory); its S11 is then (Z_in - 50)/(Z_in + 50).  The file is written by scikit-rf
    at 75 ohm, so reading must renormalise both ports."""
    freq_hz = np.linspace(0.9e9, 1.1e9, 5)
    omega = 2 * np.pi * freq_hz
    # A lossy reciprocal tee (invented values): series arms and a shunt arm.
    z_a = 10 + 1j * omega * 5e-9
    z_b = 20 + 1j * omega * 3e-9
    z_c = 40 - 1j / (omega * 2e-12)
    z = np.empty((freq_hz.size, 2, 2), dtype=complex)
    z[:, 0, 0] = z_a + z_c
    z[:, 1, 1] = z_b + z_c
    z[:, 0, 1] = z[:, 1, 0] = z_c
    frequency = skrf.Frequency.from_f(freq_hz, unit="hz")
    network = skrf.Network(frequency=frequency, s=_z_to_s(z, 75.0), z0=75.0)
    network.write_touchstone(filename="tee", dir=tmp_path)
    m = ts.read_s11(tmp_path / "tee.s2p")
    z_in = z[:, 0, 0] - z[:, 0, 1] * z[:, 1, 0] / (z[:, 1, 1] + 50.0)
    np.testing.assert_allclose(m.freq_hz, freq_hz, rtol=ROUND_TRIP_REL)
    np.testing.assert_allclose(m.s11, gamma(z_in, 50.0), atol=ALGEBRA_ABS)


def test_s2p_at_50_ohm_returns_its_s11_entry(tmp_path):
    path = tmp_path / "two.s2p"
    # Touchstone v1 two-port order: S11 S21 S12 S22 (distinct invented values catch a mix-up).
    path.write_text("# MHz S RI R 50\n100 0.1 0.2 0.3 0.4 0.5 0.6 0.7 0.8\n200 -0.1 0.0 0.9 0.0 0.8 0.0 0.2 0.1\n")
    m = ts.read_s11(path)
    np.testing.assert_allclose(m.s11, [0.1 + 0.2j, -0.1], atol=ALGEBRA_ABS)


GOOD_DATA = "100 0.1 0.2\n200 0.3 0.1\n300 0.2 0.2\n"

MALFORMED = {
    "truncated": ("bad.s1p", "# MHz S RI R 50\n100 0.1 0.2\n200 0.3\n", "line 3 holds 2 value(s)"),
    "one_port_data_in_s2p": ("bad.s2p", "# MHz S RI R 50\n" + GOOD_DATA, "line 2 holds 3 value(s)"),
    "truncated_s2p": ("bad.s2p", "# MHz S RI R 50\n100 0.1 0.2 0 0 0 0 0 0\n200 0.3 0.1 0 0\n", "line 3 holds 5"),
    "bad_unit": ("bad.s1p", "# THz S RI R 50\n" + GOOD_DATA, "frequency unit"),
    "bad_format": ("bad.s1p", "# MHz S XY R 50\n" + GOOD_DATA, "data format"),
    "not_s_parameters": ("bad.s1p", "# MHz Z RI R 50\n" + GOOD_DATA, "Z-parameters"),
    "r_word_missing": ("bad.s1p", "# MHz S RI X 50\n" + GOOD_DATA, "'R' belongs"),
    "r_not_number": ("bad.s1p", "# MHz S RI R fifty\n" + GOOD_DATA, "not a real number"),
    "r_negative": ("bad.s1p", "# MHz S RI R -50\n" + GOOD_DATA, "not positive"),
    "r_complex": ("bad.s1p", "# MHz S RI R 50+5j\n" + GOOD_DATA, "not a real number"),
    "no_option_line": ("bad.s1p", GOOD_DATA, "before the option line"),
    "touchstone_v2": ("bad.s1p", "[Version] 2.0\n# MHz S RI R 50\n" + GOOD_DATA, "Touchstone v2"),
    "non_numeric": ("bad.s1p", "# MHz S RI R 50\n100 0.1 0.2\n200 abc 0.1\n", "unreadable data"),
    "binary_garbage": ("bad.s1p", "# MHz S RI R 50\n\x00\xff\xfe\n", "line 2 holds 1 value(s)"),
    "binary_garbage_three_tokens": ("bad.s1p", "# MHz S RI R 50\n\x00 \xff \xfe\n1 2 3\n", "unreadable data"),
    "not_finite": ("bad.s1p", "# MHz S RI R 50\n100 nan 0.2\n200 0.3 0.1\n", "non-finite"),
    "single_point": ("bad.s1p", "# MHz S RI R 50\n100 0.1 0.2\n", "single frequency point"),
    "no_data": ("bad.s1p", "! only a comment\n# MHz S RI R 50\n", "no data"),
    "empty_file": ("bad.s1p", "", "no option line"),
    "decreasing_s1p": ("bad.s1p", "# MHz S RI R 50\n100 0.1 0.2\n90 0.3 0.1\n", "not increasing"),
    "repeated_s1p": ("bad.s1p", "# MHz S RI R 50\n100 0.1 0.2\n100 0.3 0.1\n", "not increasing"),
    "decreasing_s2p": (
        "bad.s2p",
        "# MHz S RI R 50\n100 0.1 0.2 0 0 0 0 0 0\n90 0.3 0.1 0 0 0 0 0 0\n",
        "not increasing",
    ),
    "noise_line_first": ("bad.s2p", "# MHz S RI R 50\n100 1.5 0.3 20 0.4\n" + "200" + " 0.1" * 8 + "\n", "line 2 holds 5"),
    "network_after_noise": (
        "bad.s2p",
        "# MHz S RI R 50\n200" + " 0.1" * 8 + "\n100 1.5 0.3 20 0.4\n300" + " 0.1" * 8 + "\n",
        "line 4 holds 9",
    ),
    "three_ports": ("bad.s3p", "# MHz S RI R 50\n100" + " 0.1 0" * 9 + "\n200" + " 0.1 0" * 9 + "\n", ".s3p"),
    "wrong_extension": ("bad.txt", "# MHz S RI R 50\n" + GOOD_DATA, ".txt"),
    "no_extension": ("bad", "# MHz S RI R 50\n" + GOOD_DATA, "(none)"),
}


@pytest.mark.parametrize("case", sorted(MALFORMED))
def test_malformed_file_raises_one_line_measurement_error(tmp_path, case):
    name, text, expected = MALFORMED[case]
    path = tmp_path / name
    path.write_bytes(text.encode("latin-1"))
    with pytest.raises(MeasurementError) as info:
        ts.read_s11(path)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(str(path) + ": ")
    assert expected in message
    assert "; " in message  # what is wrong; the fix


def test_missing_file_raises_measurement_error(tmp_path):
    path = tmp_path / "absent.s1p"
    with pytest.raises(MeasurementError, match="file not found") as info:
        ts.read_s11(path)
    assert "\n" not in str(info.value) and str(path) in str(info.value)


def test_two_port_with_noise_block_is_accepted(tmp_path):
    """Touchstone v1 two-port files may end in a noise block (5 numbers a line, its frequency
    restarting lower) (Touchstone File Format Specification, IBIS, from memory)."""
    path = tmp_path / "amp.s2p"
    path.write_text(
        "# MHz S MA R 50\n100 0.5 10 2 20 0.1 30 0.4 40\n200 0.4 11 2 21 0.1 31 0.3 41\n"
        "! noise\n100 1.5 0.3 20 0.4\n200 1.6 0.3 25 0.4\n"
    )
    m = ts.read_s11(path)
    np.testing.assert_allclose(m.freq_hz, [1e8, 2e8])
    expected = [0.5 * np.exp(1j * np.radians(10)), 0.4 * np.exp(1j * np.radians(11))]
    np.testing.assert_allclose(m.s11, expected)


# ----------------------------------------------------------------------------- analysis

R_OHM, L_H, C_F = 30.0, 10e-9, 0.5e-12


def rlc_sweep(step_hz: float) -> tuple[np.ndarray, np.ndarray]:
    freq_hz = np.arange(1.5045e9, 3.0e9, step_hz)
    return freq_hz, gamma(series_rlc_ohm(freq_hz, R_OHM, L_H, C_F))


def test_resonance_and_minimum_of_series_rlc():
    """|S11| of a series RLC load is least where X = 0, at f0 = 1/(2 pi sqrt(LC)), with
    |S11| = |R - 50|/(R + 50) there (Pozar, 4th ed., sec. 6.1 and eq. 2.35, from memory)."""
    freq_hz, s11 = rlc_sweep(10e6)
    f0 = 1.0 / (2 * math.pi * math.sqrt(L_H * C_F))
    assert np.min(np.abs(freq_hz - f0)) > 2e6  # the resonance falls between samples
    found = ts.resonances_hz(freq_hz, s11)
    assert len(found) == 1
    assert found[0] == pytest.approx(f0, rel=RESONANCE_REL)
    f_min, level_db = ts.min_s11_db(freq_hz, s11)
    assert f_min == pytest.approx(f0, rel=RESONANCE_REL)
    assert level_db == pytest.approx(20 * math.log10(abs(R_OHM - 50) / (R_OHM + 50)), abs=1e-3)
    # refinement beats the best sample
    nearest = freq_hz[np.argmin(np.abs(s11))]
    assert abs(found[0] - f0) < abs(nearest - f0)


def test_resonance_threshold_drops_shallow_dips():
    freq_hz = np.linspace(1.5e9, 3.0e9, 151)
    shallow = gamma(series_rlc_ohm(freq_hz, 500.0, L_H, C_F))  # |S11| min = 450/550: -1.7 dB
    assert ts.resonances_hz(freq_hz, shallow) == ()
    assert len(ts.resonances_hz(freq_hz, shallow, threshold_db=-1.0)) == 1


def test_band_edges_of_matched_series_rlc():
    """R = 50 ohm series RLC: |S11| = -10 dB where |X| = X_e, |Gamma|^2 = X^2/(100^2 + X^2) = 0.1
    (eq. 2.35), so wL - 1/(wC) = +-X_e gives w = (+-X_e + sqrt(X_e^2 + 4L/C)) / (2L)."""
    freq_hz = np.arange(1.5e9, 3.0e9 + 1e6, 2e6)
    s11 = gamma(series_rlc_ohm(freq_hz, 50.0, L_H, C_F))
    x_edge = math.sqrt(0.1 * 100.0**2 / 0.9)
    edges = [
        (sign * x_edge + math.sqrt(x_edge**2 + 4 * L_H / C_F)) / (2 * L_H) / (2 * math.pi)
        for sign in (-1, 1)
    ]
    bands = ts.band_below_db(freq_hz, s11, -10.0)
    assert len(bands) == 1
    assert bands[0][0] == pytest.approx(edges[0], abs=BAND_EDGE_HZ)
    assert bands[0][1] == pytest.approx(edges[1], abs=BAND_EDGE_HZ)


def test_band_running_off_the_sweep_ends_at_the_sweep():
    """Crossings by linear interpolation in dB: -20 dB and 20 log10(0.9) dB samples 0.1 GHz
    apart cross -10 dB at the fraction (-10 - a)/(b - a) of the step (straight-line algebra)."""
    freq_hz = np.linspace(1.0e9, 2.0e9, 11)
    s11 = np.array([0.1] * 3 + [0.9] * 5 + [0.1] * 3, dtype=complex)
    low_db, high_db = -20.0, 20 * math.log10(0.9)
    t_up = (-10.0 - low_db) / (high_db - low_db)
    t_down = (-10.0 - high_db) / (low_db - high_db)
    bands = ts.band_below_db(freq_hz, s11)
    assert len(bands) == 2
    assert bands[0] == (1.0e9, pytest.approx(1.2e9 + t_up * 0.1e9, rel=1e-12))
    assert bands[1] == (pytest.approx(1.7e9 + t_down * 0.1e9, rel=1e-12), 2.0e9)
    assert ts.band_below_db(freq_hz, s11, level_db=-30.0) == []


def test_zin_and_summary_of_series_rlc(tmp_path):
    """Z = Z0 (1 + S11)/(1 - S11) recovers the series RLC impedance (eq. 2.35 inverted)."""
    freq_hz = np.arange(2.0e9, 2.6e9 + 1e6, 2e6)
    z_load = series_rlc_ohm(freq_hz, R_OHM, L_H, C_F)
    path = ts.write_s1p(tmp_path / "rlc.s1p", freq_hz, gamma(z_load), "series RLC")
    m = ts.read_s11(path)
    f0 = 2.3e9 + 0.7e6  # between samples
    expected = series_rlc_ohm(np.array([f0]), R_OHM, L_H, C_F)[0]
    zin = ts.zin_at(m.freq_hz, m.s11, f0)
    assert abs(zin - expected) < ZIN_ABS_OHM
    summary = ts.summarise(m, f0)
    assert summary.zin_at_f0_ohm == zin
    g0 = gamma(expected)
    assert summary.s11_db_at_f0 == pytest.approx(20 * math.log10(abs(g0)), abs=1e-3)
    assert summary.vswr_at_f0 == pytest.approx((1 + abs(g0)) / (1 - abs(g0)), rel=1e-3)
    assert summary.resonances_hz == ts.resonances_hz(m.freq_hz, m.s11)
    assert summary.bands_below_10db_hz == tuple(ts.band_below_db(m.freq_hz, m.s11))
    (lo, hi), = summary.bands_below_10db_hz
    assert lo < f0 < hi and summary.bandwidth_10db_at_f0_hz == pytest.approx(hi - lo)
    assert summary.source == str(path)


def test_f0_outside_sweep_raises():
    freq_hz, s11 = rlc_sweep(10e6)
    with pytest.raises(MeasurementError, match="outside the measured"):
        ts.zin_at(freq_hz, s11, 5e9)


def test_analysis_rejects_unsorted_arrays():
    freq_hz, s11 = rlc_sweep(10e6)
    with pytest.raises(MeasurementError, match="not increasing"):
        ts.resonances_hz(freq_hz[::-1], s11)
