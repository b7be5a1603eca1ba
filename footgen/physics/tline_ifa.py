"""Fast transmission-line model of a printed IFA at its feed (instant estimates, optimiser start).

Model
-----
The arm and the ground edge form a quasi-TEM line (a strip beside a coplanar ground half-plane,
evaluated per arm segment at that segment's height; a segment perpendicular to the edge uses
its mean height).  Its Z0 and eps_eff come from :data:`LINE_MODELS` (default ``fitted``:
:func:`footgen.physics.lines.strip_beside_ground_edge_fitted`, the partial-capacitance closed
form corrected to the 2-D finite-volume solver :mod:`footgen.physics.quasistatic2d`), memoised
per cross-section (:func:`line_constants`).  In a meander, segments perpendicular to the ground
edge have their inductance per metre scaled by the mutual inductance of the other folds
(:func:`meander_inductance_factors`).  The feed leg taps this line at ``feed_x_m``; from the
tap the port sees two lines in parallel:

* the shorted stub from the tap back to the short leg, terminated by ``R_rad + j w L_short``;
* the open arm from the tap to the open end (open circuit; fringing at the end is ignored
  unless ``open_end_extension_m`` is set).

The feed leg and the short leg (height ``H``) are coupled inductors (partial self-inductances
``L_feed``, ``L_short`` and their mutual ``M``, Grover): the port voltage is the tap voltage plus
the feed leg's drop, and the short leg's drop includes ``-j w M I_feed``.  With coincident legs
and no loss the port is shorted, as it must be.  The resonance is the pole of the lossless
``Z_in``: the natural frequency with the port open, which is independent of the tap position.
When the tap is far from the short the resistance there is well above 50 ohm and a real IFA is
matched higher up, near the series resonance; this function still returns the pole.

Approximations the numbers cannot escape
----------------------------------------
* Quasi-static line constants (no dispersion); conductor loss ignored; dielectric loss from the
  laminate's loss tangent with the quasi-TEM filling factor.
* A meandered arm is its centreline length with the folds' inductive coupling (filament
  mutual inductances, antiparallel currents in adjacent folds) applied to the segments
  perpendicular to the ground edge; the folds' capacitive coupling and the coupling of the
  parallel-to-edge segments are ignored, and a fold is a line at its mean height.
* Leg inductances are thin-strip partial inductances; their coupling to the arm line is ignored.
* Radiation is one series resistance at the current maximum (the short).  A physics-only
  estimate (the legs as a Hertzian dipole, :func:`radiation_resistance_hertzian_legs_ohm`)
  is under 1 ohm for usual heights, too little to match 50 ohm with the legs apart, because
  most of a printed IFA's radiation comes from ground-plane currents that a two-conductor line
  cannot describe.  The default (:func:`radiation_resistance_height_rule_ohm`) is therefore a
  calibration, common practice, no source; replace it by a fit to full-wave results when those
  exist.  The ground-plane size (``ifa.ground``) is not used.

Known accuracy
--------------
* The default arm line is within 0.8 % (eps_eff) of the finite-volume solver over w 0.2-2 mm,
  g 0.5-20 mm, h 0.4-1.6 mm, eps_r 2-10 (tests/test_quasistatic2d.py); the plain
  partial-capacitance form (``line_model="partial_capacitance"``) is up to 26 % low there.
* On the openEMS development cases (tests/fullwave, checked by
  tests/test_tline_ifa.py::test_development_case_error_against_openems) the model is still far
  off: dev_straight_16 +16 % (parallel Im(Z_in) = 0) and +15 % (min |S11|), dev_meander_08
  -13 % and -17 %.  The straight arm resonates lower in full wave than any line-length effect
  here explains (open-end fringing, the open feed leg's capacitance and the finite ground are
  not modelled); do not trust the frequency to better than about 20 %.

Estimates never replace measurement; radio products must meet local radio regulations and
RF-exposure limits.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import optimize

from footgen.constants import C0_M_PER_S, MU0_H_PER_M, PI
from footgen.errors import SolverError
from footgen.physics.ifa import Laminate, PrintedIfa
from footgen.physics import quasistatic2d
from footgen.physics.lines import (
    eps_eff_strip_beside_ground_edge,
    strip_beside_ground_edge_fitted,
    z0_strip_beside_ground_edge,
)

#: Reference impedance of the feed line (ohm).
FEED_REFERENCE_OHM = 50.0
#: Slope of the default radiation-resistance rule, R_rad = slope * H / lambda0 (ohm).
#: Common practice, no source: a calibration chosen so that straight 2.4 GHz-class IFAs of
#: 2-8 mm height show the several-per-cent -10 dB bandwidth usual for printed IFAs and can be
#: matched with the legs apart.  Not a measured or published number.
RADIATION_SLOPE_OHM = 600.0
#: Resonance search window around the quarter-wave estimate (fractions of it).
RESONANCE_SEARCH_LOW = 0.4
RESONANCE_SEARCH_HIGH = 1.6
#: Frequency samples used to bracket the resonance before Brent refinement.
RESONANCE_SEARCH_POINTS = 241
#: Relative tolerance of the frequency, length and spacing root finders.
ROOT_RTOL = 1e-9
#: Lengths below this are treated as zero (m).
LENGTH_EPS_M = 1e-12
#: Smallest inductance factor a meander fold may reach (guards very dense meanders, where the
#: thin-filament coupling estimate is meaningless).
MEANDER_MIN_INDUCTANCE_FACTOR = 0.2
#: Distinct (width, gap, eps_r, thickness) line cross-sections remembered by
#: :func:`line_constants`.
LINE_CACHE_SIZE = 65536


@dataclass(frozen=True)
class TlineIfaOptions:
    """Switches of the transmission-line IFA model.

    ``radiation_model`` names an entry of :data:`RADIATION_MODELS`;
    ``radiation_resistance_ohm`` (if set) overrides it with a fixed value.  ``eps_eff_scale``
    multiplies every section's eps_eff (dividing Z0 by its square root: the line's capacitance
    scales, its inductance does not) and ``open_end_extension_m`` lengthens the open end; both
    are neutral by default and exist for fits to full-wave results.  ``line_model`` names an
    entry of :data:`LINE_MODELS` for the arm line's Z0 and eps_eff; ``meander_coupling``
    applies :func:`meander_inductance_factors` to segments perpendicular to the ground edge.
    """

    leg_inductance: bool = True
    dielectric_loss: bool = True
    radiation_model: str = "height_rule"
    radiation_resistance_ohm: float | None = None
    eps_eff_scale: float = 1.0
    open_end_extension_m: float = 0.0
    line_model: str = "fitted"
    meander_coupling: bool = True


DEFAULT_OPTIONS = TlineIfaOptions()


# --------------------------------------------------------------------------------------------
# building blocks
# --------------------------------------------------------------------------------------------


def strip_partial_inductance_h(length_m: float, width_m: float) -> float:
    """Partial self-inductance (H) of a thin flat straight strip.

    Grover, "Inductance Calculations", 1946 (Dover 1962), straight rectangular bar with
    thickness -> 0 (from memory): ``L = mu0 l / (2 pi) [ln(2 l / w) + 1/2 + 0.2235 w / l]``.
    Meant for ``l >> w``; floored at zero for stubby legs.
    """
    if length_m <= 0.0 or width_m <= 0.0:
        raise SolverError(
            f"strip length_m = {length_m!r}, width_m = {width_m!r}: both must be > 0"
        )
    value = (
        MU0_H_PER_M
        * length_m
        / (2.0 * PI)
        * (math.log(2.0 * length_m / width_m) + 0.5 + 0.2235 * width_m / length_m)
    )
    return max(value, 0.0)


def parallel_filaments_mutual_inductance_h(length_m: float, distance_m: float) -> float:
    """Mutual partial inductance (H) of two parallel filaments of equal length, side by side.

    Grover, "Inductance Calculations", 1946 (Dover 1962), parallel filaments of equal length
    (from memory): ``M = mu0 l / (2 pi) [asinh(l/d) - sqrt(1 + (d/l)^2) + d/l]``.
    """
    if length_m <= 0.0 or distance_m <= 0.0:
        raise SolverError(
            f"filament length_m = {length_m!r}, distance_m = {distance_m!r}: both must be > 0"
        )
    ratio = distance_m / length_m
    return (
        MU0_H_PER_M
        * length_m
        / (2.0 * PI)
        * (math.asinh(1.0 / ratio) - math.sqrt(1.0 + ratio * ratio) + ratio)
    )


def _neumann_primitive(t: float, distance_m: float) -> float:
    """``G(t) = t asinh(t/d) - sqrt(t^2 + d^2)``, with ``G'' = 1/sqrt(t^2 + d^2)``."""
    return t * math.asinh(t / distance_m) - math.hypot(t, distance_m)


def parallel_filaments_offset_mutual_inductance_h(
    start_a_m: float, end_a_m: float, start_b_m: float, end_b_m: float, distance_m: float
) -> float:
    """Mutual partial inductance (H) of two parallel filaments ``distance_m`` apart spanning
    ``[start_a, end_a]`` and ``[start_b, end_b]`` along their common direction (both currents
    pointing the same way; negate for antiparallel currents).

    Neumann's formula ``M = mu0/(4 pi) int int dz_a dz_b / r`` (Paul, "Inductance: Loop and
    Partial", 2010, ch. 5 (from memory)) integrated in closed form here:
    ``M = mu0/(4 pi) [G(b2 - a1) - G(b1 - a1) - G(b2 - a2) + G(b1 - a2)]`` with
    ``G(t) = t asinh(t/d) - sqrt(t^2 + d^2)``; equal spans give
    :func:`parallel_filaments_mutual_inductance_h`.
    """
    if not (start_a_m < end_a_m and start_b_m < end_b_m and distance_m > 0.0):
        raise SolverError(
            f"filament spans [{start_a_m!r}, {end_a_m!r}], [{start_b_m!r}, {end_b_m!r}] and "
            f"distance_m = {distance_m!r}: need start < end and distance > 0"
        )
    g = _neumann_primitive
    total = (
        g(end_b_m - start_a_m, distance_m)
        - g(start_b_m - start_a_m, distance_m)
        - g(end_b_m - end_a_m, distance_m)
        + g(start_b_m - end_a_m, distance_m)
    )
    return MU0_H_PER_M / (4.0 * PI) * total


def meander_inductance_factors(ifa: PrintedIfa) -> tuple[float, ...]:
    """Per arm segment (path order): the factor on the line's inductance per metre from the
    other segments perpendicular to the ground edge (meander folds).

    A perpendicular segment ``k`` gets ``1 + sum_j s_kj M_kj / L_k``: ``L_k`` its thin-strip
    partial self-inductance (:func:`strip_partial_inductance_h`), ``M_kj`` the filament mutual
    inductance with every other perpendicular segment ``j``
    (:func:`parallel_filaments_offset_mutual_inductance_h`), ``s_kj = -1`` when the two carry
    antiparallel currents (adjacent folds) and ``+1`` when parallel.  Parallel-to-edge
    segments keep 1 (their coupling is ignored).  Floored at
    :data:`MEANDER_MIN_INDUCTANCE_FACTOR`.  Physical motivation: antiparallel currents in
    adjacent folds cancel part of each other's flux, so a meander is electrically shorter than
    its centreline; capacitive coupling between folds is ignored.
    """
    return _fold_factors(tuple(map(tuple, ifa.arm_path_m)), float(ifa.trace_width_m))


@functools.lru_cache(maxsize=LINE_CACHE_SIZE)
def _fold_factors(
    arm_path_m: tuple[tuple[float, float], ...], trace_width_m: float
) -> tuple[float, ...]:
    """:func:`meander_inductance_factors` memoised on the arm path and width (pure)."""
    segments = list(zip(arm_path_m, arm_path_m[1:]))
    vertical = [
        (x0, min(y0, y1), max(y0, y1), math.copysign(1.0, y1 - y0))
        if abs(x1 - x0) <= LENGTH_EPS_M and abs(y1 - y0) > LENGTH_EPS_M
        else None
        for (x0, y0), (x1, y1) in segments
    ]
    factors = []
    for k, seg in enumerate(vertical):
        if seg is None:
            factors.append(1.0)
            continue
        x_k, lo_k, hi_k, dir_k = seg
        self_h = strip_partial_inductance_h(hi_k - lo_k, trace_width_m)
        coupled = 0.0
        for j, other in enumerate(vertical):
            if other is None or j == k or abs(other[0] - x_k) <= LENGTH_EPS_M:
                continue
            x_j, lo_j, hi_j, dir_j = other
            coupled += dir_k * dir_j * parallel_filaments_offset_mutual_inductance_h(
                lo_k, hi_k, lo_j, hi_j, abs(x_j - x_k)
            )
        factors.append(max(1.0 + coupled / self_h, MEANDER_MIN_INDUCTANCE_FACTOR))
    return tuple(factors)


@dataclass(frozen=True)
class LegInductances:
    """Partial inductances (H) of the feed leg, the short leg and their mutual inductance."""

    feed_h: float
    short_h: float
    mutual_h: float


def leg_inductances(ifa: PrintedIfa, options: TlineIfaOptions = DEFAULT_OPTIONS) -> LegInductances:
    """Legs of height ``H`` (ground edge to arm centreline) as thin strips (Grover): self terms
    from :func:`strip_partial_inductance_h`, mutual from
    :func:`parallel_filaments_mutual_inductance_h` at the feed-short spacing (capped at the
    smaller self term).  All zero when ``options.leg_inductance`` is off."""
    if not options.leg_inductance:
        return LegInductances(0.0, 0.0, 0.0)
    feed = strip_partial_inductance_h(ifa.height_m, ifa.trace_width_m)
    short = strip_partial_inductance_h(ifa.height_m, ifa.short_width_m)
    mutual = parallel_filaments_mutual_inductance_h(ifa.height_m, ifa.feed_short_spacing_m)
    return LegInductances(feed, short, min(mutual, feed, short))


def dielectric_attenuation_np_per_m(
    freq_hz: ArrayLike, eps_r: float, eps_eff: ArrayLike, loss_tangent: float
) -> NDArray[np.float64]:
    """Dielectric attenuation (Np/m) of a quasi-TEM line with a partly filled cross-section.

    Pozar, "Microwave Engineering", 4th ed. 2012, eq. (3.198) (from memory):
    ``alpha_d = k0 eps_r (eps_eff - 1) tan_d / (2 sqrt(eps_eff) (eps_r - 1))``.
    """
    f = np.asarray(freq_hz, dtype=float)
    if eps_r <= 1.0 or loss_tangent == 0.0:
        return np.zeros_like(f)
    k0 = 2.0 * PI * f / C0_M_PER_S
    eps_eff = np.asarray(eps_eff, dtype=float)
    return k0 * eps_r * (eps_eff - 1.0) * loss_tangent / (2.0 * np.sqrt(eps_eff) * (eps_r - 1.0))


def radiation_resistance_hertzian_legs_ohm(freq_hz: ArrayLike, ifa: PrintedIfa) -> NDArray:
    """Radiation resistance (ohm, at the current maximum) of the legs as a uniform-current
    electric dipole of length ``H`` in free space (the ground is coplanar, so no image):
    ``R = 80 pi^2 (H / lambda0)^2`` (Balanis, "Antenna Theory", 3rd ed. 2005, eq. (4-19)).
    The line mode's own radiation is neglected.  Physics only; far too small for a real board.
    """
    wavelength = C0_M_PER_S / np.asarray(freq_hz, dtype=float)
    return 80.0 * PI**2 * (ifa.height_m / wavelength) ** 2


def radiation_resistance_height_rule_ohm(freq_hz: ArrayLike, ifa: PrintedIfa) -> NDArray:
    """Radiation resistance (ohm, at the current maximum) ``R = RADIATION_SLOPE_OHM * H/lambda0``.

    Common practice, no source: a calibration, not physics (see the module docstring).
    """
    wavelength = C0_M_PER_S / np.asarray(freq_hz, dtype=float)
    return RADIATION_SLOPE_OHM * ifa.height_m / wavelength


#: Radiation models by name.
RADIATION_MODELS: dict[str, Callable[[ArrayLike, PrintedIfa], NDArray]] = {
    "height_rule": radiation_resistance_height_rule_ohm,
    "hertzian_legs": radiation_resistance_hertzian_legs_ohm,
}


def radiation_resistance_ohm(
    freq_hz: ArrayLike, ifa: PrintedIfa, options: TlineIfaOptions = DEFAULT_OPTIONS
) -> NDArray[np.float64]:
    """Series radiation resistance at the short (ohm) chosen by ``options``."""
    f = np.asarray(freq_hz, dtype=float)
    if options.radiation_resistance_ohm is not None:
        if options.radiation_resistance_ohm < 0.0:
            raise SolverError(
                f"radiation_resistance_ohm = {options.radiation_resistance_ohm!r}: must be >= 0"
            )
        return np.full_like(f, options.radiation_resistance_ohm)
    try:
        model = RADIATION_MODELS[options.radiation_model]
    except KeyError:
        raise SolverError(
            f"radiation_model = {options.radiation_model!r}: choose one of "
            f"{sorted(RADIATION_MODELS)}"
        ) from None
    return np.asarray(model(f, ifa), dtype=float)


@dataclass(frozen=True)
class LineSection:
    """One arm segment as a line: length, characteristic impedance, effective permittivity and
    the factor on its inductance per metre from neighbouring meander folds (the phase constant
    scales with its square root; ``z0_ohm`` already includes it)."""

    length_m: float
    z0_ohm: float
    eps_eff: float
    inductance_factor: float = 1.0


def _check_ifa(ifa: PrintedIfa) -> None:
    lam = ifa.laminate
    checks = (
        ("trace_width_m", ifa.trace_width_m),
        ("short_width_m", ifa.short_width_m),
        ("laminate.thickness_m", lam.thickness_m),
    )
    for name, value in checks:
        if not value > 0.0:
            raise SolverError(f"{name} = {value!r}: must be > 0")
    if not lam.eps_r >= 1.0:
        raise SolverError(f"laminate.eps_r = {lam.eps_r!r}: must be >= 1")
    if not lam.loss_tangent >= 0.0:
        raise SolverError(f"laminate.loss_tangent = {lam.loss_tangent!r}: must be >= 0")
    if len(ifa.arm_path_m) < 2:
        raise SolverError(f"arm_path_m = {ifa.arm_path_m!r}: needs at least two points")
    for x, y in ifa.arm_path_m:
        if not y - ifa.trace_width_m / 2.0 > 0.0:
            raise SolverError(
                f"arm_path_m point ({x!r}, {y!r}): the arm's edge must stay above the ground "
                f"edge y = 0 (y > trace_width_m / 2 = {ifa.trace_width_m / 2.0!r})"
            )


def strip_line_partial_capacitance(
    width_m: float, gap_m: float, eps_r: float, thickness_m: float
) -> tuple[float, float]:
    """``(Z0 ohm, eps_eff)`` by the partial-capacitance closed form
    (:func:`z0_strip_beside_ground_edge`, :func:`eps_eff_strip_beside_ground_edge`)."""
    return (
        float(z0_strip_beside_ground_edge(width_m, gap_m, eps_r, thickness_m)),
        float(eps_eff_strip_beside_ground_edge(width_m, gap_m, eps_r, thickness_m)),
    )


def strip_line_fitted(
    width_m: float, gap_m: float, eps_r: float, thickness_m: float
) -> tuple[float, float]:
    """``(Z0 ohm, eps_eff)`` by the closed form corrected to the finite-volume solver
    (:func:`footgen.physics.lines.strip_beside_ground_edge_fitted`)."""
    z0, eps_eff = strip_beside_ground_edge_fitted(width_m, gap_m, eps_r, thickness_m)
    return float(z0), float(eps_eff)


#: Arm-line models by name: ``(width_m, gap_m, eps_r, thickness_m) -> (Z0 ohm, eps_eff)``.
#: ``finite_volume`` solves the cross-section (about a second per new cross-section, then
#: cached); ``fitted`` is its closed-form fit; ``partial_capacitance`` the plain closed form.
LINE_MODELS: dict[str, Callable[[float, float, float, float], tuple[float, float]]] = {
    "partial_capacitance": strip_line_partial_capacitance,
    "fitted": strip_line_fitted,
    "finite_volume": quasistatic2d.strip_beside_ground_edge_fd,
}


@functools.lru_cache(maxsize=LINE_CACHE_SIZE)
def line_constants(
    line_model: str, width_m: float, gap_m: float, eps_r: float, thickness_m: float
) -> tuple[float, float]:
    """``(Z0 ohm, eps_eff)`` of the arm line by the :data:`LINE_MODELS` entry ``line_model``,
    memoised on the exact argument values (the models are pure functions, so the cached and
    the direct values are the same bits)."""
    try:
        model = LINE_MODELS[line_model]
    except KeyError:
        raise SolverError(
            f"line_model = {line_model!r}: choose one of {sorted(LINE_MODELS)}"
        ) from None
    return model(width_m, gap_m, eps_r, thickness_m)


def line_laminate(ifa: PrintedIfa) -> Laminate:
    """The laminate the line sections see: ``ifa.laminate`` (laterally infinite, as this model
    takes it); with an enclosure wall (``ifa.cover``), the equivalent slab of
    :mod:`footgen.physics.board_edge` that holds the wall over that laterally infinite laminate."""
    if ifa.cover is None:
        return ifa.laminate
    from footgen.physics.board_edge import equivalent_laminate

    return equivalent_laminate(replace(ifa, board_edge_y_m=None))


def _line_at_height(
    ifa: PrintedIfa, height_m: float, length_m: float, options: TlineIfaOptions,
    inductance_factor: float = 1.0,
) -> LineSection:
    lam = line_laminate(ifa)
    gap = height_m - ifa.trace_width_m / 2.0
    z0, eps_eff = line_constants(
        options.line_model,
        float(ifa.trace_width_m),
        float(gap),
        float(lam.eps_r),
        float(lam.thickness_m),
    )
    if inductance_factor != 1.0:
        z0 *= math.sqrt(inductance_factor)
    return LineSection(
        length_m=length_m, z0_ohm=z0, eps_eff=eps_eff, inductance_factor=inductance_factor
    )


def feed_tap_position_m(ifa: PrintedIfa) -> float:
    """Arc length along the arm from its start (above the short) to the feed tap.

    The tap is the first point of a segment parallel to the ground edge at ``x = feed_x_m``.
    """
    travelled = 0.0
    for (x0, y0), (x1, y1) in zip(ifa.arm_path_m, ifa.arm_path_m[1:]):
        seg = math.hypot(x1 - x0, y1 - y0)
        if abs(y1 - y0) <= LENGTH_EPS_M and min(x0, x1) <= ifa.feed_x_m <= max(x0, x1):
            return travelled + abs(ifa.feed_x_m - x0)
        travelled += seg
    raise SolverError(
        f"feed_x_m = {ifa.feed_x_m!r}: the feed leg does not meet a segment of the arm parallel "
        "to the ground edge"
    )


def arm_sections(
    ifa: PrintedIfa, options: TlineIfaOptions = DEFAULT_OPTIONS
) -> tuple[tuple[LineSection, ...], tuple[LineSection, ...]]:
    """The arm as line sections: ``(short side from the short to the tap, open side from the tap
    to the open end)``, both ordered from the short towards the open end; ``options`` applies
    its eps_eff scale and open-end extension."""
    _check_ifa(ifa)
    if not options.eps_eff_scale > 0.0:
        raise SolverError(f"eps_eff_scale = {options.eps_eff_scale!r}: must be > 0")
    if not options.open_end_extension_m >= 0.0:
        raise SolverError(
            f"open_end_extension_m = {options.open_end_extension_m!r}: must be >= 0"
        )
    tap = feed_tap_position_m(ifa)
    short_side: list[LineSection] = []
    open_side: list[LineSection] = []
    travelled = 0.0
    segments = list(zip(ifa.arm_path_m, ifa.arm_path_m[1:]))
    factors = (
        meander_inductance_factors(ifa) if options.meander_coupling else (1.0,) * len(segments)
    )
    for ((x0, y0), (x1, y1)), factor in zip(segments, factors):
        seg = math.hypot(x1 - x0, y1 - y0)
        if seg <= LENGTH_EPS_M:
            continue
        height = 0.5 * (y0 + y1)
        before = min(max(tap - travelled, 0.0), seg)
        if before > LENGTH_EPS_M:
            short_side.append(_line_at_height(ifa, height, before, options, factor))
        if seg - before > LENGTH_EPS_M:
            open_side.append(_line_at_height(ifa, height, seg - before, options, factor))
        travelled += seg
    if not open_side:
        raise SolverError(f"feed_x_m = {ifa.feed_x_m!r}: the feed taps the arm at its open end")
    if not short_side:
        raise SolverError(f"feed_x_m = {ifa.feed_x_m!r}: the feed taps the arm at the short")
    if options.open_end_extension_m > 0.0:
        open_side.append(replace(open_side[-1], length_m=options.open_end_extension_m))
    scale = options.eps_eff_scale
    if scale != 1.0:
        short_side, open_side = (
            [replace(x, eps_eff=x.eps_eff * scale, z0_ohm=x.z0_ohm / math.sqrt(scale))
             for x in side]
            for side in (short_side, open_side)
        )
    return tuple(short_side), tuple(open_side)


def _electrical_lengths(freq_hz: NDArray, sections, ifa: PrintedIfa, options: TlineIfaOptions):
    """``gamma * l`` of every section at every frequency: shape ``(len(freq_hz), len(sections))``."""
    f = np.asarray(freq_hz, dtype=float)[:, np.newaxis]
    length = np.array([s.length_m for s in sections])
    eps_eff = np.array([s.eps_eff for s in sections])
    # beta and the dielectric attenuation both scale with sqrt(L' C')
    root_factor = np.sqrt(np.array([s.inductance_factor for s in sections]))
    beta = 2.0 * PI * f * np.sqrt(eps_eff) / C0_M_PER_S
    lam = line_laminate(ifa)
    alpha = (
        dielectric_attenuation_np_per_m(
            f, lam.eps_r, eps_eff, lam.loss_tangent
        )
        if options.dielectric_loss
        else 0.0
    )
    return (alpha + 1j * beta) * root_factor * length


def transform_impedance(z_load: NDArray, z0_ohm: float, gamma: NDArray, length_m: float):
    """Input impedance of a line (``z0``, ``gamma``) of length ``l`` loaded by ``z_load``:
    ``Z0 (ZL + Z0 tanh(gl)) / (Z0 + ZL tanh(gl))`` (Pozar, "Microwave Engineering", 4th ed.
    2012, eq. (2.91) (from memory))."""
    t = np.tanh(gamma * length_m)
    return z0_ohm * (z_load + z0_ohm * t) / (z0_ohm + z_load * t)


def _chain_abcd(freq_hz: NDArray, ifa: PrintedIfa, sections, options):
    """ABCD parameters ``(A, B, C, D)``, each of shape ``(len(freq_hz),)``, of ``sections`` in
    cascade, the first one at the input: the product of the line matrices
    ``[[cosh gl, Z0 sinh gl], [sinh gl / Z0, cosh gl]]`` (Pozar, "Microwave Engineering",
    4th ed. 2012, table 4.1 (from memory)), multiplied pairwise (log2 of the section count
    rounds of elementwise 2 x 2 products)."""
    gl = _electrical_lengths(freq_hz, sections, ifa, options)
    z0 = np.array([s.z0_ohm for s in sections])
    grow = np.exp(gl)
    decay = 1.0 / grow
    ch, sh = 0.5 * (grow + decay), 0.5 * (grow - decay)
    a, b, c, d = ch, z0 * sh, sh / z0, ch
    while a.shape[1] > 1:
        if a.shape[1] % 2:  # pad with a unit matrix
            one, zero = np.ones((a.shape[0], 1)), np.zeros((a.shape[0], 1))
            a, b, c, d = (np.hstack([m, p]) for m, p in ((a, one), (b, zero), (c, zero), (d, one)))
        a1, b1, c1, d1 = a[:, 0::2], b[:, 0::2], c[:, 0::2], d[:, 0::2]
        a2, b2, c2, d2 = a[:, 1::2], b[:, 1::2], c[:, 1::2], d[:, 1::2]
        a, b, c, d = a1 * a2 + b1 * c2, a1 * b2 + b1 * d2, c1 * a2 + d1 * c2, c1 * b2 + d1 * d2
    return a[:, 0], b[:, 0], c[:, 0], d[:, 0]


def _short_side_abcd(freq_hz: NDArray, ifa: PrintedIfa, sections, options):
    """ABCD parameters (per frequency) of the short side, from the tap to the short end."""
    return _chain_abcd(freq_hz, ifa, sections[::-1], options)  # tap side first


def _open_side_admittance(freq_hz: NDArray, ifa: PrintedIfa, sections, options) -> NDArray:
    """Admittance of the open side seen from the tap: with the open end's current zero,
    ``V_tap = A V_end`` and ``I_tap = C V_end``, so ``Y = C / A``."""
    a, _, c, _ = _chain_abcd(freq_hz, ifa, sections, options)
    return c / a


@dataclass(frozen=True)
class _ArmModel:
    """Everything about one IFA that does not depend on frequency."""

    short_side: tuple[LineSection, ...]
    open_side: tuple[LineSection, ...]
    legs: LegInductances


def _arm_model(ifa: PrintedIfa, options: TlineIfaOptions) -> _ArmModel:
    short_side, open_side = arm_sections(ifa, options)
    return _ArmModel(short_side, open_side, leg_inductances(ifa, options))


def _feed_admittance(
    freq_hz: NDArray, ifa: PrintedIfa, options: TlineIfaOptions, arm: _ArmModel | None = None
) -> NDArray:
    """Port admittance with the legs as coupled inductors.

    Unit current ``I_f`` up the feed leg; ``I_d`` down the short leg into ground through
    ``R_rad``.  Short leg: ``V2 = (R + jw Ls) I_d - jw M I_f``; short side line (ABCD):
    ``V_tap = A V2 + B I_d``, ``I_1 = C V2 + D I_d``; tap: ``I_f = I_1 + Y_open V_tap``;
    feed leg: ``V = V_tap + jw Lf I_f - jw M I_d``; ``Y = I_f / V``.  Written as one ratio so
    that the lossless pole of ``Z_in`` is a plain zero of ``Y``.  With ``Lf = Ls = M``, no line
    between the legs and ``R = 0`` the port is shorted, as it must be.
    """
    if arm is None:
        arm = _arm_model(ifa, options)
    short_side, open_side, legs = arm.short_side, arm.open_side, arm.legs
    omega = 2.0 * PI * freq_hz
    z_short = radiation_resistance_ohm(freq_hz, ifa, options) + 1j * omega * legs.short_h
    jwm = 1j * omega * legs.mutual_h
    a, b, c, d = _short_side_abcd(freq_hz, ifa, short_side, options)
    y_open = _open_side_admittance(freq_hz, ifa, open_side, options)
    # V_tap = p_v I_d + q_v ;  I_1 = p_i I_d + q_i
    p_v, q_v = a * z_short + b, -a * jwm
    p_i, q_i = c * z_short + d, -c * jwm
    # 1 = I_1 + Y_open V_tap  ->  I_d = num / den
    num = 1.0 - q_i - y_open * q_v
    den = p_i + y_open * p_v
    # V = (p_v - jwm) I_d + q_v + jw Lf  ->  Y = den / ((p_v - jwm) num + (q_v + jw Lf) den)
    return den / ((p_v - jwm) * num + (q_v + 1j * omega * legs.feed_h) * den)


def _check_freq(freq_hz: ArrayLike) -> NDArray[np.float64]:
    f = np.asarray(freq_hz, dtype=float)
    if not np.all(np.isfinite(f)) or np.any(f <= 0.0):
        raise SolverError(f"freq_hz = {freq_hz!r}: frequencies must be finite and > 0")
    return f


# --------------------------------------------------------------------------------------------
# public model
# --------------------------------------------------------------------------------------------


def zin_tline_ifa(
    freq_hz: ArrayLike, ifa: PrintedIfa, options: TlineIfaOptions = DEFAULT_OPTIONS
) -> NDArray[np.complex128]:
    """Input impedance (ohm) at the feed, vectorised over ``freq_hz``."""
    y = _feed_admittance(_check_freq(freq_hz), ifa, options)
    with np.errstate(divide="ignore"):  # exactly at a lossless pole Z_in is infinite
        return 1.0 / y


def s11_tline_ifa(
    freq_hz: ArrayLike,
    ifa: PrintedIfa,
    z_ref_ohm: float = FEED_REFERENCE_OHM,
    options: TlineIfaOptions = DEFAULT_OPTIONS,
) -> NDArray[np.complex128]:
    """Reflection coefficient at the feed against ``z_ref_ohm``."""
    z = zin_tline_ifa(freq_hz, ifa, options)
    return (z - z_ref_ohm) / (z + z_ref_ohm)


def quarter_wave_estimate_hz(ifa: PrintedIfa, options: TlineIfaOptions = DEFAULT_OPTIONS) -> float:
    """``c / (4 L sqrt(eps_eff))`` with the length-weighted eps_eff of the arm's sections."""
    return _quarter_wave_hz(_arm_model(ifa, options))


