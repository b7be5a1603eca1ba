"""L/pi matching synthesis, network response and E-series snapping (footgen.rf.matching,
footgen.rf.eseries).  Each check names its source beside it."""

from __future__ import annotations

import math

import numpy as np
import pytest
import skrf
from hypothesis import given, settings
from hypothesis import strategies as st
from skrf.media import DefinedGammaZ0

from footgen.errors import SpecError
from footgen.rf import eseries
from footgen.rf import parts as chip
from footgen.rf import match_plan as mp
from footgen.rf import matching as mt

# Pozar prints element values to 2-3 significant figures (e.g. 38.8 nH from X rounded to 122).
POZAR_PRINTED_REL = 0.01
# Closed forms evaluated two ways in double precision.
ALGEBRA_REL = 1e-9
# Brief: our ABCD response against scikit-rf's cascade of the same ideal parts.
SKRF_AGREEMENT_DB = 0.01
# The same comparison on the complex S11 (both are exact circuit algebra).
SKRF_AGREEMENT_ABS = 1e-9

loads = st.builds(
    complex,
    st.floats(min_value=0.5, max_value=2000.0),
    st.floats(min_value=-2000.0, max_value=2000.0),
)
frequencies = st.floats(min_value=1e6, max_value=1e10)


def zin_at_f0(match, z_load_ohm: complex) -> complex:
    return complex(mt.input_impedance_ohm(np.array([match.f0_hz]), match.parts, z_load_ohm)[0])


# ----------------------------------------------------------------------------- L network


def test_pozar_example_5_1_l_network():
    """Pozar, Microwave Engineering, 4th ed., Example 5.1 (from memory): Z_L = 200 - j100 ohm
    matched to a 100 ohm line at 500 MHz.  Printed results: solution 1 B = 0.0029 S,
    X = 122 ohm, i.e. shunt C = 0.92 pF at the load and series L = 38.8 nH; solution 2
    B = -0.0069 S, X = -122 ohm, i.e. shunt L = 46.1 nH and series C = 2.61 pF."""
    solutions = mt.l_networks(200 - 100j, 500e6, r0_ohm=100.0)
    assert [s.topology for s in solutions] == ["shunt-at-load", "shunt-at-load"]
    first, second = solutions
    assert first.susceptance_s == pytest.approx(0.0029, rel=POZAR_PRINTED_REL)
    assert first.reactance_ohm == pytest.approx(122.0, rel=POZAR_PRINTED_REL)
    assert second.susceptance_s == pytest.approx(-0.0069, rel=POZAR_PRINTED_REL)
    assert second.reactance_ohm == pytest.approx(-122.0, rel=POZAR_PRINTED_REL)
    # parts are ordered source -> load: series part first, shunt part across the load last
    (series_1, shunt_1), (series_2, shunt_2) = first.parts, second.parts
    assert (series_1.placement, series_1.kind) == ("series", "L")
    assert series_1.value == pytest.approx(38.8e-9, rel=POZAR_PRINTED_REL)
    assert (shunt_1.placement, shunt_1.kind) == ("shunt", "C")
    assert shunt_1.value == pytest.approx(0.92e-12, rel=POZAR_PRINTED_REL)
    assert (series_2.placement, series_2.kind) == ("series", "C")
    assert series_2.value == pytest.approx(2.61e-12, rel=POZAR_PRINTED_REL)
    assert (shunt_2.placement, shunt_2.kind) == ("shunt", "L")
    assert shunt_2.value == pytest.approx(46.1e-9, rel=POZAR_PRINTED_REL)


def test_low_resistance_load_uses_series_at_load_topology():
    """Pozar, 4th ed., sec. 5.1 (from memory): for R_L < Z0 the series reactance sits next to
    the load and X = +-sqrt(R_L(Z0 - R_L)) - X_L, B = +-sqrt((Z0 - R_L)/R_L)/Z0 (eqs. 5.6a,b).
    Evaluated by hand here for Z_L = 10 + j5 ohm, Z0 = 50 ohm: X = +-20 - 5, B = +-0.04."""
    solutions = [s for s in mt.l_networks(10 + 5j, 1e9) if s.topology == "series-at-load"]
    pairs = sorted((s.susceptance_s, s.reactance_ohm) for s in solutions)
    assert pairs == [
        (pytest.approx(-0.04, rel=ALGEBRA_REL), pytest.approx(-25.0, rel=ALGEBRA_REL)),
        (pytest.approx(0.04, rel=ALGEBRA_REL), pytest.approx(15.0, rel=ALGEBRA_REL)),
    ]
    for solution in solutions:
        assert [p.placement for p in solution.parts] == ["shunt", "series"]


