"""Retune a spec from a measured S11 sweep: the next revision of the spec.

The measurement of the built board is compared with the response model's prediction for the
same geometry.  Both are reduced with one observable, the frequency of the |S11| dip near the
quarter-wave resonance and the input resistance there, so the ratios measured/model carry what
the model does not know (enclosure, battery, the real laminate).  The new arm length (and, when
the measured match is poor, the feed tap) is then solved with the model's sensitivities
(finite-difference Newton steps) so that the corrected model's dip (the model's dip frequency
times the frequency ratio) sits on the target and, if the tap moves, its resistance at the
model's resonance (times the resistance ratio) is 50 ohm, the sizing's own match criterion.
"""

from __future__ import annotations

import copy
import json
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

from footgen import sizing
from footgen.errors import InfeasibleSpecError, MeasurementError, OverwriteRefusedError, SolverError, SpecError
from footgen.geometry.layout import Layout, Sizing, build_layout, generate_copper
from footgen.model import printed_ifa
from footgen.outputs import write_outputs
from footgen.physics.ifa import PrintedIfa
from footgen.rf import touchstone
from footgen.rf.touchstone import Measurement
from footgen.rules import Violation, check
from footgen.spec import Spec, parse_spec

#: Reference resistance the tap is matched to (ohm).
MATCH_OHM = 50.0
#: The model's dip is searched within this fraction either side of the start model's
#: resonance (dimensionless; the sizing searches the MoM one within 0.5 .. 1.6 of it).
DIP_SPAN = 0.35
#: Samples of the coarse sweep over that span and of the fine sweep between the two coarse
#: samples beside the smallest (steps of 1 % and 0.05 % of the guess).
DIP_COARSE_POINTS = 71
DIP_FINE_POINTS = 41
#: Times the fine window may move when the minimum lands on its edge.
DIP_RECENTRES = 4
#: A measured match worse than this at the dip moves the tap (common practice, no source).
POOR_MATCH_DB = -10.0
#: ... and so does a resistance at the dip outside [50 / ratio, 50 * ratio] (common practice,
#: no source: this is a VSWR of 1.5 for a purely resistive load).
R_FAR_RATIO = 1.5
#: Finite-difference steps of the sensitivities (mm): large enough that the models' resonance
#: search (sampled sweeps, parabolic refinement, ~1e-5 relative noise) does not dominate.
FD_STEP_LENGTH_MM = 0.1
FD_STEP_SPACING_MM = 0.05
#: Newton iterations and convergence of the scaled residuals (dimensionless): the frequency
#: residual to 0.02 %, the resistance one to 1 % of 50 ohm.
MAX_NEWTON_STEPS = 25
RESIDUAL_TOL = np.array([2e-4, 1e-2])
#: Largest Newton step, relative to each unknown's current value (a trust region).
MAX_STEP_REL = 0.2
#: Step halvings tried when the model finds no resonance at a trial geometry.
MAX_HALVINGS = 8
#: Bisection resolution when looking for the nearest feasible value (mm).
FEASIBLE_RESOLUTION_MM = 1e-3
#: Decimal places of mm values written into the new spec (0.1 um).
SPEC_DECIMALS = 4


Progress = Callable[[str], None]


def _quiet(_: str) -> None:
    return None


# --------------------------------------------------------------------------------- model side


@dataclass(frozen=True)
class Dip:
    """The |S11| dip near the quarter-wave resonance: where, how deep, and Zin there (its real
    part is "R at resonance", which the feed tap sets)."""

    freq_hz: float
    s11_db: float
    zin_ohm: complex

    @property
    def r_ohm(self) -> float:
        return float(self.zin_ohm.real)


def evaluator(spec: Spec, model: str = sizing.DEFAULT_MODEL) -> "sizing._Evaluator":
    """Thin wrapper around the sizing's trial-geometry evaluator (one place that uses it)."""
    return sizing._Evaluator(spec, sizing.MODELS[model])


