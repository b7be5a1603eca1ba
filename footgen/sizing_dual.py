"""Sizing of a dual-band IFA: both arm lengths and the feed tap from the MoM model of the whole
antenna (both arms, their coupling, the shared feed and short), so that S11 is below -10 dB over
both bands, or the best this clearance allows, with the reason.

Quarter waves give only the first guess.  Each step solves the wire model of the whole copper on
a window around each band, moves each free arm length by the ratio of its band's resonance to the
band centre (resonance ~ 1 / electrical length, the leg height included), and repeats until both
resonances sit on their band centres; the coupling between the arms is in every solve.  The feed
tap is then chosen from a few candidates by the worse band's in-band |S11|, each candidate with
its lengths re-tuned.  Searching runs on the synthesis search mesh, and a last pass on the
default mesh (the one ``predict`` uses) puts the resonances on the centres there.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from footgen.errors import InfeasibleSpecError
from footgen.geometry.dualband import arm_gap_min_mm, default_heights_mm, lowest_arm_mm
from footgen.geometry.layout import Sizing, arm_x_limit_mm, generate_copper, max_arm_height_mm
from footgen.model import printed_ifa
from footgen.spec import Spec

#: Each band is solved on this window around its centre (fractions of it) with this many points.
WINDOW_LOW = 0.8
WINDOW_HIGH = 1.25
WINDOW_POINTS = 19
#: The resonance steps stop when both resonances are within this fraction of their band centres.
RESONANCE_RTOL = 0.002
RESONANCE_STEPS = 6
FINAL_STEPS = 3
#: Feed-tap candidates: geometric from the smallest the fab allows up to this multiple of it,
#: and never beyond MAX_SPACING_PER_ARM of the main arm (as the single-band sizing).
TAP_SPAN = 4.0
TAP_CANDIDATES = 4
#: In-band |S11| is read at this many frequencies across each target band.
BAND_POINTS = 5
#: The goal of the sizing: S11 at or below this over both bands (dB).
GOAL_DB = -10.0
#: Models that solve the whole copper (both arms); any other gets the quarter-wave first guess.
MOM_MODELS = ("mom", "mom-search")
#: A length step never more than this fraction of the arm (keeps a far guess from overshooting).
MAX_LENGTH_STEP_FRACTION = 0.35


@dataclass
class _State:
    length_mm: float
    second_length_mm: float
    spacing_mm: float


def _quarter_wave_mm(spec: Spec, f_hz: float, height_mm: float) -> float:
    """First guess: the arm plus its leg make a quarter wave at the quasi-static eps_eff of a
    strip beside the ground edge (footgen.physics.lines)."""
    from footgen.constants import C0_M_PER_S
    from footgen.physics.lines import eps_eff_strip_beside_ground_edge

    w = spec.trace_width_mm
    gap = max(height_mm - w / 2, w / 2) * 1e-3
    eps_eff = float(eps_eff_strip_beside_ground_edge(w * 1e-3, gap, spec.laminate.eps_r, spec.laminate.thickness_mm * 1e-3))
    return C0_M_PER_S / (4.0 * f_hz * math.sqrt(eps_eff)) * 1e3 - height_mm


class _DualEvaluator:
    """The whole copper for trial lengths and tap, and its MoM response on both band windows."""

    def __init__(self, spec: Spec, h1: float, h2: float, mesh: dict[str, float] | None,
                 goals_hz: tuple[float, float] | None = None) -> None:
        self.spec, self.h1, self.h2, self.mesh = spec, h1, h2, mesh
        self.bands = spec.targets
        #: where each resonance of the model is wanted (the band centres; retune: the centres
        #: carried back through the measured / modelled resonance ratios)
        self.goals_hz = goals_hz or tuple(t.center_hz for t in self.bands)
        self.f_top = WINDOW_HIGH * max(t.high_hz for t in self.bands)
        self.solves = 0

    def sizing(self, st: _State, method: str = "trial", notes: tuple[str, ...] = ()) -> Sizing:
        return Sizing(st.length_mm, self.h1, st.spacing_mm, method, notes,
                      second_arm_length_mm=st.second_length_mm, second_arm_height_mm=self.h2)

    def response(self, st: _State) -> list[tuple[np.ndarray, np.ndarray]]:
        """(freqs, S11) on each band's window, one wire model meshed for the top window."""
        from footgen.physics.predict import s11_from_zin
        from footgen.sizing import MATCH_OHM, mom_solver

        ifa = printed_ifa(self.spec, generate_copper(self.spec, self.sizing(st)))
        solver = mom_solver(ifa, self.f_top, self.mesh)
        self.solves += 1
        out = []
        for t in self.bands:
            f0 = t.center_hz
            freqs = np.linspace(WINDOW_LOW * f0, WINDOW_HIGH * f0, WINDOW_POINTS)
            freqs = np.union1d(freqs, np.linspace(t.low_hz, t.high_hz, BAND_POINTS))
            out.append((freqs, s11_from_zin(solver.sweep_interpolated(freqs), MATCH_OHM)))
        return out

    def resonances(self, resp: list[tuple[np.ndarray, np.ndarray]]) -> list[float]:
        from footgen.physics.predict import min_s11_frequency_hz

        return [min_s11_frequency_hz(f, s) for f, s in resp]

    def worst_in_band_db(self, resp: list[tuple[np.ndarray, np.ndarray]]) -> list[float]:
        out = []
        for t, (f, s) in zip(self.bands, resp):
            inside = (f >= t.low_hz - 1.0) & (f <= t.high_hz + 1.0)
            out.append(float(20 * np.log10(np.max(np.abs(s[inside])))))
        return out