def _quarter_wave_hz(arm: _ArmModel) -> float:
    electrical = sum(
        s.length_m * math.sqrt(s.eps_eff * s.inductance_factor)
        for s in arm.short_side + arm.open_side
    )
    return C0_M_PER_S / (4.0 * electrical)


def resonance_tline_ifa_hz(ifa: PrintedIfa, options: TlineIfaOptions = DEFAULT_OPTIONS) -> float:
    """The arm's quarter-wave (parallel) resonance (Hz): the pole of the lossless ``Z_in``
    (radiation and dielectric loss switched off, so the susceptance ``Im(1/Z_in)`` rises through
    zero there, Foster's reactance theorem); the crossing nearest the quarter-wave estimate.
    Raises :class:`SolverError` if the search window holds none."""
    lossless = replace(options, radiation_resistance_ohm=0.0, dielectric_loss=False)
    arm = _arm_model(ifa, lossless)
    f0 = _quarter_wave_hz(arm)
    grid = np.linspace(
        RESONANCE_SEARCH_LOW * f0, RESONANCE_SEARCH_HIGH * f0, RESONANCE_SEARCH_POINTS
    )

    def susceptance(f: NDArray) -> NDArray:
        with np.errstate(divide="ignore", invalid="ignore"):  # series resonances: Y infinite
            return np.imag(_feed_admittance(f, ifa, lossless, arm))

    b = susceptance(grid)
    rising = np.nonzero((b[:-1] < 0.0) & (b[1:] >= 0.0))[0]
    if rising.size == 0:
        raise SolverError(
            f"arm length {ifa.arm_length_m!r} m: no quarter-wave resonance between "
            f"{grid[0]:.4g} and {grid[-1]:.4g} Hz"
        )
    i = int(rising[np.argmin(np.abs(grid[rising] - f0))])
    return optimize.brentq(
        lambda f: float(susceptance(np.array([f]))[0]), grid[i], grid[i + 1], rtol=ROOT_RTOL
    )


