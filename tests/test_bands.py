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
]
#: Quarter wavelengths at the band centres, c = 299 792 458 m/s exactly (SI Brochure, 9th ed.):
#: lambda/4 = c / (4 f), worked by hand to 0.01 mm.
QUARTER_WAVE_MM = {"ism_2g4": 30.69, "srd_868": 86.50, "ism_915": 81.91, "ism_433": 172.72}
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
