"""Band presets against the regulations they cite and quarter waves against c/(4 f)."""

from __future__ import annotations

import pytest

from footgen.bands import BANDS
from footgen.constants import C0_M_PER_S

#: (key, low MHz, high MHz) as published in the cited regulations (from memory):
#: FCC 47 CFR 15.247(a) / ETSI EN 300 328 (2400-2483.5); CEPT ERC/REC 70-03 Annex 1 (863-870);
#: FCC 47 CFR 15.247(a), ITU RR 5.150 Region 2 (902-928); ITU RR 5.138 (433.05-434.79).
PUBLISHED_EDGES_MHZ = [
    ("ism_2g4", 2400.0, 2483.5),
    ("srd_868", 863.0, 870.0),
    ("ism_915", 902.0, 928.0),
    ("ism_433", 433.05, 434.79),
    # FCC 47 CFR 15.407 U-NII-1 + U-NII-2A; ETSI EN 301 893 5150-5350 MHz (from memory)
    ("wifi_5g_low", 5150.0, 5350.0),
    # FCC 47 CFR 15.407 U-NII-2C; ETSI EN 301 893 5470-5725 MHz (from memory)
    ("wifi_5g_mid", 5470.0, 5725.0),
    # FCC 47 CFR 15.407 U-NII-3 (from memory)
    ("wifi_5g_high", 5725.0, 5850.0),
    # FCC 47 CFR 15.407 U-NII-1 lower edge to U-NII-3 upper edge (from memory)
    ("wifi_5g", 5150.0, 5850.0),
    # FCC 47 CFR 15.407 U-NII-5 to U-NII-8 (from memory)
    ("wifi_6g", 5925.0, 7125.0),
    # ETSI EN 303 687 (from memory)
    ("wifi_6g_eu", 5945.0, 6425.0),
]
#: The regulation each preset must name in its source (the documents cited above).
CITED_REGULATIONS = {
    "wifi_5g_low": ("15.407", "EN 301 893"),
    "wifi_5g_mid": ("15.407", "EN 301 893"),
    "wifi_5g_high": ("15.407",),
    "wifi_5g": ("15.407", "EN 301 893"),
    "wifi_6g": ("15.407",),
    "wifi_6g_eu": ("EN 303 687",),
}
#: Quarter wavelengths at the band centres, c = 299 792 458 m/s exactly (SI Brochure, 9th ed.):
#: lambda/4 = c / (4 f), worked by hand to 0.01 mm.
QUARTER_WAVE_MM = {"ism_2g4": 30.69, "srd_868": 86.50, "ism_915": 81.91, "ism_433": 172.72,
                   "wifi_5g_low": 14.28, "wifi_5g_mid": 13.39, "wifi_5g_high": 12.95, "wifi_5g": 13.63,
                   "wifi_6g": 11.49, "wifi_6g_eu": 12.12}
QUARTER_WAVE_TOL_MM = 0.01


@pytest.mark.parametrize("key, low, high", PUBLISHED_EDGES_MHZ)
def test_band_edges_match_regulation(key: str, low: float, high: float) -> None:
    band = BANDS[key]
    assert band.low_hz == pytest.approx(low * 1e6, abs=1.0)
    assert band.high_hz == pytest.approx(high * 1e6, abs=1.0)
    assert band.source  # each preset names where its edges come from


def test_speed_of_light_is_the_si_value() -> None:
    assert C0_M_PER_S == 299_792_458.0  # exact by definition (SI Brochure, 9th ed., 2019)


@pytest.mark.parametrize("key", sorted(QUARTER_WAVE_MM))
def test_quarter_wave_of_band_centres(key: str) -> None:
    quarter_mm = C0_M_PER_S / (4.0 * BANDS[key].center_hz) * 1e3
    assert quarter_mm == pytest.approx(QUARTER_WAVE_MM[key], abs=QUARTER_WAVE_TOL_MM)
    assert set(BANDS) == set(QUARTER_WAVE_MM)


@pytest.mark.parametrize("key", sorted(CITED_REGULATIONS))
def test_wifi_presets_name_their_regulation(key: str) -> None:
    for document in CITED_REGULATIONS[key]:
        assert document in BANDS[key].source, (key, document)
    assert "from memory" in BANDS[key].source


def test_5ghz_span_covers_its_sub_bands() -> None:
    span = BANDS["wifi_5g"]
    for key in ("wifi_5g_low", "wifi_5g_mid", "wifi_5g_high"):
        assert span.low_hz <= BANDS[key].low_hz < BANDS[key].high_hz <= span.high_hz
    # the European 6 GHz band is the lower part of the US one (EN 303 687 vs 15.407, from memory)
    assert BANDS["wifi_6g"].low_hz < BANDS["wifi_6g_eu"].low_hz < BANDS["wifi_6g_eu"].high_hz < BANDS["wifi_6g"].high_hz
