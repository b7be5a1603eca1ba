"""Named licence-free bands.  Edges in Hz, each with the regulation it comes from.

The regulation texts were not re-read for this table: the edges are quoted from memory of the
cited documents and are the commonly published values.  Which band a product may use, at what
power and duty cycle, is set by the local regulator: check the current text for your market.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Band:
    key: str
    low_hz: float
    high_hz: float
    source: str

    @property
    def center_hz(self) -> float:
        return 0.5 * (self.low_hz + self.high_hz)

    @property
    def fractional_bandwidth(self) -> float:
        return (self.high_hz - self.low_hz) / self.center_hz


BANDS: dict[str, Band] = {
    band.key: band
    for band in (
        Band(
            "ism_2g4",
            2400.0e6,
            2483.5e6,
            "FCC 47 CFR 15.247(a) and ETSI EN 300 328 (2400-2483.5 MHz); ITU RR 5.150 ISM (from memory)",
        ),
        Band(
            "srd_868",
            863.0e6,
            870.0e6,
            "CEPT ERC Recommendation 70-03, Annex 1, non-specific SRD bands 863-870 MHz (from memory)",
        ),
        Band(
            "ism_915",
            902.0e6,
            928.0e6,
            "FCC 47 CFR 15.247(a) and ITU RR 5.150, Region 2 ISM 902-928 MHz (from memory)",
        ),
        Band(
            "ism_433",
            433.05e6,
            434.79e6,
            "ITU RR 5.138 (Region 1 ISM) and CEPT ERC Recommendation 70-03, Annex 1 (from memory)",
        ),
    )
}
