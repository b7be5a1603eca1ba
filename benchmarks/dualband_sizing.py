"""Benchmark: the dual-band sizing (both arms and the feed tap with the MoM of the whole antenna)
against the single-band sizing of the same main band, both measured in this run.

Each sizing runs in a fresh process with the sizing cache off (CPU and wall time).  The
reference is the dual-band template with its ``second_arm`` section removed: the same main arm,
board and fab, sized for one band by the single-band path.

Usage: python benchmarks/dualband_sizing.py
Last line: dual_cpu_s=<s> dual_wall_s=<s> single_cpu_s=<s> single_wall_s=<s> cpu_ratio=<dual/single>
           solves=<model solves of the dual sizing> load_avg=<1-min load average>
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
TEMPLATE = ROOT / "templates" / "ism-2g4-wifi5-dual.json"

SNIPPET = """
import sys, time
from footgen.spec import load_spec
from footgen.sizing import size
spec = load_spec(sys.argv[1])
t0, w0 = time.process_time(), time.perf_counter()
result = size(spec)
print(time.process_time() - t0, time.perf_counter() - w0)
print(" | ".join(result.notes))
"""


def _size(path: Path) -> tuple[float, float, str]:
    env = {**os.environ, "OPENBLAS_NUM_THREADS": "1", "FOOTGEN_CACHE_DIR": ""}
    out = subprocess.run([sys.executable, "-c", SNIPPET, str(path)], capture_output=True, text=True, check=True, env=env)
    first, notes = out.stdout.splitlines()[:2]
    cpu, wall = (float(v) for v in first.split())
    return cpu, wall, notes


def main() -> int:
    with tempfile.TemporaryDirectory() as tmp:
        single = Path(tmp) / "single.json"
        data = json.loads(TEMPLATE.read_text("utf-8"))
        data.pop("second_arm")
        single.write_text(json.dumps(data), "utf-8")
        s_cpu, s_wall, _ = _size(single)
        d_cpu, d_wall, notes = _size(TEMPLATE)
    solves = re.search(r"\((\d+) model solves\)", notes)
    print(f"single-band sizing of the main band: {s_cpu:.1f} s CPU, {s_wall:.1f} s wall")
    print(f"dual-band sizing: {d_cpu:.1f} s CPU, {d_wall:.1f} s wall; {notes}")
    print(f"dual_cpu_s={d_cpu:.2f} dual_wall_s={d_wall:.2f} single_cpu_s={s_cpu:.2f} single_wall_s={s_wall:.2f} "
          f"cpu_ratio={d_cpu / s_cpu:.2f} solves={solves.group(1) if solves else 'n/a'} load_avg={os.getloadavg()[0]:.1f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
