"""Numbers printed for people: no negative zero, no false depth in dB."""

from __future__ import annotations

import pytest

from footgen.numfmt import S11_FLOOR_DB, fixed, s11_db


@pytest.mark.parametrize(
    "value, decimals, sign, text",
    [(-0.001, 2, True, "+0.00"), (-0.0, 2, False, "0.00"), (-0.004, 2, False, "0.00"), (-0.006, 2, False, "-0.01"),
     (1.25, 1, True, "+1.2"), (-3.14159, 3, True, "-3.142"), (0.0, 0, False, "0")],
)
def test_fixed_never_prints_negative_zero(value: float, decimals: int, sign: bool, text: str) -> None:
    assert fixed(value, decimals, sign=sign) == text


def test_deep_s11_is_shown_as_below_the_floor() -> None:
    assert s11_db(-87.6) == f"below {S11_FLOOR_DB:.0f} dB"
    assert s11_db(-12.34) == "-12.3 dB"
    assert s11_db(-0.01) == "0.0 dB"
