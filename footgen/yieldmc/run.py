"""A yield run: sensitivities, the Monte Carlo on the surrogate, its check against full solves,
optional design centring, and the summary as JSON.

The nominal design is the build's (its sizing comes from the sizing cache).  One batch of full
MoM solves -- the nominal on the wide prediction sweep and on the evaluation grid, each copper
parameter at +-its half-width, and the check samples -- runs on the runner's workers; the
surrogate (:mod:`footgen.yieldmc.surrogate`) then evaluates every sample in chunks.  The check
samples are samples 0..k-1 of the same seed, solved in full: their disagreement with the
surrogate is reported and turned into the yield's stated model error (the share of samples whose
verdict could flip within the largest disagreement seen).  With ``full=True`` every sample is
solved in full (the brute-force Monte Carlo).  Same seed, same numbers, whichever runner.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from footgen.physics.ifa import PrintedIfa
from footgen.spec import Spec
from footgen.yieldmc import surrogate as sg
from footgen.yieldmc import tolerance as tol

#: Evaluation grid: band centre +- max(EVAL_HALF_SPAN, EVAL_BAND_MARGIN x the band's half-width)
#: in EVAL_POINTS points, plus BAND_POINTS points across the target band itself.  Full solves
#: solve EVAL_SOLVED_POINTS evenly spaced frequencies over it (0.8 % apart at 2.4 GHz, finer than
#: the prediction sweep's 1 %) and take a cubic spline of Zin between: within 0.001 dB of the
#: prediction path's 41 solved points on the soil probe (measured), a third less solve time.
EVAL_HALF_SPAN = 0.08
EVAL_BAND_MARGIN = 1.5
EVAL_POINTS = 81
EVAL_SOLVED_POINTS = 21
BAND_POINTS = 21
#: Samples the surrogate evaluates per task (at least; larger for runs of more than MAX_CHUNKS).
CHUNK_SAMPLES = 250
MAX_CHUNKS = 400
#: Design centring searches on the first this many samples (the surrogate's yield of each trial).
CENTRE_SEARCH_SAMPLES = 2000
#: Check samples solved in full by default.
DEFAULT_CHECK_SAMPLES = 8
#: A surrogate whose worst in-band S11 is further than this from a full solve (dB) is flagged.
TRUST_DB = 1.0
#: The yield's stated model error counts the samples whose worst in-band S11 lies within this
#: multiple of the largest surrogate-vs-full-solve disagreement seen on the check samples of the
#: -10 dB level (a few check samples see less than the largest disagreement there is).
STATED_ERROR_FACTOR = 2.0
#: Design centring: arm length and feed tap finite-difference steps (mm); the search stays
#: within them (the surrogate interpolates there), and the design found is solved afresh.
ARM_STEP_MM = 0.6
TAP_STEP_MM = 0.3
ARM_GRID = 25
TAP_GRID = 7
DESIGN_KEYS = ("arm_length", "feed_tap")
MODEL = "mom"


# ---------------------------------------------------------------------------- worker tasks


def solve_task(ifa: PrintedIfa, freq_hz: np.ndarray, model: str = MODEL, raw_spec: dict | None = None,
               solved_points: int | None = None) -> np.ndarray:
    """Full solve: Zin of ``ifa`` by the response model (the prediction's model path, its cache
    when known) at ``freq_hz``, or at ``solved_points`` evenly spaced frequencies over them with a
    cubic spline of Zin between; solver errors said in the terms of ``raw_spec``."""
    from footgen.explain import explained
    from footgen.prediction import model_zin_ohm

    f = np.asarray(freq_hz, float)
    with explained(raw_spec or {}):
        if solved_points is None or solved_points >= f.size:
            return model_zin_ohm(ifa, f, model)
        from scipy.interpolate import CubicSpline

        grid = np.linspace(float(f.min()), float(f.max()), solved_points)
        return CubicSpline(grid, model_zin_ohm(ifa, grid, model))(f)


def surrogate_task(model: sg.Surrogate, params: tuple[tol.Parameter, ...], seed: int, start: int, stop: int,
                   design: tuple[float, ...]) -> sg.Figures:
    """The surrogate's figures of samples ``start`` .. ``stop - 1``."""
    return model.evaluate(_columns(tol.deviations(params, seed, start, stop), design), sg.CLOUD_SAMPLES)