@settings(max_examples=200, deadline=None, database=None)
@given(z_load=loads, f0_hz=frequencies)
def test_every_l_solution_presents_r0_at_f0(z_load, f0_hz):
    """Invariant of a lossless match: Z_in = R0 at f0.  Pozar, 4th ed., sec. 5.1 (from memory):
    some L network always exists for R_L > 0; the series-at-load form needs R_L < R0."""
    solutions = mt.l_networks(z_load, f0_hz)
    assert solutions
    for solution in solutions:
        assert zin_at_f0(solution, z_load) == pytest.approx(50.0, rel=ALGEBRA_REL, abs=1e-7)
        if solution.topology == "series-at-load":
            assert z_load.real <= 50.0
        assert all(p.value > 0 for p in solution.parts)


def test_bad_load_and_frequency_are_spec_errors():
    with pytest.raises(SpecError, match="z_load_ohm"):
        mt.l_networks(-5 + 10j, 1e9)
    with pytest.raises(SpecError, match="f0_hz"):
        mt.l_networks(25 + 10j, 0.0)
    with pytest.raises(SpecError, match="r0_ohm"):
        mt.l_networks(25 + 10j, 1e9, r0_ohm=0.0)
    with pytest.raises(SpecError, match="z_load_ohm"):
        mt.pi_networks(complex("nan+1j"), 1e9)


# ----------------------------------------------------------------------------- pi network


def test_pi_network_matches_bowick_design_equations():
    """Bowick, RF Circuit Design, 2nd ed., ch. 4, pi network (from memory): with R_H the larger
    termination, R_v = R_H/(Q^2 + 1); each half has Q_i = sqrt(R_i/R_v - 1), shunt reactance
    X_Pi = R_i/Q_i and series reactance X_Si = Q_i R_v; the low-pass form is shunt C, series L,
    shunt C.  Here 50 ohm source, 600 ohm load, Q = 10 at 150 MHz (invented design case)."""
    r_source, r_load, q, f0 = 50.0, 600.0, 10.0, 150e6
    omega = 2 * math.pi * f0
    r_v = r_load / (q * q + 1)
    q_source, q_load = math.sqrt(r_source / r_v - 1), math.sqrt(r_load / r_v - 1)
    expected = [
        ("shunt", "C", 1 / (omega * r_source / q_source)),
        ("series", "L", (q_source * r_v + q_load * r_v) / omega),
        ("shunt", "C", 1 / (omega * r_load / q_load)),
    ]
    solutions = mt.pi_networks(complex(r_load), f0, q_loaded=q, r0_ohm=r_source)
    lowpass = [s for s in solutions if s.topology == "pi: shunt C / series L / shunt C"]
    assert len(solutions) == 4 and len(lowpass) == 1
    assert lowpass[0].r_virtual_ohm == pytest.approx(r_v, rel=ALGEBRA_REL)
    for part, (placement, kind, value) in zip(lowpass[0].parts, expected, strict=True):
        assert (part.placement, part.kind) == (placement, kind)
        assert part.value == pytest.approx(value, rel=ALGEBRA_REL)


@settings(max_examples=200, deadline=None, database=None)
@given(z_load=loads, f0_hz=frequencies, extra_q=st.floats(min_value=0.0, max_value=20.0))
def test_every_pi_solution_presents_r0_at_f0(z_load, f0_hz, extra_q):
    """Invariant of a lossless match: Z_in = R0 at f0; and R_v = R_H/(Q^2+1) lies at or below
    both terminations (Bowick, 2nd ed., ch. 4, from memory)."""
    q = mt.minimum_pi_q(z_load) + extra_q
    solutions = mt.pi_networks(z_load, f0_hz, q_loaded=q)
    assert solutions
    r_parallel = abs(z_load) ** 2 / z_load.real
    for solution in solutions:
        assert zin_at_f0(solution, z_load) == pytest.approx(50.0, rel=ALGEBRA_REL, abs=1e-7)
        assert solution.r_virtual_ohm <= min(50.0, r_parallel) * (1 + 1e-12)
        assert len(solution.parts) <= 3


