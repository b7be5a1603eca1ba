"""Checks of footgen.physics.lines against outside references.

References used beside each check: scikit-rf 2.2 media models (skrf.media.MLine,
skrf.media.CPW), mpmath's complete elliptic integral, a textbook worked example and
closed-form limits of the conformal mappings.
"""

from __future__ import annotations

import itertools
import math

import mpmath
import numpy as np
import pytest
import skrf
from hypothesis import given, settings
from hypothesis import strategies as st
from skrf.media import CPW, MLine

from footgen.constants import ETA0_OHM
from footgen.errors import SolverError
from footgen.physics import lines

#: mpmath vs scipy for K(k)/K(k'): both near double precision.
ELLIPTIC_RTOL = 1e-13
#: skrf MLine implements the same Hammerstad-Jensen equations; skrf's eta0 uses its own mu0.
SKRF_MLINE_RTOL = 1e-8
#: skrf CPW uses Hilberg's approximation of K/K' (max error about 2 ppm, skrf.media.cpw.ellipa).
SKRF_CPW_RTOL = 1e-5
#: Below this modulus skrf's Hilberg branch loses digits (1 - sqrt(k') cancels); such cases are
#: checked against mpmath instead.
SKRF_CPW_MIN_MODULUS = 1e-3
#: Synthesis round trip (root finder tolerance is 1e-10).
ROUND_TRIP_RTOL = 1e-8
#: Pozar, Microwave Engineering 4th ed. Example 3.7 quotes three significant figures.
POZAR_EXAMPLE_RTOL_WHEELER = 2e-3
#: Hammerstad-Jensen vs Pozar's (Wheeler/Schneider) formulas in that example: ~1 % apart.
POZAR_EXAMPLE_RTOL_HJ = 2e-2
#: Limits reached at the extreme geometries the property tests use.
LIMIT_RTOL = 1e-4

FREQ = skrf.Frequency(1.0, 1.0, 1, "GHz")


def _first_real(values) -> float:
    return float(np.real(np.atleast_1d(values)[0]))


def _skrf_mline(width_m, height_m, eps_r, thickness_m):
    # Quasi-static values: no dispersion, frequency-invariant real permittivity.
    media = MLine(
        frequency=FREQ, w=width_m, h=height_m, t=thickness_m, ep_r=eps_r, disp="none",
        diel="frequencyinvariant", tand=0.0, compatibility_mode="qucs",
    )
    return _first_real(media.zl_eff), _first_real(media.ep_reff)


def _skrf_cpw(width_m, gap_m, height_m, eps_r, metal_backside):
    media = CPW(
        frequency=FREQ, w=width_m, s=gap_m, h=height_m, ep_r=eps_r, t=None,
        has_metal_backside=metal_backside, diel="frequencyinvariant", tand=0.0,
        compatibility_mode="qucs",
    )
    return _first_real(media.zl_eff), _first_real(media.ep_reff)


def _mp_k_ratio(k):
    """K(k)/K(k') with mpmath (parameter m = k**2); enough digits that 1 - k**2 is exact."""
    digits = 40 + 2 * int(abs(math.log10(k))) if k > 0 else 40
    with mpmath.workdps(digits):
        k = mpmath.mpf(k)
        return float(mpmath.ellipk(k * k) / mpmath.ellipk(1 - k * k))


# --------------------------------------------------------------------------------------------
# elliptic ratio
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("k", [1e-12, 1e-6, 1e-3, 0.1, 0.5, 0.9, 0.999, 1 - 1e-6, 1 - 1e-12])
def test_elliptic_ratio_matches_mpmath(k):
    # Source: mpmath.ellipk (arbitrary precision reference library).
    assert float(lines.elliptic_k_ratio(k)) == pytest.approx(_mp_k_ratio(k), rel=ELLIPTIC_RTOL)


def test_elliptic_ratio_is_one_at_the_self_dual_modulus():
    # K(k) = K(k') at k = 1/sqrt(2) (definition of the complementary modulus).
    assert float(lines.elliptic_k_ratio(math.sqrt(0.5))) == pytest.approx(1.0, rel=ELLIPTIC_RTOL)


