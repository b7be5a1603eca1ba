"""Predicted response of a spec: Zin and S11 over a sweep, resonance, -10 dB band; plot and
Touchstone output.

This is the one model path of every command (predict, retune, match, report): the copper of a
spec is sized (:func:`sized`), swept over the band centre +- ``PREDICTION_HALF_SPAN`` in
``SWEEP_POINTS`` points (:func:`sweep_hz`, :func:`model_zin_ohm`) and, unless asked for the bare model, carried over by
the calibration the revision holds (:mod:`footgen.calibration`).  Sizings and sweeps are kept in
the on-disk cache (:mod:`footgen.cache`), so a command never re-solves what another one solved.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Callable

import numpy as np

from footgen import cache
from footgen.build import SAFETY_NOTE
from footgen.calibration import Calibration, of_spec
from footgen.geometry.layout import Sizing, generate_copper
from footgen.model import printed_ifa
from footgen.numfmt import fixed, impedance_ohm, s11_db
from footgen.physics.ifa import PrintedIfa
from footgen.physics.predict import bandwidth_10db, s11_from_zin
from footgen.sizing import DEFAULT_MODEL, MODELS, PREDICTION_HALF_SPAN, SEARCH_MESH
from footgen.spec import Spec

if TYPE_CHECKING:
    from footgen.bandfigures import BandFigures
    from footgen.radiation import RadiationSummary

#: Number of sweep points over the band centre +- PREDICTION_HALF_SPAN.
SWEEP_POINTS = 201
Z0_OHM = 50.0
#: response models with currents (far field available) -> their wire-mesh settings
RADIATION_MODELS: dict[str, dict[str, float] | None] = {"mom": None, "mom-search": SEARCH_MESH}
#: Retune's resonance searches sweep the band centre (or where the resonance is expected) +-
#: RESONANCE_SPAN in RESONANCE_POINTS points: the same model, a tenth of the cost of the
#: prediction sweep; on the bundled examples their resonance and Zin there agree with the
#: prediction sweep's to 1e-6 (measured), since the model's interpolated sweep is that smooth.
RESONANCE_SPAN = 0.05
RESONANCE_POINTS = 21
#: The resonance between two samples is found on a cubic spline of Zin through the sweep,
#: sampled this many times between the neighbours of the smallest |S11| sample.
RESONANCE_REFINE_POINTS = 2001


# --------------------------------------------------------------------------------- model path


def sized(spec: Spec, model: str = DEFAULT_MODEL) -> Sizing:
    """``sizing.size(spec, model)`` (kept in the sizing cache once solved)."""
    from footgen import sizing

    return sizing.size(spec, model=model)


def copper_ifa(spec: Spec, numbers: Sizing) -> PrintedIfa:
    """The physics model of ``spec``'s copper as built from ``numbers`` (with the meander pitch
    a sizing may carry, so a fitted meander is the one that was built)."""
    return printed_ifa(spec, generate_copper(spec, numbers))


def sweep_hz(spec: Spec) -> np.ndarray:
    """The prediction sweep: band centre +- PREDICTION_HALF_SPAN in SWEEP_POINTS points (a
    dual-band spec: one sweep over both bands, :func:`footgen.bandfigures.dual_sweep_hz`)."""
    if spec.second_arm is not None:
        from footgen.bandfigures import dual_sweep_hz

        return dual_sweep_hz(spec)
    f0 = spec.target.center_hz
    return np.linspace((1 - PREDICTION_HALF_SPAN) * f0, (1 + PREDICTION_HALF_SPAN) * f0, SWEEP_POINTS)


def resonance_sweep_hz(center_hz: float) -> np.ndarray:
    """The narrow sweep of retune's resonance searches around ``center_hz``."""
    return np.linspace((1 - RESONANCE_SPAN) * center_hz, (1 + RESONANCE_SPAN) * center_hz, RESONANCE_POINTS)


def model_zin_ohm(ifa: PrintedIfa, freq_hz: np.ndarray, model: str = DEFAULT_MODEL,
                  progress: Callable[[int, int], None] | None = None) -> np.ndarray:
    """The bare model's Zin (ohm) of ``ifa`` at ``freq_hz``, from the cache when known."""
    f = np.asarray(freq_hz, dtype=float)
    question = json.dumps([model, repr(ifa), f.tolist()])
    answer = cache.load("zin", question)
    if isinstance(answer, list) and len(answer) == 2 and len(answer[0]) == f.size:
        return np.asarray(answer[0], dtype=float) + 1j * np.asarray(answer[1], dtype=float)
    z = np.asarray(MODELS[model].zin_ohm(f, ifa, progress=progress), dtype=complex)
    cache.store("zin", question, [z.real.tolist(), z.imag.tolist()])
    return z


@dataclass(frozen=True)
class Resonance:
    """Frequency of minimum |S11| against 50 ohm, the level there and Zin there."""

    freq_hz: float
    s11_db: float
    zin_ohm: complex
    #: the smallest |S11| sample is the first or last of the sweep: the minimum may lie beyond
    at_edge: bool = False

    @property
    def r_ohm(self) -> float:
        return float(self.zin_ohm.real)