def _tune_lengths(ev: _DualEvaluator, st: _State, steps: int,
                  free: tuple[bool, bool] | None = None) -> tuple[_State, list[tuple[np.ndarray, np.ndarray]]]:
    """Move the free arm lengths (default: those the spec leaves to the sizing) until both
    resonances sit on their goals."""
    spec = ev.spec
    if free is None:
        free = (spec.arm.length_mm is None, spec.second_arm.length_mm is None)
    resp = ev.response(st)
    # lengths known to resonate above (too short) and below (too long) each goal: a step that
    # leaves this bracket bisects it instead (a shallow second dip can make the min-|S11|
    # frequency jump between two dips as the length changes)
    bracket = [[0.0, math.inf], [0.0, math.inf]]
    for _ in range(steps):
        f_res = ev.resonances(resp)
        errors = [f / goal - 1.0 for f, goal in zip(f_res, ev.goals_hz)]
        if all(abs(e) < RESONANCE_RTOL or not ok for e, ok in zip(errors, free)):
            break
        new = _State(st.length_mm, st.second_length_mm, st.spacing_mm)
        for k, (h, ok) in enumerate(zip((ev.h1, ev.h2), free)):
            if not ok:
                continue
            old = (st.length_mm, st.second_length_mm)[k]
            bracket[k][0 if errors[k] > 0 else 1] = old
            target = (old + h) * f_res[k] / ev.goals_hz[k] - h
            target = min(max(target, old * (1 - MAX_LENGTH_STEP_FRACTION)), old * (1 + MAX_LENGTH_STEP_FRACTION))
            lo, hi = bracket[k]
            if not lo < target < hi and math.isfinite(hi) and lo > 0.0:
                target = 0.5 * (lo + hi)
            if k == 0:
                new.length_mm = target
            else:
                new.second_length_mm = target
        _check_fits(ev, new)
        st = new
        resp = ev.response(st)
    return st, resp


def _check_fits(ev: _DualEvaluator, st: _State) -> None:
    """Refuse lengths the clearance cannot hold, naming the smallest clearance width that would."""
    spec = ev.spec
    try:
        generate_copper(spec, ev.sizing(st))
    except InfeasibleSpecError as exc:
        limit = arm_x_limit_mm(spec, st.spacing_mm)
        reach = max(-st.spacing_mm + st.length_mm if spec.style.kind == "straight" else limit,
                    st.second_length_mm if spec.second_arm.kind == "straight" else limit)
        if exc.path in ("$.clearance.width_mm", "$.arm.length_mm", "$.second_arm.length_mm") and reach > limit:
            width = spec.clearance.width_mm + reach - limit
            raise InfeasibleSpecError(
                "$.clearance.width_mm", spec.clearance.width_mm,
                f"too small for both bands ({ev.bands[0].center_hz / 1e6:.0f} and {ev.bands[1].center_hz / 1e6:.0f} MHz): "
                f"the arms need {st.length_mm:.2f} and {st.second_length_mm:.2f} mm; a clearance area about "
                f"{math.ceil(width)} mm wide would work, or meandered arms") from None
        raise