def _search_grid(f_pole_hz: float, points: int) -> NDArray[np.float64]:
    """Frequencies over the resonance search window around the model's pole."""
    return np.linspace(RESONANCE_SEARCH_LOW * f_pole_hz, RESONANCE_SEARCH_HIGH * f_pole_hz, points)


def min_s11_frequency_tline_ifa_hz(
    ifa: PrintedIfa,
    z_ref_ohm: float = FEED_REFERENCE_OHM,
    options: TlineIfaOptions = DEFAULT_OPTIONS,
    points: int = RESONANCE_SEARCH_POINTS,
) -> float:
    """Frequency (Hz) of the smallest ``|S11|`` (against ``z_ref_ohm``, with all losses) over the
    resonance search window: the definition of resonance used by the full-wave reference results
    (tests/fullwave).  Best of ``points`` samples, refined by bounded Brent minimisation between
    its neighbours."""
    f = _search_grid(resonance_tline_ifa_hz(ifa, options), points)
    mag = np.abs(s11_tline_ifa(f, ifa, z_ref_ohm, options))
    i = int(np.argmin(mag))
    lo, hi = f[max(i - 1, 0)], f[min(i + 1, points - 1)]

    def magnitude(freq: float) -> float:
        return float(np.abs(s11_tline_ifa(np.array([freq]), ifa, z_ref_ohm, options))[0])

    found = optimize.minimize_scalar(
        magnitude, bounds=(lo, hi), method="bounded", options={"xatol": ROOT_RTOL * f[i]}
    )
    return float(found.x) if found.fun <= mag[i] else float(f[i])


