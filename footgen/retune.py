"""Retune a spec from a measured S11 sweep: the next revision of the spec.

The measurement of the built board is compared with the model's prediction of the same copper,
on the one model path every command uses (:mod:`footgen.prediction`: the same sizing, sweep and
resonance search as ``predict``).  The comparison gives the calibration
(:mod:`footgen.calibration`): a resistance factor (measured / model resistance at the
resonance) and a frequency factor that puts the calibrated model's resonance on the measured
one.  The new arm length (and, when the measured match is poor, the feed tap) is then solved
with the model's sensitivities (a finite-difference Jacobian, Broyden updates) so that the
calibrated model's resonance sits on the target and, if the tap moves, the calibrated
resistance there is 50 ohm.  The calibration is written into the new revision, so ``predict``,
``match`` and ``report`` show what this solve saw.
"""

from __future__ import annotations

import copy
import json
import math
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Callable

import numpy as np

from footgen import sizing
from footgen.calibration import Calibration, measurement_date
from footgen.errors import InfeasibleSpecError, OverwriteRefusedError, SolverError, SpecError
from footgen.geometry.layout import Layout, Sizing, build_layout
from footgen.outputs import write_outputs
from footgen.physics.ifa import PrintedIfa
from footgen.comparison import calibrate, calibrated_dip
from footgen.prediction import Resonance, copper_ifa, model_zin_ohm, resonance, resonance_sweep_hz, sized, sweep_hz
from footgen.rf.touchstone import Measurement
from footgen.rules import Violation, check
from footgen.spec import Spec, parse_spec

#: Reference resistance the tap is matched to (ohm).
MATCH_OHM = 50.0
#: A measured match worse than this at the resonance moves the tap (common practice, no source).
POOR_MATCH_DB = -10.0
#: ... and so does a resistance there outside [50 / ratio, 50 * ratio] (common practice,
#: no source: this is a VSWR of 1.5 for a purely resistive load).
R_FAR_RATIO = 1.5
#: Finite-difference steps of the sensitivities (mm): large enough that the resonance search
#: (a spline through the sweep, 1e-5 relative resolution) does not dominate.
FD_STEP_LENGTH_MM = 0.1
FD_STEP_SPACING_MM = 0.05
#: Newton iterations and convergence of the residuals (dimensionless): the resonance to 0.005 %
#: of the target; with the tap, the reflection coefficient at the target to 0.005 in real and
#: imaginary part (a resistance within 1 % of 50 ohm).
MAX_NEWTON_STEPS = 25
RESIDUAL_TOL = np.array([5e-5])
RESIDUAL_TOL_TAP = np.array([5e-3, 5e-3])
#: Largest Newton step, relative to each unknown's current value (a trust region).
MAX_STEP_REL = 0.2
#: Step halvings tried when the model finds no resonance inside the sweep at a trial geometry.
MAX_HALVINGS = 8
#: Bisection resolution when looking for the nearest feasible value (mm).
FEASIBLE_RESOLUTION_MM = 1e-3
#: Decimal places of mm values written into the new spec (0.1 um).
SPEC_DECIMALS = 4


Progress = Callable[[str], None]
#: The model's |S11| minimum and the measured one are both a :class:`footgen.prediction.Resonance`.
Dip = Resonance


def _quiet(_: str) -> None:
    return None


# --------------------------------------------------------------------------------- model side


def evaluator(spec: Spec, model: str = sizing.DEFAULT_MODEL) -> "sizing._Evaluator":
    """Thin wrapper around the sizing's trial-geometry evaluator (one place that uses it)."""
    return sizing._Evaluator(spec, sizing.MODELS[model])


def model_ifa(spec: Spec, numbers: Sizing) -> PrintedIfa:
    """The physics model of ``spec``'s copper as built from ``numbers``."""
    return copper_ifa(spec, numbers)