def test_pi_below_minimum_q_is_a_spec_error():
    q_min = mt.minimum_pi_q(600 + 0j)
    assert q_min == pytest.approx(math.sqrt(600 / 50 - 1), rel=ALGEBRA_REL)  # Bowick (from memory)
    with pytest.raises(SpecError, match="q_loaded"):
        mt.pi_networks(600 + 0j, 1e9, q_loaded=0.5 * q_min)


def test_minimum_q_pi_of_real_load_is_an_l_network():
    """At the minimum Q the virtual resistance equals the lower termination, so the shunt part
    there vanishes and the pi reduces to the L network (Bowick, 2nd ed., ch. 4, from memory)."""
    l_parts = {s.parts for s in mt.l_networks(600 + 0j, 1e9)}
    for solution in mt.pi_networks(600 + 0j, 1e9):
        assert len(solution.parts) == 2
        assert any(
            all(
                (a.placement, a.kind) == (b.placement, b.kind)
                and a.value == pytest.approx(b.value, rel=ALGEBRA_REL)
                for a, b in zip(solution.parts, parts, strict=True)
            )
            for parts in l_parts
        )


# ----------------------------------------------------------------------------- response vs skrf


def skrf_s11(freq_hz: np.ndarray, parts: tuple[mt.Part, ...], z_load_ohm: np.ndarray) -> np.ndarray:
    """S11 of the same ideal parts cascaded by scikit-rf (DefinedGammaZ0 lumped elements)."""
    media = DefinedGammaZ0(frequency=skrf.Frequency.from_f(freq_hz, unit="hz"), z0=50.0)
    builders = {
        ("series", "L"): media.inductor,
        ("series", "C"): media.capacitor,
        ("shunt", "L"): media.shunt_inductor,
        ("shunt", "C"): media.shunt_capacitor,
    }
    network = media.load((z_load_ohm - 50.0) / (z_load_ohm + 50.0))
    for part in reversed(parts):
        network = builders[(part.placement, part.kind)](part.value) ** network
    return network.s[:, 0, 0]


def skrf_chip_s11(freq_hz: np.ndarray, parts: tuple[mt.Part, ...], z_load_ohm: np.ndarray) -> np.ndarray:
    """S11 of chip parts (with parasitics) cascaded by scikit-rf.  A capacitor is scikit-rf's own
    series R-L-C (resistor ** inductor ** capacitor, to ground through a short for a shunt
    part); an inductor's impedance, L with R = omega L / Q_L in parallel with C_p (the model
    footgen.rf.parts names), enters as a scikit-rf resistor of that complex value."""
    media = DefinedGammaZ0(frequency=skrf.Frequency.from_f(freq_hz, unit="hz"), z0=50.0)
    omega = 2 * np.pi * freq_hz
    network = media.load((z_load_ohm - 50.0) / (z_load_ohm + 50.0))
    for part in reversed(parts):
        pkg = chip.PACKAGES[part.package]
        if part.kind == "C":
            element = media.resistor(1.0 / (omega * part.value * pkg.q_c)) ** media.inductor(pkg.esl_h) ** media.capacitor(part.value)
            stage = element if part.placement == "series" else media.shunt(element ** media.short())
        else:
            branch = omega * part.value / pkg.q_l + 1j * omega * part.value
            z = 1.0 / (1.0 / branch + 1j * omega * pkg.cp_f)
            stage = media.resistor(z) if part.placement == "series" else media.shunt_resistor(z)
        network = stage ** network
    return network.s[:, 0, 0]


def antenna_like_load_ohm(freq_hz: np.ndarray) -> np.ndarray:
    """Invented demo load (series RLC, R = 18 ohm, about 18 + j40 ohm at 2.45 GHz): only the
    circuit algebra is checked against scikit-rf, not any physics of the load."""
    omega = 2 * np.pi * freq_hz
    return 18.0 + 1j * (omega * 6e-9 - 1.0 / (omega * 1.24e-12))


WORST_DB: list[float] = []