def im_zin_zero_nearest_pole_hz(
    ifa: PrintedIfa,
    options: TlineIfaOptions = DEFAULT_OPTIONS,
    points: int = RESONANCE_SEARCH_POINTS,
) -> float:
    """Frequency (Hz) where ``Im(Z_in)`` (with all losses) crosses zero nearest the lossless pole
    (:func:`resonance_tline_ifa_hz`): the other resonance marker of the full-wave results.
    Raises :class:`SolverError` when losses leave no crossing in the search window."""
    f_pole = resonance_tline_ifa_hz(ifa, options)
    f = _search_grid(f_pole, points)
    x = np.imag(zin_tline_ifa(f, ifa, options))
    crossings = np.nonzero(np.sign(x[:-1]) * np.sign(x[1:]) < 0.0)[0]
    if crossings.size == 0:
        raise SolverError(
            f"arm length {ifa.arm_length_m!r} m: Im(Z_in) does not cross zero between "
            f"{f[0]:.4g} and {f[-1]:.4g} Hz"
        )
    i = int(crossings[np.argmin(np.abs(f[crossings] - f_pole))])
    return optimize.brentq(
        lambda freq: float(np.imag(zin_tline_ifa(np.array([freq]), ifa, options))[0]),
        f[i], f[i + 1], rtol=ROOT_RTOL,
    )


