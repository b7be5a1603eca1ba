"""Benchmark: resonance of the transmission-line IFA model for a 20-segment meandered arm, with
the arm-line constants memoised (footgen.physics.tline_ifa.line_constants) against two
references measured in the same run: the same call with the memo cleared before every call, and
the way the resonance used to be found (the line constants recomputed at every frequency the
search evaluates: the same grid and Brent search on the public ``zin_tline_ifa``).

Each timing is the best of REPEATS batches (the machine is shared).  Invented demo geometry.

Usage: python benchmarks/tline_speed.py
(last line: cached_ms=<ms> uncached_ms=<ms> per_frequency_ms=<ms> ratio=<per_frequency/cached>)
"""

from __future__ import annotations

import time
from dataclasses import replace

import numpy as np
from scipy import optimize

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


def per_frequency_resonance_hz(ifa: PrintedIfa) -> float:
    """The resonance search with the line constants recomputed at every evaluation."""
    lossless = replace(t.DEFAULT_OPTIONS, radiation_resistance_ohm=0.0, dielectric_loss=False)

    def susceptance(f: np.ndarray) -> np.ndarray:
        t.line_constants.cache_clear()
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.imag(1.0 / t.zin_tline_ifa(f, ifa, lossless))

    f0 = t.quarter_wave_estimate_hz(ifa)
    grid = np.linspace(t.RESONANCE_SEARCH_LOW * f0, t.RESONANCE_SEARCH_HIGH * f0,
                       t.RESONANCE_SEARCH_POINTS)
    b = susceptance(grid)
    rising = np.nonzero((b[:-1] < 0.0) & (b[1:] >= 0.0))[0]
    i = int(rising[np.argmin(np.abs(grid[rising] - f0))])
    return optimize.brentq(lambda f: float(susceptance(np.array([f]))[0]), grid[i], grid[i + 1],
                           rtol=t.ROOT_RTOL)


def main() -> None:
    ifa = meander_ifa()
    t.resonance_tline_ifa_hz(ifa)  # warm the memo

    def uncached() -> None:
        t.line_constants.cache_clear()
        t.resonance_tline_ifa_hz(ifa)

    cached_ms = _best_ms(lambda: t.resonance_tline_ifa_hz(ifa))
    uncached_ms = _best_ms(uncached)
    per_frequency_ms = _best_ms(lambda: per_frequency_resonance_hz(ifa))
    print(f"{SEGMENTS}-segment arm, resonance per call (best of {REPEATS} x {CALLS})")
    print(
        f"cached_ms={cached_ms:.3f} uncached_ms={uncached_ms:.3f} "
        f"per_frequency_ms={per_frequency_ms:.3f} ratio={per_frequency_ms / cached_ms:.1f}"
    )


if __name__ == "__main__":
    main()