@settings(deadline=None)  # mpmath at several hundred digits for the tiniest k
@given(st.floats(min_value=1e-300, max_value=1.0, exclude_max=True))
def test_elliptic_ratio_matches_mpmath_anywhere(k):
    # Source: mpmath.ellipk, over the whole open range of the modulus.
    assert float(lines.elliptic_k_ratio(k)) == pytest.approx(_mp_k_ratio(k), rel=ELLIPTIC_RTOL)


# --------------------------------------------------------------------------------------------
# microstrip
# --------------------------------------------------------------------------------------------

MLINE_GRID = list(
    itertools.product(
        [0.05e-3, 0.1e-3, 0.3e-3, 1e-3, 3e-3, 10e-3],  # width
        [0.2e-3, 0.4e-3, 0.8e-3, 1.6e-3],  # height
        [1.5, 2.2, 3.0, 4.4, 10.2],  # eps_r (skrf divides by eps_r - 1: no 1.0)
        [None, 35e-6],  # strip thickness
    )
)


def test_microstrip_matches_skrf_mline_hammerstad_jensen():
    # Source: scikit-rf 2.2 skrf.media.MLine(model='hammerstadjensen', disp='none').
    worst_z = worst_e = 0.0
    for width, height, eps_r, thickness in MLINE_GRID:
        z_ref, e_ref = _skrf_mline(width, height, eps_r, thickness)
        z, e = lines.microstrip_hammerstad_jensen(width, eps_r, height, thickness or 0.0)
        worst_z = max(worst_z, abs(z / z_ref - 1))
        worst_e = max(worst_e, abs(e / e_ref - 1))
    assert worst_z < SKRF_MLINE_RTOL
    assert worst_e < SKRF_MLINE_RTOL


def test_microstrip_pozar_worked_example():
    # Source: Pozar, "Microwave Engineering", 4th ed. 2012, Example 3.7 (from memory):
    # 50 ohm on d = 0.127 cm, eps_r = 2.20 -> W/d = 3.081, W = 0.391 cm, eps_e = 1.87.
    height = 1.27e-3
    assert lines.microstrip_width_ratio_wheeler(50.0, 2.20) == pytest.approx(
        3.081, rel=POZAR_EXAMPLE_RTOL_WHEELER
    )
    width = lines.microstrip_width_for_z0(50.0, 2.20, height)
    assert width == pytest.approx(3.91e-3, rel=POZAR_EXAMPLE_RTOL_HJ)
    eps_eff = float(lines.eps_eff_microstrip_hammerstad_jensen(width, 2.20, height))
    assert eps_eff == pytest.approx(1.87, rel=POZAR_EXAMPLE_RTOL_HJ)


@pytest.mark.parametrize("height", [0.4e-3, 0.8e-3, 1.0e-3, 1.6e-3])
@pytest.mark.parametrize("eps_r", [3.0, 4.4, 4.6])
@pytest.mark.parametrize("z0", [25.0, 50.0, 75.0, 120.0])
def test_microstrip_synthesis_round_trip(height, eps_r, z0):
    # Consistency: synthesis inverts the Hammerstad-Jensen analysis.
    width = lines.microstrip_width_for_z0(z0, eps_r, height)
    assert float(lines.z0_microstrip_hammerstad_jensen(width, eps_r, height)) == pytest.approx(
        z0, rel=ROUND_TRIP_RTOL
    )


@given(
    u=st.floats(min_value=0.05, max_value=20.0),
    eps_r=st.floats(min_value=1.0, max_value=12.0),
    factor=st.floats(min_value=1.01, max_value=3.0),
)
def test_microstrip_monotonic(u, eps_r, factor):
    # Physics: a wider strip has lower Z0 and a larger filling factor; 1 <= eps_eff <= eps_r.
    h = 1e-3
    z1, e1 = lines.microstrip_hammerstad_jensen(u * h, eps_r, h)
    z2, e2 = lines.microstrip_hammerstad_jensen(factor * u * h, eps_r, h)
    assert z2 < z1
    assert e2 >= e1 - 1e-12
    assert 1.0 - 1e-12 <= e1 <= eps_r + 1e-12