def bandwidth_tline_ifa_hz(
    ifa: PrintedIfa,
    level_db: float = -10.0,
    z_ref_ohm: float = FEED_REFERENCE_OHM,
    options: TlineIfaOptions = DEFAULT_OPTIONS,
    points: int = 4001,
) -> tuple[float, float]:
    """Edges (Hz) of the contiguous band around the best match where ``|S11| <= level_db``.

    Searched on ``points`` samples over the resonance search window; raises
    :class:`SolverError` when the match never reaches ``level_db``.
    """
    f_res = resonance_tline_ifa_hz(ifa, options)
    f = np.linspace(RESONANCE_SEARCH_LOW * f_res, RESONANCE_SEARCH_HIGH * f_res, points)
    s11_db = 20.0 * np.log10(np.abs(s11_tline_ifa(f, ifa, z_ref_ohm, options)))
    below = np.nonzero(s11_db <= level_db)[0]
    if below.size == 0:
        raise SolverError(
            f"level_db = {level_db!r}: the predicted match reaches only {s11_db.min():.3g} dB; "
            "retune the feed-short spacing"
        )
    lo = hi = int(below[np.argmin(np.abs(f[below] - f_res))])
    while lo > 0 and s11_db[lo - 1] <= level_db:
        lo -= 1
    while hi < points - 1 and s11_db[hi + 1] <= level_db:
        hi += 1
    if lo == 0 or hi == points - 1:
        raise SolverError(
            f"level_db = {level_db!r}: the band reaches the edge of the search window"
        )
    return _crossing(f, s11_db, lo - 1, lo, level_db), _crossing(f, s11_db, hi, hi + 1, level_db)