def choose_tap(ev: _DualEvaluator, st: _State, resp: list[tuple[np.ndarray, np.ndarray]],
               free: tuple[bool, bool] | None = None) -> _State:
    """The feed tap among TAP_CANDIDATES (each with its lengths re-tuned) whose worse band has
    the lowest in-band |S11|; ``st`` itself when none is better."""
    from footgen.sizing import MAX_SPACING_PER_ARM, min_spacing_mm

    lo = min_spacing_mm(ev.spec)
    hi = max(lo, min(TAP_SPAN * lo, MAX_SPACING_PER_ARM * st.length_mm))
    best = (max(ev.worst_in_band_db(resp)), st)
    for tap in np.geomspace(lo, hi, TAP_CANDIDATES):
        if abs(tap - st.spacing_mm) < 1e-6:
            continue
        try:
            trial, trial_resp = _tune_lengths(ev, _State(st.length_mm, st.second_length_mm, float(tap)), 2, free)
        except InfeasibleSpecError:
            continue
        worst = max(ev.worst_in_band_db(trial_resp))
        if worst < best[0]:
            best = (worst, trial)
    return best[1]


def size_dual(spec: Spec, model: str) -> Sizing:
    """Sizing of a dual-band spec (``spec.second_arm`` set) with the MoM (``model`` "mom")."""
    from footgen.sizing import SEARCH_MESH, min_spacing_mm

    second = spec.second_arm
    assert second is not None
    top = max_arm_height_mm(spec)
    h1, h2 = default_heights_mm(spec, top)
    need = lowest_arm_mm(spec) + arm_gap_min_mm(spec) + spec.trace_width_mm
    if min(h1, h2) < lowest_arm_mm(spec) - 1e-9 or max(h1, h2) > top + 1e-9 or abs(h1 - h2) + 1e-9 < need - lowest_arm_mm(spec):
        depth = spec.clearance.depth_mm + max(0.0, need - top)
        raise InfeasibleSpecError(
            "$.clearance.depth_mm", spec.clearance.depth_mm,
            f"too shallow for two arms {arm_gap_min_mm(spec):g} mm apart with this trace and fab (arms at {h1:.2f} and {h2:.2f} mm); "
            f"at least {depth:.2f} mm deep, or give arm.height_mm and second_arm.height_mm")
    spacing = spec.arm.feed_short_spacing_mm if spec.arm.feed_short_spacing_mm is not None else max(min_spacing_mm(spec), 0.5 * h1)
    st = _State(
        spec.arm.length_mm if spec.arm.length_mm is not None else max(_quarter_wave_mm(spec, spec.target.center_hz, h1), spacing + 1.0),
        second.length_mm if second.length_mm is not None else max(_quarter_wave_mm(spec, second.target.center_hz, h2), 1.0),
        spacing,
    )
    _check_fits(_DualEvaluator(spec, h1, h2, None), st)
    if model not in MOM_MODELS:  # the fast start model: the quarter-wave first guess alone
        return Sizing(st.length_mm, h1, st.spacing_mm, "quarter-wave first guess of both arms (no coupling)",
                      ("first guess only: size with the mom model for the coupled arms",),
                      second_arm_length_mm=st.second_length_mm, second_arm_height_mm=h2)
    search = _DualEvaluator(spec, h1, h2, SEARCH_MESH if model == "mom" else None)
    st, resp = _tune_lengths(search, st, RESONANCE_STEPS)
    if spec.arm.feed_short_spacing_mm is None:
        st = choose_tap(search, st, resp)
    final = _DualEvaluator(spec, h1, h2, None)
    st, resp = _tune_lengths(final, st, FINAL_STEPS)
    f_res = final.resonances(resp)
    worst = final.worst_in_band_db(resp)
    notes = [f"sized both arms and the feed tap with the MoM of the whole antenna (both arms coupled): "
             f"resonances {f_res[0] / 1e6:.1f} and {f_res[1] / 1e6:.1f} MHz; worst in-band S11 {worst[0]:.1f} and {worst[1]:.1f} dB "
             f"({search.solves + final.solves} model solves)"]
    for k, (t, w) in enumerate(zip(spec.targets, worst)):
        if w > GOAL_DB:
            arm = ("main arm", "second arm")[k]
            notes.append(f"band {t.label}: S11 stays above {GOAL_DB:g} dB somewhere in the band (worst {w:.1f} dB): the {arm}'s "
                         f"-10 dB band is narrower than the target band or the one feed tap cannot match both arms; "
                         f"raise the {arm}, widen its trace, or add a matching network")
    return Sizing(st.length_mm, h1, st.spacing_mm, "thin-wire method of moments, both arms (dual-band sizing)", tuple(notes),
                  second_arm_length_mm=st.second_length_mm, second_arm_height_mm=h2)