# --------------------------------------------------------------------------------------------
# coplanar waveguide
# --------------------------------------------------------------------------------------------

CPW_GRID = list(
    itertools.product(
        [0.1e-3, 0.3e-3, 1e-3, 3e-3],  # centre width
        [0.05e-3, 0.15e-3, 0.5e-3, 2e-3],  # gap
        [0.2e-3, 0.4e-3, 0.8e-3, 1.6e-3],  # slab thickness
        [1.5, 2.2, 4.4, 10.2],
    )
)


def _air_backed_k1(width, gap, height):
    a = math.pi * width / (4 * height)
    b = math.pi * (width + 2 * gap) / (4 * height)
    return math.sinh(a) / math.sinh(b)


@pytest.mark.parametrize(
    ("metal_backside", "model"),
    [(False, lines.cpw_air_backed), (True, lines.cpw_conductor_backed)],
)
def test_cpw_matches_skrf(metal_backside, model):
    # Source: scikit-rf 2.2 skrf.media.CPW (Ghione & Naldi 1984 / 1983 quasi-static part),
    # has_metal_backside False/True, t=None.
    worst_z = worst_e = 0.0
    compared = 0
    for width, gap, height, eps_r in CPW_GRID:
        if not metal_backside and _air_backed_k1(width, gap, height) < SKRF_CPW_MIN_MODULUS:
            continue
        z_ref, e_ref = _skrf_cpw(width, gap, height, eps_r, metal_backside)
        z, e = model(width, gap, eps_r, height)
        worst_z = max(worst_z, abs(z / z_ref - 1))
        worst_e = max(worst_e, abs(e / e_ref - 1))
        compared += 1
    assert compared > len(CPW_GRID) // 2
    assert worst_z < SKRF_CPW_RTOL
    assert worst_e < SKRF_CPW_RTOL


def test_cpw_thin_slab_wide_gap_matches_mpmath():
    # Source: Ghione & Naldi, Electron. Lett. 20(4) 1984, eqs. (1)-(3) evaluated with mpmath
    # (here skrf's Hilberg approximation loses digits: k1 ~ 1e-7).
    width, gap, height, eps_r = 0.1e-3, 2e-3, 0.2e-3, 10.2
    with mpmath.workdps(50):
        a = mpmath.pi * width / (4 * height)
        b = mpmath.pi * (width + 2 * gap) / (4 * height)
        k0 = mpmath.mpf(width) / (width + 2 * gap)
        k1 = mpmath.sinh(a) / mpmath.sinh(b)

        def q(k):
            return mpmath.ellipk(k * k) / mpmath.ellipk(1 - k * k)

        e_ref = 1 + (eps_r - 1) / 2 * q(k1) / q(k0)
        # the paper's 30 pi is eta0/4 with eta0 ~ 120 pi; footgen uses the CODATA eta0
        z_ref = ETA0_OHM / 4 / mpmath.sqrt(e_ref) / q(k0)
    z, e = lines.cpw_air_backed(width, gap, eps_r, height)
    assert float(e) == pytest.approx(float(e_ref), rel=1e-12)
    assert float(z) == pytest.approx(float(z_ref), rel=1e-12)


@pytest.mark.parametrize("height", [0.4e-3, 0.8e-3, 1.6e-3])
@pytest.mark.parametrize("eps_r", [3.5, 4.4])
@pytest.mark.parametrize("width_ratio", [0.25, 0.5, 1.0, 1.5])
def test_gcpw_synthesis_round_trip(height, eps_r, width_ratio):
    # Consistency: 50 ohm feed lines on the boards footgen targets (w/h <= 1.5: wider strips
    # on FR-4 cannot reach 50 ohm as grounded CPW, see the refusal test below).
    width = width_ratio * height
    gap = lines.gcpw_gap_for_z0(50.0, width, eps_r, height)
    assert float(lines.cpw_conductor_backed(width, gap, eps_r, height)[0]) == pytest.approx(
        50.0, rel=ROUND_TRIP_RTOL
    )
    gap_air = lines.cpw_gap_for_z0(50.0, width, eps_r, height)
    assert float(lines.cpw_air_backed(width, gap_air, eps_r, height)[0]) == pytest.approx(
        50.0, rel=ROUND_TRIP_RTOL
    )


