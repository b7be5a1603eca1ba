"""Preferred component values of the E12 and E24 series and snapping to them.

Source: IEC 60063:2015, "Preferred number series for resistors and capacitors", the published
lists of the E12 and E24 series (two significant figures per decade; values recalled from
memory of the standard's table, and checked in tests against the geometric series they round).
"""

from __future__ import annotations

import math

from footgen.errors import SpecError

# Mantissas times ten (two significant figures), one decade from 1.0 to below 10.
E12_MANTISSAS_X10: tuple[int, ...] = (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82)
E24_MANTISSAS_X10: tuple[int, ...] = (
    10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
    33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
)

SERIES: dict[str, tuple[int, ...]] = {"E12": E12_MANTISSAS_X10, "E24": E24_MANTISSAS_X10}


def _mantissas(series: str) -> tuple[int, ...]:
    try:
        return SERIES[series]
    except KeyError:
        raise SpecError("series", series, f"use one of {', '.join(sorted(SERIES))}") from None


def series_value(mantissa_x10: int, decade: int) -> float:
    """The series value ``mantissa_x10 / 10 * 10**decade`` as the double nearest the decimal."""
    return float(f"{mantissa_x10}e{decade - 1}")


def half_step_ratio(series: str) -> float:
    """Largest ratio by which any value can lie from its nearest series value.

    It is the square root of the widest ratio between neighbouring values (including the wrap
    from the last value of a decade to 10 of the next), because snapping is nearest on a log scale.
    """
    mantissas = _mantissas(series)
    steps = [b / a for a, b in zip(mantissas, mantissas[1:] + (100,))]
    return math.sqrt(max(steps))


def snap(value: float, series: str = "E24") -> float:
    """The value of ``series`` nearest to ``value`` on a log scale, across decades.

    ``value`` must be positive and finite (any unit: ohm, farad, henry).  A tie goes to the lower
    value.
    """
    try:
        value = float(value)
    except (TypeError, ValueError):
        raise SpecError("value", value, "snap needs a positive finite number") from None
    if not (math.isfinite(value) and value > 0):
        raise SpecError("value", value, "snap needs a positive finite component value")
    mantissas = _mantissas(series)
    log_value = math.log10(value)
    decade = math.floor(log_value)
    best = None
    best_distance = math.inf
    for candidate_decade in (decade - 1, decade, decade + 1):
        for mantissa in mantissas:
            candidate = series_value(mantissa, candidate_decade)
            distance = abs(math.log10(candidate) - log_value)
            if distance < best_distance:
                best, best_distance = candidate, distance
    assert best is not None
    return best


def in_series(value: float, series: str, rel_tol: float = 1e-12) -> bool:
    """Whether ``value`` is (to ``rel_tol``) a member of ``series`` in some decade."""
    if not (math.isfinite(value) and value > 0):
        return False
    decade = math.floor(math.log10(value))
    return any(
        math.isclose(value, series_value(m, d), rel_tol=rel_tol)
        for d in (decade - 1, decade, decade + 1)
        for m in _mantissas(series)
    )