def _crossing(f: NDArray, y: NDArray, i: int, j: int, level: float) -> float:
    """Linear interpolation of where ``y`` crosses ``level`` between samples ``i`` and ``j``."""
    t = (level - y[i]) / (y[j] - y[i])
    return float(f[i] + t * (f[j] - f[i]))


# --------------------------------------------------------------------------------------------
# synthesis helpers (start points for the optimiser)
# --------------------------------------------------------------------------------------------


def with_arm_length(ifa: PrintedIfa, arm_length_m: float) -> PrintedIfa:
    """The same IFA with the arm's last segment lengthened or shortened to ``arm_length_m``."""
    path = list(ifa.arm_path_m)
    (x0, y0), (x1, y1) = path[-2], path[-1]
    last = math.hypot(x1 - x0, y1 - y0)
    new_last = last + arm_length_m - ifa.arm_length_m
    if new_last <= LENGTH_EPS_M or last <= LENGTH_EPS_M:
        raise SolverError(
            f"arm_length_m = {arm_length_m!r}: the arm's last segment ({last!r} m) cannot absorb "
            f"the change from {ifa.arm_length_m!r} m"
        )
    scale = new_last / last
    path[-1] = (x0 + (x1 - x0) * scale, y0 + (y1 - y0) * scale)
    return replace(ifa, arm_path_m=tuple(path))