def test_gcpw_unreachable_impedance_is_refused():
    # Z0 of the conductor-backed line saturates as the gap grows (Ghione & Naldi 1983 limit:
    # q0 -> 0, q3 finite); a narrow strip on a thin slab cannot reach 150 ohm.
    with pytest.raises(SolverError, match="z0_ohm"):
        lines.gcpw_gap_for_z0(150.0, 0.2e-3, 4.4, 0.2e-3)


@given(
    width=st.floats(min_value=0.05e-3, max_value=5e-3),
    gap=st.floats(min_value=0.05e-3, max_value=5e-3),
    eps_r=st.floats(min_value=1.0, max_value=12.0),
)
def test_cpw_thick_slab_limit(width, gap, eps_r):
    # Limit of Ghione & Naldi 1984 eq. (3): h -> inf gives eps_eff -> (eps_r + 1)/2 and
    # Z0 -> 30 pi / sqrt(eps_eff) K(k0')/K(k0) (Wen 1969 CPW, from memory); the conductor-backed
    # line tends to the same limit (k3 -> k0).
    height = 1e4 * (width + 2 * gap)
    k0 = width / (width + 2 * gap)
    z_inf = ETA0_OHM / 4 / math.sqrt((eps_r + 1) / 2) / _mp_k_ratio(k0)
    for model in lines.CPW_MODELS.values():
        z, e = model(width, gap, eps_r, height)
        assert float(e) == pytest.approx((eps_r + 1) / 2, rel=LIMIT_RTOL)
        assert float(z) == pytest.approx(z_inf, rel=LIMIT_RTOL)


@given(
    width=st.floats(min_value=0.1e-3, max_value=3e-3),
    gap=st.floats(min_value=0.05e-3, max_value=3e-3),
    height=st.floats(min_value=0.2e-3, max_value=3.2e-3),
    eps_r=st.floats(min_value=1.5, max_value=12.0),
    factor=st.floats(min_value=1.05, max_value=3.0),
)
def test_cpw_monotonic(width, gap, height, eps_r, factor):
    # Physics: a wider gap raises Z0; eps_eff stays between 1 and eps_r; a conductor backing
    # adds capacitance (lower Z0) compared with air below.
    for model in lines.CPW_MODELS.values():
        z1, e1 = model(width, gap, eps_r, height)
        z2, _ = model(width, factor * gap, eps_r, height)
        assert z2 > z1
        assert 1.0 <= e1 <= eps_r
    assert lines.cpw_conductor_backed(width, gap, eps_r, height)[0] < lines.cpw_air_backed(
        width, gap, eps_r, height
    )[0]


# --------------------------------------------------------------------------------------------
# strip beside a coplanar ground edge
# --------------------------------------------------------------------------------------------

strip_w = st.floats(min_value=0.05e-3, max_value=3e-3)
strip_g = st.floats(min_value=0.05e-3, max_value=20e-3)
eps_values = st.floats(min_value=1.0, max_value=12.0)
slab_h = st.floats(min_value=0.1e-3, max_value=3.2e-3)


@given(width=strip_w, gap=strip_g)
def test_strip_beside_edge_free_space_is_exact_acps(width, gap):
    # Source: asymmetric coplanar strips in free space, Gupta, Garg, Bahl & Bhartia,
    # "Microstrip Lines and Slotlines", 2nd ed. 1996, ch. 7 (from memory):
    # k = sqrt(s (s + w1 + w2) / ((s + w1)(s + w2))), Z0 = 60 pi K(k)/K(k'); w2 -> inf.
    # (60 pi is eta0/2 with eta0 ~ 120 pi; the CODATA eta0 is used here.)
    w2 = 1e9 * (width + gap)
    k = math.sqrt(gap * (gap + width + w2) / ((gap + width) * (gap + w2)))
    z_ref = ETA0_OHM / 2 * _mp_k_ratio(k)
    z_air = float(lines.z0_strip_beside_ground_edge_air(width, gap))
    assert z_air == pytest.approx(z_ref, rel=1e-6)
    # eps_r = 1 on any slab is free space.
    assert float(lines.z0_strip_beside_ground_edge(width, gap, 1.0, 1e-3)) == pytest.approx(
        z_ref, rel=1e-6
    )


