"""Closed-form quasi-TEM line formulas (quasi-static, lossless, zero-frequency values; SI units).

One small pure function per formula.  Arguments broadcast like numpy arrays; scalars give numpy
scalars.  Conductor thickness is zero unless an argument says otherwise.

Conformal-mapping results are written with the ratio ``K(k)/K(k')`` of complete elliptic
integrals of the first kind (:func:`elliptic_k_ratio`).  Out-of-range inputs raise
:class:`~footgen.errors.SolverError` with a one-line message (argument, value, allowed range).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import optimize, special

from footgen.constants import ETA0_OHM, PI
from footgen.errors import SolverError

#: Relative tolerance of the synthesis root finders (on the width or gap).
SYNTHESIS_RTOL = 1e-10
#: Widest w/h and s/h ratios the synthesis searches (the formulas hold far beyond board use).
SYNTHESIS_MAX_RATIO = 1e3
#: Narrowest w/h and s/h ratios the synthesis searches.
SYNTHESIS_MIN_RATIO = 1e-4


# --------------------------------------------------------------------------------------------
# input checks
# --------------------------------------------------------------------------------------------


def _positive(name: str, value: ArrayLike) -> NDArray[np.float64]:
    arr = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(arr)) or np.any(arr <= 0.0):
        raise SolverError(f"{name} = {_show(value)}: must be finite and > 0")
    return arr


def _permittivity(name: str, value: ArrayLike) -> NDArray[np.float64]:
    arr = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(arr)) or np.any(arr < 1.0):
        raise SolverError(f"{name} = {_show(value)}: relative permittivity must be finite and >= 1")
    return arr


def _non_negative(name: str, value: ArrayLike) -> NDArray[np.float64]:
    arr = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(arr)) or np.any(arr < 0.0):
        raise SolverError(f"{name} = {_show(value)}: must be finite and >= 0")
    return arr


def _show(value: ArrayLike) -> str:
    arr = np.asarray(value)
    if arr.ndim == 0:
        return repr(arr.item())
    return f"array(min={np.nanmin(arr)!r}, max={np.nanmax(arr)!r})"


# --------------------------------------------------------------------------------------------
# elliptic integral ratio
# --------------------------------------------------------------------------------------------


#: Below this parameter ``K`` at parameter ``1 - p`` is its logarithmic asymptote to 1e-15.
_ASYMPTOTIC_P = 1e-16


def _k_at_one_minus(log_p: NDArray[np.float64]) -> NDArray[np.float64]:
    """``K`` at parameter ``1 - p`` from ``log p``: scipy's ``ellipkm1(p)`` (Cephes, polynomial
    of Abramowitz & Stegun 1964, eq. 17.3.34), and for ``p < 1e-16`` the asymptote
    ``ln 4 - ln(p)/2`` (A&S 17.3.26; next term ``O(p ln p)``) so that an underflowing ``p``
    still gives the right value."""
    log_p = np.asarray(log_p, dtype=float)
    small = log_p < math.log(_ASYMPTOTIC_P)
    with np.errstate(divide="ignore", over="ignore"):
        exact = special.ellipkm1(np.exp(np.where(small, 0.0, log_p)))
    return np.where(small, math.log(4.0) - 0.5 * log_p, exact)


def elliptic_k_ratio_from_log_m(log_m: ArrayLike, log_m1: ArrayLike) -> NDArray[np.float64]:
    """``K(k)/K(k')`` from ``log(k**2)`` and ``log(k'**2)`` (``k**2 + k'**2 = 1``).

    ``K(k) = K(1 - m1)`` and ``K(k') = K(1 - m)``, both by :func:`_k_at_one_minus`, so the ratio
    keeps full precision at both ends, even where ``m`` or ``m1`` underflow.
    """
    with np.errstate(divide="ignore"):
        return _k_at_one_minus(log_m1) / _k_at_one_minus(log_m)


def elliptic_k_ratio_from_m(m: ArrayLike, m1: ArrayLike | None = None) -> NDArray[np.float64]:
    """``K(k)/K(k')`` from the parameter ``m = k**2`` and optionally ``m1 = 1 - m = k'**2``
    (pass ``m1`` computed without cancellation when ``m`` is close to 1).  ``m = 0`` gives 0,
    ``m = 1`` gives inf.  See :func:`elliptic_k_ratio_from_log_m`."""
    m_arr = np.asarray(m, dtype=float)
    m1_arr = 1.0 - m_arr if m1 is None else np.asarray(m1, dtype=float)
    if np.any(m_arr < 0.0) or np.any(m1_arr < 0.0):
        raise SolverError(f"elliptic parameter m = {_show(m)}: must lie in [0, 1]")
    with np.errstate(divide="ignore"):
        return elliptic_k_ratio_from_log_m(np.log(m_arr), np.log(m1_arr))


def elliptic_k_ratio(k: ArrayLike) -> NDArray[np.float64]:
    """``K(k)/K(k')`` for modulus ``0 <= k <= 1`` with ``k' = sqrt(1 - k**2)``.

    scipy's ``ellipk`` takes the parameter ``m = k**2``; here ``log m = 2 log k`` and
    ``log m' = log1p(-k) + log1p(k)`` are formed without cancellation or underflow, so the ratio
    stays accurate as ``k -> 0`` and ``k -> 1`` (see :func:`elliptic_k_ratio_from_log_m`).
    """
    k_arr = np.asarray(k, dtype=float)
    if np.any(~(k_arr >= 0.0)) or np.any(k_arr > 1.0):
        raise SolverError(f"elliptic modulus k = {_show(k)}: must lie in [0, 1]")
    with np.errstate(divide="ignore"):
        return elliptic_k_ratio_from_log_m(2.0 * np.log(k_arr), np.log1p(-k_arr) + np.log1p(k_arr))


def cross_ratio_two_coplanar_conductors(
    x1: ArrayLike, x2: ArrayLike, x3: ArrayLike, x4: ArrayLike
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Parameter pair ``(m, 1 - m)`` of two conductors ``[x1, x2]`` and ``[x3, x4]``
    (``x1 < x2 < x3 < x4``) on the boundary line of a half-plane whose other boundary parts are
    magnetic walls; the half-plane then holds ``C = eps0 K(k')/K(k)`` per metre, ``k**2 = m``.

    Schwarz-Christoffel mapping of the half-plane onto a rectangle whose opposite sides are the
    conductors; ``m = (x3-x2)(x4-x1) / ((x3-x1)(x4-x2))`` is the cross-ratio (invariant under
    the Moebius maps of the half-plane) and ``1 - m = (x2-x1)(x4-x3) / ((x3-x1)(x4-x2))``.
    For coplanar strips it is the asymmetric-coplanar-strip modulus of Gupta, Garg, Bahl &
    Bhartia, "Microstrip Lines and Slotlines", 2nd ed. 1996, ch. 7 (from memory).
    ``x4 = inf`` (a semi-infinite second conductor) is allowed.
    """
    a1, a2, a3, a4 = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (x1, x2, x3, x4)))
    infinite = np.isinf(a4)
    finite_a4 = np.where(infinite, 0.0, a4)
    # (x4 - x1)/(x4 - x2) and (x4 - x3)/(x4 - x2) tend to 1 as x4 -> inf.
    r41 = np.where(infinite, 1.0, (finite_a4 - a1) / np.where(infinite, 1.0, finite_a4 - a2))
    r43 = np.where(infinite, 1.0, (finite_a4 - a3) / np.where(infinite, 1.0, finite_a4 - a2))
    m = (a3 - a2) / (a3 - a1) * r41
    m1 = (a2 - a1) / (a3 - a1) * r43
    return m, m1


# --------------------------------------------------------------------------------------------
# strip beside a coplanar ground half-plane (asymmetric coplanar strips, one strip infinite)
# --------------------------------------------------------------------------------------------


def _strip_beside_edge_moduli(
    width_m: ArrayLike, gap_m: ArrayLike, thickness_m: ArrayLike | None
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """``K(k')/K(k)`` of the air half-space (free-space modulus) and of the slab."""
    w = _positive("width_m", width_m)
    g = _positive("gap_m", gap_m)
    # Free space: ground (-inf, 0], strip [g, g + w]:  m0 = g/(g + w),  m0' = w/(g + w).
    q_air = elliptic_k_ratio_from_m(w / (g + w), g / (g + w))  # = K(k0')/K(k0)
    if thickness_m is None:
        return q_air, q_air
    h = _positive("thickness_m", thickness_m)
    # Slab -h < y < 0 under the conductor plane, bottom face a magnetic wall (partial-capacitance
    # assumption).  t = exp(pi z / h) maps the slab onto a half-plane: ground -> (0, 1],
    # strip -> [exp(pi g/h), exp(pi (g+w)/h)], bottom face -> negative axis (magnetic wall).
    # Cross-ratio written with expm1 so that it stays exact for h >> g and h << g:
    #   m1 = (1 - e^{-pi g/h}) / (1 - e^{-pi (g+w)/h})
    #   m1' = e^{-pi g/h} (1 - e^{-pi w/h}) / (1 - e^{-pi (g+w)/h})
    # (logarithms: m1' underflows for g >> h, where K(k1) is still finite)
    log_den = np.log(-np.expm1(-PI * (g + w) / h))
    log_m_slab = np.log(-np.expm1(-PI * g / h)) - log_den
    log_m1_slab = -PI * g / h + np.log(-np.expm1(-PI * w / h)) - log_den
    q_slab = elliptic_k_ratio_from_log_m(log_m1_slab, log_m_slab)  # = K(k1')/K(k1)
    return q_air, q_slab


def eps_eff_strip_beside_ground_edge(
    width_m: ArrayLike, gap_m: ArrayLike, eps_r: ArrayLike, thickness_m: ArrayLike
) -> NDArray[np.float64]:
    """Quasi-static effective permittivity of a strip beside the edge of a coplanar ground
    half-plane, both on one face of a dielectric slab of finite thickness, air on both sides.

    Partial-capacitance method (Gupta, Garg, Bahl & Bhartia, "Microstrip Lines and Slotlines",
    2nd ed. 1996, ch. 7 coplanar strips; Ghione & Naldi, Electron. Lett. 20(4) 1984 for the same
    method on CPW): ``C = C_air + C_slab``, ``C_air = 2 eps0 K(k0')/K(k0)`` with
    ``k0**2 = g/(g + w)``, ``C_slab = eps0 (eps_r - 1) K(k1')/K(k1)`` with the slab mapped by
    ``exp(pi z/h)``: ``k1**2 = (1 - exp(-pi g/h)) / (1 - exp(-pi (g + w)/h))``.  Hence
    ``eps_eff = 1 + (eps_r - 1)/2 * [K(k1')/K(k1)] / [K(k0')/K(k0)]``.  The slab modulus is
    derived here (cross-ratio of the mapped edges, :func:`cross_ratio_two_coplanar_conductors`);
    it tends to ``k0`` as ``h -> inf`` (``eps_eff -> (eps_r + 1)/2``) and to 1 as ``h -> 0``.
    """
    er = _permittivity("eps_r", eps_r)
    q_air, q_slab = _strip_beside_edge_moduli(width_m, gap_m, thickness_m)
    return 1.0 + 0.5 * (er - 1.0) * q_slab / q_air


def z0_strip_beside_ground_edge(
    width_m: ArrayLike, gap_m: ArrayLike, eps_r: ArrayLike, thickness_m: ArrayLike
) -> NDArray[np.float64]:
    """Quasi-static characteristic impedance (ohm) of the strip beside a coplanar ground edge.

    ``Z0 = eta0 / (2 sqrt(eps_eff)) * K(k0)/K(k0')``, ``k0**2 = g/(g + w)``: the free-space
    capacitance ``2 eps0 K(k0')/K(k0)`` of :func:`eps_eff_strip_beside_ground_edge` with
    ``Z0 = 1 / (c sqrt(eps_eff) C_air)`` (same sources).
    """
    eps_eff = eps_eff_strip_beside_ground_edge(width_m, gap_m, eps_r, thickness_m)
    q_air, _ = _strip_beside_edge_moduli(width_m, gap_m, None)
    return ETA0_OHM / (2.0 * np.sqrt(eps_eff) * q_air)


def z0_strip_beside_ground_edge_air(width_m: ArrayLike, gap_m: ArrayLike) -> NDArray[np.float64]:
    """Impedance (ohm) of the strip beside a ground half-plane in free space (exact mapping)."""
    q_air, _ = _strip_beside_edge_moduli(width_m, gap_m, None)
    return ETA0_OHM / (2.0 * q_air)


# --------------------------------------------------------------------------------------------
# strip beside a ground edge: closed form corrected to the 2-D finite-volume solver
# --------------------------------------------------------------------------------------------

#: Correction of the filling factor's logit, ``sum c ln(g/h)^i ln(w/h)^j (1/eps_r)^k``:
#: ``((i, j, k), c)``.  Least-squares fit (our own, no outside source) of the finite-volume
#: solver :mod:`footgen.physics.quasistatic2d` on its 252-point grid (w 0.2-2 mm, g 0.5-20 mm,
#: h 0.4-1.6 mm, eps_r 2-10: ``quasistatic2d.fit_strip_edge_correction(
#: quasistatic2d.strip_edge_fit_samples())``).
STRIP_EDGE_FIT_TERMS: tuple[tuple[tuple[int, int, int], float], ...] = (
    ((0, 0, 0), 0.1381775576735365),
    ((0, 0, 1), 1.45346355533598),
    ((0, 0, 2), -0.47908525585580203),
    ((0, 0, 3), -0.6656367201833829),
    ((0, 1, 0), -0.01010773862922785),
    ((0, 1, 1), -0.39618403695191096),
    ((0, 1, 2), 0.42341845005412376),
    ((0, 2, 0), -0.013341531817025817),
    ((0, 2, 1), -0.028433911769384538),
    ((0, 3, 0), -0.000672209656953432),
    ((1, 0, 0), -0.0137436749281341),
    ((1, 0, 1), 0.5401180954230344),
    ((1, 0, 2), -0.6481238023737421),
    ((1, 1, 0), -0.003617427626132216),
    ((1, 1, 1), -0.028174180047126463),
    ((1, 2, 0), -5.0961465381380834e-05),
    ((2, 0, 0), 0.030723587016218485),
    ((2, 0, 1), 0.0306480796678672),
    ((2, 1, 0), -0.006673625285225108),
    ((3, 0, 0), 0.005623571977011412),
)
#: Largest relative eps_eff error of the fit against the solver over the fitted range: 0.54 %
#: on the fit grid, 0.63 % on 30 random cross-sections off it; this bound is what the tests
#: check.  The solver itself is within about 0.2 % (tests/test_quasistatic2d.py).
STRIP_EDGE_FIT_MAX_ERROR = 8e-3
#: The correction's inputs are held to the fitted box (no polynomial extrapolation):
#: g/h, w/h and eps_r ranges of the fit grid.
STRIP_EDGE_FIT_GAP_RATIO = (0.5 / 1.6, 20.0 / 0.4)
STRIP_EDGE_FIT_WIDTH_RATIO = (0.2 / 1.6, 2.0 / 0.4)
STRIP_EDGE_FIT_EPS_R = (2.0, 10.0)


def _strip_edge_logit_correction(
    width_m: NDArray[np.float64], gap_m: NDArray[np.float64], eps_r: NDArray[np.float64],
    thickness_m: NDArray[np.float64],
) -> NDArray[np.float64]:
    a = np.log(np.clip(gap_m / thickness_m, *STRIP_EDGE_FIT_GAP_RATIO))
    b = np.log(np.clip(width_m / thickness_m, *STRIP_EDGE_FIT_WIDTH_RATIO))
    c = 1.0 / np.clip(eps_r, *STRIP_EDGE_FIT_EPS_R)
    total = np.zeros(np.broadcast(a, b, c).shape)
    for (i, j, k), coef in STRIP_EDGE_FIT_TERMS:
        total = total + coef * a**i * b**j * c**k
    return total


def strip_beside_ground_edge_fitted(
    width_m: ArrayLike, gap_m: ArrayLike, eps_r: ArrayLike, thickness_m: ArrayLike
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """``(Z0 ohm, eps_eff)`` of the strip beside a coplanar ground edge on a finite slab (air on
    both sides): the partial-capacitance filling factor ``q`` of
    :func:`eps_eff_strip_beside_ground_edge` corrected on its logit,
    ``logit q = logit q_pc + P(ln(g/h), ln(w/h), 1/eps_r)`` (:data:`STRIP_EDGE_FIT_TERMS`,
    fitted to the finite-volume solver; the partial-capacitance value is up to 26 % low for
    gaps much wider than the slab).  ``eps_eff = 1 + (eps_r - 1)/2 q`` stays between 1 and
    ``(eps_r + 1)/2`` everywhere; ``Z0 = eta0 / (2 sqrt(eps_eff)) K(k0)/K(k0')`` with the exact
    air capacitance.  Within :data:`STRIP_EDGE_FIT_MAX_ERROR` of the solver inside the fitted
    range; outside it the correction is frozen at the range's boundary (accuracy not stated).
    """
    w = _positive("width_m", width_m)
    g = _positive("gap_m", gap_m)
    er = _permittivity("eps_r", eps_r)
    h = _positive("thickness_m", thickness_m)
    q_air, q_slab = _strip_beside_edge_moduli(w, g, h)
    q_pc = q_slab / q_air
    with np.errstate(divide="ignore"):
        logit = np.log(q_pc) - np.log1p(-q_pc) + _strip_edge_logit_correction(w, g, er, h)
    eps_eff = 1.0 + 0.5 * (er - 1.0) * special.expit(logit)
    return ETA0_OHM / (2.0 * np.sqrt(eps_eff) * q_air), eps_eff


def eps_eff_strip_beside_ground_edge_fitted(
    width_m: ArrayLike, gap_m: ArrayLike, eps_r: ArrayLike, thickness_m: ArrayLike
) -> NDArray[np.float64]:
    """eps_eff of :func:`strip_beside_ground_edge_fitted`."""
    return strip_beside_ground_edge_fitted(width_m, gap_m, eps_r, thickness_m)[1]


# --------------------------------------------------------------------------------------------
# microstrip (Hammerstad & Jensen 1980)
# --------------------------------------------------------------------------------------------


def _hj_z01(u: NDArray[np.float64]) -> NDArray[np.float64]:
    """Hammerstad & Jensen 1980 eq. (1)/(2): air-line impedance for normalised width ``u``."""
    f_u = 6.0 + (2.0 * PI - 6.0) * np.exp(-((30.666 / u) ** 0.7528))
    return ETA0_OHM / (2.0 * PI) * np.log(f_u / u + np.sqrt(1.0 + (2.0 / u) ** 2))


def _hj_eps_eff(u: NDArray[np.float64], er: NDArray[np.float64]) -> NDArray[np.float64]:
    """Hammerstad & Jensen 1980 eq. (3)-(5): zero-thickness effective permittivity."""
    a = (
        1.0
        + np.log((u**4 + (u / 52.0) ** 2) / (u**4 + 0.432)) / 49.0
        + np.log(1.0 + (u / 18.1) ** 3) / 18.7
    )
    b = 0.564 * ((er - 0.9) / (er + 3.0)) ** 0.053
    return 0.5 * (er + 1.0) + 0.5 * (er - 1.0) * (1.0 + 10.0 / u) ** (-a * b)


def _hj_widths(
    u: NDArray[np.float64], er: NDArray[np.float64], t_norm: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Hammerstad & Jensen 1980 thickness correction: ``u1`` (air) and ``ur`` (dielectric)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        coth2 = 1.0 / np.tanh(np.sqrt(6.517 * u)) ** 2
        du1 = np.where(
            t_norm > 0.0,
            t_norm / PI * np.log(1.0 + 4.0 * math.e / (np.where(t_norm > 0, t_norm, 1.0) * coth2)),
            0.0,
        )
    dur = 0.5 * (1.0 + 1.0 / np.cosh(np.sqrt(er - 1.0))) * du1
    return u + du1, u + dur


def microstrip_hammerstad_jensen(
    width_m: ArrayLike, eps_r: ArrayLike, height_m: ArrayLike, strip_thickness_m: ArrayLike = 0.0
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """``(Z0 ohm, eps_eff)`` of a microstrip, quasi-static, Hammerstad & Jensen, "Accurate models
    for microstrip computer-aided design", IEEE MTT-S Int. Microwave Symp. Digest 1980,
    pp. 407-409, eqs. (1)-(5) with the strip-thickness correction of the same paper.
    Quoted accuracy: 0.01 % (Z01) and 0.2 % (eps_eff) for 0.01 <= u <= 100, eps_r <= 128.
    """
    w = _positive("width_m", width_m)
    er = _permittivity("eps_r", eps_r)
    h = _positive("height_m", height_m)
    t = _non_negative("strip_thickness_m", strip_thickness_m)
    u = w / h
    u1, ur = _hj_widths(u, er, t / h)
    eps_ur = _hj_eps_eff(ur, er)
    z01_ur = _hj_z01(ur)
    z0 = z01_ur / np.sqrt(eps_ur)
    eps_eff = eps_ur * (_hj_z01(u1) / z01_ur) ** 2
    return z0, eps_eff


def z0_microstrip_hammerstad_jensen(
    width_m: ArrayLike, eps_r: ArrayLike, height_m: ArrayLike, strip_thickness_m: ArrayLike = 0.0
) -> NDArray[np.float64]:
    """Microstrip Z0 (ohm), Hammerstad & Jensen 1980 (see :func:`microstrip_hammerstad_jensen`)."""
    return microstrip_hammerstad_jensen(width_m, eps_r, height_m, strip_thickness_m)[0]


def eps_eff_microstrip_hammerstad_jensen(
    width_m: ArrayLike, eps_r: ArrayLike, height_m: ArrayLike, strip_thickness_m: ArrayLike = 0.0
) -> NDArray[np.float64]:
    """Microstrip eps_eff, Hammerstad & Jensen 1980 (see :func:`microstrip_hammerstad_jensen`)."""
    return microstrip_hammerstad_jensen(width_m, eps_r, height_m, strip_thickness_m)[1]


def microstrip_width_ratio_wheeler(z0_ohm: float, eps_r: float) -> float:
    """Closed-form start ``w/h`` for a microstrip of impedance ``z0_ohm``.

    Wheeler/Hammerstad synthesis as given in Pozar, "Microwave Engineering", 4th ed. 2012,
    eq. (3.197) (from memory): ``A = Z0/60 sqrt((er+1)/2) + (er-1)/(er+1) (0.23 + 0.11/er)``,
    ``w/h = 8 e^A / (e^{2A} - 2)`` if that is < 2, else with ``B = 377 pi / (2 Z0 sqrt(er))``:
    ``w/h = 2/pi [B - 1 - ln(2B - 1) + (er-1)/(2 er) (ln(B - 1) + 0.39 - 0.61/er)]``.
    About 1 % accurate; :func:`microstrip_width_for_z0` refines it.
    """
    a = z0_ohm / 60.0 * math.sqrt(0.5 * (eps_r + 1.0)) + (eps_r - 1.0) / (eps_r + 1.0) * (
        0.23 + 0.11 / eps_r
    )
    if a < 0.5 * math.log(2.0) + 1e-12:
        ratio = math.inf
    else:
        ratio = 8.0 * math.exp(a) / (math.exp(2.0 * a) - 2.0)
    if ratio < 2.0:
        return ratio
    b = 377.0 * PI / (2.0 * z0_ohm * math.sqrt(eps_r))
    if b <= 1.0:
        return math.nan
    return (
        2.0
        / PI
        * (
            b
            - 1.0
            - math.log(2.0 * b - 1.0)
            + (eps_r - 1.0) / (2.0 * eps_r) * (math.log(b - 1.0) + 0.39 - 0.61 / eps_r)
        )
    )


def _solve_log_ratio(
    func, target: float, lo: float, hi: float, name: str, value: float, what: str
) -> float:
    """Root of ``func(x) = target`` for ``x`` in ``[lo, hi]`` searched on ``log x``."""
    f_lo, f_hi = func(lo) - target, func(hi) - target
    if f_lo * f_hi > 0.0:
        z_a, z_b = sorted((func(lo), func(hi)))
        raise SolverError(
            f"{name} = {value!r}: {what} reaches only {z_a:.4g} to {z_b:.4g} ohm here; "
            "choose an impedance in that range"
        )
    log_x = optimize.brentq(
        lambda lx: func(math.exp(lx)) - target,
        math.log(lo),
        math.log(hi),
        xtol=SYNTHESIS_RTOL,
        rtol=SYNTHESIS_RTOL,
    )
    return math.exp(log_x)


def microstrip_width_for_z0(
    z0_ohm: float, eps_r: float, height_m: float, strip_thickness_m: float = 0.0
) -> float:
    """Strip width (m) giving ``z0_ohm`` on the Hammerstad & Jensen 1980 analysis.

    Starts at :func:`microstrip_width_ratio_wheeler` and refines by Brent root finding on
    :func:`z0_microstrip_hammerstad_jensen` (monotone in the width).
    """
    z0 = float(_positive("z0_ohm", z0_ohm))
    er = float(_permittivity("eps_r", eps_r))
    h = float(_positive("height_m", height_m))
    t = float(_non_negative("strip_thickness_m", strip_thickness_m))

    def z_of_ratio(ratio: float) -> float:
        return float(z0_microstrip_hammerstad_jensen(ratio * h, er, h, t))

    start = microstrip_width_ratio_wheeler(z0, er)
    lo, hi = SYNTHESIS_MIN_RATIO, SYNTHESIS_MAX_RATIO
    if math.isfinite(start) and SYNTHESIS_MIN_RATIO < start < SYNTHESIS_MAX_RATIO:
        lo, hi = max(lo, start / 4.0), min(hi, start * 4.0)
        if (z_of_ratio(lo) - z0) * (z_of_ratio(hi) - z0) > 0.0:
            lo, hi = SYNTHESIS_MIN_RATIO, SYNTHESIS_MAX_RATIO
    ratio = _solve_log_ratio(z_of_ratio, z0, lo, hi, "z0_ohm", z0_ohm, "a microstrip")
    return ratio * h


# --------------------------------------------------------------------------------------------
# coplanar waveguide, air-backed and conductor-backed (Ghione & Naldi 1983/1984)
# --------------------------------------------------------------------------------------------


def _cpw_free_space_q(width_m: NDArray[np.float64], gap_m: NDArray[np.float64]):
    """``K(k0)/K(k0')`` with ``k0 = w/(w + 2s)`` (``k0'**2`` formed without cancellation)."""
    b = width_m + 2.0 * gap_m
    k0 = width_m / b
    return elliptic_k_ratio_from_m(k0 * k0, 4.0 * gap_m * (width_m + gap_m) / (b * b))


def cpw_air_backed(
    width_m: ArrayLike, gap_m: ArrayLike, eps_r: ArrayLike, thickness_m: ArrayLike
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """``(Z0 ohm, eps_eff)`` of a CPW (centre strip ``w``, gaps ``s``, infinite side grounds) on a
    slab of thickness ``h`` with air below.

    Ghione & Naldi, "Analytical formulas for coplanar lines in hybrid and monolithic MICs",
    Electron. Lett. 20(4) 1984 pp. 179-181, eqs. (1)-(3) (also Simons, "Coplanar Waveguide
    Circuits, Components, and Systems", 2001, sec. 2.2): ``k0 = w/(w + 2s)``,
    ``k1 = sinh(pi w/4h) / sinh(pi (w + 2s)/4h)``,
    ``eps_eff = 1 + (eps_r - 1)/2 * [K(k1)/K(k1')] / [K(k0)/K(k0')]``,
    ``Z0 = 30 pi / sqrt(eps_eff) * K(k0')/K(k0)`` (``30 pi`` written as ``eta0/4``).
    """
    w = _positive("width_m", width_m)
    s = _positive("gap_m", gap_m)
    er = _permittivity("eps_r", eps_r)
    h = _positive("thickness_m", thickness_m)
    q0 = _cpw_free_space_q(w, s)
    # k1 = sinh(a)/sinh(b) and k1'^2 = sinh(b-a) sinh(b+a) / sinh(b)^2, as logarithms of
    # exponentials of negative arguments so that thin slabs (large a, b) neither overflow nor
    # underflow.
    a, b = PI * w / (4.0 * h), PI * (w + 2.0 * s) / (4.0 * h)
    log_sinh_b = np.log(-np.expm1(-2.0 * b))  # log(2 sinh(b) e^{-b})
    log_m1 = 2.0 * ((a - b) + np.log(-np.expm1(-2.0 * a)) - log_sinh_b)
    log_m1p = (
        np.log(-np.expm1(-2.0 * (b - a))) + np.log(-np.expm1(-2.0 * (b + a))) - 2.0 * log_sinh_b
    )
    q1 = elliptic_k_ratio_from_log_m(log_m1, log_m1p)
    eps_eff = 1.0 + 0.5 * (er - 1.0) * q1 / q0
    z0 = ETA0_OHM / (4.0 * np.sqrt(eps_eff) * q0)
    return z0, eps_eff


def cpw_conductor_backed(
    width_m: ArrayLike, gap_m: ArrayLike, eps_r: ArrayLike, thickness_m: ArrayLike
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """``(Z0 ohm, eps_eff)`` of a grounded (conductor-backed) CPW, ground plane ``h`` below.

    Ghione & Naldi, "Parameters of coplanar waveguides with lower common planes", Electron. Lett.
    19(18) 1983 pp. 734-735 (also Wadell, "Transmission Line Design Handbook", 1991, sec. 3.4.3):
    ``k3 = tanh(pi w/4h) / tanh(pi (w + 2s)/4h)``, ``q0 = K(k0)/K(k0')``, ``q3 = K(k3)/K(k3')``,
    ``eps_eff = (q0 + eps_r q3) / (q0 + q3)``, ``Z0 = 60 pi / (sqrt(eps_eff) (q0 + q3))``.
    """
    w = _positive("width_m", width_m)
    s = _positive("gap_m", gap_m)
    er = _permittivity("eps_r", eps_r)
    h = _positive("thickness_m", thickness_m)
    q0 = _cpw_free_space_q(w, s)
    a, b = PI * w / (4.0 * h), PI * (w + 2.0 * s) / (4.0 * h)
    k3 = np.tanh(a) / np.tanh(b)
    # k3'^2 = 1 - tanh^2 a / tanh^2 b = sinh(b-a) sinh(b+a) / (cosh^2 a sinh^2 b)
    #       = 4 e^{-2a} (1 - e^{-2(b-a)}) (1 - e^{-2(b+a)}) / ((1 + e^{-2a})^2 (1 - e^{-2b})^2)
    m3p = (
        4.0
        * np.exp(-2.0 * a)
        * -np.expm1(-2.0 * (b - a))
        * -np.expm1(-2.0 * (b + a))
        / ((1.0 + np.exp(-2.0 * a)) ** 2 * np.expm1(-2.0 * b) ** 2)
    )
    q3 = elliptic_k_ratio_from_m(k3 * k3, m3p)
    eps_eff = (q0 + er * q3) / (q0 + q3)
    z0 = ETA0_OHM / (2.0 * np.sqrt(eps_eff) * (q0 + q3))
    return z0, eps_eff


#: CPW variants by backside, for callers that choose by name (no dispatch chains).
CPW_MODELS = {"air": cpw_air_backed, "conductor": cpw_conductor_backed}


def _cpw_gap_for_z0(model, z0_ohm: float, width_m: float, eps_r: float, thickness_m: float):
    z0 = float(_positive("z0_ohm", z0_ohm))
    w = float(_positive("width_m", width_m))
    er = float(_permittivity("eps_r", eps_r))
    h = float(_positive("thickness_m", thickness_m))

    def z_of_ratio(ratio: float) -> float:
        return float(model(w, ratio * w, er, h)[0])

    ratio = _solve_log_ratio(
        z_of_ratio, z0, SYNTHESIS_MIN_RATIO, SYNTHESIS_MAX_RATIO, "z0_ohm", z0_ohm,
        f"a coplanar line of width {w!r} m",
    )
    return ratio * w


def gcpw_gap_for_z0(z0_ohm: float, width_m: float, eps_r: float, thickness_m: float) -> float:
    """Gap (m) of a conductor-backed CPW of centre width ``width_m`` giving ``z0_ohm``.

    Brent root finding on :func:`cpw_conductor_backed` (Z0 rises monotonically with the gap
    towards a finite limit: a too narrow strip cannot reach a high impedance; that raises
    :class:`SolverError`).
    """
    return _cpw_gap_for_z0(cpw_conductor_backed, z0_ohm, width_m, eps_r, thickness_m)


def cpw_gap_for_z0(z0_ohm: float, width_m: float, eps_r: float, thickness_m: float) -> float:
    """Gap (m) of an air-backed CPW of centre width ``width_m`` giving ``z0_ohm``
    (Brent root finding on :func:`cpw_air_backed`)."""
    return _cpw_gap_for_z0(cpw_air_backed, z0_ohm, width_m, eps_r, thickness_m)
