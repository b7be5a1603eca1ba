"""Numbers for people: fixed decimals, no negative zero, no false depth in dB."""

from __future__ import annotations

#: |S11| deeper than this is shown as "below" it: no model or fixture resolves a deeper match
#: (common practice, no source).
S11_FLOOR_DB = -40.0


def fixed(value: float, decimals: int, *, sign: bool = False) -> str:
    """``value`` with ``decimals`` decimals; a value that rounds to zero prints as zero, never
    "-0.00"; ``sign`` adds "+" to positive values."""
    rounded = round(float(value), decimals)
    if rounded == 0:
        rounded = 0.0  # drops the sign of -0.0
    return f"{rounded:+.{decimals}f}" if sign else f"{rounded:.{decimals}f}"


def s11_db(value: float) -> str:
    """|S11| in dB to 0.1 dB, or "below -40 dB" for a deeper match."""
    return f"below {S11_FLOOR_DB:.0f} dB" if value < S11_FLOOR_DB else f"{fixed(value, 1)} dB"


def impedance_ohm(z: complex, decimals: int = 1) -> str:
    """``R +/- jX ohm`` with ``decimals`` decimals on each part (no negative zero)."""
    return f"{fixed(z.real, decimals)} {'-' if round(z.imag, decimals) < 0 else '+'} j{fixed(abs(z.imag), decimals)} ohm"