@given(width=strip_w, gap=strip_g, eps_r=eps_values)
def test_strip_beside_edge_thick_slab_limit(width, gap, eps_r):
    # Limit (Gupta et al. 1996 ch. 7 partial capacitance): h -> inf fills one half-space,
    # eps_eff -> (eps_r + 1)/2.
    height = 1e4 * (width + gap)
    eps_eff = float(lines.eps_eff_strip_beside_ground_edge(width, gap, eps_r, height))
    assert eps_eff == pytest.approx((eps_r + 1) / 2, rel=LIMIT_RTOL)


@given(width=strip_w, gap=strip_g, eps_r=eps_values)
def test_strip_beside_edge_vanishing_slab_limit(width, gap, eps_r):
    # Limit: h -> 0 leaves the line in air, eps_eff -> 1.
    height = 1e-6 * min(width, gap)
    eps_eff = float(lines.eps_eff_strip_beside_ground_edge(width, gap, eps_r, height))
    assert eps_eff == pytest.approx(1.0, rel=LIMIT_RTOL)


@given(width=strip_w, eps_r=eps_values, height=slab_h)
def test_strip_beside_edge_far_from_a_thin_slab_is_air(width, eps_r, height):
    # Limit (brief, physics): gap >> h: the field lives mostly in air, eps_eff -> 1
    # (slowly: eps_eff - 1 falls like h/gap).
    gap = 1e6 * height
    eps_eff = float(lines.eps_eff_strip_beside_ground_edge(width, gap, eps_r, height))
    assert eps_eff == pytest.approx(1.0, abs=LIMIT_RTOL * eps_r)


@settings(max_examples=200)
@given(width=strip_w, gap=strip_g, eps_r=st.floats(min_value=1.5, max_value=12.0), height=slab_h,
       factor=st.floats(min_value=1.05, max_value=4.0))
def test_strip_beside_edge_monotonic(width, gap, eps_r, height, factor):
    # Physics: 1 < eps_eff < (eps_r + 1)/2; wider gap -> higher Z0, lower eps_eff; thicker
    # slab -> higher eps_eff; wider strip -> lower Z0.
    e = float(lines.eps_eff_strip_beside_ground_edge(width, gap, eps_r, height))
    assert 1.0 <= e <= (eps_r + 1) / 2
    z = float(lines.z0_strip_beside_ground_edge(width, gap, eps_r, height))
    assert float(lines.z0_strip_beside_ground_edge(width, factor * gap, eps_r, height)) > z
    assert float(lines.eps_eff_strip_beside_ground_edge(width, factor * gap, eps_r, height)) <= e
    assert float(lines.eps_eff_strip_beside_ground_edge(width, gap, eps_r, factor * height)) >= e
    assert float(lines.z0_strip_beside_ground_edge(factor * width, gap, eps_r, height)) < z


def test_strip_beside_edge_slab_modulus_is_the_mapped_cross_ratio():
    # Consistency of the closed form with the general cross-ratio (exp(pi z/h) mapping).
    width, gap, height = 0.5e-3, 3e-3, 1.6e-3
    m, m1 = lines.cross_ratio_two_coplanar_conductors(
        0.0, 1.0, math.exp(math.pi * gap / height), math.exp(math.pi * (gap + width) / height)
    )
    q_slab = float(lines.elliptic_k_ratio_from_m(m1, m))
    q_air = float(lines.elliptic_k_ratio_from_m(width / (gap + width), gap / (gap + width)))
    expected = 1 + (4.4 - 1) / 2 * q_slab / q_air
    assert float(lines.eps_eff_strip_beside_ground_edge(width, gap, 4.4, height)) == pytest.approx(
        expected, rel=1e-12
    )


