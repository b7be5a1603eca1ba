"""Checks of the 2-D finite-volume quasi-static solver (footgen.physics.quasistatic2d) and of the
closed-form correction fitted to it (footgen.physics.lines.strip_beside_ground_edge_fitted).

Outside truth beside each check: exact conformal-mapping results evaluated with mpmath, and
scikit-rf 2.2's CPW model.  Each finite-volume solve takes about a second: the parameter lists
are short on purpose.
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from skrf import Frequency
from skrf.media import CPW

from footgen.constants import C0_M_PER_S, EPS0_F_PER_M, ETA0_OHM
from footgen.errors import SolverError
from footgen.physics import lines
from footgen.physics import quasistatic2d as qs

#: Capacitance in air against the exact mapping: measured 0.33-0.40 % (Richardson residual of
#: the geometrically graded grid, growth ratio 1.18).
AIR_CAPACITANCE_RTOL = 6e-3
#: Coplanar conductors on the face of a dielectric half-space: eps_eff is (eps_r + 1)/2 exactly;
#: the grid is symmetric about the conductor plane, so the solver reproduces it to rounding.
HALF_SPACE_RTOL = 1e-9
#: Ghione & Naldi's partial-capacitance CPW formula on a slab thicker than the gaps (s <= h/2):
#: about 1 % (from memory); measured here 0.1-0.5 %.
GHIONE_NALDI_RTOL = 1e-2
#: A very thick slab (h = 30 (w + 2s)) is within 2 % of the half-space value (eps_r + 1)/2
#: (the slab's lower face still holds a little of the field; Ghione & Naldi give the same).
THICK_SLAB_RTOL = 2e-2
#: The default grid against a finer one (growth 1.08, twice the cells at the edges): eps_eff.
GRID_CONVERGENCE_RTOL = 3e-3


def _mp_k_ratio(k: float) -> float:
    """K(k)/K(k') with mpmath (parameter m = k**2)."""
    with mpmath.workdps(40):
        k = mpmath.mpf(k)
        return float(mpmath.ellipk(k * k) / mpmath.ellipk(1 - k * k))


def _skrf_cpw(width_m, gap_m, height_m, eps_r):
    media = CPW(
        frequency=Frequency(1.0, 1.0, 1, "GHz"), w=width_m, s=gap_m, h=height_m, ep_r=eps_r,
        t=None, has_metal_backside=False, diel="frequencyinvariant", tand=0.0,
        compatibility_mode="qucs",
    )
    return (
        float(np.real(np.atleast_1d(media.zl_eff)[0])),
        float(np.real(np.atleast_1d(media.ep_reff)[0])),
    )


@pytest.mark.parametrize(("width_m", "gap_m"), [(0.2e-3, 0.5e-3), (0.8e-3, 4.6e-3), (2e-3, 20e-3)])
def test_strip_beside_edge_in_air_matches_the_exact_mapping(width_m, gap_m):
    # Source: asymmetric coplanar strips in free space, one strip infinitely wide (Gupta, Garg,
    # Bahl & Bhartia, "Microstrip Lines and Slotlines", 2nd ed. 1996, ch. 7 (from memory)):
    # C = 2 eps0 K(k')/K(k), k**2 = g/(g + w); elliptic integrals by mpmath.
    exact = 2.0 * EPS0_F_PER_M / _mp_k_ratio(math.sqrt(gap_m / (gap_m + width_m)))
    c = qs.strip_beside_ground_edge_capacitance_f_per_m(width_m, gap_m, 1.0, None)
    assert c == pytest.approx(exact, rel=AIR_CAPACITANCE_RTOL)


@pytest.mark.parametrize(("width_m", "gap_m"), [(1e-3, 0.5e-3), (0.3e-3, 2e-3)])
def test_cpw_in_air_matches_the_exact_mapping(width_m, gap_m):
    # Source: Wen, IEEE Trans. MTT 17(12) 1969, CPW in free space (from memory):
    # C = 4 eps0 K(k0)/K(k0'), k0 = w/(w + 2s); elliptic integrals by mpmath.
    exact = 4.0 * EPS0_F_PER_M * _mp_k_ratio(width_m / (width_m + 2.0 * gap_m))
    c = qs.cpw_capacitance_f_per_m(width_m, gap_m, 1.0, None)
    assert c == pytest.approx(exact, rel=AIR_CAPACITANCE_RTOL)


@pytest.mark.parametrize("eps_r", [2.2, 10.0])
def test_conductors_on_a_dielectric_half_space_give_the_mean_permittivity(eps_r):
    # Source: conformal mapping of coplanar conductors on the interface of two half-spaces:
    # the air potential solves both, so C = (eps_r + 1)/2 C_air (the h -> inf limit of Ghione &
    # Naldi, Electron. Lett. 20(4) 1984, eq. (3), and of Gupta et al. 1996 ch. 7 (from memory)).
    z, eps_eff = qs.strip_beside_ground_edge_fd(0.8e-3, 3e-3, eps_r, math.inf)
    assert eps_eff == pytest.approx((eps_r + 1.0) / 2.0, rel=HALF_SPACE_RTOL)
    _, eps_cpw = qs.cpw_air_backed_fd(1e-3, 0.5e-3, eps_r, math.inf)
    assert eps_cpw == pytest.approx((eps_r + 1.0) / 2.0, rel=HALF_SPACE_RTOL)


def test_cpw_on_a_thick_slab_approaches_the_half_space_limit():
    # Source: Ghione & Naldi 1984 eq. (3) limit h -> inf: eps_eff -> (eps_r + 1)/2 (from memory),
    # and scikit-rf 2.2 skrf.media.CPW at the same finite thickness.
    width, gap, eps_r = 0.5e-3, 0.25e-3, 4.4
    height = 30.0 * (width + 2.0 * gap)
    _, eps_eff = qs.cpw_air_backed_fd(width, gap, eps_r, height)
    assert eps_eff == pytest.approx((eps_r + 1.0) / 2.0, rel=THICK_SLAB_RTOL)
    assert eps_eff == pytest.approx(_skrf_cpw(width, gap, height, eps_r)[1], rel=GHIONE_NALDI_RTOL)


@pytest.mark.parametrize(
    ("width_m", "gap_m", "height_m", "eps_r"),
    [(1e-3, 0.5e-3, 1.6e-3, 4.4), (0.5e-3, 0.2e-3, 1.6e-3, 4.4), (0.3e-3, 0.15e-3, 0.8e-3, 10.2)],
)
def test_cpw_on_a_slab_matches_skrf(width_m, gap_m, height_m, eps_r):
    # Source: scikit-rf 2.2 skrf.media.CPW (Ghione & Naldi 1984 partial capacitance, air below,
    # t=None), accurate to about 1 % for s <= h/2 (from memory).
    z_ref, eps_ref = _skrf_cpw(width_m, gap_m, height_m, eps_r)
    z, eps_eff = qs.cpw_air_backed_fd(width_m, gap_m, eps_r, height_m)
    assert eps_eff == pytest.approx(eps_ref, rel=GHIONE_NALDI_RTOL)
    assert z == pytest.approx(z_ref, rel=GHIONE_NALDI_RTOL)


def test_z0_and_eps_eff_are_consistent_with_the_capacitances():
    # Quasi-TEM identity Z0 = 1/(c sqrt(C C_air)) (Collin, "Foundations for Microwave
    # Engineering", 2nd ed. 1992, sec. 3.10 (from memory)); in air Z0 = eta0/(2 K(k')/K(k)).
    width, gap = 0.8e-3, 3e-3
    z_air, eps_air = qs.strip_beside_ground_edge_fd(width, gap, 1.0, 1.6e-3)
    assert eps_air == pytest.approx(1.0, rel=1e-12)
    exact_z = ETA0_OHM / 2.0 * _mp_k_ratio(math.sqrt(gap / (gap + width)))
    assert z_air == pytest.approx(exact_z, rel=AIR_CAPACITANCE_RTOL)
    # the air capacitance is solved on the slab's grid (same discretisation as C)
    c_air = qs.strip_beside_ground_edge_capacitance_f_per_m(width, gap, 1.0, 1.6e-3)
    assert z_air == pytest.approx(1.0 / (C0_M_PER_S * c_air), rel=1e-12)


def test_default_grid_is_converged_for_eps_eff(monkeypatch):
    # Consistency (no outside source): a finer grid moves eps_eff by less than the tolerance.
    width, gap, height, eps_r = 0.8e-3, 4.6e-3, 1.6e-3, 4.4
    edges = (0.0, gap, gap + width)
    conductors = ((-math.inf, 0.0, 0.0), (gap, gap + width, 1.0))
    default = qs.capacitance_coplanar_f_per_m(edges, conductors, eps_r, height) / (
        qs.capacitance_coplanar_f_per_m(edges, conductors, 1.0, None)
    )
    monkeypatch.setattr(qs, "GROWTH_RATIO", 1.08)
    monkeypatch.setattr(qs, "FINE_CELLS_PER_FEATURE", 2 * qs.FINE_CELLS_PER_FEATURE)
    finer = qs.capacitance_coplanar_f_per_m(edges, conductors, eps_r, height) / (
        qs.capacitance_coplanar_f_per_m(edges, conductors, 1.0, None)
    )
    assert default == pytest.approx(finer, rel=GRID_CONVERGENCE_RTOL)


def test_partial_capacitance_is_low_where_the_gap_exceeds_the_slab():
    # Documents (against our own solver) why the closed form needs a correction: the magnetic
    # wall under the slab loses the field that crosses it; several per cent for g > h.
    width, gap, height, eps_r = 0.8e-3, 4.6e-3, 1.6e-3, 4.4
    closed = float(lines.eps_eff_strip_beside_ground_edge(width, gap, eps_r, height))
    solved = qs.eps_eff_strip_beside_ground_edge_fd(width, gap, eps_r, height)
    assert solved > 1.05 * closed


@pytest.mark.parametrize(
    ("width_m", "gap_m", "height_m", "eps_r"),
    [
        (0.3e-3, 0.7e-3, 0.5e-3, 3.0),
        (0.8e-3, 4.6e-3, 1.6e-3, 4.4),
        (1.5e-3, 11e-3, 1.0e-3, 6.5),
        (0.25e-3, 17e-3, 0.45e-3, 9.0),
        (1.8e-3, 1.3e-3, 1.5e-3, 2.2),
    ],
)
def test_fitted_closed_form_meets_its_stated_error(width_m, gap_m, height_m, eps_r):
    # Source: our own finite-volume solver (validated above) at points off the fit's grid.
    z_fd, eps_fd = qs.strip_beside_ground_edge_fd(width_m, gap_m, eps_r, height_m)
    z_fit, eps_fit = lines.strip_beside_ground_edge_fitted(width_m, gap_m, eps_r, height_m)
    assert float(eps_fit) == pytest.approx(eps_fd, rel=lines.STRIP_EDGE_FIT_MAX_ERROR)
    # Z0 uses the exact air capacitance: its error is half that of eps_eff plus the solver's
    # air-capacitance error.
    assert float(z_fit) == pytest.approx(
        z_fd, rel=0.5 * lines.STRIP_EDGE_FIT_MAX_ERROR + AIR_CAPACITANCE_RTOL
    )


@pytest.mark.parametrize(
    ("call", "name"),
    [
        (lambda: qs.strip_beside_ground_edge_fd(0.0, 1e-3, 4.4, 1e-3), "width_m"),
        (lambda: qs.strip_beside_ground_edge_fd(1e-3, float("nan"), 4.4, 1e-3), "gap_m"),
        (lambda: qs.cpw_air_backed_fd(1e-3, 1e-3, 0.5, 1e-3), "eps_r"),
        (lambda: qs.cpw_air_backed_fd(1e-3, 1e-3, 4.4, -1e-3), "thickness_m"),
    ],
)
def test_bad_inputs_are_refused(call, name):
    with pytest.raises(SolverError, match=name) as info:
        call()
    assert "\n" not in str(info.value)


def test_fit_routine_reproduces_the_stored_coefficients():
    # Consistency (no outside source): samples generated by the stored correction are refitted
    # by quasistatic2d.fit_strip_edge_correction to the same coefficients, so the constants in
    # lines.STRIP_EDGE_FIT_TERMS are of the form that routine fits (its inputs are the solver's
    # values, see lines.STRIP_EDGE_FIT_TERMS).
    samples = []
    for w in qs.FIT_WIDTHS_M:
        for g in qs.FIT_GAPS_M:
            for h in qs.FIT_THICKNESSES_M:
                for er in qs.FIT_EPS_R:
                    samples.append(
                        qs.FitSample(
                            w, g, h, er,
                            float(lines.eps_eff_strip_beside_ground_edge_fitted(w, g, er, h)),
                            float(lines.eps_eff_strip_beside_ground_edge(w, g, er, h)),
                        )
                    )
    exps, coefs, worst = qs.fit_strip_edge_correction(samples)
    stored = dict(lines.STRIP_EDGE_FIT_TERMS)
    assert set(exps) == set(stored)
    for e, c in zip(exps, coefs):
        assert c == pytest.approx(stored[e], rel=1e-6, abs=1e-9)
    assert worst < 1e-9