def model_ifa(spec: Spec, numbers: Sizing) -> PrintedIfa:
    """The physics model of ``spec``'s copper as built from ``numbers`` (with the meander pitch
    a sizing may carry, so a fitted meander is the one that was built)."""
    return printed_ifa(spec, generate_copper(spec, numbers))


def model_zin_ohm(spec: Spec, numbers: Sizing, freq_hz: np.ndarray, model: str = sizing.DEFAULT_MODEL) -> np.ndarray:
    """Predicted input impedance (ohm) of the sized antenna over ``freq_hz``."""
    return np.asarray(sizing.MODELS[model].zin_ohm(np.asarray(freq_hz, dtype=float), model_ifa(spec, numbers)))


def dip_of(zin_ohm: Callable[[np.ndarray], np.ndarray], guess_hz: float) -> Dip:
    """The |S11| dip of a vectorised impedance function near ``guess_hz``: a coarse sweep over
    +-``DIP_SPAN``, a fine sweep around its local minimum nearest the guess, and the same
    parabola refinement footgen applies to measured sweeps
    (:func:`footgen.rf.touchstone.min_s11_db`).  Two calls, so costly models are asked little."""
    coarse = np.linspace((1 - DIP_SPAN) * guess_hz, (1 + DIP_SPAN) * guess_hz, DIP_COARSE_POINTS)
    g = np.abs(_gamma(zin_ohm(coarse)))
    minima = np.nonzero((g[1:-1] < g[:-2]) & (g[1:-1] <= g[2:]))[0] + 1
    if minima.size == 0:
        raise SolverError(f"no |S11| dip within {DIP_SPAN:.0%} of {guess_hz / 1e6:.2f} MHz")
    i = int(minima[np.argmin(np.abs(coarse[minima] - guess_hz))])
    lo, hi = coarse[i - 1], coarse[i + 1]
    for _ in range(DIP_RECENTRES + 1):
        fine = np.linspace(lo, hi, DIP_FINE_POINTS)
        z = np.asarray(zin_ohm(fine), dtype=complex)
        j = int(np.argmin(np.abs(_gamma(z))))
        if 0 < j < fine.size - 1:
            break
        # The minimum sits on an edge of the fine window (a model whose wide sweeps are less
        # accurate than its narrow ones places the coarse minimum off): move the window there.
        half = 0.5 * (hi - lo)
        lo, hi = fine[j] - half, fine[j] + half
    else:
        raise SolverError(f"the |S11| dip near {guess_hz / 1e6:.2f} MHz could not be bracketed")
    f_dip, level_db = touchstone.min_s11_db(fine, _gamma(z))
    z_dip = complex(np.interp(f_dip, fine, z.real), np.interp(f_dip, fine, z.imag))
    return Dip(float(f_dip), float(level_db), z_dip)


def model_dip(ifa: PrintedIfa, model: str = sizing.DEFAULT_MODEL) -> Dip:
    """The model's |S11| dip near the quarter-wave resonance, searched around the fast start
    model's resonance (``sizing.START_MODEL``, cheap) so that only two sweeps of ``model`` run."""
    guess = sizing.MODELS[sizing.START_MODEL].resonance_hz(ifa)
    rm = sizing.MODELS[model]
    return dip_of(lambda f: rm.zin_ohm(np.asarray(f, dtype=float), ifa), guess)


def _gamma(z_ohm):
    return (np.asarray(z_ohm) - MATCH_OHM) / (np.asarray(z_ohm) + MATCH_OHM)


# --------------------------------------------------------------------------------- measurement side