# --------------------------------------------------------------------------------------------
# refusals
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("call", "name"),
    [
        (lambda: lines.eps_eff_strip_beside_ground_edge(0.0, 1e-3, 4.4, 1e-3), "width_m"),
        (lambda: lines.z0_strip_beside_ground_edge(1e-3, -1e-3, 4.4, 1e-3), "gap_m"),
        (lambda: lines.eps_eff_strip_beside_ground_edge(1e-3, 1e-3, 0.5, 1e-3), "eps_r"),
        (lambda: lines.eps_eff_strip_beside_ground_edge(1e-3, 1e-3, 4.4, 0.0), "thickness_m"),
        (lambda: lines.microstrip_hammerstad_jensen(1e-3, 4.4, float("nan")), "height_m"),
        (lambda: lines.microstrip_width_for_z0(-50.0, 4.4, 1e-3), "z0_ohm"),
        (lambda: lines.cpw_conductor_backed(1e-3, 0.0, 4.4, 1e-3), "gap_m"),
        (lambda: lines.gcpw_gap_for_z0(50.0, 1e-3, 0.9, 1e-3), "eps_r"),
        (lambda: lines.elliptic_k_ratio(1.5), "k"),
    ],
)
def test_out_of_range_inputs_are_refused(call, name):
    with pytest.raises(SolverError) as info:
        call()
    message = str(info.value)
    assert name in message
    assert "\n" not in message


# --------------------------------------------------------------------------------------------
# strip beside a ground edge: closed form corrected to the finite-volume solver
# (accuracy against the solver is checked in tests/test_quasistatic2d.py)
# --------------------------------------------------------------------------------------------


@settings(max_examples=200)
@given(width=strip_w, gap=strip_g, eps_r=eps_values, height=slab_h)
def test_fitted_strip_stays_within_physical_bounds(width, gap, eps_r, height):
    # Physics: 1 <= eps_eff <= (eps_r + 1)/2 for coplanar conductors on one face of a slab (the
    # half-space value is the most the field can see); holds inside and outside the fit range.
    z, e = lines.strip_beside_ground_edge_fitted(width, gap, eps_r, height)
    assert 1.0 <= float(e) <= (eps_r + 1) / 2 + 1e-12
    # Z0 from the exact air capacitance: Z0 = Z0_air / sqrt(eps_eff).
    z_air = float(lines.z0_strip_beside_ground_edge_air(width, gap))
    assert float(z) == pytest.approx(z_air / math.sqrt(float(e)), rel=1e-12)


@given(width=strip_w, gap=strip_g, height=slab_h)
def test_fitted_strip_in_air_is_air(width, gap, height):
    # Physics: eps_r = 1 is free space, eps_eff = 1 exactly (filling factor times zero).
    assert float(lines.eps_eff_strip_beside_ground_edge_fitted(width, gap, 1.0, height)) == 1.0


def test_fitted_strip_raises_the_closed_form_where_the_gap_is_wide():
    # Documents the direction of the correction (FV solver, tests/test_quasistatic2d.py): the
    # partial-capacitance value is low, by more for gaps much wider than the slab.
    near = lines.eps_eff_strip_beside_ground_edge_fitted(0.8e-3, 0.6e-3, 4.4, 1.6e-3)
    far = lines.eps_eff_strip_beside_ground_edge_fitted(0.8e-3, 10e-3, 4.4, 0.4e-3)
    near_pc = lines.eps_eff_strip_beside_ground_edge(0.8e-3, 0.6e-3, 4.4, 1.6e-3)
    far_pc = lines.eps_eff_strip_beside_ground_edge(0.8e-3, 10e-3, 4.4, 0.4e-3)
    assert near > near_pc
    assert far / far_pc - 1.0 > near / near_pc - 1.0


def test_fitted_strip_refuses_bad_inputs():
    with pytest.raises(SolverError, match="thickness_m") as info:
        lines.strip_beside_ground_edge_fitted(1e-3, 1e-3, 4.4, -1e-3)
    assert "\n" not in str(info.value)