def resonance(freq_hz: np.ndarray, zin_ohm: np.ndarray) -> Resonance:
    """The minimum of |S11| on a sampled sweep: the smallest sample, refined on a cubic spline
    of Zin between its neighbours."""
    from scipy.interpolate import CubicSpline

    f = np.asarray(freq_hz, dtype=float)
    z = np.asarray(zin_ohm, dtype=complex)
    g = np.abs(s11_from_zin(z, Z0_OHM))
    i = int(np.argmin(g))
    if i == 0 or i == f.size - 1:
        return Resonance(float(f[i]), _db(g[i]), complex(z[i]), at_edge=True)
    spline_r, spline_x = CubicSpline(f, z.real), CubicSpline(f, z.imag)
    fine = np.linspace(f[i - 1], f[i + 1], RESONANCE_REFINE_POINTS)
    z_fine = spline_r(fine) + 1j * spline_x(fine)
    g_fine = np.abs(s11_from_zin(z_fine, Z0_OHM))
    j = int(np.argmin(g_fine))
    return Resonance(float(fine[j]), _db(g_fine[j]), complex(z_fine[j]))


def _db(g: float) -> float:
    return float(20 * np.log10(max(float(g), 1e-12)))


# --------------------------------------------------------------------------------- prediction


@dataclass(frozen=True)
class Prediction:
    """The model's response of a spec's copper over the prediction sweep; with a calibration,
    the calibrated response Z_cal(k_f f) = k_r R(f) + j X(f) on the scaled axis k_f f (the same
    samples, so the calibrated and the bare prediction cost one sweep)."""

    spec: Spec
    model_label: str
    bare_freq_hz: np.ndarray
    bare_zin_ohm: np.ndarray
    calibration: Calibration | None = None
    #: efficiency and gain at the band centre (MoM models only; None for the others)
    radiation: "RadiationSummary | None" = None

    @property
    def freq_hz(self) -> np.ndarray:
        return self.bare_freq_hz * (self.calibration.freq_factor if self.calibration else 1.0)

    @property
    def zin_ohm(self) -> np.ndarray:
        if self.calibration is None:
            return self.bare_zin_ohm
        return self.calibration.resistance_factor * self.bare_zin_ohm.real + 1j * self.bare_zin_ohm.imag

    @property
    def s11(self) -> np.ndarray:
        return s11_from_zin(self.zin_ohm, Z0_OHM)

    @property
    def s11_db(self) -> np.ndarray:
        return 20 * np.log10(np.maximum(np.abs(self.s11), 1e-12))

    @property
    def resonance(self) -> Resonance:
        return resonance(self.freq_hz, self.zin_ohm)

    @property
    def f_res_hz(self) -> float:
        return self.resonance.freq_hz

    @property
    def min_s11_db(self) -> float:
        return float(self.s11_db.min())

    @property
    def band_10db_hz(self) -> tuple[float, float] | None:
        return bandwidth_10db(self.freq_hz, self.s11)

    def bands(self) -> list["BandFigures"]:
        """Each band's figures (dual-band specs; empty for one band)."""
        if self.spec.second_arm is None:
            return []
        from footgen.bandfigures import band_figures

        return band_figures(self.spec, self.freq_hz, self.zin_ohm)

    def zin_at(self, f_hz: float) -> complex:
        return complex(np.interp(f_hz, self.freq_hz, self.zin_ohm.real) + 1j * np.interp(f_hz, self.freq_hz, self.zin_ohm.imag))

    def zin_function(self) -> Callable[[np.ndarray], np.ndarray]:
        """Zin of this prediction at any frequencies inside its sweep (linear interpolation)."""
        return lambda f: np.interp(f, self.freq_hz, self.zin_ohm.real) + 1j * np.interp(f, self.freq_hz, self.zin_ohm.imag)

    def calibration_line(self) -> str:
        """One line saying whether a calibration is applied (every command prints it)."""
        cal = self.calibration
        if cal is not None:
            return cal.line()
        if of_spec(self.spec.raw) is not None:
            return "uncalibrated: the bare model (the calibration this revision holds is not applied)"
        return "uncalibrated: this revision holds no calibration (retune from a measurement records one)"

    def summary_dict(self) -> dict:
        """The summary figures, machine-readable (units in the keys; None where not defined)."""
        f0 = self.spec.target.center_hz
        z0 = self.zin_at(f0)
        band = self.band_10db_hz
        return {
            "name": self.spec.name,
            "model": self.model_label,
            "calibration": None if self.calibration is None else self.calibration.to_json(),
            "center_mhz": round(f0 / 1e6, 6),
            "resonance_mhz": round(self.f_res_hz / 1e6, 4),
            "min_s11_db": round(self.min_s11_db, 3),
            "s11_at_center_db": round(float(20 * np.log10(max(abs((z0 - Z0_OHM) / (z0 + Z0_OHM)), 1e-12))), 3),
            "zin_at_center_ohm": [round(z0.real, 3), round(z0.imag, 3)],
            "band_10db_mhz": None if band is None else [round(band[0] / 1e6, 3), round(band[1] / 1e6, 3)],
            "radiation": None if self.radiation is None else self.radiation.as_dict(),
        } | ({"bands": [b.as_dict() for b in self.bands()]} if self.spec.second_arm is not None else {})

    def json_bytes(self) -> bytes:
        """:meth:`summary_dict` as JSON bytes (sorted keys; same prediction, same bytes)."""
        return (json.dumps(self.summary_dict(), indent=2, sort_keys=True) + "\n").encode("utf-8")

    def summary_lines(self) -> list[str]:
        if self.spec.second_arm is not None:
            lines = [f"model: {self.model_label}", self.calibration_line()]
            for k, band in enumerate(self.bands()):
                lines += band.lines(k)
            return lines + (self.radiation.lines() if self.radiation is not None else []) + [SAFETY_NOTE]
        f0 = self.spec.target.center_hz
        z0 = self.zin_at(f0)
        res = self.resonance
        lines = [
            f"model: {self.model_label}",
            self.calibration_line(),
            f"resonance (min |S11|): {res.freq_hz / 1e6:.2f} MHz (target {f0 / 1e6:.2f} MHz, {fixed(100 * (res.freq_hz / f0 - 1), 2, sign=True)} %)"
            + (" at the sweep edge: the resonance lies beyond" if res.at_edge else ""),
            f"Zin at {f0 / 1e6:.2f} MHz: {impedance_ohm(z0)}",
            f"min S11: {s11_db(self.min_s11_db)}",
        ]
        band = self.band_10db_hz
        if band is None:
            lines.append("-10 dB band: none (the match never reaches -10 dB)")
        else:
            lo, hi = band
            covers = lo <= self.spec.target.low_hz and hi >= self.spec.target.high_hz
            lines.append(
                f"-10 dB band: {lo / 1e6:.1f} to {hi / 1e6:.1f} MHz ({100 * (hi - lo) / res.freq_hz:.1f} %), "
                f"{'covers' if covers else 'does not cover'} the target band"
            )
        if self.radiation is not None:
            lines += self.radiation.lines()
        lines.append(SAFETY_NOTE)
        return lines


