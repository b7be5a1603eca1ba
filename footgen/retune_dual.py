"""Retune a dual-band spec from a measured S11 sweep: trim each arm (and the feed tap when a
measured band is poorly matched) so that each measured resonance moves onto its band centre.

Each band is compared on its own: the measured resonance in the band's window against the bare
model's resonance of the same copper gives that band's frequency ratio (measured / model).  The
model is then asked for the copper whose resonances sit at each band centre divided by its
ratio, with both arms coupled in every solve (:mod:`footgen.sizing_dual`), so the ratio the
measurement showed carries over to the new revision.  The ratios are written into the history
note; a single-band calibration (one frequency factor) cannot describe two bands, so the new
revision holds none and ``predict`` shows the bare model.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass
from typing import Callable

import numpy as np

from footgen import sizing
from footgen.bandfigures import BandFigures, band_figures
from footgen.errors import InfeasibleSpecError, MeasurementError
from footgen.geometry.layout import build_layout
from footgen.prediction import predict_spec, sized
from footgen.rf.touchstone import Measurement
from footgen.rules import check
from footgen.spec import Spec, parse_spec

#: A measured band whose min S11 is above this moves the feed tap (as the single-band retune).
POOR_MATCH_DB = -10.0
SPEC_DECIMALS = 4
RETUNE_STEPS = 5


@dataclass(frozen=True)
class DualRetuneResult:
    """The next revision of a dual-band spec and the numbers behind it (Hz, mm)."""

    old_spec: Spec
    new_spec: Spec
    new_data: dict
    measured: tuple[BandFigures, BandFigures]
    model_before: tuple[BandFigures, BandFigures]
    ratios: tuple[float, float]
    predicted_hz: tuple[float, float]
    tap_moved: bool
    notes: tuple[str, ...]

    @property
    def history_note(self) -> str:
        return self.new_spec.history[-1][1]

    def spec_json(self) -> bytes:
        import json

        return (json.dumps(self.new_data, indent=2, ensure_ascii=False) + "\n").encode("utf-8")

    def lines(self) -> list[str]:
        out = []
        for k, (m, b, r, p) in enumerate(zip(self.measured, self.model_before, self.ratios, self.predicted_hz)):
            out.append(f"band {k + 1} ({m.target.label}): measured resonance {m.resonance_hz / 1e6:.2f} MHz ({m.min_s11_db:.1f} dB), "
                       f"bare model {b.resonance_hz / 1e6:.2f} MHz, ratio {r:.4f}; revision {self.new_spec.revision} expected at "
                       f"{p / 1e6:.2f} MHz")
        return out


def _round(value: float) -> float:
    return round(float(value), SPEC_DECIMALS)


def retune_dual(spec: Spec, measurement: Measurement, *, model: str = sizing.DEFAULT_MODEL, move_tap: bool | None = None,
                progress: Callable[[str], None] | None = None) -> DualRetuneResult:
    """The next revision of the dual-band ``spec`` from a measurement of the board built from it."""
    from footgen.sizing_dual import RESONANCE_STEPS, _DualEvaluator, _State, _tune_lengths, choose_tap

    say = progress or (lambda _: None)
    old = sized(spec, model)
    bare = predict_spec(spec, model=model, calibrate=False, numbers=old)
    before = bare.bands()
    f_meas = np.asarray(measurement.freq_hz, float)
    lo, hi = bare.freq_hz[0], bare.freq_hz[-1]
    for b in before:
        if not (f_meas[0] <= 0.9 * b.target.low_hz and f_meas[-1] >= 1.1 * b.target.high_hz):
            raise MeasurementError(f"{measurement.source}: the sweep ({f_meas[0] / 1e6:.1f} .. {f_meas[-1] / 1e6:.1f} MHz) must reach "
                                   f"10 % beyond both bands ({lo / 1e6:.0f} .. {hi / 1e6:.0f} MHz covers them); measure both bands")
    s = np.asarray(measurement.s11, complex)
    measured = band_figures(spec, f_meas, 50.0 * (1 + s) / (1 - s))
    for m in measured:
        if m.at_window_edge:
            raise MeasurementError(f"{measurement.source}: no resonance in the window of band {m.target.label}; "
                                   "check the measurement or retune by hand")
    ratios = tuple(m.resonance_hz / b.resonance_hz for m, b in zip(measured, before))
    goals = tuple(t.center_hz / r for t, r in zip(spec.targets, ratios))
    say(f"retune: measured resonances {measured[0].resonance_hz / 1e6:.2f} and {measured[1].resonance_hz / 1e6:.2f} MHz; "
        f"bare model {before[0].resonance_hz / 1e6:.2f} and {before[1].resonance_hz / 1e6:.2f} MHz")
    ev = _DualEvaluator(spec, old.height_mm, old.second_arm_height_mm, None, goals_hz=goals)
    st = _State(old.arm_length_mm, old.second_arm_length_mm, old.feed_short_spacing_mm)
    free = (True, True)
    st, resp = _tune_lengths(ev, st, RETUNE_STEPS, free)
    tap = any(m.min_s11_db > POOR_MATCH_DB for m in measured) if move_tap is None else move_tap
    notes: list[str] = []
    if tap:
        st = choose_tap(ev, st, resp, free)
        st, resp = _tune_lengths(ev, st, RESONANCE_STEPS, free)
    f_model = ev.resonances(resp)
    data = copy.deepcopy(spec.raw)
    data["arm"] = {**data.get("arm", {}), "length_mm": _round(st.length_mm), "height_mm": _round(old.height_mm),
                   "feed_short_spacing_mm": _round(st.spacing_mm)}
    data["second_arm"] = {**data["second_arm"], "length_mm": _round(st.second_length_mm), "height_mm": _round(old.second_arm_height_mm)}
    data["revision"] = spec.revision + 1
    note = (f"retuned from {measurement.source.rsplit('/', 1)[-1]}: measured resonances {measured[0].resonance_hz / 1e6:.2f} and "
            f"{measured[1].resonance_hz / 1e6:.2f} MHz (measured / model {ratios[0]:.4f}, {ratios[1]:.4f}); arms "
            f"{old.arm_length_mm:.3f} -> {st.length_mm:.3f} mm and {old.second_arm_length_mm:.3f} -> {st.second_length_mm:.3f} mm, "
            f"tap {old.feed_short_spacing_mm:.3f} -> {st.spacing_mm:.3f} mm")
    data["history"] = list(data.get("history", [])) + [{"revision": spec.revision + 1, "note": note}]
    data.pop("calibration", None)  # one frequency factor cannot describe two bands
    new_spec = parse_spec(data)
    errors = [v for v in check(build_layout(new_spec, sized(new_spec, model)), new_spec.fab) if v.severity == "error"]
    if errors:
        raise InfeasibleSpecError("$.second_arm.length_mm", _round(st.second_length_mm),
                                  f"the retuned layout breaks fab rule {errors[0].rule} ({errors[0].message}); widen the clearance")
    if not tap and any(m.min_s11_db > POOR_MATCH_DB for m in measured):
        notes.append("a measured band is poorly matched but the tap was kept as asked: add a matching network")
    predicted = tuple(f * r for f, r in zip(f_model, ratios))
    return DualRetuneResult(spec, new_spec, data, tuple(measured), tuple(before), ratios, predicted,
                            abs(st.spacing_mm - old.feed_short_spacing_mm) > 10 ** -SPEC_DECIMALS, tuple(notes))
