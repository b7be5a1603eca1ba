"""Predicted response of a spec: Zin and S11 over a sweep, resonance, -10 dB band; plot and
Touchstone output.  Numbers come from the response models in :mod:`footgen.sizing`."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Callable

import numpy as np

from footgen.build import SAFETY_NOTE, run
from footgen.model import printed_ifa
from footgen.numfmt import fixed, s11_db
from footgen.physics.predict import bandwidth_10db, min_s11_frequency_hz, s11_from_zin
from footgen.sizing import DEFAULT_MODEL, MODELS, PREDICTION_HALF_SPAN, SEARCH_MESH
from footgen.spec import Spec

if TYPE_CHECKING:
    from footgen.radiation import RadiationSummary

#: Number of sweep points over the band centre +- PREDICTION_HALF_SPAN.
SWEEP_POINTS = 201
Z0_OHM = 50.0
#: response models with currents (far field available) -> their wire-mesh settings
RADIATION_MODELS: dict[str, dict[str, float] | None] = {"mom": None, "mom-search": SEARCH_MESH}


@dataclass(frozen=True)
class Prediction:
    spec: Spec
    model_label: str
    freq_hz: np.ndarray
    zin_ohm: np.ndarray
    #: efficiency and gain at the band centre (MoM models only; None for the others)
    radiation: "RadiationSummary | None" = None

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

    def summary_dict(self) -> dict:
        """The summary figures, machine-readable (units in the keys; None where not defined)."""
        f0 = self.spec.target.center_hz
        z0 = self.zin_at(f0)
        band = self.band_10db_hz
        out = {
            "name": self.spec.name,
            "model": self.model_label,
            "center_mhz": round(f0 / 1e6, 6),
            "resonance_mhz": round(self.f_res_hz / 1e6, 4),
            "min_s11_db": round(self.min_s11_db, 3),
            "s11_at_center_db": round(float(20 * np.log10(max(abs((z0 - Z0_OHM) / (z0 + Z0_OHM)), 1e-12))), 3),
            "zin_at_center_ohm": [round(z0.real, 3), round(z0.imag, 3)],
            "band_10db_mhz": None if band is None else [round(band[0] / 1e6, 3), round(band[1] / 1e6, 3)],
            "radiation": None,
        }
        if self.radiation is not None:
            out["radiation"] = self.radiation.as_dict()
        return out

    def json_bytes(self) -> bytes:
        """:meth:`summary_dict` as JSON bytes (sorted keys; same prediction, same bytes)."""
        import json

        return (json.dumps(self.summary_dict(), indent=2, sort_keys=True) + "\n").encode("utf-8")

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
        if self.radiation is not None:
            lines += self.radiation.lines()
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
        radiation = None
        if model in RADIATION_MODELS:
            from footgen.radiation import mom_summary

            radiation = mom_summary(ifa, f0, float(freqs.max()), mesh=RADIATION_MODELS[model])
    return Prediction(spec, rm.label, freqs, np.asarray(zin, complex), radiation)


def plot_s11(prediction: Prediction, measured: tuple[np.ndarray, np.ndarray] | None = None) -> tuple[bytes, bytes]:
    """SVG and PNG of |S11| in dB over the sweep and zoomed on the target band, with the
    resonance, the -10 dB band edges and the worst in-band |S11| marked (deterministic bytes)."""
    from footgen.plots import figure_bytes, s11_figure

    spec = prediction.spec
    curves = [(prediction.freq_hz, prediction.s11, {"color": "#2b6cb0", "lw": 1.2, "label": "predicted"})]
    if measured is not None:
        curves.append((measured[0], measured[1], {"color": "#c05621", "lw": 1.2, "label": "measured"}))
    title = f"{spec.name}: predicted S11 ({prediction.model_label.split(' (')[0]})"
    return figure_bytes(s11_figure(title, (spec.target.low_hz, spec.target.high_hz), curves))


def touchstone_text(prediction: Prediction) -> bytes:
    """The predicted S11 as Touchstone .s1p bytes (written through scikit-rf)."""
    import tempfile

    from footgen.rf.touchstone import write_s1p

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "predicted.s1p"
        write_s1p(path, prediction.freq_hz, prediction.s11, comment=f"footgen prediction of {prediction.spec.name}, {prediction.model_label}")
        return path.read_bytes()
