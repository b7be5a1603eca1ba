"""Checks of the transmission-line IFA model (footgen.physics.tline_ifa).

Each check names its source: transmission-line theory (textbook), reference libraries
(scikit-rf, scipy quadrature of the Neumann formula) or a rule of thumb marked
"common practice, no source".  The radiation resistance is a calibration (see the module), so
the bandwidth checks guard that calibration against the usual printed-IFA range; they are not
an independent physics test.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
import skrf
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate
from skrf.media import MLine

from footgen.constants import C0_M_PER_S, MU0_H_PER_M
from footgen.errors import SolverError
from footgen.physics import lines
from footgen.physics import tline_ifa as t
from footgen.physics.ifa import GroundPlane, Laminate, PrintedIfa

#: Root finders work to 1e-9; the resonance of an ideal quarter-wave line is exact.
RESONANCE_RTOL = 1e-7
#: Synthesis round trips (root tolerance 1e-9 on the unknown).
ROUND_TRIP_RTOL = 1e-6
#: Same-model identities (segment splitting, mirroring, vectorisation).
IDENTITY_RTOL = 1e-10
#: Grover's thin-strip formula is the l >> w asymptote: about 1 % off at l = 4 w (checked
#: against the exact uniform-current integral below).
GROVER_STRIP_RTOL = 1.5e-2
#: scipy dblquad of the Neumann double integral, relative error requested 1e-12.
NEUMANN_RTOL = 1e-9
#: -10 dB bandwidth of a matched straight IFA of typical height: several per cent
#: (common practice, no source).
BANDWIDTH_MIN = 0.03
BANDWIDTH_MAX = 0.15

FR4 = Laminate(eps_r=4.4, thickness_m=1.6e-3, loss_tangent=0.02)
GROUND = GroundPlane(x_min_m=-0.02, x_max_m=0.03, length_m=0.04)
TARGET_HZ = 2.44e9


def straight_ifa(
    height_m: float = 4e-3,
    arm_m: float = 20e-3,
    spacing_m: float = 2e-3,
    width_m: float = 0.5e-3,
    laminate: Laminate = FR4,
    direction: float = 1.0,
) -> PrintedIfa:
    return PrintedIfa(
        arm_path_m=((0.0, height_m), (direction * arm_m, height_m)),
        feed_x_m=direction * spacing_m,
        short_x_m=0.0,
        trace_width_m=width_m,
        short_width_m=width_m,
        port_gap_m=0.5e-3,
        ground=GROUND,
        laminate=laminate,
    )


NO_LEGS = t.TlineIfaOptions(leg_inductance=False)

ifa_geometry = st.fixed_dictionaries(
    {
        "height_m": st.floats(min_value=1.5e-3, max_value=10e-3),
        "arm_m": st.floats(min_value=10e-3, max_value=60e-3),
        "width_m": st.floats(min_value=0.2e-3, max_value=1.2e-3),
        "spacing_frac": st.floats(min_value=0.05, max_value=0.5),
        "eps_r": st.floats(min_value=1.0, max_value=10.0),
        "thickness_m": st.floats(min_value=0.2e-3, max_value=1.6e-3),
    }
)


def _build(geometry: dict) -> PrintedIfa:
    return straight_ifa(
        height_m=geometry["height_m"],
        arm_m=geometry["arm_m"],
        spacing_m=max(geometry["spacing_frac"] * geometry["arm_m"], 1.1 * geometry["width_m"]),
        width_m=geometry["width_m"],
        laminate=Laminate(geometry["eps_r"], geometry["thickness_m"], 0.01),
    )


def _line_eps_eff(ifa: PrintedIfa) -> float:
    return float(
        lines.eps_eff_strip_beside_ground_edge(
            ifa.trace_width_m, ifa.height_m - ifa.trace_width_m / 2, ifa.laminate.eps_r,
            ifa.laminate.thickness_m,
        )
    )


# --------------------------------------------------------------------------------------------
# resonance
# --------------------------------------------------------------------------------------------


@settings(max_examples=40, deadline=None)
@given(geometry=ifa_geometry)
def test_ideal_arm_resonates_at_quarter_wave(geometry):
    # Source: transmission-line theory; a line shorted at one end and open at the other
    # (tapped anywhere) is resonant where beta L = pi/2 (Pozar, "Microwave Engineering", 4th ed.
    # 2012, sec. 6.2, quarter-wave resonators (from memory)).  c is the SI exact value.
    ifa = _build(geometry)
    expected = C0_M_PER_S / (4.0 * ifa.arm_length_m * math.sqrt(_line_eps_eff(ifa)))
    assert t.resonance_tline_ifa_hz(ifa, NO_LEGS) == pytest.approx(expected, rel=RESONANCE_RTOL)


@settings(max_examples=40, deadline=None)
@given(geometry=ifa_geometry)
def test_short_leg_adds_less_than_its_height(geometry):
    # Common practice, no source: an IFA resonates when arm plus short-leg height is about a
    # guided quarter wave.  The model's lumped short leg lengthens the arm electrically, but by
    # less than H: the resonance lies between the L and the L + H quarter-wave frequencies.
    ifa = _build(geometry)
    root_eps = math.sqrt(_line_eps_eff(ifa))
    f_arm = C0_M_PER_S / (4.0 * ifa.arm_length_m * root_eps)
    f_arm_and_leg = C0_M_PER_S / (4.0 * (ifa.arm_length_m + ifa.height_m) * root_eps)
    assert f_arm_and_leg < t.resonance_tline_ifa_hz(ifa) < f_arm


@pytest.mark.parametrize("scale", [0.8, 1.25])
def test_eps_eff_scale_moves_the_ideal_resonance(scale):
    # Transmission-line theory: beta = 2 pi f sqrt(eps_eff)/c, so beta L = pi/2 moves as
    # 1/sqrt(scale) (Pozar 4th ed. sec. 6.2 (from memory)).
    ifa = straight_ifa()
    scaled = replace(NO_LEGS, eps_eff_scale=scale)
    assert t.resonance_tline_ifa_hz(ifa, scaled) == pytest.approx(
        t.resonance_tline_ifa_hz(ifa, NO_LEGS) / math.sqrt(scale), rel=RESONANCE_RTOL
    )


def test_open_end_extension_lengthens_the_ideal_arm():
    # Transmission-line theory: the extension adds to the quarter-wave length.
    ifa = straight_ifa()
    extension = 1.5e-3
    options = replace(NO_LEGS, open_end_extension_m=extension)
    expected = C0_M_PER_S / (4.0 * (ifa.arm_length_m + extension) * math.sqrt(_line_eps_eff(ifa)))
    assert t.resonance_tline_ifa_hz(ifa, options) == pytest.approx(expected, rel=RESONANCE_RTOL)


def test_resonance_does_not_depend_on_the_tap():
    # Circuit theory: the pole of Z_in is the natural frequency with the port open, where the
    # feed leg carries no current, so moving the tap cannot move it.
    f = [t.resonance_tline_ifa_hz(straight_ifa(spacing_m=s)) for s in (1e-3, 3e-3, 6e-3)]
    assert f[1] == pytest.approx(f[0], rel=RESONANCE_RTOL)
    assert f[2] == pytest.approx(f[0], rel=RESONANCE_RTOL)


# --------------------------------------------------------------------------------------------
# tap and bandwidth
# --------------------------------------------------------------------------------------------


def test_moving_the_feed_away_from_the_short_raises_resistance():
    # Common practice, no source: the feed-short spacing is the IFA's matching tap; a wider
    # spacing raises the resistance at resonance.
    base = straight_ifa()
    f_res = t.resonance_tline_ifa_hz(base)
    spacings = np.linspace(0.6e-3, 8e-3, 12)
    resistance = [
        float(np.real(t.zin_tline_ifa([f_res], t.with_feed_short_spacing(base, s))[0]))
        for s in spacings
    ]
    assert np.all(np.diff(resistance) > 0.0)
    assert resistance[0] < t.FEED_REFERENCE_OHM < resistance[-1]


@pytest.mark.parametrize("height_m", [3e-3, 4e-3, 6e-3])
def test_matched_straight_ifa_bandwidth_is_several_percent(height_m):
    # Common practice, no source: -10 dB bandwidth of a printed IFA of typical height is a few
    # to ~10 %.  (Guards the radiation calibration, see the module docstring.)
    ifa = t.tune_tline_ifa(TARGET_HZ, straight_ifa(height_m=height_m))
    low, high = t.bandwidth_tline_ifa_hz(ifa)
    fraction = (high - low) / t.resonance_tline_ifa_hz(ifa)
    assert BANDWIDTH_MIN < fraction < BANDWIDTH_MAX
    assert low < TARGET_HZ < high


def test_taller_ifa_has_wider_band():
    # Common practice, no source: bandwidth grows with the arm's height over the ground.
    fractions = []
    for height_m in (2e-3, 4e-3, 8e-3):
        ifa = t.tune_tline_ifa(TARGET_HZ, straight_ifa(height_m=height_m, width_m=0.3e-3))
        low, high = t.bandwidth_tline_ifa_hz(ifa)
        fractions.append((high - low) / t.resonance_tline_ifa_hz(ifa))
    assert fractions[0] < fractions[1] < fractions[2]


def test_physics_only_radiation_cannot_be_matched():
    # Balanis, "Antenna Theory", 3rd ed. 2005, eq. (4-19): R = 80 pi^2 (H/lambda)^2 for the legs
    # as a short dipole, under 1 ohm here.  Documents the module's claim that this alone is far
    # too small: the resonant resistance stays far above 50 ohm even with the legs touching.
    options = t.TlineIfaOptions(radiation_model="hertzian_legs")
    ifa = straight_ifa(width_m=0.3e-3)
    r_rad = float(t.radiation_resistance_ohm(TARGET_HZ, ifa, options))
    assert r_rad == pytest.approx(80 * math.pi**2 * (ifa.height_m * TARGET_HZ / C0_M_PER_S) ** 2)
    assert r_rad < 1.0
    with pytest.raises(SolverError, match="z_target_ohm"):
        t.feed_short_spacing_for_match_m(ifa, options=options)


# --------------------------------------------------------------------------------------------
# synthesis round trips
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("freq_hz", [0.868e9, 2.44e9, 5.5e9])
def test_arm_length_for_resonance_round_trip(freq_hz):
    # Consistency: the solved length resonates at the requested frequency.
    base = straight_ifa(arm_m=20e-3 * 2.44e9 / freq_hz, spacing_m=1e-3)
    length = t.arm_length_for_resonance_m(freq_hz, base)
    assert t.resonance_tline_ifa_hz(t.with_arm_length(base, length)) == pytest.approx(
        freq_hz, rel=ROUND_TRIP_RTOL
    )


def test_feed_spacing_for_match_round_trip():
    # Consistency: the solved tap gives Re(Z_in) = 50 ohm at resonance.
    base = straight_ifa()
    spacing = t.feed_short_spacing_for_match_m(base)
    tuned = t.with_feed_short_spacing(base, spacing)
    z = t.zin_tline_ifa([t.resonance_tline_ifa_hz(tuned)], tuned)[0]
    assert z.real == pytest.approx(50.0, rel=ROUND_TRIP_RTOL)


def test_feed_spacing_for_match_at_a_given_frequency():
    # Consistency: with freq_hz the solved tap gives Re(Z_in) = 50 ohm at that frequency.
    base = straight_ifa()
    freq_hz = 0.99 * t.resonance_tline_ifa_hz(base)
    tuned = t.with_feed_short_spacing(base, t.feed_short_spacing_for_match_m(base, freq_hz=freq_hz))
    assert t.zin_tline_ifa([freq_hz], tuned)[0].real == pytest.approx(50.0, rel=ROUND_TRIP_RTOL)


def test_unreachable_match_is_refused():
    # Consistency: a wide, tall arm whose resistance at touching legs already exceeds 50 ohm.
    with pytest.raises(SolverError, match="z_target_ohm"):
        t.feed_short_spacing_for_match_m(straight_ifa(height_m=8e-3, width_m=1e-3))


# --------------------------------------------------------------------------------------------
# consistency and limits
# --------------------------------------------------------------------------------------------


def test_vectorised_equals_pointwise():
    ifa = straight_ifa()
    f = np.linspace(1.5e9, 3.5e9, 17)
    together = t.zin_tline_ifa(f, ifa)
    one_by_one = np.array([t.zin_tline_ifa([fi], ifa)[0] for fi in f])
    np.testing.assert_allclose(together, one_by_one, rtol=IDENTITY_RTOL)


def test_splitting_a_straight_arm_changes_nothing():
    # Transmission-line theory: cascading collinear sections of one line is the same line.
    ifa = straight_ifa()
    split = replace(ifa, arm_path_m=((0.0, 4e-3), (1e-3, 4e-3), (7e-3, 4e-3), (20e-3, 4e-3)))
    f = np.linspace(1.5e9, 3.5e9, 9)
    np.testing.assert_allclose(
        t.zin_tline_ifa(f, split), t.zin_tline_ifa(f, ifa), rtol=IDENTITY_RTOL
    )


def test_mirrored_ifa_is_the_same():
    f = np.linspace(1.5e9, 3.5e9, 9)
    np.testing.assert_allclose(
        t.zin_tline_ifa(f, straight_ifa(direction=-1.0)),
        t.zin_tline_ifa(f, straight_ifa()),
        rtol=IDENTITY_RTOL,
    )


def test_meandered_arm_uses_its_centreline():
    # Model statement: a meander is its centreline (coupling ignored); its quarter-wave
    # estimate uses every segment, so it is below that of the arm's straight first part.
    meander = replace(
        straight_ifa(),
        arm_path_m=(
            (0.0, 4e-3), (8e-3, 4e-3), (8e-3, 7e-3), (11e-3, 7e-3), (11e-3, 4e-3), (20e-3, 4e-3)
        ),
    )
    assert meander.arm_length_m == pytest.approx(26e-3)
    f_res = t.resonance_tline_ifa_hz(meander, NO_LEGS)
    assert f_res == pytest.approx(t.quarter_wave_estimate_hz(meander), rel=2e-2)
    assert f_res < t.resonance_tline_ifa_hz(straight_ifa(), NO_LEGS)


@settings(max_examples=30, deadline=None)
@given(geometry=ifa_geometry)
def test_passive(geometry):
    # Physics: a passive one-port has Re(Z_in) >= 0 and |S11| <= 1 at every frequency.
    ifa = _build(geometry)
    f = np.linspace(0.3, 3.0, 301) * t.quarter_wave_estimate_hz(ifa)
    z = t.zin_tline_ifa(f, ifa)
    assert np.all(z.real >= -1e-9 * np.abs(z))
    assert np.all(np.abs(t.s11_tline_ifa(f, ifa)) <= 1.0 + 1e-12)


def test_lossless_model_is_reactive():
    # Physics: without radiation or dielectric loss the one-port is a pure reactance.
    options = t.TlineIfaOptions(radiation_resistance_ohm=0.0, dielectric_loss=False)
    z = t.zin_tline_ifa(np.linspace(1e9, 4e9, 31), straight_ifa(), options)
    assert np.all(np.abs(z.real) <= 1e-9 * np.abs(z))


def test_coincident_legs_short_the_port():
    # Circuit theory: feed and short legs on top of each other (M = L, spacing far below the
    # strips' geometric mean distance) and a 1 nm line between them short the lossless port.
    ifa = replace(straight_ifa(width_m=1e-8, spacing_m=1e-9), short_width_m=1e-8)
    legs = t.leg_inductances(ifa)
    assert legs.mutual_h == legs.feed_h == legs.short_h
    options = t.TlineIfaOptions(radiation_resistance_ohm=0.0, dielectric_loss=False)
    z = t.zin_tline_ifa(np.array([1e9, 2.4e9, 4e9]), ifa, options)
    assert np.all(np.abs(z) < 1e-3)


# --------------------------------------------------------------------------------------------
# building blocks against outside references
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("length_m", "distance_m"), [(4e-3, 0.5e-3), (4e-3, 2e-3), (4e-3, 8e-3), (1e-2, 1e-4)]
)
def test_mutual_inductance_matches_neumann_integral(length_m, distance_m):
    # Source: Neumann's formula M = mu0/(4 pi) double integral dl1.dl2 / r (Paul, "Inductance:
    # Loop and Partial", 2010, ch. 5 (from memory)), evaluated with scipy dblquad.
    value, _ = integrate.dblquad(
        lambda z1, z2: 1.0 / math.sqrt((z1 - z2) ** 2 + distance_m**2),
        0.0, length_m, 0.0, length_m, epsabs=0.0, epsrel=1e-12,
    )
    reference = MU0_H_PER_M / (4.0 * math.pi) * value
    assert t.parallel_filaments_mutual_inductance_h(length_m, distance_m) == pytest.approx(
        reference, rel=NEUMANN_RTOL
    )


@pytest.mark.parametrize(("length_m", "width_m"), [(4e-3, 1e-3), (4e-3, 0.5e-3), (10e-3, 0.3e-3)])
def test_strip_self_inductance_matches_uniform_current_integral(length_m, width_m):
    # Source: partial self-inductance of a thin strip with uniform current = mean of the exact
    # filament mutual inductance over the width (Neumann formula, Paul 2010 (from memory)):
    # L = 2/w^2 int_0^w (w - u) M(l, u) du, scipy quad.
    value, _ = integrate.quad(
        lambda u: (width_m - u) * t.parallel_filaments_mutual_inductance_h(length_m, u),
        0.0, width_m, limit=200, epsrel=1e-12,
    )
    reference = 2.0 * value / width_m**2
    assert t.strip_partial_inductance_h(length_m, width_m) == pytest.approx(
        reference, rel=GROVER_STRIP_RTOL
    )


@pytest.mark.parametrize("eps_r", [2.2, 4.4, 10.2])
def test_dielectric_attenuation_matches_skrf(eps_r):
    # Source: scikit-rf 2.2 skrf.media.MLine.alpha_dielectric (same quasi-TEM filling-factor
    # formula), evaluated with skrf's own eps_eff.
    frequency = skrf.Frequency(1.0, 5.0, 5, "GHz")
    media = MLine(
        frequency=frequency, w=1e-3, h=0.8e-3, t=None, ep_r=eps_r, disp="none",
        diel="frequencyinvariant", tand=0.02, compatibility_mode="qucs",
    )
    eps_eff = float(np.real(np.atleast_1d(media.ep_reff)[0]))
    ours = t.dielectric_attenuation_np_per_m(frequency.f, eps_r, eps_eff, 0.02)
    np.testing.assert_allclose(ours, media.alpha_dielectric, rtol=1e-9)


# --------------------------------------------------------------------------------------------
# refusals
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("ifa", "options", "needle"),
    [
        (straight_ifa(spacing_m=25e-3), t.DEFAULT_OPTIONS, "feed_x_m"),
        (straight_ifa(height_m=0.2e-3), t.DEFAULT_OPTIONS, "arm_path_m"),
        (straight_ifa(), t.TlineIfaOptions(radiation_model="guess"), "radiation_model"),
        (
            straight_ifa(),
            t.TlineIfaOptions(radiation_resistance_ohm=-1.0),
            "radiation_resistance_ohm",
        ),
        (replace(straight_ifa(), laminate=Laminate(0.5, 1e-3)), t.DEFAULT_OPTIONS, "eps_r"),
        (straight_ifa(), t.TlineIfaOptions(eps_eff_scale=0.0), "eps_eff_scale"),
        (straight_ifa(), t.TlineIfaOptions(open_end_extension_m=-1e-3), "open_end_extension_m"),
    ],
)
def test_bad_inputs_are_refused(ifa, options, needle):
    with pytest.raises(SolverError, match=needle) as info:
        t.zin_tline_ifa([2.4e9], ifa, options)
    assert "\n" not in str(info.value)


def test_bad_frequency_is_refused():
    with pytest.raises(SolverError, match="freq_hz"):
        t.zin_tline_ifa([0.0, 1e9], straight_ifa())