def model_dip(ifa: PrintedIfa, model: str = sizing.DEFAULT_MODEL, freq_hz: np.ndarray | None = None) -> Dip:
    """The bare model's resonance of ``ifa`` on the prediction sweep ``freq_hz`` (``predict``'s)."""
    if freq_hz is None:
        raise SpecError("freq_hz", None, "give the prediction sweep (footgen.prediction.sweep_hz)")
    return resonance(freq_hz, model_zin_ohm(ifa, freq_hz, model))


def _gamma(z_ohm):
    return (np.asarray(z_ohm) - MATCH_OHM) / (np.asarray(z_ohm) + MATCH_OHM)


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
    model_before: Dip  # the bare model of the measured copper
    model_after: Dip  # the calibrated model of the new revision (what predict shows)
    calibration: Calibration
    #: the calibrated model's sensitivities (Hz/mm of the resonance to the arm length, ohm/mm of
    #: R at resonance to the tap), computed when asked for (each costs model sweeps)
    sensitivities: Callable[[], tuple[float, float]]
    tap_moved: bool  # the feed-to-short spacing changed
    newton_steps: int
    layout: Layout
    violations: tuple[Violation, ...]
    notes: tuple[str, ...]

    @property
    def dfdl_hz_per_mm(self) -> float:
        return self.sensitivities()[0]

    @property
    def drds_ohm_per_mm(self) -> float:
        return self.sensitivities()[1]

    @property
    def predicted_freq_hz(self) -> float:
        """The calibrated model's resonance of the new revision (``predict`` shows the same)."""
        return self.model_after.freq_hz

    @property
    def predicted_r_ohm(self) -> float:
        return self.model_after.r_ohm

    @property
    def history_note(self) -> str:
        return self.new_spec.history[-1][1]

    def spec_json(self) -> bytes:
        return (json.dumps(self.new_data, indent=2, ensure_ascii=False) + "\n").encode("utf-8")


# --------------------------------------------------------------------------------- solve