def _columns(dev: np.ndarray, design: tuple[float, ...]) -> np.ndarray:
    """Deviations with the design offsets appended as constant columns."""
    return np.hstack([dev, np.tile(np.asarray(design, float), (dev.shape[0], 1))]) if design else dev


# ---------------------------------------------------------------------------------- result


@dataclass
class Outcome:
    """One design's Monte Carlo: the per-sample figures and, if any, the check solves."""

    label: str
    design_mm: dict[str, float]
    figures: sg.Figures
    nominal: sg.Figures
    check_full: sg.Figures | None = None
    check_surrogate: sg.Figures | None = None

    def fraction(self, level_db: float, widen_db: float = 0.0) -> float:
        return float(np.count_nonzero(self.figures.worst_db <= level_db + widen_db)) / self.figures.worst_db.size

    def disagreement(self) -> dict | None:
        if self.check_full is None or self.check_surrogate is None:
            return None
        dw = self.check_surrogate.worst_db - self.check_full.worst_db
        dr = self.check_surrogate.resonance_hz - self.check_full.resonance_hz
        same = np.count_nonzero((self.check_surrogate.worst_db <= sg.LEVEL_10DB) == (self.check_full.worst_db <= sg.LEVEL_10DB))
        return {"samples": int(dw.size), "worst_s11_max_abs_db": _r(np.max(np.abs(dw)), 4),
                "worst_s11_rms_db": _r(math.sqrt(float(np.mean(dw ** 2))), 4),
                "resonance_max_abs_mhz": _r(np.max(np.abs(dr)) / 1e6, 4),
                "verdict_10db_agrees": int(same)}

    def summary(self) -> dict:
        n = self.figures.worst_db.size
        y10, y6 = self.fraction(sg.LEVEL_10DB), self.fraction(sg.LEVEL_6DB)
        check = self.disagreement()
        e = STATED_ERROR_FACTOR * check["worst_s11_max_abs_db"] if check and check["samples"] else None
        out = {
            "design_mm": {k: _r(v, 4) for k, v in self.design_mm.items()},
            "samples": n,
            "yield_10db": _r(y10, 6),
            "yield_6db": _r(y6, 6),
            "sampling_error_10db": _r(math.sqrt(y10 * (1 - y10) / n), 6),
            "nominal": {"worst_s11_in_band_db": _r(self.nominal.worst_db[0], 4), "resonance_mhz": _r(self.nominal.resonance_hz[0] / 1e6, 4)},
            "resonance_mhz": _stats(self.figures.resonance_hz / 1e6),
            "worst_s11_in_band_db": _stats(self.figures.worst_db),
            "surrogate_check": check,
        }
        if e is not None:
            lo, hi = self.fraction(sg.LEVEL_10DB, -e), self.fraction(sg.LEVEL_10DB, e)
            out["yield_10db_model_error"] = _r(max(y10 - lo, hi - y10), 6)
            out["yield_10db_range"] = [_r(lo, 6), _r(hi, 6)]
            out["stated_s11_error_db"] = _r(e, 4)
        return out


def _r(x: float, digits: int) -> float:
    value = round(float(x), digits)
    return 0.0 if value == 0 else value


def _stats(values: np.ndarray) -> dict:
    p = np.percentile(values, [5, 50, 95])
    return {"mean": _r(np.mean(values), 4), "std": _r(np.std(values), 4), "p5": _r(p[0], 4), "p50": _r(p[1], 4), "p95": _r(p[2], 4)}


@dataclass
class YieldReport:
    spec: Spec
    seed: int
    method: str
    runner: str
    params: tuple[tol.Parameter, ...]
    sensitivities: list[dict]
    nominal: Outcome
    centred: Outcome | None = None
    grids: sg.Grids | None = None
    warnings: list[str] = field(default_factory=list)
    model: str = MODEL

    def as_dict(self) -> dict:
        main = self.nominal.summary()
        out = {"name": self.spec.name, "method": self.method, "seed": self.seed, "model": self.model,
               "band_mhz": [_r(self.spec.target.low_hz / 1e6, 4), _r(self.spec.target.high_hz / 1e6, 4)],
               "parameters": [{"name": p.key, "label": p.label, "unit": p.unit, "plus_minus": p.half_width,
                               "distribution": p.distribution, "field": p.field} for p in self.params],
               **main, "sensitivity": self.sensitivities, "warnings": list(self.warnings),
               "note": "estimates from footgen's own model: they never replace measuring built boards"}
        if self.centred is not None:
            out["centred"] = self.centred.summary()
        return out

    def json_bytes(self) -> bytes:
        return (json.dumps(self.as_dict(), indent=2, sort_keys=True) + "\n").encode("utf-8")