def measured_dip(measurement: Measurement, expected_hz: float) -> Dip:
    """The deepest measured |S11| dip within DIP_WINDOW of ``expected_hz`` (any dip if none is
    that near), else the sweep's minimum if it lies inside the sweep."""
    f, s = measurement.freq_hz, measurement.s11
    found = touchstone.resonances_hz(f, s)
    if found:
        # the deepest dip near the expected one: noise on a flank makes shallow local minima
        near = [x for x in found if abs(x / expected_hz - 1.0) <= DIP_WINDOW] or found
        f_dip = min(near, key=lambda x: abs(touchstone.s11_at(f, s, x)))
    else:
        f_dip, _ = touchstone.min_s11_db(f, s)
        if not (f[0] < f_dip < f[-1]):
            raise MeasurementError(
                f"{measurement.source}: no |S11| dip inside the sweep ({f[0] / 1e6:.1f} .. {f[-1] / 1e6:.1f} MHz); "
                f"measure a sweep that brackets the resonance (the model expects {expected_hz / 1e6:.1f} MHz)"
            )
    gamma = touchstone.s11_at(f, s, f_dip)
    return Dip(float(f_dip), float(touchstone.s11_db(np.array([gamma]))[0]), touchstone.zin_at(f, s, f_dip, measurement.z0_ohm))


@dataclass(frozen=True)
class Calibration:
    """What a measurement says about the model for one spec: the ratios measured/model of the
    dip frequency and of the resistance at the dip, and the two dips behind them."""

    sizing: Sizing
    model_dip: Dip
    measured_dip: Dip
    source: str
    #: Frequency ratio of the display correction (see :func:`corrected_zin_ohm`), chosen so the
    #: corrected prediction of the measured revision puts its dip on the measured one.
    display_freq_ratio: float = 1.0

    @property
    def freq_ratio(self) -> float:
        return self.measured_dip.freq_hz / self.model_dip.freq_hz

    @property
    def r_ratio(self) -> float:
        return self.measured_dip.r_ohm / self.model_dip.r_ohm


def calibrate(spec: Spec, measurement: Measurement, *, model: str = sizing.DEFAULT_MODEL) -> Calibration:
    """Compare the measurement of the board built from ``spec`` with the model's prediction."""
    old = sizing.size(spec, model=model)
    before = model_dip(model_ifa(spec, old), model)
    meas = measured_dip(measurement, before.freq_hz)
    if meas.r_ohm <= 0 or before.r_ohm <= 0:
        raise MeasurementError(f"{measurement.source}: resistance at the dip is not positive ({meas.r_ohm:.3g} ohm); check the calibration")
    k_r = meas.r_ohm / before.r_ohm

    def scaled(f: np.ndarray) -> np.ndarray:
        z = model_zin_ohm(spec, old, f, model)
        return k_r * z.real + 1j * z.imag

    scaled_dip = dip_of(scaled, before.freq_hz)
    return Calibration(old, before, meas, measurement.source, meas.freq_hz / scaled_dip.freq_hz)


def corrected_zin_ohm(spec: Spec, numbers: Sizing, freq_hz: np.ndarray, cal: Calibration,
                      model: str = sizing.DEFAULT_MODEL) -> np.ndarray:
    """The model's Zin carried over by a calibration, for display and matching: the resistance
    scaled by the resistance ratio and the frequency by the display ratio k_d,
    Z_c(f) = k_r R(f/k_d) + j X(f/k_d); k_d puts the corrected dip of the measured revision on the
    measured dip.  An approximation next to the retune's own correction (which uses the dips)."""
    z = model_zin_ohm(spec, numbers, np.asarray(freq_hz, dtype=float) / cal.display_freq_ratio, model)
    return cal.r_ratio * z.real + 1j * z.imag


# --------------------------------------------------------------------------------- result


