"""Chip parts a matching network can be built from: value ranges and a first-order model of each
part's parasitics (numbers only, SI units).

Ranges (common practice, no source): 0402 and 0603 RF parts are stocked as C0G/NP0 capacitors
from 0.5 pF to 100 pF and as multilayer or wire-wound chip inductors from 1.0 nH to 100 nH, in
E24 steps (IEC 60063 values; an E12 choice is a subset).  Parts outside these ranges are not
offered.

Parasitics, the usual first-order equivalent circuit of a chip part (common practice, no source):

- capacitor: C in series with its package inductance L_s and a loss resistance from its quality
  factor, R = 1 / (omega C Q_C); self-resonant at 1 / (2 pi sqrt(L_s C));
- inductor: L in series with R = omega L / Q_L, both in parallel with the winding capacitance
  C_p; self-resonant at 1 / (2 pi sqrt(L C_p)).

Q_C, Q_L, L_s and C_p are typical round numbers for the package, not any maker's data: the
response of a built network will differ, and estimates never replace measurement.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Package:
    """Ranges (F, H) and parasitics of one chip size."""

    name: str
    c_min_f: float
    c_max_f: float
    l_min_h: float
    l_max_h: float
    #: capacitor: quality factor and series (package) inductance
    q_c: float
    esl_h: float
    #: inductor: quality factor and parallel (winding) capacitance
    q_l: float
    cp_f: float


PACKAGES: dict[str, Package] = {
    "0402": Package("0402", 0.5e-12, 100e-12, 1.0e-9, 100e-9, q_c=100.0, esl_h=0.4e-9, q_l=30.0, cp_f=0.08e-12),
    "0603": Package("0603", 0.5e-12, 100e-12, 1.0e-9, 100e-9, q_c=100.0, esl_h=0.6e-9, q_l=40.0, cp_f=0.12e-12),
}
DEFAULT_PACKAGE = "0402"
#: A part is used only below this fraction of its self-resonance (common practice, no source:
#: near its self-resonance a part's value depends on the package more than on its label).
SRF_MARGIN = 0.7


def value_range(package: Package, kind: str) -> tuple[float, float]:
    return {"C": (package.c_min_f, package.c_max_f), "L": (package.l_min_h, package.l_max_h)}[kind]


def self_resonance_hz(package: Package, kind: str, value: float) -> float:
    """Self-resonant frequency of a part of ``value`` (F or H) in ``package``."""
    other = package.esl_h if kind == "C" else package.cp_f
    return 1.0 / (2.0 * math.pi * math.sqrt(value * other))


def in_range(package: Package, kind: str, value: float, f_max_hz: float) -> bool:
    """The part exists in the package and works as itself up to ``f_max_hz``."""
    lo, hi = value_range(package, kind)
    return lo * (1 - 1e-9) <= value <= hi * (1 + 1e-9) and f_max_hz <= SRF_MARGIN * self_resonance_hz(package, kind, value)


def _capacitor_ohm(omega: np.ndarray, c_f: float, package: Package) -> np.ndarray:
    return 1.0 / (omega * c_f * package.q_c) + 1j * omega * package.esl_h + 1.0 / (1j * omega * c_f)


def _inductor_ohm(omega: np.ndarray, l_h: float, package: Package) -> np.ndarray:
    series = omega * l_h / package.q_l + 1j * omega * l_h
    return series / (1.0 + 1j * omega * package.cp_f * series)


REAL_IMPEDANCE = {"C": _capacitor_ohm, "L": _inductor_ohm}


def impedance_ohm(omega: np.ndarray, kind: str, value: float, package: Package) -> np.ndarray:
    """Impedance of the real part (with its parasitics) at the angular frequencies ``omega``."""
    return REAL_IMPEDANCE[kind](np.asarray(omega, dtype=float), value, package)