# ------------------------------------------------------------------------------------ the run


def grids_of(spec: Spec) -> sg.Grids:
    """The wide (prediction) sweep and the evaluation grid of ``spec``."""
    from footgen.prediction import sweep_hz

    lo, hi = spec.target.low_hz, spec.target.high_hz
    f0 = spec.target.center_hz
    half = max(EVAL_HALF_SPAN, EVAL_BAND_MARGIN * (hi - lo) / 2 / f0)
    grid = np.union1d(np.linspace((1 - half) * f0, (1 + half) * f0, EVAL_POINTS), np.linspace(lo, hi, BAND_POINTS))
    return sg.Grids(sweep_hz(spec), grid, (lo, hi))


def _matching_parts(spec: Spec, grids: sg.Grids, wide_zin: np.ndarray) -> tuple:
    """The parts footgen match recommends for the nominal design, snapped to the tolerance's
    E-series (none without a matching_network section, or when the antenna needs none)."""
    section = spec.raw.get("matching_network")
    if section is None:
        return ()
    from footgen.rf.match_plan import plan_match

    plan = plan_match(grids.wide_hz, wide_zin, spec.target.center_hz, band_hz=grids.band_hz,
                      series=tol.part_series(spec.raw), package=section.get("package", "0402"))
    return () if plan.no_buildable_network else plan.best.parts


Progress = Callable[[str, int, int], None]


@dataclass
class _Solved:
    """The full solves of one design: Zin on the wide sweep and the evaluation grid, at -+ each
    swept parameter's step (rows), and of the full-solve samples."""

    wide: np.ndarray
    nominal: np.ndarray
    plus: np.ndarray
    minus: np.ndarray
    samples: list


def _solve(ifa: PrintedIfa, grids: sg.Grids, swept: tuple[tol.Parameter, ...], copper: tuple[tol.Parameter, ...],
           n_full: int, seed: int, runner, progress, model: str, raw: dict) -> _Solved:
    """One batch on the runner: the nominal (wide sweep and grid), +-h of every swept parameter,
    samples 0..n_full-1 (their copper deviations) solved in full."""
    at = (grids.eval_hz, model, raw, EVAL_SOLVED_POINTS)
    jobs: list[tuple] = [(ifa, grids.wide_hz, model, raw), (ifa, *at)]
    for p in swept:
        jobs += [(tol.perturbed(ifa, (p,), (sign * p.half_width,)), *at) for sign in (1.0, -1.0)]
    jobs += [(tol.perturbed(ifa, copper, row), *at) for row in tol.deviations(copper, seed, 0, n_full)]
    z = runner.map(solve_task, jobs, progress)
    shape = (len(swept), grids.eval_hz.size)
    n = 2 * len(swept)
    return _Solved(z[0], z[1], np.array(z[2:2 + n:2]).reshape(shape), np.array(z[3:3 + n:2]).reshape(shape), z[2 + n:])


def _fit(grids: sg.Grids, solved: _Solved, params: tuple[tol.Parameter, ...], swept: tuple[tol.Parameter, ...], parts: tuple) -> sg.Surrogate:
    columns = params + tuple(p for p in swept if p not in params)
    return sg.fit(grids, solved.wide, solved.nominal, tuple(i for i, p in enumerate(columns) if not p.on_parts),
                  np.array([p.half_width for p in swept]), solved.plus, solved.minus, parts,
                  tuple(i for i, p in enumerate(columns) if p.on_parts))