@dataclass(frozen=True)
class RetuneResult:
    """The next revision and every number behind it (frequencies in Hz, lengths in mm)."""

    old_spec: Spec
    new_spec: Spec
    new_data: dict
    model: str
    source: str
    f_target_hz: float
    old_sizing: Sizing
    new_sizing: Sizing
    measured: Dip
    model_before: Dip
    model_after: Dip
    freq_ratio: float  # measured / model dip frequency
    r_ratio: float  # measured / model resistance at the dip
    dfdl_hz_per_mm: float  # model sensitivity of the dip frequency to the arm length
    drds_ohm_per_mm: float  # model sensitivity of R at resonance to the tap spacing
    tap_moved: bool  # the feed-to-short spacing changed
    newton_steps: int
    layout: Layout
    violations: tuple[Violation, ...]
    notes: tuple[str, ...]

    @property
    def predicted_freq_hz(self) -> float:
        """The corrected model's dip frequency for the new revision."""
        return self.model_after.freq_hz * self.freq_ratio

    @property
    def predicted_r_ohm(self) -> float:
        return self.model_after.r_ohm * self.r_ratio

    @property
    def history_note(self) -> str:
        return self.new_spec.history[-1][1]

    def spec_json(self) -> bytes:
        return (json.dumps(self.new_data, indent=2, ensure_ascii=False) + "\n").encode("utf-8")


# --------------------------------------------------------------------------------- solve


class _Problem:
    """Residuals of the corrected model against the target, in the unknowns (L) or (L, s)."""

    def __init__(self, spec: Spec, model: str, height_mm: float, freq_ratio: float, r_ratio: float,
                 f_target_hz: float, move_tap: bool, fixed_spacing_mm: float) -> None:
        self.ev = evaluator(spec, model)
        self.model = model
        self.height = height_mm
        self.k_f, self.k_r = freq_ratio, r_ratio
        self.f_target = f_target_hz
        self.move_tap = move_tap
        self.fixed_spacing = fixed_spacing_mm

    def numbers(self, x: np.ndarray) -> tuple[float, float]:
        return float(x[0]), (float(x[1]) if self.move_tap else self.fixed_spacing)

    def residual(self, x: np.ndarray) -> np.ndarray:
        """Corrected model against the target: the model's dip frequency times the frequency
        ratio on the target (the observable a VNA shows) and, when the tap moves, the model's
        resistance at its resonance (the sizing's match criterion) times the resistance ratio
        at 50 ohm."""
        length, spacing = self.numbers(x)
        ifa = self.ev.ifa(length, self.height, spacing)
        r = [self.k_f * model_dip(ifa, self.model).freq_hz / self.f_target - 1.0]
        if self.move_tap:
            f_res = self.ev.model.resonance_hz(ifa)
            r_res = float(np.real(self.ev.model.zin_ohm(np.array([f_res]), ifa))[0])
            r.append(self.k_r * r_res / MATCH_OHM - 1.0)
        return np.array(r)

    def jacobian(self, x: np.ndarray, r0: np.ndarray) -> np.ndarray:
        steps = [FD_STEP_LENGTH_MM, FD_STEP_SPACING_MM][: x.size]
        cols = []
        for j, h in enumerate(steps):
            xj = x.copy()
            xj[j] += h
            if not self.fits(xj):  # at the edge of the feasible geometry: a backward difference
                h = -h
                xj[j] = x[j] + h
            cols.append((self.residual(xj) - r0) / h)
        return np.column_stack(cols)

    def fits(self, x: np.ndarray) -> bool:
        length, spacing = self.numbers(x)
        return spacing >= sizing.min_spacing_mm(self.ev.spec) - 1e-12 and self.ev.fits(length, self.height, spacing)


