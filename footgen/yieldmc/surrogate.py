"""Sensitivities from full solves and the resonance-shift surrogate built on them.

A printed IFA's response to a small change of its laminate, copper or ground is mostly a shift of
its resonance: the whole Zin(f) curve slides along the frequency axis, while its shape changes
little.  The surrogate keeps that physics: for a sample with deviations ``d_i``

    Zin(f) = Zn(f / (1 + s)) + off(f) + sum_i (b_i(f) d_i + c_i(f) d_i^2),
    s = sum_i (a_i d_i + a2_i d_i^2)

where ``Zn`` is the nominal design's Zin on the wide prediction sweep (cubic spline), ``off`` the
difference between that spline and the nominal full solve on the evaluation grid (zero up to the
sweep's interpolation), ``a_i`` and ``a2_i`` the relative resonance shift per unit of parameter
``i`` and its curvature, and ``b_i``, ``c_i`` what is left of the change of Zin once the shift is
taken out.  All of them come from full solves at ``+-h_i`` (central differences, ``h_i`` the
tolerance's half-width), so the surrogate reproduces those solves exactly and is checked on other
samples by :mod:`footgen.yieldmc.run`.  Matching parts act exactly, on top of Zin (chip parts
with their parasitics, :mod:`footgen.rf.matching`).  Numbers in, numbers out (Hz, ohm).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from footgen.physics.predict import s11_from_zin
from footgen.rf.matching import Part, input_impedance_ohm

Z0_OHM = 50.0
#: Levels of the yield figures (dB).
LEVEL_10DB = -10.0
LEVEL_6DB = -6.0
#: Curves of this many samples are kept for the cloud plot.
CLOUD_SAMPLES = 200


@dataclass(frozen=True)
class Grids:
    """Frequencies: the nominal wide sweep, the evaluation grid of every sample (it holds the
    target band's points) and the band (Hz)."""

    wide_hz: np.ndarray
    eval_hz: np.ndarray
    band_hz: tuple[float, float]

    @property
    def in_band(self) -> np.ndarray:
        lo, hi = self.band_hz
        return (self.eval_hz >= lo * (1 - 1e-12)) & (self.eval_hz <= hi * (1 + 1e-12))


def with_parts(freq_hz: np.ndarray, zin_ohm: np.ndarray, parts: tuple[Part, ...], percent: np.ndarray | None = None) -> np.ndarray:
    """Zin seen through the matching ``parts`` (source side first), each part's value off by
    ``percent`` (one entry per part); ``zin_ohm`` unchanged without parts."""
    if not parts:
        return zin_ohm
    if percent is not None:
        parts = tuple(dataclasses.replace(p, value=p.value * (1 + float(x) / 100)) for p, x in zip(parts, percent))
    return input_impedance_ohm(freq_hz, parts, zin_ohm)


def s11_db(zin_ohm: np.ndarray) -> np.ndarray:
    return 20 * np.log10(np.maximum(np.abs(s11_from_zin(zin_ohm, Z0_OHM)), 1e-12))


@dataclass(frozen=True)
class Figures:
    """Per-sample results: worst in-band S11 (dB), resonance (Hz) and the S11 curves (dB) of the
    first CLOUD_SAMPLES samples on the evaluation grid."""

    worst_db: np.ndarray
    resonance_hz: np.ndarray
    curves_db: np.ndarray

    @staticmethod
    def join(parts: list["Figures"]) -> "Figures":
        curves = np.concatenate([p.curves_db for p in parts])[:CLOUD_SAMPLES]
        return Figures(np.concatenate([p.worst_db for p in parts]), np.concatenate([p.resonance_hz for p in parts]), curves)


def figures(grids: Grids, zin: np.ndarray, keep_curves: int = CLOUD_SAMPLES) -> Figures:
    """Worst in-band S11 and resonance of each row of ``zin`` (shape (n, len(eval_hz)))."""
    from footgen.prediction import resonance

    db = s11_db(zin)
    worst = db[:, grids.in_band].max(axis=1)
    res = np.array([resonance(grids.eval_hz, row).freq_hz for row in zin])
    return Figures(worst, res, db[:keep_curves])


@dataclass(frozen=True)
class Surrogate:
    """The fitted surrogate (see the module text); ``copper`` are the indices of the copper
    parameters within the run's parameter list, ``parts`` the nominal matching parts."""

    grids: Grids
    wide_zin: np.ndarray
    nominal_zin: np.ndarray
    copper: tuple[int, ...]
    shift: np.ndarray
    shift2: np.ndarray
    linear: np.ndarray
    quadratic: np.ndarray
    parts: tuple[Part, ...]
    part_columns: tuple[int, ...]

    def zin(self, dev: np.ndarray) -> np.ndarray:
        """Bare antenna Zin (no parts) of samples with deviations ``dev`` (n, all parameters)."""
        from scipy.interpolate import CubicSpline

        f = self.grids.eval_hz
        if not self.copper:  # nothing moves the copper: every sample is the nominal solve itself
            return np.tile(self.nominal_zin, (dev.shape[0], 1))
        d = dev[:, list(self.copper)]
        s = d @ self.shift + (d * d) @ self.shift2
        spline = CubicSpline(self.grids.wide_hz, self.wide_zin)
        offset = self.nominal_zin - spline(f)
        z = spline(f[None, :] / (1 + s[:, None])) + offset[None, :]
        return z + d @ self.linear + (d * d) @ self.quadratic

    def matched_zin(self, dev: np.ndarray) -> np.ndarray:
        """Zin seen through the matching parts (each off by its deviation), if any."""
        z = self.zin(dev)
        if self.parts:
            cols = list(self.part_columns)
            z = np.array([with_parts(self.grids.eval_hz, row, self.parts, dev[k, cols] if cols else None) for k, row in enumerate(z)])
        return z

    def evaluate(self, dev: np.ndarray, keep_curves: int = CLOUD_SAMPLES) -> Figures:
        return figures(self.grids, self.matched_zin(dev), keep_curves)

    def worst_db(self, dev: np.ndarray) -> np.ndarray:
        """Worst in-band S11 (dB) of each sample alone (no resonance search: fast)."""
        return s11_db(self.matched_zin(dev))[:, self.grids.in_band].max(axis=1)


def fit(grids: Grids, wide_zin: np.ndarray, nominal_zin: np.ndarray, copper: tuple[int, ...], steps: np.ndarray,
        plus_zin: np.ndarray, minus_zin: np.ndarray, parts: tuple[Part, ...], part_columns: tuple[int, ...]) -> Surrogate:
    """The surrogate from the nominal solves and, per copper parameter, the full solves at
    ``+steps`` and ``-steps`` (rows of ``plus_zin``, ``minus_zin`` on the evaluation grid)."""
    from scipy.interpolate import CubicSpline

    from footgen.prediction import resonance

    f = grids.eval_hz
    spline = CubicSpline(grids.wide_hz, wide_zin)
    offset = nominal_zin - spline(f)
    r0 = resonance(f, nominal_zin).freq_hz
    n = len(copper)
    shift, shift2 = np.zeros(n), np.zeros(n)
    linear, quadratic = np.zeros((n, f.size), complex), np.zeros((n, f.size), complex)
    for i in range(n):
        h = float(steps[i])
        rp, rm = resonance(f, plus_zin[i]).freq_hz / r0 - 1, resonance(f, minus_zin[i]).freq_hz / r0 - 1
        shift[i], shift2[i] = (rp - rm) / (2 * h), (rp + rm) / (2 * h * h)
        sp, sm = shift[i] * h + shift2[i] * h * h, -shift[i] * h + shift2[i] * h * h
        left_p = plus_zin[i] - (spline(f / (1 + sp)) + offset)
        left_m = minus_zin[i] - (spline(f / (1 + sm)) + offset)
        linear[i], quadratic[i] = (left_p - left_m) / (2 * h), (left_p + left_m) / (2 * h * h)
    return Surrogate(grids, wide_zin, nominal_zin, copper, shift, shift2, linear, quadratic, parts, part_columns)
