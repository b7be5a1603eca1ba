"""Sizing: choose the arm length, height and feed-to-short spacing for the spec's band.

The height defaults to the highest the clearance allows (an IFA's bandwidth grows with its
height).  The arm length is solved so that the response model's resonance sits at the band
centre, and the feed-to-short spacing so that the resistance at resonance is 50 ohm; the two
are iterated because each moves the other a little.  Any of the three given in the spec's
``arm`` section is kept as given.  The response model comes from :data:`MODELS` by name.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Callable

import numpy as np
from scipy import optimize

from footgen.errors import InfeasibleSpecError, SolverError
from footgen.geometry.layout import Sizing, generate_copper, max_arm_height_mm, min_meander_pitch_mm
from footgen.model import printed_ifa
from footgen.physics.ifa import PrintedIfa
from footgen.physics.lines import eps_eff_strip_beside_ground_edge
from footgen.physics.tline_ifa import resonance_tline_ifa_hz, zin_tline_ifa
from footgen.constants import C0_M_PER_S
from footgen.spec import Spec

#: Reference impedance the feed tap is matched to (ohm).
MATCH_OHM = 50.0
#: Alternations of the length and spacing solves.
MAX_ITERATIONS = 6
#: Convergence of the alternation (mm).
CONVERGED_MM = 1e-4
#: Relative tolerance of the root finders (dimensionless).
ROOT_RTOL = 1e-7
#: Initial feed-to-short spacing as a fraction of the arm height (common practice, no source).
INITIAL_SPACING_PER_HEIGHT = 0.5
#: Length search window, as fractions of the quarter-wave first estimate (dimensionless).
SHORTEST_ARM_FRACTION = 0.4
LONGEST_ARM_FACTOR = 2.5
#: The feed tap is searched within this fraction of the arm from the short (common practice,
#: no source: a tap further out means a far-off match that no printed IFA is built with).
MAX_SPACING_PER_ARM = 0.25
SPACING_STEP_MM = 0.25
#: Widest clearance tried when looking for the smallest box that would work (mm).
WIDEST_BOX_MM = 300.0


@dataclass(frozen=True)
class ResponseModel:
    """A response model: resonance (Hz) and input impedance (ohm) of a PrintedIfa."""

    label: str
    resonance_hz: Callable[[PrintedIfa], float]
    zin_ohm: Callable[[np.ndarray, PrintedIfa], np.ndarray]


MODELS: dict[str, ResponseModel] = {
    "tline": ResponseModel(
        "transmission-line model (footgen.physics.tline_ifa)",
        resonance_tline_ifa_hz,
        lambda f, ifa: zin_tline_ifa(f, ifa),
    ),
}
DEFAULT_MODEL = "tline"


def quarter_wave_first_estimate_mm(spec: Spec, height_mm: float) -> float:
    """Arm length (mm) from a quarter wave at the quasi-static eps_eff of a strip beside the
    ground edge (footgen.physics.lines): the short leg plus the arm make up lambda_eff/4.

    That eps_eff lies between 1 and (eps_r + 1)/2 and accounts for the laminate's finite
    thickness and the arm's height; it is a first estimate, refined by the response model.
    """
    w = spec.trace_width_mm * 1e-3
    gap = max(height_mm - spec.trace_width_mm / 2, spec.trace_width_mm / 2) * 1e-3
    eps_eff = float(eps_eff_strip_beside_ground_edge(w, gap, spec.laminate.eps_r, spec.laminate.thickness_mm * 1e-3))
    quarter_mm = C0_M_PER_S / (4.0 * spec.target.center_hz * math.sqrt(eps_eff)) * 1e3
    return quarter_mm - height_mm


def min_spacing_mm(spec: Spec) -> float:
    """Smallest feed-to-short spacing that keeps the fab clearance between the two legs, the
    feed pad and the ground pad, and the feed copper and the via holes."""
    c = spec.fab.min_clearance_mm
    w, ws = spec.trace_width_mm, spec.short.stub_width_mm
    via_d = spec.short.via_drill_mm + 2 * spec.short.via_annular_ring_mm if spec.short.via_count else 0.0
    pad2_w = max(ws, via_d)
    return max((w + ws) / 2, (spec.feed.pad_width_mm + pad2_w) / 2, spec.feed.pad_width_mm / 2 + spec.short.via_drill_mm / 2) + c


class _Evaluator:
    """Builds the geometry for a trial sizing and asks the response model about it."""

    def __init__(self, spec: Spec, model: ResponseModel) -> None:
        self.spec = spec
        self.model = model

    def ifa(self, length: float, height: float, spacing: float) -> PrintedIfa:
        return printed_ifa(self.spec, generate_copper(self.spec, Sizing(length, height, spacing, "trial")))

    def fits(self, length: float, height: float, spacing: float) -> bool:
        try:
            self.ifa(length, height, spacing)
        except InfeasibleSpecError:
            return False
        return True

    def resonance(self, length: float, height: float, spacing: float) -> float:
        return self.model.resonance_hz(self.ifa(length, height, spacing))

    def resistance_at_resonance(self, length: float, height: float, spacing: float) -> float:
        ifa = self.ifa(length, height, spacing)
        f = self.model.resonance_hz(ifa)
        return float(np.real(self.model.zin_ohm(np.array([f]), ifa))[0])


def _longest_fitting(ev: _Evaluator, shortest: float, height: float, spacing: float) -> float:
    longest = shortest
    step = max(shortest, 1.0)
    while ev.fits(longest + step, height, spacing) and longest + step < 10 * WIDEST_BOX_MM:
        longest += step
        step *= 2
    lo, hi = longest, longest + step
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if ev.fits(mid, height, spacing) else (lo, mid)
        if hi - lo < 1e-6:
            break
    return lo


def _solve_length(ev: _Evaluator, height: float, spacing: float, f0: float) -> float:
    spec = ev.spec
    shortest = max(spacing + min_meander_pitch_mm(spec), SHORTEST_ARM_FRACTION * quarter_wave_first_estimate_mm(spec, height))
    if not ev.fits(shortest, height, spacing):
        raise _box_too_small(ev, height, spacing, f0, None)
    longest = _longest_fitting(ev, shortest, height, spacing)

    def mismatch(length: float) -> float:
        return ev.resonance(length, height, spacing) / f0 - 1.0

    longest = min(longest, LONGEST_ARM_FACTOR * quarter_wave_first_estimate_mm(spec, height))

    if mismatch(longest) > 0:
        raise _box_too_small(ev, height, spacing, f0, longest)
    if mismatch(shortest) < 0:
        raise InfeasibleSpecError(
            "$.arm.height_mm" if spec.arm.height_mm is not None else "$.clearance.depth_mm",
            round(height, 3),
            f"even the shortest arm ({shortest:.2f} mm) resonates below {f0 / 1e6:.1f} MHz at this height; lower the arm",
        )
    return optimize.brentq(mismatch, shortest, longest, rtol=ROOT_RTOL)


def _box_too_small(ev: _Evaluator, height: float, spacing: float, f0: float, longest: float | None) -> InfeasibleSpecError:
    """The refusal for a clearance too small, naming the smallest width that would work."""
    spec = ev.spec
    width = spec.clearance.width_mm
    step = 1.0
    while width < WIDEST_BOX_MM:
        width += step
        wider = _Evaluator(replace(spec, clearance=replace(spec.clearance, width_mm=width)), ev.model)
        try:
            top = _longest_fitting(wider, spacing + min_meander_pitch_mm(spec), height, spacing)
            if wider.resonance(top, height, spacing) <= f0:
                break
        except (InfeasibleSpecError, SolverError):
            continue
    hint = "" if spec.style.kind == "meandered" else " or use style meandered"
    if longest is None:
        why = "no arm long enough to pass the feed fits"
    else:
        why = f"the longest arm that fits ({longest:.2f} mm) resonates at {ev.resonance(longest, height, spacing) / 1e6:.1f} MHz"
    return InfeasibleSpecError(
        "$.clearance.width_mm",
        spec.clearance.width_mm,
        f"too small for {f0 / 1e6:.1f} MHz: {why}; a clearance about {width:.0f} mm wide would work{hint}",
    )


def _solve_spacing(ev: _Evaluator, length: float, height: float, f0: float, notes: list[str]) -> float:
    spec = ev.spec
    lo = min_spacing_mm(spec)
    hi = lo
    top = min(length - min_meander_pitch_mm(spec), MAX_SPACING_PER_ARM * length)
    while hi + SPACING_STEP_MM < top and ev.fits(length, height, hi + SPACING_STEP_MM):
        hi += SPACING_STEP_MM
    if hi <= lo:
        return lo

    def mismatch(spacing: float) -> float:
        return ev.resistance_at_resonance(length, height, spacing) - MATCH_OHM

    m_lo, m_hi = mismatch(lo), mismatch(hi)
    if m_lo * m_hi <= 0:
        return optimize.brentq(mismatch, lo, hi, rtol=ROOT_RTOL)
    best = lo if abs(m_lo) < abs(m_hi) else hi
    r = ev.resistance_at_resonance(length, height, best)
    notes.append(f"no feed tap gives 50 ohm at resonance here; best {best:.3f} mm gives {r:.1f} ohm (consider a matching network)")
    return best


def size(spec: Spec, model: str = DEFAULT_MODEL) -> Sizing:
    """Sizing for ``spec`` with the named response model."""
    rm = MODELS[model]
    ev = _Evaluator(spec, rm)
    notes: list[str] = []
    w = spec.trace_width_mm
    height = spec.arm.height_mm if spec.arm.height_mm is not None else max_arm_height_mm(spec)
    lowest = w / 2 + spec.fab.min_clearance_mm
    if height < lowest:
        need = spec.clearance.depth_mm + lowest - height
        raise InfeasibleSpecError("$.clearance.depth_mm", spec.clearance.depth_mm, f"too shallow for this trace and fab; at least {need:.3f} mm")
    spacing = spec.arm.feed_short_spacing_mm
    if spacing is None:
        spacing = max(min_spacing_mm(spec), INITIAL_SPACING_PER_HEIGHT * height)
    length = spec.arm.length_mm
    f0 = spec.target.center_hz
    if length is not None and spec.arm.feed_short_spacing_mm is not None:
        notes.append("arm length, height and feed-short spacing all given in the spec: kept as given")
        return Sizing(length, height, spacing, "as given", tuple(notes))
    if length is None:
        length = max(quarter_wave_first_estimate_mm(spec, height), spacing + min_meander_pitch_mm(spec))
    for _ in range(MAX_ITERATIONS):
        notes = []  # keep only the last pass's remarks
        before = (length, spacing)
        if spec.arm.length_mm is None:
            length = _solve_length(ev, height, spacing, f0)
        if spec.arm.feed_short_spacing_mm is None:
            spacing = _solve_spacing(ev, length, height, f0, notes)
        if max(abs(length - before[0]), abs(spacing - before[1])) < CONVERGED_MM:
            break
    if spec.arm.length_mm is not None:
        f_res = ev.resonance(length, height, spacing)
        notes.append(f"arm length kept as given: the model puts the resonance at {f_res / 1e6:.1f} MHz")
    notes.append(f"sized with the {rm.label} at {f0 / 1e6:.2f} MHz")
    return Sizing(length, height, spacing, rm.label, tuple(dict.fromkeys(notes)))
