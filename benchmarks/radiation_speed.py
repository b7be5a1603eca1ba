"""Benchmark: what the far field of one frequency (efficiency, directivity, peak realised gain at
the band centre) adds to a ``footgen predict`` of the same spec, measured in the same run.

For each example spec: ``predict_ms`` is a whole :func:`footgen.prediction.predict_spec` (sizing,
layout, MoM sweep, radiation summary at the band centre); ``radiation_ms`` is the radiation summary
alone (its own solver set-up, one fill and solve, the power budget and the peak search)
on the same antenna.  The ratio ``radiation_ms / (predict_ms - radiation_ms)`` is the cost the far
field adds to a predict without it (target <= 0.10).  Timings are the best of REPEATS (the machine
is shared); OPENBLAS_NUM_THREADS=1 recommended.

Usage: python benchmarks/radiation_speed.py [SPEC ...]
(last line: worst_ratio=<ratio>)
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

from footgen.build import run
from footgen.geometry.layout import generate_copper
from footgen.model import printed_ifa
from footgen.prediction import predict_spec
from footgen.radiation import mom_summary
from footgen.sizing import PREDICTION_HALF_SPAN
from footgen.spec import load_spec

ROOT = Path(__file__).resolve().parent.parent
REPEATS = 3
TARGET_RATIO = 0.10


def best_ms(fn) -> float:
    times = []
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return 1e3 * min(times)


def main(argv: list[str]) -> int:
    paths = [Path(p) for p in argv] or sorted((ROOT / "examples").glob("*.json"))
    worst = 0.0
    for path in paths:
        spec = load_spec(path)
        ifa = printed_ifa(spec, generate_copper(spec, run(spec).sizing))
        f0 = spec.target.center_hz
        f_max = (1 + PREDICTION_HALF_SPAN) * f0
        predict_ms = best_ms(lambda: predict_spec(spec))
        radiation_ms = best_ms(lambda: mom_summary(ifa, f0, f_max))
        ratio = radiation_ms / (predict_ms - radiation_ms)
        worst = max(worst, ratio)
        print(f"{path.name}: predict_ms={predict_ms:.0f} radiation_ms={radiation_ms:.0f} ratio={ratio:.3f}")
    print(f"target ratio <= {TARGET_RATIO}")
    print(f"worst_ratio={worst:.3f}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