def _newton(problem: _Problem, x0: np.ndarray, progress: Progress) -> tuple[np.ndarray, np.ndarray, int]:
    """Damped Newton with finite-difference Jacobians.  Returns the solution, the Jacobian at the
    start (the sensitivities around the current geometry) and the number of steps.  A step that
    leaves the feasible geometry stops at its edge; from the edge, the limit is reported."""
    x = x0.astype(float).copy()
    r = problem.residual(x)
    jac0 = problem.jacobian(x, r)
    jac = jac0
    for step in range(1, MAX_NEWTON_STEPS + 1):
        if _converged(r):
            return x, jac0, step - 1
        try:
            dx = np.linalg.solve(jac, -r)
        except np.linalg.LinAlgError:
            raise SolverError("the model's sensitivity matrix is singular at this geometry; retune by hand") from None
        dx *= min(1.0, float(np.min(MAX_STEP_REL * np.abs(x) / np.maximum(np.abs(dx), 1e-300))))
        trial = x + dx
        if not problem.fits(trial):
            # Go to the edge of the feasible geometry on the way; if that is no progress, the
            # solution lies beyond it.
            edge = _nearest_feasible(problem, x, trial) if problem.fits(x) else x
            if float(np.max(np.abs(edge - x))) <= FEASIBLE_RESOLUTION_MM:
                raise _infeasible(problem, x, trial)
            trial = edge
        r_trial = None
        for _ in range(MAX_HALVINGS):
            try:
                r_trial = problem.residual(trial)
            except SolverError:  # the model found no resonance there: a shorter step
                trial = x + 0.5 * (trial - x)
                continue
            if np.linalg.norm(r_trial / RESIDUAL_TOL[: r.size]) < np.linalg.norm(r / RESIDUAL_TOL[: r.size]):
                break  # the step reduces the (tolerance-weighted) residual: take it
            trial = x + 0.5 * (trial - x)
            r_trial = None
        if r_trial is None:
            break  # no step along the Newton direction helps: the best the model can do
        x, r = trial, r_trial
        progress(f"retune: Newton step {step}: arm {x[0]:.4f} mm" + (f", tap {x[1]:.4f} mm" if x.size > 1 else "")
                 + f", residual {np.max(np.abs(r)):.2e}")
        jac = problem.jacobian(x, r)
    if _converged(r, ACCEPT_FACTOR):
        return x, jac0, MAX_NEWTON_STEPS
    raise SolverError(f"retune did not converge in {MAX_NEWTON_STEPS} steps (residual {np.max(np.abs(r)):.2e}); retune by hand")


#: Measured dips within this fraction of the model's expected frequency compete on depth.
DIP_WINDOW = 0.2
#: A Newton run that stalls is still accepted within this multiple of the tolerance.
ACCEPT_FACTOR = 5.0


def _converged(r: np.ndarray, factor: float = 1.0) -> bool:
    return bool(np.all(np.abs(r) < factor * RESIDUAL_TOL[: r.size]))


class _Limit(Exception):
    """A Newton step that cannot stay inside the feasible geometry: which unknown, the value
    wanted and the nearest feasible one."""

    def __init__(self, index: int, wanted: float, nearest: float) -> None:
        super().__init__(index, wanted, nearest)
        self.index, self.wanted, self.nearest = index, wanted, nearest


def _nearest_feasible(problem: _Problem, good: np.ndarray, bad: np.ndarray) -> np.ndarray:
    """Bisect on the segment from a feasible point towards an infeasible one."""
    lo, hi = 0.0, 1.0
    while (hi - lo) * float(np.max(np.abs(bad - good))) > FEASIBLE_RESOLUTION_MM:
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if problem.fits(good + mid * (bad - good)) else (lo, mid)
    return good + lo * (bad - good)


def _infeasible(problem: _Problem, good: np.ndarray, bad: np.ndarray) -> _Limit:
    near = _nearest_feasible(problem, good, bad) if problem.fits(good) else good
    index = 0
    if bad.size > 1:
        tap_only = np.array([good[0], bad[1]])
        index = 1 if not problem.fits(tap_only) else 0
    return _Limit(index, float(bad[index]), float(near[index]))


def _tap_needs_moving(d: Dip) -> bool:
    return d.s11_db > POOR_MATCH_DB or not (MATCH_OHM / R_FAR_RATIO <= d.r_ohm <= MATCH_OHM * R_FAR_RATIO)


def _round_mm(value: float) -> float:
    return round(float(value), SPEC_DECIMALS)


