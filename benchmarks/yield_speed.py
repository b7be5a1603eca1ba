"""Benchmark: ``footgen yield`` on 1,000 boards of a straight 2.4 GHz design with the surrogate,
against the full-solve time per board measured in the same run.

Steps (the solve cache in a fresh temporary folder, so every solve runs; the nominal sizing is
done first and is not part of the timings, as the yield command takes it from the sizing cache):

1. ``surrogate_1000_s``: a whole :func:`footgen.yieldmc.run.run_yield` of 1,000 boards with the
   default tolerances and the default number of check solves, on WORKERS local processes
   (sensitivity solves, check solves, surrogate evaluation); target <= 60 s on a 2-core machine;
2. ``full_s_per_board``: FULL_BOARDS other boards (another seed) solved in full on the same
   workers, per board: what the brute-force Monte Carlo costs per board; the reference;
   (also printed: the surrogate's own evaluation of the boards, after the full solves);
3. ``speedup`` = 1000 x full_s_per_board / surrogate_1000_s (how much faster the surrogate run
   is than solving the 1,000 boards in full would be).

Wall times depend on the other users of the machine: the load average and the CPU seconds of
the worker processes are printed beside them.  OPENBLAS_NUM_THREADS=1 recommended.

Usage: python benchmarks/yield_speed.py [SPEC]      (default: examples/soil-probe-2g4.json)
(last line: surrogate_1000_s=<s> full_s_per_board=<s> speedup=<x>)
"""

from __future__ import annotations

import os
import resource
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
WORKERS = 2
SAMPLES = 1000
FULL_BOARDS = 6
TARGET_S = 60.0


def _children_cpu_s() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def main(argv: list[str]) -> int:
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    os.environ["FOOTGEN_CACHE_DIR"] = tempfile.mkdtemp(prefix="footgen-yield-bench-")
    from footgen.prediction import copper_ifa, sized
    from footgen.spec import load_spec
    from footgen.yieldmc.executors import LocalRunner
    from footgen.yieldmc.run import EVAL_SOLVED_POINTS, run_yield, solve_task
    from footgen.yieldmc.tolerance import deviations, parameters, perturbed

    path = Path(argv[0]) if argv else ROOT / "examples" / "soil-probe-2g4.json"
    spec = load_spec(path)
    t0 = time.perf_counter()
    sized(spec)
    print(f"{path.name}: nominal sizing {time.perf_counter() - t0:.1f} s (not timed below)")

    marks: dict[str, float] = {}

    def progress(what: str, done: int, total: int) -> None:
        if done == total:
            marks[what] = time.perf_counter()

    def timed(**kw):
        cpu0, t = _children_cpu_s(), time.perf_counter()
        with LocalRunner(WORKERS) as runner:
            report = run_yield(spec, runner=runner, progress=progress, **kw)
        return report, time.perf_counter() - t, _children_cpu_s() - cpu0

    sur, sur_s, sur_cpu = timed(samples=SAMPLES, seed=1)
    stage = marks["surrogate samples, nominal design"] - marks["full solves"]
    print(f"of which the surrogate's evaluation of the {SAMPLES} boards (after the full solves): {stage:.1f} s wall")
    s = sur.as_dict()
    check = s["surrogate_check"]
    print(f"surrogate: {SAMPLES} boards in {sur_s:.1f} s wall ({sur_cpu:.1f} s CPU in the workers), load {os.getloadavg()[0]:.1f}; "
          f"yield_10db {s['yield_10db']:.3f} +- {s['yield_10db_model_error']:.3f} (model) +- {s['sampling_error_10db']:.3f} (sampling); "
          f"check on {check['samples']} boards: worst in-band S11 within {check['worst_s11_max_abs_db']:.3f} dB, "
          f"resonance within {check['resonance_max_abs_mhz']:.2f} MHz")
    # the reference: boards of another seed (not solved above) solved in full on the same workers
    ifa = copper_ifa(spec, sized(spec))
    params = parameters(spec.raw)
    boards = [(perturbed(ifa, params, row), sur.grids.eval_hz, "mom", spec.raw, EVAL_SOLVED_POINTS) for row in deviations(params, 2, 0, FULL_BOARDS)]
    cpu0, t = _children_cpu_s(), time.perf_counter()
    with LocalRunner(WORKERS) as runner:
        runner.map(solve_task, boards)
    full_s, full_cpu = time.perf_counter() - t, _children_cpu_s() - cpu0
    per_board = full_s / FULL_BOARDS
    print(f"full solves: {FULL_BOARDS} boards in {full_s:.1f} s wall ({full_cpu:.1f} s CPU), {per_board:.2f} s per board, "
          f"load {os.getloadavg()[0]:.1f}")
    print(f"target: {SAMPLES} boards <= {TARGET_S:.0f} s on {WORKERS} cores: {'met' if sur_s <= TARGET_S else 'not met'}")
    print(f"surrogate_1000_s={sur_s:.1f} full_s_per_board={per_board:.2f} speedup={SAMPLES * per_board / sur_s:.1f}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