def run_yield(spec: Spec, samples: int, seed: int, runner, *, checks: int = DEFAULT_CHECK_SAMPLES, full: bool = False,
              centre: bool = False, progress: Progress | None = None, model: str = MODEL) -> YieldReport:
    """Monte Carlo yield of ``spec``'s built antenna (see the module text); ``model``: the
    response model of the full solves (:data:`footgen.sizing.MODELS`; the MoM by default)."""
    from footgen.prediction import copper_ifa, sized

    def step(what: str) -> Callable[[int, int], None] | None:
        return None if progress is None else (lambda done, total: progress(what, done, total))

    grids = grids_of(spec)
    ifa0 = copper_ifa(spec, sized(spec, model))
    enclosure = "enclosure" in spec.raw and getattr(ifa0, "cover", None) is not None
    copper = tol.parameters(spec.raw, (), enclosure)
    tol.check_spreads(ifa0, copper)
    design_params = tuple(tol.Parameter(k, k.replace("_", " "), "mm", h, "uniform", "")
                          for k, h in zip(DESIGN_KEYS, (ARM_STEP_MM, TAP_STEP_MM))) if centre else ()
    n_full = samples if full else min(checks, samples)
    swept = copper + design_params
    solved = _solve(ifa0, grids, swept, copper, n_full, seed, runner, step("full solves"), model, spec.raw)
    parts = _matching_parts(spec, grids, solved.wide)
    params = tol.parameters(spec.raw, tuple(p.describe() for p in parts), enclosure)
    fitted = _fit(grids, solved, params, swept, parts)
    outcome = _outcome("nominal", grids, solved, fitted, params, parts, seed, samples, (0.0,) * len(design_params), full, runner, step)
    sens = sensitivity_table(params, swept, grids, solved.nominal, list(solved.plus), list(solved.minus), parts)
    report = YieldReport(spec, seed, "full" if full else "surrogate", runner.label, params, sens, outcome, grids=grids,
                         warnings=[] if full else _trust(outcome), model=model)
    if centre and not full:
        report.centred = _centred(spec, fitted, params, copper, seed, samples, ifa0, grids, parts, runner, checks, step, model)
        report.warnings += _trust(report.centred)
    return report


def _outcome(label: str, grids: sg.Grids, solved: _Solved, fitted: sg.Surrogate, params, parts: tuple, seed: int, samples: int,
             design: tuple[float, ...], full: bool, runner, step) -> Outcome:
    """A design's Monte Carlo: every sample solved in full (``full``), or the surrogate with the
    full-solve samples as its check."""
    nominal_fig = sg.figures(grids, sg.with_parts(grids.eval_hz, solved.nominal, parts)[None, :])
    dev_full = tol.deviations(params, seed, 0, len(solved.samples))
    full_fig = _full_figures(grids, solved.samples, parts, dev_full, params)
    if full:
        return Outcome(label, {}, full_fig, nominal_fig)
    outcome = _surrogate_outcome(label, fitted, params, seed, samples, design, runner, step(f"surrogate samples, {label} design"), nominal_fig)
    outcome.check_full = full_fig
    outcome.check_surrogate = fitted.evaluate(_columns(dev_full, design))
    return outcome


def _full_figures(grids: sg.Grids, zin: list, parts: tuple, dev: np.ndarray, params: tuple[tol.Parameter, ...]) -> sg.Figures:
    if not zin:
        empty = np.zeros(0)
        return sg.Figures(empty, empty, np.zeros((0, grids.eval_hz.size)))
    cols = [i for i, p in enumerate(params) if p.on_parts]
    rows = [sg.with_parts(grids.eval_hz, z, parts, dev[k, cols] if cols else None) for k, z in enumerate(zin)]
    return sg.figures(grids, np.array(rows))


