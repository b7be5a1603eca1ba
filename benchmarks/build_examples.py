"""Wall time of `footgen build` (a fresh process each, start-up included) for every bundled
example, against the start-up alone (`footgen --version`) measured in the same run.

    python benchmarks/build_examples.py

Last line: `build_one_s=<first example> build_all_s=<all examples> startup_s=<--version>`.
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((ROOT / "examples").glob("*.json"))


def _timed(args: list[str]) -> float:
    start = time.perf_counter()
    subprocess.run([sys.executable, "-m", "footgen", *args], check=True, capture_output=True)
    return time.perf_counter() - start


def main() -> None:
    startup = min(_timed(["--version"]) for _ in range(3))
    times = {}
    with tempfile.TemporaryDirectory() as tmp:
        for spec in EXAMPLES:
            times[spec.stem] = _timed(["build", str(spec), "-o", str(Path(tmp) / spec.stem)])
            print(f"{spec.stem:28s} {times[spec.stem]:7.2f} s  ({times[spec.stem] / startup:5.1f} x start-up)", flush=True)
    total = sum(times.values())
    first = times[EXAMPLES[0].stem]
    print(f"start-up (footgen --version): {startup:.2f} s; all {len(times)} examples: {total:.2f} s")
    print(f"build_one_s={first:.2f} build_all_s={total:.2f} startup_s={startup:.2f}")


if __name__ == "__main__":
    main()