class _Problem:
    """Residuals of the calibrated model against the target, in the unknowns (L) or (L, s)."""

    def __init__(self, spec: Spec, model: str, height_mm: float, cal: Calibration,
                 f_target_hz: float, move_tap: bool, fixed_spacing_mm: float) -> None:
        self.ev = evaluator(spec, model)
        self.model = model
        self.height = height_mm
        self.cal = cal
        self.f_target = f_target_hz
        self.move_tap = move_tap
        self.fixed_spacing = fixed_spacing_mm
        # the narrow resonance sweep around where the bare model must resonate
        self.freq_hz = resonance_sweep_hz(f_target_hz / cal.freq_factor)

    def numbers(self, x: np.ndarray) -> tuple[float, float]:
        return float(x[0]), (float(x[1]) if self.move_tap else self.fixed_spacing)

    def sweep(self, x: np.ndarray) -> np.ndarray:
        """The bare model's Zin at a trial geometry on predict's sweep (cached)."""
        length, spacing = self.numbers(x)
        return model_zin_ohm(self.ev.ifa(length, self.height, spacing), self.freq_hz, self.model)

    def dip(self, x: np.ndarray) -> Dip:
        """The calibrated model's resonance at a trial geometry: on the narrow sweep, or on
        predict's whole sweep when it lies beyond the narrow one (a geometry far off)."""
        d = calibrated_dip(self.freq_hz, self.sweep(x), self.cal)
        if d.at_edge:
            length, spacing = self.numbers(x)
            wide = sweep_hz(self.ev.spec)
            d = calibrated_dip(wide, model_zin_ohm(self.ev.ifa(length, self.height, spacing), wide, self.model), self.cal)
        if d.at_edge:
            raise SolverError(f"no resonance inside the sweep at arm {x[0]:.3f} mm")
        return d

    def gamma_at_target(self, x: np.ndarray) -> complex:
        """The calibrated model's reflection coefficient at the target frequency."""
        from scipy.interpolate import CubicSpline

        z = self.sweep(x)
        f = self.f_target / self.cal.freq_factor
        z_t = complex(CubicSpline(self.freq_hz, z.real)(f), CubicSpline(self.freq_hz, z.imag)(f))
        z_cal = self.cal.resistance_factor * z_t.real + 1j * z_t.imag
        return complex(_gamma(z_cal))

    def residual(self, x: np.ndarray) -> np.ndarray:
        """Calibrated model against the target.  Arm only: its resonance on the target (the
        observable a VNA shows).  Arm and tap: its reflection coefficient at the target is zero
        (resonance there and 50 ohm), the sizing's own criterion."""
        if self.move_tap:
            g = self.gamma_at_target(x)
            return np.array([g.real, g.imag])
        return np.array([self.dip(x).freq_hz / self.f_target - 1.0])

    @property
    def tol(self) -> np.ndarray:
        return RESIDUAL_TOL_TAP if self.move_tap else RESIDUAL_TOL

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
    """Damped Newton with a finite-difference Jacobian at the start and Broyden updates after
    (each step costs one sweep).  Returns the solution, the Jacobian at the start (the
    sensitivities around the measured geometry) and the number of steps.  A step that leaves
    the feasible geometry stops at its edge; from the edge, the limit is reported."""
    x = x0.astype(float).copy()
    r = problem.residual(x)
    jac0 = problem.jacobian(x, r)
    jac, fresh = jac0, True
    best_x, best_r = x, r
    for step in range(1, MAX_NEWTON_STEPS + 1):
        if _converged(r, problem.tol):
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
            if np.linalg.norm(r_trial / problem.tol) < np.linalg.norm(r / problem.tol):
                break  # the step reduces the (tolerance-weighted) residual: take it
            trial = x + 0.5 * (trial - x)
            r_trial = None
        if r_trial is None:
            if fresh:
                break  # no step along the Newton direction helps: the best the model can do
            jac, fresh = problem.jacobian(x, r), True  # the updated Jacobian went stale: a new one
            continue
        dx, dr = trial - x, r_trial - r
        jac = jac + np.outer(dr - jac @ dx, dx) / float(dx @ dx)  # Broyden's update
        fresh = False
        x, r = trial, r_trial
        if np.linalg.norm(r / problem.tol) < np.linalg.norm(best_r / problem.tol):
            best_x, best_r = x, r
        progress(f"retune: step {step}: arm {x[0]:.4f} mm" + (f", tap {x[1]:.4f} mm" if x.size > 1 else "")
                 + f", residual {np.max(np.abs(r)):.2e}")
    if _converged(best_r, problem.tol, ACCEPT_FACTOR):
        return best_x, jac0, MAX_NEWTON_STEPS
    raise SolverError(f"retune did not converge in {MAX_NEWTON_STEPS} steps (residual {np.max(np.abs(best_r)):.2e}); retune by hand")


#: A Newton run that stalls is still accepted, at its best step, within this multiple of the
#: tolerance: a fitted meander is refitted as its arm changes, so the model's resonance moves in
#: small steps that no Newton step can split; 20 x 5e-5 = 0.1 % of the target, far inside
#: the model's own accuracy (common practice, no source).
ACCEPT_FACTOR = 20.0


