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
        Band(
            "wifi_5g_low",
            5150.0e6,
            5350.0e6,
            "FCC 47 CFR 15.407 U-NII-1 (5150-5250 MHz) and U-NII-2A (5250-5350 MHz); ETSI EN 301 893, "
            "5150-5350 MHz sub-band (from memory)",
        ),
        Band(
            "wifi_5g_mid",
            5470.0e6,
            5725.0e6,
            "FCC 47 CFR 15.407 U-NII-2C (5470-5725 MHz); ETSI EN 301 893, 5470-5725 MHz sub-band (from memory)",
        ),
        Band(
            "wifi_5g_high",
            5725.0e6,
            5850.0e6,
            "FCC 47 CFR 15.407 U-NII-3 (5725-5850 MHz; from memory); outside ETSI EN 301 893's sub-bands, "
            "which end at 5725 MHz (from memory)",
        ),
        Band(
            "wifi_5g",
            5150.0e6,
            5850.0e6,
            "FCC 47 CFR 15.407, U-NII-1 lower edge (5150 MHz) to U-NII-3 upper edge (5850 MHz), "
            "ETSI EN 301 893 covering 5150-5350 and 5470-5725 MHz of it (from memory)",
        ),
        Band(
            "wifi_6g",
            5925.0e6,
            7125.0e6,
            "FCC 47 CFR 15.407 U-NII-5 to U-NII-8 (5925-7125 MHz; from memory)",
        ),
        Band(
            "wifi_6g_eu",
            5945.0e6,
            6425.0e6,
            "ETSI EN 303 687 (5945-6425 MHz; from memory)",
        ),
    )
}