def with_feed_short_spacing(ifa: PrintedIfa, spacing_m: float) -> PrintedIfa:
    """The same IFA with the feed leg moved along the arm's first segment to ``spacing_m``."""
    (x0, y0), (x1, y1) = ifa.arm_path_m[0], ifa.arm_path_m[1]
    if abs(y1 - y0) > LENGTH_EPS_M:
        raise SolverError("arm_path_m: the first segment must run parallel to the ground edge")
    direction = math.copysign(1.0, x1 - x0)
    if not 0.0 < spacing_m < abs(x1 - x0):
        raise SolverError(
            f"spacing_m = {spacing_m!r}: must lie inside the arm's first segment "
            f"(0, {abs(x1 - x0)!r})"
        )
    return replace(ifa, feed_x_m=ifa.short_x_m + direction * spacing_m)


def arm_length_for_resonance_m(
    freq_hz: float, ifa: PrintedIfa, options: TlineIfaOptions = DEFAULT_OPTIONS
) -> float:
    """Arm centreline length (m) that puts the model's resonance at ``freq_hz``, changing only
    the arm's last segment (:func:`with_arm_length`)."""
    f_target = float(_check_freq(freq_hz))
    tap = feed_tap_position_m(ifa)
    (x0, y0), (x1, y1) = ifa.arm_path_m[-2], ifa.arm_path_m[-1]
    fixed = ifa.arm_length_m - math.hypot(x1 - x0, y1 - y0)
    shortest = max(fixed, tap) + 1e-3 * ifa.arm_length_m

    def mismatch(length: float) -> float:
        return resonance_tline_ifa_hz(with_arm_length(ifa, length), options) / f_target - 1.0

    # Resonance scales roughly as 1/length: bracket around that guess, widening as needed.
    guess = ifa.arm_length_m * resonance_tline_ifa_hz(ifa, options) / f_target
    lower, upper = max(shortest, 0.7 * guess), max(1.4 * guess, 1.01 * shortest)
    for _ in range(8):
        if mismatch(lower) > 0.0:
            break
        if lower <= shortest:
            raise SolverError(
                f"freq_hz = {freq_hz!r}: even the shortest arm this layout allows "
                f"({shortest!r} m) resonates below it"
            )
        lower = max(shortest, 0.7 * lower)
    for _ in range(8):
        if mismatch(upper) < 0.0:
            break
        upper *= 1.4
    return optimize.brentq(mismatch, lower, upper, rtol=ROOT_RTOL)