def _converged(r: np.ndarray, tol: np.ndarray, factor: float = 1.0) -> bool:
    return bool(np.all(np.abs(r) < factor * tol))


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
    measured_date: str | None = None,
    progress: Progress | None = None,
) -> RetuneResult:
    """The next revision of ``spec`` from a measurement of the board built from it.

    ``f_target_hz`` defaults to the band centre; ``move_tap`` None moves the feed tap only when
    the measured match at the resonance is poor (|S11| above -10 dB or R outside 50/1.5 ..
    50*1.5 ohm).  ``measured_date`` (YYYY-MM-DD) is recorded with the calibration; without it
    the file must name one.  Raises :class:`InfeasibleSpecError` (field and nearest feasible
    value) when the change does not fit the clearance or breaks a fab rule; nothing is written.
    """
    say = progress or _quiet
    if model not in sizing.MODELS:
        raise SpecError("model", model, f"unknown response model; known: {', '.join(sorted(sizing.MODELS))}")
    f_target = spec.target.center_hz if f_target_hz is None else float(f_target_hz)
    if not (math.isfinite(f_target) and f_target > 0):
        raise SpecError("--target-mhz", f_target_hz, "give a positive target frequency")
    date = measurement_date(Path(measurement.source).read_text("utf-8", errors="replace"), measured_date, measurement.source)
    say(f"retune: revision {spec.revision} with the {model} model")
    comparison = calibrate(spec, measurement, model=model, measured_date=date)
    old, before, meas, cal = comparison.sizing, comparison.model_dip, comparison.measured_dip, comparison.calibration
    say(f"retune: measured resonance {meas.freq_hz / 1e6:.3f} MHz ({meas.s11_db:.1f} dB, R {meas.r_ohm:.1f} ohm); "
        f"bare model {before.freq_hz / 1e6:.3f} MHz (R {before.r_ohm:.1f} ohm)")
    notes: list[str] = []
    tap = _tap_needs_moving(meas) if move_tap is None else bool(move_tap)
    problem = _Problem(spec, model, old.height_mm, cal, f_target, tap, old.feed_short_spacing_mm)
    # Start from the length the frequency factor asks for (resonance ~ 1 / length).
    scaled = old.arm_length_mm * meas.freq_hz / f_target
    start_length = scaled if problem.fits(np.array([scaled, old.feed_short_spacing_mm])) else old.arm_length_mm
    x0 = np.array([start_length, old.feed_short_spacing_mm] if tap else [start_length])
    try:
        x, _, steps = _newton(problem, x0, say)
    except _Limit as limit:
        if limit.index == 0:
            raise _arm_refusal(limit) from None
        # The tap the match wants does not fit the fab rules: keep the nearest tap that does,
        # solve the length alone and leave the rest of the match to a matching network.
        notes.append(f"the feed tap for 50 ohm ({limit.wanted:.3f} mm) does not fit the fab rules; "
                     f"tap set to {limit.nearest:.3f} mm: add a matching network")
        problem = _Problem(spec, model, old.height_mm, cal, f_target, False, _round_mm(limit.nearest))
        try:
            x, _, steps = _newton(problem, x0[:1], say)
        except _Limit as arm_limit:
            raise _arm_refusal(arm_limit) from None
    length, spacing = problem.numbers(x)
    start = (float(x0[0]), old.feed_short_spacing_mm)
    sensitivities = lru_cache(maxsize=1)(lambda: (_dfdl(problem, *start), _drds(problem, length, spacing)))
    new_data = _next_revision_data(spec, cal, meas.freq_hz, f_target, old, length, old.height_mm, spacing)
    new_spec = parse_spec(new_data)
    new_sizing = sized(new_spec, model)
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
    after = calibrated_dip(problem.freq_hz, model_zin_ohm(copper_ifa(new_spec, new_sizing), problem.freq_hz, model), cal)
    if not tap and _tap_needs_moving(meas):
        notes.append("the measured match is poor but the tap was kept as asked: add a matching network")
    return RetuneResult(
        old_spec=spec, new_spec=new_spec, new_data=new_data, model=model, source=measurement.source,
        f_target_hz=f_target, old_sizing=old, new_sizing=new_sizing, measured=meas, model_before=before,
        model_after=after, calibration=cal, sensitivities=sensitivities,
        tap_moved=abs(spacing - old.feed_short_spacing_mm) > 10 ** -SPEC_DECIMALS, newton_steps=steps, layout=layout,
        violations=violations, notes=tuple(notes),
    )


def _arm_refusal(limit: _Limit) -> InfeasibleSpecError:
    return InfeasibleSpecError(
        "$.arm.length_mm", round(limit.wanted, 3),
        f"the retuned arm does not fit the clearance; the nearest length that fits is {limit.nearest:.3f} mm: "
        "widen the clearance or use style meandered",
    )


def _r_at_resonance_ohm(problem: _Problem, length: float, spacing: float) -> float:
    """The calibrated resistance at the calibrated resonance of a geometry (ohm)."""
    trial = _Problem(problem.ev.spec, problem.model, problem.height, problem.cal, problem.f_target, True, spacing)
    return trial.dip(np.array([length, spacing])).r_ohm