def compare_with_skrf(parts: tuple[mt.Part, ...], freq_hz: np.ndarray) -> float:
    z_load = antenna_like_load_ohm(freq_hz)
    ours = mt.network_s11(freq_hz, parts, z_load)
    theirs = skrf_s11(freq_hz, parts, z_load)
    db_ours, db_theirs = 20 * np.log10(np.abs(ours)), 20 * np.log10(np.abs(theirs))
    np.testing.assert_allclose(ours, theirs, rtol=0, atol=SKRF_AGREEMENT_ABS)
    worst = float(np.max(np.abs(db_ours - db_theirs)))
    WORST_DB.append(worst)
    assert worst < SKRF_AGREEMENT_DB
    return float(np.min(db_ours))


F0_HZ = 2.45e9
# f0 itself is not a sample: at an exact null |S11| is ~1e-16 and its dB value is rounding noise.
SWEEP_HZ = np.linspace(1.8e9, 3.1e9, 250)


@pytest.mark.parametrize("series", ["E12", "E24"])
def test_l_network_response_equals_skrf_cascade_with_snapped_parts(series):
    """scikit-rf (DefinedGammaZ0.inductor / capacitor / shunt_inductor / shunt_capacitor,
    cascaded with **) is the reference for the response of the same ideal parts."""
    z0 = complex(antenna_like_load_ohm(np.array([F0_HZ]))[0])
    solutions = mt.l_networks(z0, F0_HZ)
    # R_L = 18 < 50 ohm and |Z_L|^2 = 324 + 40^2 > 50 R_L = 900: both topologies (Pozar sec. 5.1)
    assert sorted(s.topology for s in solutions) == ["series-at-load"] * 2 + ["shunt-at-load"] * 2
    for solution in solutions:
        exact_min = compare_with_skrf(solution.parts, SWEEP_HZ)
        snapped = mt.snap_parts(solution.parts, series)
        assert all(eseries.in_series(p.value, series) for p in snapped)
        compare_with_skrf(snapped, SWEEP_HZ)
        assert exact_min < -30.0  # the exact parts do match near f0 (sanity of the sweep)


@pytest.mark.parametrize("series", ["E12", "E24"])
def test_pi_network_response_equals_skrf_cascade_with_snapped_parts(series):
    """scikit-rf reference as above, for every pi solution at loaded Q = 4."""
    z0 = complex(antenna_like_load_ohm(np.array([F0_HZ]))[0])
    solutions = mt.pi_networks(z0, F0_HZ, q_loaded=4.0)
    assert len(solutions) == 4
    for solution in solutions:
        assert len(solution.parts) == 3
        compare_with_skrf(solution.parts, SWEEP_HZ)
        compare_with_skrf(mt.snap_parts(solution.parts, series), SWEEP_HZ)


def test_response_rejects_non_positive_frequency():
    with pytest.raises(SpecError, match="freq_hz"):
        mt.network_s11(np.array([0.0, 1e9]), (mt.Part("series", "C", 1e-12),), 50.0)


# ----------------------------------------------------------------------------- E series

# IEC 60063:2015, E12 and E24 lists (from memory), written out here independently of the module.
IEC_60063_E12 = "1.0 1.2 1.5 1.8 2.2 2.7 3.3 3.9 4.7 5.6 6.8 8.2"
IEC_60063_E24 = (
    "1.0 1.1 1.2 1.3 1.5 1.6 1.8 2.0 2.2 2.4 2.7 3.0 3.3 3.6 3.9 4.3 4.7 5.1 5.6 6.2 6.8 7.5 8.2 9.1"
)
# The E24 values that differ from 10**(i/24) rounded to two figures (the standard's historic
# values; IEC 60063, from memory).
E24_HISTORIC_DEVIATIONS = {2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2}


def decade_values(series: str) -> list[float]:
    return [eseries.series_value(m, 0) for m in eseries.SERIES[series]]


def test_tables_equal_iec_60063_lists():
    assert decade_values("E12") == [float(v) for v in IEC_60063_E12.split()]
    assert decade_values("E24") == [float(v) for v in IEC_60063_E24.split()]
    # E12 is every second E24 value (IEC 60063, from memory)
    assert decade_values("E12") == decade_values("E24")[::2]


def test_e24_follows_the_geometric_series_except_historic_values():
    """E-series n: values near 10**(i/n) (IEC 60063, from memory)."""
    deviations = {
        v for i, v in enumerate(decade_values("E24")) if v != round(10 ** (i / 24), 1)
    }
    assert deviations == E24_HISTORIC_DEVIATIONS
    for series, n in (("E12", 12), ("E24", 24)):
        for i, v in enumerate(decade_values(series)):
            assert abs(math.log10(v) - i / n) < 1 / (2 * n)


