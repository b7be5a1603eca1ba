"""Lumped matching networks: L- and pi-network synthesis and their response (numbers only).

Networks are tuples of :class:`Part`, ordered from the source (the 50 ohm radio port) toward the
load (the antenna).  The closed forms give ideal parts; :func:`plan_match` snaps them to a
preferred series, keeps only networks whose parts exist as 0402/0603 RF parts and computes the
response with each part's parasitics (:mod:`footgen.rf.parts`).  Estimates never replace
measurement.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from footgen.errors import SpecError
from footgen.rf import eseries, parts as chip

R0_OHM = 50.0
# A reactance below this fraction of R0 (or a susceptance below it times 1/R0) is no part at all:
# the series element is a plain connection, the shunt element is left open.
NEGLIGIBLE_IMMITTANCE_REL = 1e-9

# Relative rounding allowance where a square root's argument is zero in exact arithmetic.
ROUNDING_REL = 1e-12

# A virtual resistance this close (relative) to the lower termination is taken as equal to it.
DEGENERATE_PI_REL = 1e-9

SERIES = "series"
SHUNT = "shunt"


@dataclass(frozen=True)
class Part:
    """One lumped part: ``kind`` "L" (``value`` in H) or "C" (``value`` in F), placed
    ``"series"`` in the signal path or ``"shunt"`` to ground; ideal when ``package`` is None,
    else a chip part of that size with its parasitics (:data:`footgen.rf.parts.PACKAGES`)."""

    placement: str
    kind: str
    value: float
    package: str | None = None

    @property
    def unit(self) -> str:
        return _UNIT[self.kind]

    def value_text(self) -> str:
        """The value as engineers read it on a part: capacitors in pF, inductors in nH."""
        scale, unit = _DISPLAY[self.kind]
        return f"{self.value / scale:.3g} {unit}"

    def describe(self) -> str:
        """Short label such as ``series L 39 nH`` (``... (0402)`` for a chip part)."""
        size = f" ({self.package})" if self.package else ""
        return f"{self.placement} {self.kind} {self.value_text()}{size}"


@dataclass(frozen=True)
class LMatch:
    """One L-network solution.

    ``topology`` is ``"shunt-at-load"`` (shunt part across the load, series part toward the
    source) or ``"series-at-load"`` (series part next to the load, shunt part across the source).
    ``reactance_ohm`` (series X) and ``susceptance_s`` (shunt B) are the values at ``f0_hz``.
    """

    topology: str
    reactance_ohm: float
    susceptance_s: float
    parts: tuple[Part, ...]
    f0_hz: float
    r0_ohm: float
    z_load_ohm: complex

    def describe(self) -> str:
        return f"{self.topology}: " + ", ".join(p.describe() for p in self.parts)


@dataclass(frozen=True)
class PiMatch:
    """One pi-network solution: shunt B at the source, series X, shunt B at the load (at f0).

    ``r_virtual_ohm`` is the virtual resistance at the middle of the series arm and
    ``q_loaded`` the loaded Q it was chosen for.
    """

    q_loaded: float
    r_virtual_ohm: float
    susceptance_source_s: float
    reactance_series_ohm: float
    susceptance_load_s: float
    parts: tuple[Part, ...]
    f0_hz: float
    r0_ohm: float
    z_load_ohm: complex

    @property
    def topology(self) -> str:
        return "pi: " + " / ".join(f"{p.placement} {p.kind}" for p in self.parts)

    def describe(self) -> str:
        return f"pi (Q {self.q_loaded:.3g}, Rv {self.r_virtual_ohm:.4g} ohm): " + ", ".join(
            p.describe() for p in self.parts
        )


_UNIT = {"L": "H", "C": "F"}
_DISPLAY = {"L": (1e-9, "nH"), "C": (1e-12, "pF")}


# ----------------------------------------------------------------------------- closed forms


def l_match_shunt_at_load_pozar(
    z_load_ohm: complex, r0_ohm: float
) -> tuple[tuple[float, float], ...]:
    """(B, X) pairs of the L-network with the shunt susceptance B across the load and the series
    reactance X toward the source; feasible when R_L^2 + X_L^2 >= R0 R_L (always for R_L > R0).

    Pozar, Microwave Engineering, 4th ed., sec. 5.1, eqs. (5.3a) and (5.3b) (from memory):
    B = [X_L +- sqrt(R_L/Z0) sqrt(R_L^2 + X_L^2 - Z0 R_L)] / (R_L^2 + X_L^2),
    X = 1/B + X_L Z0/R_L - Z0/(B R_L).
    """
    r_l, x_l = z_load_ohm.real, z_load_ohm.imag
    mag2 = r_l * r_l + x_l * x_l
    radicand = r_l * (r_l - r0_ohm) + x_l * x_l  # = mag2 - Z0 R_L, without cancellation at R_L ~ Z0
    if radicand < -ROUNDING_REL * mag2:
        return ()
    root = math.sqrt(r_l / r0_ohm) * math.sqrt(max(radicand, 0.0))
    pairs = []
    for b_s in {(x_l + root) / mag2, (x_l - root) / mag2}:
        if abs(b_s) * r0_ohm < NEGLIGIBLE_IMMITTANCE_REL:
            # B = 0 only when R_L = R0: the series part alone cancels X_L.
            pairs.append((0.0, -x_l))
        else:
            # 1/B + X_L Z0/R_L - Z0/(B R_L), regrouped so the two 1/B terms do not cancel
            pairs.append((b_s, (r_l - r0_ohm) / (b_s * r_l) + x_l * r0_ohm / r_l))
    return tuple(sorted(set(pairs), reverse=True))


def l_match_series_at_load_pozar(
    z_load_ohm: complex, r0_ohm: float
) -> tuple[tuple[float, float], ...]:
    """(B, X) pairs of the L-network with the series reactance X next to the load and the shunt
    susceptance B across the source side; feasible when R_L < R0 (R_L = R0 gives B = 0).

    Pozar, Microwave Engineering, 4th ed., sec. 5.1, eqs. (5.6a) and (5.6b) (from memory):
    X = +- sqrt(R_L (Z0 - R_L)) - X_L,  B = +- sqrt((Z0 - R_L)/R_L) / Z0.
    """
    r_l, x_l = z_load_ohm.real, z_load_ohm.imag
    if r_l > r0_ohm:
        return ()
    root_x = math.sqrt(r_l * (r0_ohm - r_l))
    root_b = math.sqrt((r0_ohm - r_l) / r_l) / r0_ohm
    return tuple(sorted({(root_b, root_x - x_l), (-root_b, -root_x - x_l)}, reverse=True))


def pi_virtual_resistance_bowick(r_high_ohm: float, q_loaded: float) -> float:
    """Virtual resistance of a pi network of loaded Q: R_v = R_H / (Q^2 + 1).

    Bowick, RF Circuit Design, 2nd ed., ch. 4 (impedance matching, the pi network), with
    Q = sqrt(R_H/R_v - 1) for the section at the higher of the two terminating resistances
    (from memory).
    """
    return r_high_ohm / (q_loaded * q_loaded + 1.0)


def parallel_resistance_ohm(z_ohm: complex) -> float:
    """Resistance of the parallel R || jX equivalent of a series impedance: |Z|^2 / R."""
    return abs(z_ohm) ** 2 / z_ohm.real


def minimum_pi_q(z_load_ohm: complex, r0_ohm: float = R0_OHM) -> float:
    """Smallest loaded Q a pi network can have between ``r0_ohm`` and the load: that of the
    L-network between the two parallel resistances, sqrt(R_H/R_low - 1) (Bowick, as above)."""
    z = _check_load(z_load_ohm)
    _check_r0(r0_ohm)
    r_load = parallel_resistance_ohm(z)
    r_high, r_low = max(r0_ohm, r_load), min(r0_ohm, r_load)
    return math.sqrt(r_high / r_low - 1.0)


# ----------------------------------------------------------------------------- synthesis


def _omega(f0_hz: float) -> float:
    if not (math.isfinite(f0_hz) and f0_hz > 0):
        raise SpecError("f0_hz", f0_hz, "give the match frequency in Hz, positive")
    return 2.0 * math.pi * f0_hz


def _check_r0(r0_ohm: float) -> None:
    if not (math.isfinite(r0_ohm) and r0_ohm > 0):
        raise SpecError("r0_ohm", r0_ohm, "the source resistance must be positive (radio port)")


def _check_load(z_load_ohm: complex) -> complex:
    z = complex(z_load_ohm)
    if not (math.isfinite(z.real) and math.isfinite(z.imag) and z.real > 0):
        raise SpecError(
            "z_load_ohm", z_load_ohm, "a lumped match needs a finite load with positive resistance"
        )
    return z


def series_part(reactance_ohm: float, f0_hz: float, r0_ohm: float = R0_OHM) -> Part | None:
    """The series part of reactance X at f0: L = X/w for X > 0, C = -1/(w X) for X < 0, none
    (a plain connection) for X = 0."""
    omega = _omega(f0_hz)
    if abs(reactance_ohm) < NEGLIGIBLE_IMMITTANCE_REL * r0_ohm:
        return None
    if reactance_ohm > 0:
        return Part(SERIES, "L", reactance_ohm / omega)
    return Part(SERIES, "C", -1.0 / (omega * reactance_ohm))


def shunt_part(susceptance_s: float, f0_hz: float, r0_ohm: float = R0_OHM) -> Part | None:
    """The shunt part of susceptance B at f0: C = B/w for B > 0, L = -1/(w B) for B < 0, none
    (left open) for B = 0."""
    omega = _omega(f0_hz)
    if abs(susceptance_s) * r0_ohm < NEGLIGIBLE_IMMITTANCE_REL:
        return None
    if susceptance_s > 0:
        return Part(SHUNT, "C", susceptance_s / omega)
    return Part(SHUNT, "L", -1.0 / (omega * susceptance_s))


def _parts(*maybe: Part | None) -> tuple[Part, ...]:
    return tuple(p for p in maybe if p is not None)


def l_networks(z_load_ohm: complex, f0_hz: float, r0_ohm: float = R0_OHM) -> tuple[LMatch, ...]:
    """Every L-network that matches ``z_load_ohm`` to the real source ``r0_ohm`` at ``f0_hz``.

    Two solutions per feasible topology (Pozar eqs. 5.3 and 5.6); for R_L > R0 only the
    shunt-at-load topology exists.  Parts are ordered source -> load.
    """
    z = _check_load(z_load_ohm)
    _check_r0(r0_ohm)
    _omega(f0_hz)
    solutions = []
    for b_s, x_ohm in l_match_shunt_at_load_pozar(z, r0_ohm):
        parts = _parts(series_part(x_ohm, f0_hz, r0_ohm), shunt_part(b_s, f0_hz, r0_ohm))
        solutions.append(LMatch("shunt-at-load", x_ohm, b_s, parts, f0_hz, r0_ohm, z))
    for b_s, x_ohm in l_match_series_at_load_pozar(z, r0_ohm):
        parts = _parts(shunt_part(b_s, f0_hz, r0_ohm), series_part(x_ohm, f0_hz, r0_ohm))
        solutions.append(LMatch("series-at-load", x_ohm, b_s, parts, f0_hz, r0_ohm, z))
    return tuple(solutions)


def pi_networks(
    z_load_ohm: complex, f0_hz: float, q_loaded: float | None = None, r0_ohm: float = R0_OHM
) -> tuple[PiMatch, ...]:
    """The pi networks (up to four: two sign choices per half) matching the load to ``r0_ohm``.

    The series arm is split at a virtual resistance R_v = R_H/(Q^2+1) (Bowick), below both the
    source resistance and the load's parallel resistance |Z_L|^2/R_L.  The load half is the
    shunt-at-load L-network from Z_L to R_v, the source half the series-at-load L-network from
    R_v to R0 (Pozar eqs. 5.3, 5.6); their series reactances add.  ``q_loaded=None`` takes the
    minimum Q, R_v equal to the lower resistance: the shunt part at that end then only cancels
    the load's parallel susceptance (or vanishes), so the pi degenerates to an L network.
    """
    z = _check_load(z_load_ohm)
    _omega(f0_hz)
    q_min = minimum_pi_q(z, r0_ohm)
    q = q_min if q_loaded is None else float(q_loaded)
    if not (math.isfinite(q) and q >= q_min * (1.0 - ROUNDING_REL)):
        raise SpecError(
            "q_loaded", q_loaded, f"a pi network for this load needs Q >= {q_min:.4g} (or None)"
        )
    r_parallel = parallel_resistance_ohm(z)
    r_high, r_low = max(r0_ohm, r_parallel), min(r0_ohm, r_parallel)
    r_virtual = pi_virtual_resistance_bowick(r_high, q)
    if r_virtual >= r_low * (1.0 - DEGENERATE_PI_REL):
        # At (or within rounding of) the minimum Q the lower-resistance half has Q = 0; take it
        # exactly, since sqrt(R_low - R_v) of a rounding residue is ill-conditioned.
        r_virtual = r_low
    if r_virtual == r_parallel:
        # Q = 0 on the load side: the shunt part only cancels the load's parallel susceptance
        # -X_L/|Z_L|^2 and no series reactance is needed (the closed form is 0/0-like here).
        load_halves: tuple[tuple[float, float], ...] = ((z.imag / abs(z) ** 2, 0.0),)
    else:
        load_halves = l_match_shunt_at_load_pozar(z, r_virtual)
    source_halves = l_match_series_at_load_pozar(complex(r_virtual, 0.0), r0_ohm)
    solutions = []
    for b_load, x_load in load_halves:
        for b_source, x_source in source_halves:
            x_series = x_load + x_source
            parts = _parts(
                shunt_part(b_source, f0_hz, r0_ohm),
                series_part(x_series, f0_hz, r0_ohm),
                shunt_part(b_load, f0_hz, r0_ohm),
            )
            solutions.append(
                PiMatch(q, r_virtual, b_source, x_series, b_load, parts, f0_hz, r0_ohm, z)
            )
    return tuple(solutions)


def snap_parts(parts: tuple[Part, ...], series: str = "E24", package: str | None = None) -> tuple[Part, ...]:
    """The same network with every value snapped to the nearest ``series`` value (IEC 60063),
    as chip parts of ``package`` (None: ideal parts)."""
    return tuple(Part(p.placement, p.kind, eseries.snap(p.value, series), package) for p in parts)


# ----------------------------------------------------------------------------- response

_PART_IMPEDANCE: dict[str, Callable[[np.ndarray, float], np.ndarray]] = {
    "L": lambda omega, value: 1j * omega * value,
    "C": lambda omega, value: 1.0 / (1j * omega * value),
}


def _series_abcd(z_ohm: np.ndarray) -> np.ndarray:
    """ABCD matrix of a series impedance: [[1, Z], [0, 1]] (Pozar, Table 4.1, from memory)."""
    m = np.zeros(z_ohm.shape + (2, 2), dtype=complex)
    m[..., 0, 0] = 1.0
    m[..., 0, 1] = z_ohm
    m[..., 1, 1] = 1.0
    return m


def _shunt_abcd(z_ohm: np.ndarray) -> np.ndarray:
    """ABCD matrix of a shunt impedance: [[1, 0], [1/Z, 1]] (Pozar, Table 4.1, from memory)."""
    m = np.zeros(z_ohm.shape + (2, 2), dtype=complex)
    m[..., 0, 0] = 1.0
    m[..., 1, 0] = 1.0 / z_ohm
    m[..., 1, 1] = 1.0
    return m


_PLACEMENT_ABCD: dict[str, Callable[[np.ndarray], np.ndarray]] = {
    SERIES: _series_abcd,
    SHUNT: _shunt_abcd,
}


def _package(name: str) -> chip.Package:
    try:
        return chip.PACKAGES[name]
    except KeyError:
        raise SpecError("package", name, f"use one of {', '.join(chip.PACKAGES)}") from None


def network_abcd(freq_hz: np.ndarray, parts: tuple[Part, ...]) -> np.ndarray:
    """Cascaded ABCD matrices (shape ``(n, 2, 2)``) of ideal parts, source -> load."""
    f = np.asarray(freq_hz, dtype=float)
    if f.ndim != 1 or not np.all(np.isfinite(f)) or np.any(f <= 0):
        raise SpecError("freq_hz", "array", "give a 1-D array of positive finite frequencies")
    omega = 2.0 * np.pi * f
    total = _series_abcd(np.zeros_like(omega, dtype=complex))
    for part in parts:
        if part.kind not in _PART_IMPEDANCE or part.placement not in _PLACEMENT_ABCD:
            raise SpecError("part", part, "kind must be 'L' or 'C', placement 'series' or 'shunt'")
        if part.package is None:
            z_part = _PART_IMPEDANCE[part.kind](omega, part.value)
        else:
            z_part = chip.impedance_ohm(omega, part.kind, part.value, _package(part.package))
        total = total @ _PLACEMENT_ABCD[part.placement](z_part)
    return total


def input_impedance_ohm(
    freq_hz: np.ndarray, parts: tuple[Part, ...], z_load_ohm: complex | np.ndarray
) -> np.ndarray:
    """Impedance seen from the source into the network terminated by the load:
    Z_in = (A Z_L + B) / (C Z_L + D)."""
    abcd = network_abcd(freq_hz, parts)
    z_l = np.broadcast_to(np.asarray(z_load_ohm, dtype=complex), abcd.shape[:-2])
    a, b, c, d = abcd[..., 0, 0], abcd[..., 0, 1], abcd[..., 1, 0], abcd[..., 1, 1]
    return (a * z_l + b) / (c * z_l + d)


def reflection_coefficient(z_ohm: np.ndarray, z0_ohm: float = R0_OHM) -> np.ndarray:
    """Gamma = (Z - Z0)/(Z + Z0) (Pozar, 4th ed., eq. 2.35, from memory)."""
    z = np.asarray(z_ohm, dtype=complex)
    return (z - z0_ohm) / (z + z0_ohm)


def network_s11(
    freq_hz: np.ndarray,
    parts: tuple[Part, ...],
    z_load_ohm: complex | np.ndarray,
    z0_ohm: float = R0_OHM,
) -> np.ndarray:
    """S11(f) into ``z0_ohm`` of the network ``parts`` (source -> load) ending in the load
    (a constant or one impedance per frequency); chip parts with their parasitics."""
    return reflection_coefficient(input_impedance_ohm(freq_hz, parts, z_load_ohm), z0_ohm)


def network_loss_db(freq_hz: np.ndarray, parts: tuple[Part, ...], z_load_ohm: complex | np.ndarray) -> np.ndarray:
    """Power lost in the network (dB): power into its input over power reaching the load,
    from the ABCD matrix with the load current set to 1 A (V_in = A Z_L + B, I_in = C Z_L + D)."""
    abcd = network_abcd(freq_hz, parts)
    z_l = np.broadcast_to(np.asarray(z_load_ohm, dtype=complex), abcd.shape[:-2])
    v_in = abcd[..., 0, 0] * z_l + abcd[..., 0, 1]
    i_in = abcd[..., 1, 0] * z_l + abcd[..., 1, 1]
    return 10.0 * np.log10(np.real(v_in * np.conj(i_in)) / np.real(z_l))