def feed_short_spacing_for_match_m(
    ifa: PrintedIfa,
    z_target_ohm: float = FEED_REFERENCE_OHM,
    options: TlineIfaOptions = DEFAULT_OPTIONS,
    *,
    freq_hz: float | None = None,
) -> float:
    """Feed-short spacing (m, centre to centre) for which ``Re(Z_in) = z_target_ohm`` at the
    arm's resonance (or at ``freq_hz`` if given); the feed moves along the arm's first segment
    (:func:`with_feed_short_spacing`), no closer to the short leg than edge to edge."""
    fixed_freq = None if freq_hz is None else float(_check_freq(freq_hz))
    (x0, _), (x1, _) = ifa.arm_path_m[0], ifa.arm_path_m[1]
    first = abs(x1 - x0)
    # from legs edge to edge (centre spacing = mean width) to the end of the first segment
    lo, hi = 0.5 * (ifa.trace_width_m + ifa.short_width_m), (1.0 - 1e-3) * first
    if not lo < hi:
        raise SolverError(f"arm_path_m: first segment ({first!r} m) too short to hold both legs")

    def mismatch(spacing: float) -> float:
        trial = with_feed_short_spacing(ifa, spacing)
        f = resonance_tline_ifa_hz(trial, options) if fixed_freq is None else fixed_freq
        return float(np.real(zin_tline_ifa(np.array([f]), trial, options))[0]) - z_target_ohm

    m_lo, m_hi = mismatch(lo), mismatch(hi)
    if m_lo * m_hi > 0.0:
        raise SolverError(
            f"z_target_ohm = {z_target_ohm!r}: the input resistance spans only "
            f"{m_lo + z_target_ohm:.4g} to {m_hi + z_target_ohm:.4g} ohm over the arm's first "
            "segment; change the height or the arm"
        )
    return optimize.brentq(mismatch, lo, hi, rtol=ROOT_RTOL)


def tune_tline_ifa(
    freq_hz: float,
    ifa: PrintedIfa,
    z_target_ohm: float = FEED_REFERENCE_OHM,
    options: TlineIfaOptions = DEFAULT_OPTIONS,
) -> PrintedIfa:
    """Start point for the optimiser: the arm length for resonance at ``freq_hz``
    (:func:`arm_length_for_resonance_m`), then the feed-short spacing for ``Re(Z_in) =
    z_target_ohm`` there (:func:`feed_short_spacing_for_match_m`).  The resonance does not
    depend on the tap, so one pass suffices."""
    tuned = with_arm_length(ifa, arm_length_for_resonance_m(freq_hz, ifa, options))
    spacing = feed_short_spacing_for_match_m(tuned, z_target_ohm, options)
    return with_feed_short_spacing(tuned, spacing)