def _drds(problem: _Problem, length: float, spacing: float) -> float:
    """Calibrated model's sensitivity dR/ds of the resistance at resonance at the new geometry
    (ohm/mm), for the report."""
    try:
        r0 = _r_at_resonance_ohm(problem, length, spacing)
        r1 = _r_at_resonance_ohm(problem, length, spacing + FD_STEP_SPACING_MM)
    except (InfeasibleSpecError, SolverError):
        return math.nan
    return (r1 - r0) / FD_STEP_SPACING_MM


def _dfdl(problem: _Problem, length: float, spacing: float) -> float:
    """Calibrated model's sensitivity of the resonance to the arm length (Hz/mm) at the start."""
    trial = _Problem(problem.ev.spec, problem.model, problem.height, problem.cal, problem.f_target, True, spacing)
    try:
        f0 = trial.dip(np.array([length, spacing])).freq_hz
        f1 = trial.dip(np.array([length + FD_STEP_LENGTH_MM, spacing])).freq_hz
    except (InfeasibleSpecError, SolverError):
        return math.nan
    return (f1 - f0) / FD_STEP_LENGTH_MM


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


def _next_revision_data(spec: Spec, cal: Calibration, f_meas_hz: float, f_target_hz: float, old: Sizing,
                        length_mm: float, height_mm: float, spacing_mm: float) -> dict:
    data = copy.deepcopy(spec.raw)
    arm = dict(data.get("arm", {}))
    arm.update(length_mm=_round_mm(length_mm), height_mm=_round_mm(height_mm), feed_short_spacing_mm=_round_mm(spacing_mm))
    data["arm"] = arm
    data["revision"] = spec.revision + 1
    data["calibration"] = cal.to_json()
    note = (f"retuned from {cal.measurement_file} ({cal.date}): measured resonance {f_meas_hz / 1e6:.2f} MHz -> target {f_target_hz / 1e6:.2f} MHz, "
            f"arm {old.arm_length_mm:.3f} -> {length_mm:.3f} mm, tap {old.feed_short_spacing_mm:.3f} -> {spacing_mm:.3f} mm")
    data["history"] = list(data.get("history", [])) + [{"revision": spec.revision + 1, "note": note}]
    return data


# --------------------------------------------------------------------------------- writing


def write_retuned_spec(result: RetuneResult, path: Path, *, force: bool = False, input_path: Path | None = None) -> Path:
    """Write the new revision's JSON atomically.  An existing file is never replaced without
    ``force`` (a person may have edited it), and never at all when it is the input revision or
    an earlier revision of the same design: revisions never overwrite history."""
    path = Path(path)
    check_output(result.old_spec, path, input_path=input_path, force=force)
    write_outputs(path.parent if str(path.parent) else Path("."), {path.name: result.spec_json()}, force=force)
    return path


def check_output(old: Spec, path: Path, *, input_path: Path | None = None, force: bool = False) -> None:
    """Refuse an output path that holds the input spec or an earlier revision of the same design
    (even with ``force``), or any other existing file without ``force``."""
    path = Path(path)
    if not path.exists():
        return
    fix = "revisions never overwrite history: choose another output name"
    if input_path is not None and path.resolve() == Path(input_path).resolve():
        raise OverwriteRefusedError(f"{path}: is the input revision {old.revision} of {old.name}; {fix}")
    try:
        held = json.loads(path.read_text("utf-8"))
    except (OSError, ValueError):
        held = None
    revision = held.get("revision", 1) if isinstance(held, dict) and held.get("name") == old.name else None
    if isinstance(revision, int) and revision <= old.revision:
        raise OverwriteRefusedError(f"{path}: holds revision {revision} of {old.name}, an earlier revision of this design; {fix}")
    if not force:
        raise OverwriteRefusedError(f"{path}: exists (a person may have edited it); choose another name or pass --force")
