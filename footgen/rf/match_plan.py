"""The match plan: every L and pi network for a load known over a sweep, built from chip parts
that exist (:mod:`footgen.rf.parts`), with its response, worst in-band |S11| and loss, and the
one to recommend (numbers only)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from footgen.errors import SpecError
from footgen.rf import parts as chip
from footgen.rf.matching import (
    R0_OHM,
    Part,
    _check_load,
    _package,
    l_networks,
    minimum_pi_q,
    network_loss_db,
    network_s11,
    pi_networks,
    snap_parts,
)

#: What the response of a chip part includes, for reports and the CLI.
PARTS_NOTE = "first-order chip-part model of footgen.rf.parts, common practice, no source"
#: Loaded Q of the listed pi networks, raised to 1.5 times the load's minimum when that is
#: higher (common practice, no source: a Q of a few keeps the pi's bandwidth usable).
DEFAULT_PI_Q = 2.0
PI_Q_OVER_MINIMUM = 1.5
#: Worst in-band |S11| values closer than this count as equal and fewer parts then win: each
#: extra network must buy at least this much (dB; common practice, no source).
EQUAL_WORST_DB = 1.0
#: A direct connection whose worst in-band |S11| is at or below this needs no network
#: (dB; the -10 dB match criterion used throughout footgen, common practice, no source).
GOOD_MATCH_DB = -10.0


@dataclass(frozen=True)
class MatchCandidate:
    """One network with its parts snapped to a preferred series as chip parts, and its
    response across the sweep (S11 against ``r0_ohm`` of the antenna seen through the parts,
    parasitics included) and the power lost in the network."""

    label: str
    ideal_parts: tuple[Part, ...]
    parts: tuple[Part, ...]
    s11: np.ndarray
    s11_db_at_f0: float
    worst_s11_db_in_band: float
    loss_db_at_f0: float = 0.0
    worst_loss_db_in_band: float = 0.0

    def describe(self) -> str:
        return f"{self.label}: " + (", ".join(p.describe() for p in self.parts) or "direct connection")


@dataclass(frozen=True)
class MatchPlan:
    """Buildable L and pi networks for a load known over a sweep, snapped to ``series`` as
    ``package`` chip parts; ``chosen`` is the index of the recommended candidate (the direct
    connection first); ``not_offered`` names the networks left out and why."""

    f0_hz: float
    z_at_f0_ohm: complex
    band_hz: tuple[float, float]
    series: str
    freq_hz: np.ndarray
    z_load_ohm: np.ndarray
    candidates: tuple[MatchCandidate, ...]
    chosen: int
    package: str = chip.DEFAULT_PACKAGE
    not_offered: tuple[str, ...] = ()

    @property
    def best(self) -> MatchCandidate:
        return self.candidates[self.chosen]

    @property
    def no_buildable_network(self) -> bool:
        """Only the direct connection is left, and it does not match."""
        return len(self.candidates) == 1 and self.candidates[0].worst_s11_db_in_band > GOOD_MATCH_DB

    def verdict(self) -> str:
        """One line: what to fit."""
        best = self.best
        if self.no_buildable_network:
            return (f"no buildable network: every L and pi network needs parts outside the {self.package} ranges "
                    f"({ranges_text(self.package)}); change the antenna (feed tap, arm length) instead")
        if not best.parts:
            return "no network needed: the direct connection already meets the -10 dB match in the band"
        return f"recommended: {best.describe()}"


def ranges_text(package: str) -> str:
    pkg = _package(package)
    return (f"C {pkg.c_min_f / 1e-12:g}-{pkg.c_max_f / 1e-12:g} pF, L {pkg.l_min_h / 1e-9:g}-{pkg.l_max_h / 1e-9:g} nH, "
            f"below {chip.SRF_MARGIN:g} x self-resonance")


def _why_not(part: Part, pkg: chip.Package) -> str:
    lo, hi = chip.value_range(pkg, part.kind)
    if lo * (1 - 1e-9) <= part.value <= hi * (1 + 1e-9):
        srf = chip.self_resonance_hz(pkg, part.kind, part.value)
        return f"{part.describe()} self-resonates at {srf / 1e6:.0f} MHz, too near the band"
    return f"{part.describe()} outside the {pkg.name} range"


def _interp_complex(freq_hz: np.ndarray, values: np.ndarray, f0_hz: float) -> complex:
    return complex(np.interp(f0_hz, freq_hz, values.real), np.interp(f0_hz, freq_hz, values.imag))


def _db(gamma: np.ndarray) -> np.ndarray:
    return 20.0 * np.log10(np.maximum(np.abs(gamma), 1e-15))


def plan_match(
    freq_hz: np.ndarray,
    z_load_ohm: np.ndarray,
    f0_hz: float,
    *,
    band_hz: tuple[float, float] | None = None,
    series: str = "E24",
    pi_q: float | None = None,
    r0_ohm: float = R0_OHM,
    package: str = chip.DEFAULT_PACKAGE,
) -> MatchPlan:
    """List the direct connection, every L network and the pi networks (loaded Q ``pi_q``,
    default as :data:`DEFAULT_PI_Q`) for the load ``z_load_ohm(freq_hz)`` matched at ``f0_hz``,
    with parts snapped to ``series`` as ``package`` chip parts, and their S11 and loss across
    the sweep.  A network with a part outside the package's ranges is not offered.
    ``band_hz`` (default: f0 alone) is where the worst |S11| is judged to choose one."""
    pkg = _package(package)
    f = np.asarray(freq_hz, dtype=float)
    z = np.asarray(z_load_ohm, dtype=complex)
    if f.ndim != 1 or z.shape != f.shape or f.size < 2 or np.any(np.diff(f) <= 0):
        raise SpecError("freq_hz", "array", "give rising frequencies and one load impedance for each")
    if not (f[0] <= f0_hz <= f[-1]):
        raise SpecError("f0_hz", f0_hz, f"must lie inside the sweep {f[0] / 1e6:.6g} .. {f[-1] / 1e6:.6g} MHz")
    lo, hi = band_hz if band_hz is not None else (f0_hz, f0_hz)
    z0 = _check_load(_interp_complex(f, z, f0_hz))
    q = pi_q if pi_q is not None else max(DEFAULT_PI_Q, PI_Q_OVER_MINIMUM * minimum_pi_q(z0, r0_ohm))
    networks: list[tuple[str, tuple[Part, ...]]] = [("direct", ())]
    networks += [(f"L {m.topology}", m.parts) for m in l_networks(z0, f0_hz, r0_ohm)]
    networks += [(f"pi Q {m.q_loaded:.3g}", m.parts) for m in pi_networks(z0, f0_hz, q, r0_ohm)]
    in_band = (f >= lo) & (f <= hi)
    candidates = []
    not_offered = []
    for label, ideal in networks:
        snapped = snap_parts(ideal, series, package)
        outside = [p for p in snapped if not chip.in_range(pkg, p.kind, p.value, max(hi, f0_hz))]
        if outside:
            not_offered.append(f"{label}: {', '.join(_why_not(p, pkg) for p in outside)}")
            continue
        s11 = network_s11(f, snapped, z, r0_ohm)
        loss = network_loss_db(f, snapped, z)
        at_f0 = float(_db(np.array([_interp_complex(f, s11, f0_hz)]))[0])
        worst = float(np.max(_db(s11[in_band]))) if np.any(in_band) else at_f0
        loss_f0 = float(np.interp(f0_hz, f, loss))
        worst_loss = float(np.max(loss[in_band])) if np.any(in_band) else loss_f0
        candidates.append(MatchCandidate(label, ideal, snapped, s11, at_f0, max(worst, at_f0), loss_f0, max(worst_loss, loss_f0)))
    if candidates[0].worst_s11_db_in_band <= GOOD_MATCH_DB:
        chosen = 0  # already matched: no network
    else:
        best = min(candidates, key=lambda c: c.worst_s11_db_in_band)
        chosen = min(
            (i for i, c in enumerate(candidates) if c.worst_s11_db_in_band <= best.worst_s11_db_in_band + EQUAL_WORST_DB),
            key=lambda i: (len(candidates[i].parts), candidates[i].worst_s11_db_in_band),
        )
    return MatchPlan(float(f0_hz), z0, (float(lo), float(hi)), series, f, z, tuple(candidates), chosen, package, tuple(not_offered))
