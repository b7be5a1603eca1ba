"""Predicted response of a spec: Zin and S11 over a sweep, resonance, -10 dB band; plot and
Touchstone output.  Numbers come from the response models in :mod:`footgen.sizing`."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

from footgen.build import SAFETY_NOTE, run
from footgen.model import printed_ifa
from footgen.numfmt import fixed, s11_db
from footgen.physics.predict import bandwidth_10db, min_s11_frequency_hz, s11_from_zin
from footgen.sizing import DEFAULT_MODEL, MODELS, PREDICTION_HALF_SPAN
from footgen.spec import Spec

#: Number of sweep points over the band centre +- PREDICTION_HALF_SPAN.
SWEEP_POINTS = 201
Z0_OHM = 50.0


@dataclass(frozen=True)
class Prediction:
    spec: Spec
    model_label: str
    freq_hz: np.ndarray
    zin_ohm: np.ndarray

    @property
    def s11(self) -> np.ndarray:
        return s11_from_zin(self.zin_ohm, Z0_OHM)

    @property
    def s11_db(self) -> np.ndarray:
        return 20 * np.log10(np.maximum(np.abs(self.s11), 1e-12))

    @property
    def f_res_hz(self) -> float:
        return min_s11_frequency_hz(self.freq_hz, self.s11)

    @property
    def min_s11_db(self) -> float:
        return float(self.s11_db.min())

    @property
    def band_10db_hz(self) -> tuple[float, float] | None:
        return bandwidth_10db(self.freq_hz, self.s11)

    def zin_at(self, f_hz: float) -> complex:
        return complex(np.interp(f_hz, self.freq_hz, self.zin_ohm.real) + 1j * np.interp(f_hz, self.freq_hz, self.zin_ohm.imag))

    def summary_lines(self) -> list[str]:
        f0 = self.spec.target.center_hz
        z0 = self.zin_at(f0)
        lines = [
            f"model: {self.model_label}",
            f"resonance (min |S11|): {self.f_res_hz / 1e6:.2f} MHz (target {f0 / 1e6:.2f} MHz, {fixed(100 * (self.f_res_hz / f0 - 1), 2, sign=True)} %)",
            f"Zin at {f0 / 1e6:.2f} MHz: {fixed(z0.real, 1)} {'-' if round(z0.imag, 1) < 0 else '+'} j{fixed(abs(z0.imag), 1)} ohm",
            f"min S11: {s11_db(self.min_s11_db)}",
        ]
        band = self.band_10db_hz
        if band is None:
            lines.append("-10 dB band: none (the match never reaches -10 dB)")
        else:
            lo, hi = band
            covers = lo <= self.spec.target.low_hz and hi >= self.spec.target.high_hz
            lines.append(
                f"-10 dB band: {lo / 1e6:.1f} to {hi / 1e6:.1f} MHz ({100 * (hi - lo) / self.f_res_hz:.1f} %), "
                f"{'covers' if covers else 'does not cover'} the target band"
            )
        lines.append(SAFETY_NOTE)
        return lines


def predict_spec(spec: Spec, *, model: str = DEFAULT_MODEL, progress: Callable[[int, int], None] | None = None) -> Prediction:
    """Size and lay out ``spec`` as the build does, then sweep the model around the band."""
    result = run(spec)
    from footgen.explain import explained
    from footgen.geometry.layout import generate_copper

    f0 = spec.target.center_hz
    freqs = np.linspace((1 - PREDICTION_HALF_SPAN) * f0, (1 + PREDICTION_HALF_SPAN) * f0, SWEEP_POINTS)
    rm = MODELS[model]
    with explained(spec.raw):
        ifa = printed_ifa(spec, generate_copper(spec, result.sizing))
        zin = rm.zin_ohm(freqs, ifa, progress=progress)
    return Prediction(spec, rm.label, freqs, np.asarray(zin, complex))


def plot_s11(prediction: Prediction, measured: tuple[np.ndarray, np.ndarray] | None = None) -> tuple[bytes, bytes]:
    """SVG and PNG of |S11| in dB over the sweep, the target band shaded (deterministic bytes)."""
    from matplotlib.figure import Figure

    from footgen.draw import figure_bytes

    spec = prediction.spec
    fig = Figure(figsize=(7.0, 4.0))
    ax = fig.add_subplot(1, 1, 1)
    ax.axvspan(spec.target.low_hz / 1e6, spec.target.high_hz / 1e6, color="#c6f6d5", alpha=0.6, label="target band")
    ax.plot(prediction.freq_hz / 1e6, prediction.s11_db, color="#2b6cb0", label="predicted")
    if measured is not None:
        f, s11 = measured
        ax.plot(f / 1e6, 20 * np.log10(np.maximum(np.abs(s11), 1e-12)), color="#c05621", label="measured")
    ax.axhline(-10.0, color="gray", lw=0.8, ls="--")
    ax.set_xlabel("frequency (MHz)")
    ax.set_ylabel("|S11| (dB)")
    ax.set_title(f"{spec.name}: predicted S11 ({prediction.model_label.split(' (')[0]})", fontsize=9)
    ax.legend(fontsize=8)
    ax.grid(True, lw=0.3)
    fig.tight_layout()
    return figure_bytes(fig)


def touchstone_text(prediction: Prediction) -> bytes:
    """The predicted S11 as Touchstone .s1p bytes (written through scikit-rf)."""
    import tempfile

    from footgen.rf.touchstone import write_s1p

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "predicted.s1p"
        write_s1p(path, prediction.freq_hz, prediction.s11, comment=f"footgen prediction of {prediction.spec.name}, {prediction.model_label}")
        return path.read_bytes()