def retune(
    spec: Spec,
    measurement: Measurement,
    *,
    model: str = sizing.DEFAULT_MODEL,
    f_target_hz: float | None = None,
    move_tap: bool | None = None,
    progress: Progress | None = None,
) -> RetuneResult:
    """The next revision of ``spec`` from a measurement of the board built from it.

    ``f_target_hz`` defaults to the band centre; ``move_tap`` None moves the feed tap only when
    the measured match at the dip is poor (|S11| above -10 dB or R outside 50/1.5 .. 50*1.5 ohm).
    Raises :class:`InfeasibleSpecError` (field and nearest feasible value) when the change does
    not fit the clearance or breaks a fab rule; nothing is written here.
    """
    say = progress or _quiet
    if model not in sizing.MODELS:
        raise SpecError("model", model, f"unknown response model; known: {', '.join(sorted(sizing.MODELS))}")
    f_target = spec.target.center_hz if f_target_hz is None else float(f_target_hz)
    if not (math.isfinite(f_target) and f_target > 0):
        raise SpecError("--target-mhz", f_target_hz, "give a positive target frequency")
    say(f"retune: sizing revision {spec.revision} with the {model} model")
    cal = calibrate(spec, measurement, model=model)
    old, before, meas = cal.sizing, cal.model_dip, cal.measured_dip
    k_f, k_r = cal.freq_ratio, cal.r_ratio
    say(f"retune: measured dip {meas.freq_hz / 1e6:.3f} MHz ({meas.s11_db:.1f} dB, R {meas.r_ohm:.1f} ohm); "
        f"model {before.freq_hz / 1e6:.3f} MHz (R {before.r_ohm:.1f} ohm)")
    notes: list[str] = []
    tap = _tap_needs_moving(meas) if move_tap is None else bool(move_tap)
    problem = _Problem(spec, model, old.height_mm, k_f, k_r, f_target, tap, old.feed_short_spacing_mm)
    x0 = np.array([old.arm_length_mm, old.feed_short_spacing_mm] if tap else [old.arm_length_mm])
    try:
        x, jac, steps = _newton(problem, x0, say)
    except _Limit as limit:
        if limit.index == 0:
            raise _arm_refusal(limit) from None
        # The tap the match wants does not fit the fab rules: keep the nearest tap that does,
        # solve the length alone and leave the rest of the match to a matching network.
        notes.append(f"the feed tap for 50 ohm ({limit.wanted:.3f} mm) does not fit the fab rules; "
                     f"tap set to {limit.nearest:.3f} mm: add a matching network")
        problem = _Problem(spec, model, old.height_mm, k_f, k_r, f_target, False, _round_mm(limit.nearest))
        try:
            x, jac, steps = _newton(problem, x0[:1], say)
        except _Limit as arm_limit:
            raise _arm_refusal(arm_limit) from None
        tap_clamped = True
    else:
        tap_clamped = False
    length, spacing = problem.numbers(x)
    dfdl = float(jac[0, 0]) * f_target / k_f
    drds = float(jac[1, 1]) * MATCH_OHM / k_r if jac.shape[1] > 1 and not tap_clamped else _drds(problem, length, spacing)
    new_data = _next_revision_data(spec, measurement.source, meas.freq_hz, f_target, old, length, old.height_mm, spacing)
    new_spec = parse_spec(new_data)
    new_sizing = sizing.size(new_spec, model=model)
    say("retune: building and checking the new layout")
    layout = build_layout(new_spec, new_sizing)
    violations = tuple(check(layout, new_spec.fab))
    errors = [v for v in violations if v.severity == "error"]
    if errors:
        near = _nearest_feasible_rules(new_spec, old, new_sizing)
        raise InfeasibleSpecError(
            "$.arm.length_mm", _round_mm(length),
            f"the retuned layout breaks fab rule {errors[0].rule} ({errors[0].message}); {near}",
        )
    after = model_dip(model_ifa(new_spec, new_sizing), model)
    if not tap and _tap_needs_moving(meas):
        notes.append("the measured match is poor but the tap was kept as asked: add a matching network")
    return RetuneResult(
        old_spec=spec, new_spec=new_spec, new_data=new_data, model=model, source=measurement.source,
        f_target_hz=f_target, old_sizing=old, new_sizing=new_sizing, measured=meas, model_before=before,
        model_after=after, freq_ratio=k_f, r_ratio=k_r, dfdl_hz_per_mm=dfdl, drds_ohm_per_mm=drds,
        tap_moved=abs(spacing - old.feed_short_spacing_mm) > 10 ** -SPEC_DECIMALS, newton_steps=steps, layout=layout, violations=violations, notes=tuple(notes),
    )