def _surrogate_outcome(label: str, model: sg.Surrogate, params, seed: int, samples: int, design: tuple[float, ...],
                       runner, progress, nominal_fig: sg.Figures) -> Outcome:
    size = max(CHUNK_SAMPLES, -(-samples // MAX_CHUNKS))
    chunks = [(model, params, seed, a, min(a + size, samples), design) for a in range(0, samples, size)]
    figs = sg.Figures.join(runner.map(surrogate_task, chunks, progress))
    return Outcome(label, dict(zip(DESIGN_KEYS, design)), figs, nominal_fig)


def _trust(outcome: Outcome) -> list[str]:
    check = outcome.disagreement()
    if check is None or check["samples"] == 0:
        return [f"{outcome.label}: the surrogate was not checked against full solves (give --check N > 0)"]
    out = []
    if check["worst_s11_max_abs_db"] > TRUST_DB:
        out.append(f"{outcome.label}: the surrogate's worst in-band S11 is up to {check['worst_s11_max_abs_db']:.2f} dB off the full solves "
                   f"(more than {TRUST_DB:g} dB): trust the full-solve figures (--full) over it")
    if check["verdict_10db_agrees"] < check["samples"]:
        out.append(f"{outcome.label}: the surrogate and the full solves disagree on the -10 dB verdict of "
                   f"{check['samples'] - check['verdict_10db_agrees']} of {check['samples']} check samples")
    return out


def sensitivity_table(params: tuple[tol.Parameter, ...], swept: tuple[tol.Parameter, ...], grids: sg.Grids,
                      nominal_zin: np.ndarray, plus: list, minus: list, parts: tuple) -> list[dict]:
    """Per tolerance: change of resonance (MHz) and of the worst in-band S11 (dB) per unit, from
    the full solves at +-half-width (parts: exact, on the nominal Zin); ranked by the resonance
    spread the tolerance causes (|slope| x half-width), then by the S11 change."""
    f = grids.eval_hz
    n_parts = sum(1 for p in params if p.on_parts)
    base = sg.figures(grids, sg.with_parts(f, nominal_zin, parts)[None, :], 0)
    rows = []
    for p in params:
        if p.key in DESIGN_KEYS:
            continue
        if p.on_parts:
            k = int(p.key.split("_")[1]) - 1
            vec = np.eye(n_parts)[k] * p.half_width
            zp, zm = sg.with_parts(f, nominal_zin, parts, vec), sg.with_parts(f, nominal_zin, parts, -vec)
        else:
            i = swept.index(p)
            zp, zm = sg.with_parts(f, plus[i], parts), sg.with_parts(f, minus[i], parts)
        fig = sg.figures(grids, np.array([zp, zm]), 0)
        h = p.half_width
        d_res = (fig.resonance_hz[0] - fig.resonance_hz[1]) / (2 * h) / 1e6
        rows.append({
            "name": p.key, "label": p.label, "unit": p.unit, "plus_minus": h,
            "resonance_mhz_per_unit": _r(d_res, 5),
            "resonance_change_mhz": [_r((fig.resonance_hz[1] - base.resonance_hz[0]) / 1e6, 4), _r((fig.resonance_hz[0] - base.resonance_hz[0]) / 1e6, 4)],
            "worst_s11_db_per_unit": _r((fig.worst_db[0] - fig.worst_db[1]) / (2 * h), 5),
            "worst_s11_change_db": [_r(fig.worst_db[1] - base.worst_db[0], 4), _r(fig.worst_db[0] - base.worst_db[0], 4)],
            "resonance_spread_mhz": _r(abs(d_res) * h, 4),
        })
    rows.sort(key=lambda r: (-r["resonance_spread_mhz"], -max(map(abs, r["worst_s11_change_db"])), r["name"]))
    for rank, row in enumerate(rows, 1):
        row["rank"] = rank
    return rows


def _centred(spec: Spec, model: sg.Surrogate, params, copper, seed: int, samples: int, ifa0: PrintedIfa, grids: sg.Grids,
             parts: tuple, runner, checks: int, step, response: str) -> Outcome:
    """The arm length and feed tap offsets (within the steps the surrogate was fitted over) that
    maximise the surrogate's -10 dB yield on the same samples; then that design solved afresh
    (its own sensitivity solves, surrogate and check solves) for its Monte Carlo."""
    from footgen.prediction import sized

    dev = tol.deviations(params, seed, 0, min(samples, CENTRE_SEARCH_SAMPLES))
    best_key: tuple[float, float] | None = None
    best = (0.0, 0.0)
    for d_arm in np.linspace(-ARM_STEP_MM, ARM_STEP_MM, ARM_GRID):
        for d_tap in np.linspace(-TAP_STEP_MM, TAP_STEP_MM, TAP_GRID):
            worst = model.worst_db(_columns(dev, (float(d_arm), float(d_tap))))
            key = (float(np.count_nonzero(worst <= sg.LEVEL_10DB)), -(abs(d_arm) / ARM_STEP_MM + abs(d_tap) / TAP_STEP_MM))
            if best_key is None or key > best_key:
                best_key, best = key, (float(d_arm), float(d_tap))
    design = (_r(best[0], 6), _r(best[1], 6))
    ifa_c = tol.perturbed(ifa0, (), (), dict(zip(DESIGN_KEYS, design)))
    solved = _solve(ifa_c, grids, copper, copper, min(checks, samples), seed, runner, step("full solves, centred design"), response, spec.raw)
    fitted = _fit(grids, solved, params, copper, parts)
    outcome = _outcome("centred", grids, solved, fitted, params, parts, seed, samples, (), False, runner, step)
    numbers = sized(spec, response)
    outcome.design_mm = {"arm_length_mm": numbers.arm_length_mm + design[0], "feed_short_spacing_mm": numbers.feed_short_spacing_mm + design[1],
                         "arm_length_change_mm": design[0], "feed_tap_change_mm": design[1]}
    return outcome
