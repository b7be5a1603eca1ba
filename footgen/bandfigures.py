"""Per-band figures of a dual-band prediction: each band's resonance, min S11, -10 dB band and
how much of the target band it covers, read from one sweep over both bands.

Each band is read in its own window (its centre +- WINDOW_HALF_SPAN, cut at the midpoint
between the two centres so the windows never overlap), so the two resonances are two minima
of one curve.  Numbers only; no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from footgen.numfmt import fixed, impedance_ohm, s11_db
from footgen.physics.predict import bandwidth_10db, s11_from_zin
from footgen.spec import Spec, Target

#: A dual-band prediction sweeps from (1 - this) x the lower centre to (1 + this) x the upper.
DUAL_HALF_SPAN = 0.2
#: Points of that sweep (about twice the single-band sweep's: it spans several times as much).
DUAL_SWEEP_POINTS = 401
#: Each band's figures are read within its centre +- this fraction.
WINDOW_HALF_SPAN = 0.2
Z0_OHM = 50.0
MATCH_DB = -10.0


def dual_sweep_hz(spec: Spec) -> np.ndarray:
    """One sweep over both bands of a dual-band spec."""
    lo = (1 - DUAL_HALF_SPAN) * spec.targets[0].center_hz
    hi = (1 + DUAL_HALF_SPAN) * spec.targets[-1].center_hz
    return np.linspace(lo, hi, DUAL_SWEEP_POINTS)


@dataclass(frozen=True)
class BandFigures:
    """One band of a prediction: its target, the resonance (min |S11|) in its window, the level
    and Zin there, the -10 dB band around it and the fraction of the target band below -10 dB."""

    target: Target
    resonance_hz: float
    min_s11_db: float
    zin_at_resonance_ohm: complex
    band_10db_hz: tuple[float, float] | None
    coverage: float
    at_window_edge: bool

    def as_dict(self) -> dict:
        band = self.band_10db_hz
        return {
            "target_mhz": [round(self.target.low_hz / 1e6, 3), round(self.target.high_hz / 1e6, 3)],
            "resonance_mhz": round(self.resonance_hz / 1e6, 4),
            "min_s11_db": round(self.min_s11_db, 3),
            "zin_at_resonance_ohm": [round(self.zin_at_resonance_ohm.real, 3), round(self.zin_at_resonance_ohm.imag, 3)],
            "band_10db_mhz": None if band is None else [round(band[0] / 1e6, 3), round(band[1] / 1e6, 3)],
            "coverage_percent": round(100.0 * self.coverage, 2),
        }

    def lines(self, index: int) -> list[str]:
        t = self.target
        f0 = t.center_hz
        z = self.zin_at_resonance_ohm
        head = f"band {index + 1} ({t.label}, {t.low_hz / 1e6:.1f} to {t.high_hz / 1e6:.1f} MHz):"
        out = [
            f"{head} resonance (min |S11|) {self.resonance_hz / 1e6:.2f} MHz ({fixed(100 * (self.resonance_hz / f0 - 1), 2, sign=True)} % from the centre)"
            + (" at the window edge: the resonance lies beyond" if self.at_window_edge else ""),
            f"  min S11 {s11_db(self.min_s11_db)}, Zin there {impedance_ohm(z)}",
        ]
        band = self.band_10db_hz
        if band is None:
            out.append("  -10 dB band: none (the match never reaches -10 dB here)")
        else:
            lo, hi = band
            out.append(f"  -10 dB band: {lo / 1e6:.1f} to {hi / 1e6:.1f} MHz ({100 * (hi - lo) / self.resonance_hz:.1f} %), "
                       f"covers {fixed(100 * self.coverage, 1)} % of the target band")
        return out


def _windows(spec: Spec) -> list[tuple[float, float]]:
    centres = [t.center_hz for t in spec.targets]
    cut = math.sqrt(centres[0] * centres[1])
    return [((1 - WINDOW_HALF_SPAN) * centres[0], min((1 + WINDOW_HALF_SPAN) * centres[0], cut)),
            (max((1 - WINDOW_HALF_SPAN) * centres[1], cut), (1 + WINDOW_HALF_SPAN) * centres[1])]


def coverage(freq_hz: np.ndarray, s11: np.ndarray, target: Target) -> float:
    """Fraction of the target band where |S11| <= -10 dB (the sweep's dB curve, linear between
    samples, read on a fine grid across the band)."""
    f = np.asarray(freq_hz, float)
    db = 20 * np.log10(np.maximum(np.abs(np.asarray(s11)), 1e-12))
    grid = np.linspace(target.low_hz, target.high_hz, 1001)
    return float(np.mean(np.interp(grid, f, db) <= MATCH_DB))


def band_figures(spec: Spec, freq_hz: np.ndarray, zin_ohm: np.ndarray) -> list[BandFigures]:
    """Figures of each band of ``spec`` (one per target) from one sweep."""
    from footgen.prediction import resonance

    f = np.asarray(freq_hz, float)
    z = np.asarray(zin_ohm, complex)
    out = []
    for target, (lo, hi) in zip(spec.targets, _windows(spec)):
        keep = (f >= lo) & (f <= hi)
        fw, zw = f[keep], z[keep]
        res = resonance(fw, zw)
        s11 = s11_from_zin(zw, Z0_OHM)
        out.append(BandFigures(target, res.freq_hz, res.s11_db, res.zin_ohm, bandwidth_10db(fw, s11),
                               coverage(f, s11_from_zin(z, Z0_OHM), target), res.at_edge))
    return out


def second_arm_rows(spec: Spec, dims: dict[str, float]) -> list[str]:
    """Markdown table rows of a dual-band antenna's second band and arm (none for one band)."""
    second = spec.second_arm
    if second is None or "second_arm_length_mm" not in dims:
        return []
    from footgen.geometry.dualband import second_arm_style

    t = second.target
    return [
        f"| second band | {t.low_hz / 1e6:g} to {t.high_hz / 1e6:g} MHz ({t.label}) |",
        f"| second arm ({second_arm_style(second.kind, int(dims.get('second_arm_meander_legs', 0)))}, {second.position} the main arm) "
        f"length from the feed leg | {dims['second_arm_length_mm']:.3f} mm |",
        f"| second arm height above the ground edge | {dims['second_arm_height_mm']:.3f} mm |",
    ]


def band_table(spec: Spec, freq_hz: np.ndarray, zin_ohm: np.ndarray, label: str) -> list[str]:
    """Markdown table of each band's figures (dual-band specs; empty for one band)."""
    if spec.second_arm is None:
        return []
    lines = [f"| {label} | band | resonance | min S11 | Zin at resonance | -10 dB band | coverage of the band |",
             "| --- | --- | --- | --- | --- | --- | --- |"]
    for b in band_figures(spec, freq_hz, zin_ohm):
        z = b.zin_at_resonance_ohm
        band = "none" if b.band_10db_hz is None else f"{b.band_10db_hz[0] / 1e6:.1f} .. {b.band_10db_hz[1] / 1e6:.1f} MHz"
        lines.append(f"| | {b.target.label} | {b.resonance_hz / 1e6:.2f} MHz | {b.min_s11_db:.1f} dB | "
                     f"{impedance_ohm(z)} | {band} | {fixed(100 * b.coverage, 1)} % |")
    return lines + [""]