def _arm_refusal(limit: _Limit) -> InfeasibleSpecError:
    return InfeasibleSpecError(
        "$.arm.length_mm", round(limit.wanted, 3),
        f"the retuned arm does not fit the clearance; the nearest length that fits is {limit.nearest:.3f} mm: "
        "widen the clearance or use style meandered",
    )


def _drds(problem: _Problem, length: float, spacing: float) -> float:
    """Model sensitivity dR/ds at the new geometry (ohm/mm) when the tap was not solved for."""
    ev = problem.ev
    r0 = ev.resistance_at_resonance(length, problem.height, spacing)
    try:
        r1 = ev.resistance_at_resonance(length, problem.height, spacing + FD_STEP_SPACING_MM)
    except InfeasibleSpecError:
        return math.nan
    return (r1 - r0) / FD_STEP_SPACING_MM


def _nearest_feasible_rules(new_spec: Spec, old: Sizing, new: Sizing) -> str:
    """Text naming the arm length nearest the retuned one whose layout passes the rule check."""

    def passes(length: float) -> bool:
        try:
            lay = build_layout(new_spec, Sizing(length, new.height_mm, new.feed_short_spacing_mm, "trial"))
        except InfeasibleSpecError:
            return False
        return not any(v.severity == "error" for v in check(lay, new_spec.fab))

    lo, hi = old.arm_length_mm, new.arm_length_mm
    if not passes(lo):
        return "the old revision breaks it too: fix the spec first"
    while abs(hi - lo) > FEASIBLE_RESOLUTION_MM:
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if passes(mid) else (lo, mid)
    return f"the nearest arm length that passes is {lo:.3f} mm"


def _next_revision_data(spec: Spec, source: str, f_meas_hz: float, f_target_hz: float, old: Sizing,
                        length_mm: float, height_mm: float, spacing_mm: float) -> dict:
    data = copy.deepcopy(spec.raw)
    arm = dict(data.get("arm", {}))
    arm.update(length_mm=_round_mm(length_mm), height_mm=_round_mm(height_mm), feed_short_spacing_mm=_round_mm(spacing_mm))
    data["arm"] = arm
    data["revision"] = spec.revision + 1
    note = (f"retuned from {Path(source).name}: measured f_res {f_meas_hz / 1e6:.2f} MHz -> target {f_target_hz / 1e6:.2f} MHz, "
            f"arm {old.arm_length_mm:.3f} -> {length_mm:.3f} mm, tap {old.feed_short_spacing_mm:.3f} -> {spacing_mm:.3f} mm")
    data["history"] = list(data.get("history", [])) + [{"revision": spec.revision + 1, "note": note}]
    return data


# --------------------------------------------------------------------------------- writing


def write_retuned_spec(result: RetuneResult, path: Path, *, force: bool = False) -> Path:
    """Write the new revision's JSON atomically.  An existing file is never replaced without
    ``force`` (a person may have edited it)."""
    path = Path(path)
    if path.exists() and not force:
        raise OverwriteRefusedError(f"{path}: exists (a person may have edited it); choose another name or pass --force")
    write_outputs(path.parent if str(path.parent) else Path("."), {path.name: result.spec_json()}, force=force)
    return path