@pytest.mark.parametrize(
    ("value", "series", "expected"),
    [
        (4.6e-9, "E12", 4.7e-9),
        (1.05e3, "E24", 1.1e3),  # above the log midpoint sqrt(1.1) = 1.0488
        (1.04e3, "E24", 1.0e3),
        (9.6, "E12", 10.0),  # across the decade: above sqrt(8.2 * 10) = 9.055
        (0.95e-12, "E24", 0.91e-12),  # below sqrt(0.91) = 0.954
        (47e-12, "E12", 47e-12),
    ],
)
def test_snap_examples(value, series, expected):
    """Nearest on a log scale, worked by hand from the IEC 60063 lists above."""
    assert eseries.snap(value, series) == expected


def independent_membership(value: float, series_text: str) -> bool:
    mantissa = value / 10 ** math.floor(math.log10(value) + 1e-12)
    return any(math.isclose(mantissa, float(t), rel_tol=1e-9) for t in series_text.split() + ["10"])


@settings(max_examples=500, deadline=None, database=None)
@given(
    exponent=st.floats(min_value=-14.0, max_value=8.0),
    series=st.sampled_from(["E12", "E24"]),
)
def test_snapped_value_is_in_series_and_within_half_step(exponent, series):
    value = 10.0**exponent
    snapped = eseries.snap(value, series)
    text = {"E12": IEC_60063_E12, "E24": IEC_60063_E24}[series]
    assert independent_membership(snapped, text)
    assert max(snapped / value, value / snapped) <= eseries.half_step_ratio(series) * (1 + 1e-12)
    # no series value in neighbouring decades is nearer (brute force, independent of snap)
    decade = math.floor(exponent)
    candidates = [float(t) * 10.0**d for d in range(decade - 2, decade + 3) for t in text.split()]
    best = min(abs(math.log10(c / value)) for c in candidates)
    assert abs(math.log10(snapped / value)) <= best + 1e-12


def test_half_step_ratios_from_widest_gaps():
    """Widest neighbour ratio, read off the IEC 60063 lists above by hand: E12 1.5/1.2 = 1.25,
    E24 1.5/1.3 = 1.154; the half step is its square root."""
    assert eseries.half_step_ratio("E12") == pytest.approx(math.sqrt(1.5 / 1.2), rel=1e-12)
    assert eseries.half_step_ratio("E24") == pytest.approx(math.sqrt(1.5 / 1.3), rel=1e-12)


def test_snap_rejects_bad_input():
    with pytest.raises(SpecError, match="series"):
        eseries.snap(1.0, "E7")
    with pytest.raises(SpecError, match="value"):
        eseries.snap(-1.0, "E12")
    with pytest.raises(SpecError, match="value"):
        eseries.snap(float("nan"), "E12")


# ----------------------------------------------------------------------------- plan_match

BAND_HZ = (2.4e9, 2.4835e9)


@pytest.mark.parametrize("series", ["E12", "E24"])
def test_plan_lists_snapped_networks_with_their_band_response(series):
    z_load = antenna_like_load_ohm(SWEEP_HZ)
    plan = mp.plan_match(SWEEP_HZ, z_load, F0_HZ, band_hz=BAND_HZ, series=series)
    labels = [c.label for c in plan.candidates]
    assert labels[0] == "direct" and any(l.startswith("L ") for l in labels) and any(l.startswith("pi ") for l in labels)
    in_band = (SWEEP_HZ >= BAND_HZ[0]) & (SWEEP_HZ <= BAND_HZ[1])
    for c in plan.candidates:
        # every part is a preferred value (IEC 60063 lists) and the response is that of the
        # snapped chip parts, as scikit-rf cascades them
        assert all(eseries.in_series(p.value, series) for p in c.parts)
        np.testing.assert_allclose(c.s11, skrf_chip_s11(SWEEP_HZ, c.parts, z_load), rtol=0, atol=SKRF_AGREEMENT_ABS)
        assert c.worst_s11_db_in_band == pytest.approx(
            max(float(np.max(20 * np.log10(np.abs(c.s11[in_band])))), c.s11_db_at_f0), abs=1e-9
        )
    best = min(c.worst_s11_db_in_band for c in plan.candidates)
    assert plan.best.worst_s11_db_in_band <= best + mp.EQUAL_WORST_DB
    assert plan.best.worst_s11_db_in_band < plan.candidates[0].worst_s11_db_in_band  # better than no match