def predict_spec(spec: Spec, *, model: str = DEFAULT_MODEL, calibrate: bool = True,
                 progress: Callable[[int, int], None] | None = None, numbers: Sizing | None = None,
                 radiation: bool = False) -> Prediction:
    """Size ``spec`` as the build does (``numbers`` if already known), sweep the model around the
    band and apply the revision's calibration unless ``calibrate`` is False; with ``radiation``,
    also the efficiency and gain at the band centre (MoM models)."""
    from footgen.explain import explained

    with explained(spec.raw):
        numbers = sized(spec, model) if numbers is None else numbers
        freqs = sweep_hz(spec)
        ifa = copper_ifa(spec, numbers)
        zin = model_zin_ohm(ifa, freqs, model, progress=progress)
        summary = None
        if radiation and model in RADIATION_MODELS:
            from footgen.radiation import mom_summary

            summary = mom_summary(ifa, spec.target.center_hz, float(freqs.max()), mesh=RADIATION_MODELS[model])
    return Prediction(spec, MODELS[model].label, freqs, zin, of_spec(spec.raw) if calibrate else None, summary)


def plot_s11(prediction: Prediction, measured: tuple[np.ndarray, np.ndarray] | None = None) -> tuple[bytes, bytes]:
    """SVG and PNG of |S11| in dB over the sweep and zoomed on the target band, with the
    resonance, the -10 dB band edges and the worst in-band |S11| marked (deterministic bytes)."""
    from footgen.plots import figure_bytes, s11_figure

    spec = prediction.spec
    label = "predicted, calibrated" if prediction.calibration else "predicted"
    curves = [(prediction.freq_hz, prediction.s11, {"color": "#2b6cb0", "lw": 1.2, "label": label})]
    if measured is not None:
        curves.append((measured[0], measured[1], {"color": "#c05621", "lw": 1.2, "label": "measured"}))
    title = f"{spec.name}: predicted S11 ({prediction.model_label.split(' (')[0]})"
    more = tuple((t.low_hz, t.high_hz) for t in spec.targets[1:])
    return figure_bytes(s11_figure(title, (spec.target.low_hz, spec.target.high_hz), curves, more_bands_hz=more))


def touchstone_text(prediction: Prediction) -> bytes:
    """The predicted S11 as Touchstone .s1p bytes (written through scikit-rf)."""
    import tempfile

    from footgen.rf.touchstone import write_s1p

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "predicted.s1p"
        write_s1p(path, prediction.freq_hz, prediction.s11, comment=f"footgen prediction of {prediction.spec.name}, {prediction.model_label}\n{prediction.calibration_line()}")
        return path.read_bytes()
