"""Benchmark: resonance of the transmission-line IFA model for a 20-segment meandered arm, with
the arm-line constants memoised (footgen.physics.tline_ifa.line_constants) against the same call
with the memo cleared before every call (the line constants recomputed, as before the cache).

Each timing is the best of REPEATS batches (the machine is shared).  Invented demo geometry.

Usage: python benchmarks/tline_speed.py   (last line: cached_ms=<ms> uncached_ms=<ms> ratio=<x>)
"""

from __future__ import annotations

import time

from footgen.physics import tline_ifa as t
from footgen.physics.ifa import GroundPlane, Laminate, PrintedIfa

MM = 1e-3
SEGMENTS = 20
CALLS = 20
REPEATS = 5


def meander_ifa(segments: int = SEGMENTS) -> PrintedIfa:
    """An invented meandered IFA: a 6 mm first run, then folds 4 mm tall at a 2.6 mm pitch."""
    path = [(0.0, 4 * MM), (6 * MM, 4 * MM)]
    x = 6 * MM
    while len(path) - 1 < segments:
        y = 8 * MM if path[-1][1] == 4 * MM else 4 * MM
        path.append((x, y))
        x += 2.6 * MM
        path.append((x, y))
    return PrintedIfa(
        arm_path_m=tuple(path[: segments + 1]),
        feed_x_m=2 * MM,
        short_x_m=0.0,
        trace_width_m=0.8 * MM,
        short_width_m=0.8 * MM,
        port_gap_m=0.5 * MM,
        ground=GroundPlane(-0.02, 0.08, 0.04),
        laminate=Laminate(4.4, 1.6e-3, 0.02),
    )


def _best_ms(call) -> float:
    best = float("inf")
    for _ in range(REPEATS):
        start = time.perf_counter()
        for _ in range(CALLS):
            call()
        best = min(best, (time.perf_counter() - start) / CALLS)
    return best * 1e3


def main() -> None:
    ifa = meander_ifa()
    t.resonance_tline_ifa_hz(ifa)  # warm the memo

    def uncached() -> None:
        t.line_constants.cache_clear()
        t.resonance_tline_ifa_hz(ifa)

    cached_ms = _best_ms(lambda: t.resonance_tline_ifa_hz(ifa))
    uncached_ms = _best_ms(uncached)
    print(f"{SEGMENTS}-segment arm, resonance_tline_ifa_hz per call")
    print(f"cached_ms={cached_ms:.3f} uncached_ms={uncached_ms:.3f} ratio={uncached_ms / cached_ms:.2f}")


if __name__ == "__main__":
    main()