def test_plan_rejects_f0_outside_the_sweep():
    with pytest.raises(SpecError):
        mp.plan_match(SWEEP_HZ, antenna_like_load_ohm(SWEEP_HZ), 5e9)


# ----------------------------------------------------------------------------- buildable parts


@settings(max_examples=60, deadline=None)
@given(st.floats(3.0, 400.0), st.floats(-300.0, 300.0), st.sampled_from(["0402", "0603"]), st.sampled_from(["E12", "E24"]),
       st.sampled_from([433e6, 868e6, 915e6, 2.45e9]))
def test_every_offered_part_is_inside_its_range(r_ohm, x_ohm, package, series, f0_hz):
    """Invented loads over a wide span: whatever is offered can be bought (value range of the
    package, below SRF_MARGIN of its self-resonance), and a network left out names its part."""
    f = np.linspace(0.9 * f0_hz, 1.1 * f0_hz, 41)
    plan = mp.plan_match(f, np.full(f.size, complex(r_ohm, x_ohm)), f0_hz, series=series, package=package)
    pkg = chip.PACKAGES[package]
    for c in plan.candidates:
        for p in c.parts:
            lo, hi = chip.value_range(pkg, p.kind)
            assert lo * (1 - 1e-9) <= p.value <= hi * (1 + 1e-9) and p.package == package
            assert max(plan.band_hz[1], f0_hz) <= chip.SRF_MARGIN * chip.self_resonance_hz(pkg, p.kind, p.value)
        assert c.worst_loss_db_in_band >= -1e-12  # passive parts never add power
    assert plan.candidates[0].label == "direct" and plan.candidates[0].worst_loss_db_in_band == pytest.approx(0.0, abs=1e-12)
    assert all("outside the" in line or "self-resonates" in line for line in plan.not_offered)


def test_no_buildable_network_says_so():
    """Invented load: 2 + j400 ohm at 2.45 GHz needs a series capacitor far below 0.5 pF or a
    shunt inductor far below 1 nH for every L and pi solution."""
    f = np.linspace(2.4e9, 2.5e9, 21)
    plan = mp.plan_match(f, np.full(f.size, 2.0 + 400j), 2.45e9, band_hz=(2.4e9, 2.4835e9))
    assert [c.label for c in plan.candidates] == ["direct"] and plan.not_offered
    assert plan.no_buildable_network
    assert plan.verdict().startswith("no buildable network: every L and pi network needs parts outside the 0402 ranges")


def test_values_print_in_pf_and_nh():
    assert mt.Part("shunt", "C", 1.2e-12, "0402").describe() == "shunt C 1.2 pF (0402)"
    assert mt.Part("series", "L", 3.9e-9).describe() == "series L 3.9 nH"
    assert mt.Part("series", "C", 100e-12).describe() == "series C 100 pF"


def test_chip_capacitor_self_resonates_where_its_model_says():
    """A 10 pF 0402 capacitor with its package inductance is a series L-C: its reactance
    vanishes at 1 / (2 pi sqrt(L_s C)) (series resonance, Pozar, Microwave Engineering, 4th ed.,
    sec. 6.1, from memory)."""
    pkg = chip.PACKAGES["0402"]
    f_sr = chip.self_resonance_hz(pkg, "C", 10e-12)
    x = chip.impedance_ohm(2 * np.pi * np.array([0.99 * f_sr, 1.01 * f_sr]), "C", 10e-12, pkg).imag
    assert x[0] < 0 < x[1]
    assert f_sr == pytest.approx(1 / (2 * math.pi * math.sqrt(pkg.esl_h * 10e-12)))


def test_matched_load_needs_no_network():
    f = np.linspace(2.3e9, 2.6e9, 31)
    plan = mp.plan_match(f, np.full(f.size, 52.0 + 3.0j), 2.45e9, band_hz=(2.4e9, 2.4835e9))
    assert plan.best.label == "direct" and plan.verdict().startswith("no network needed")
