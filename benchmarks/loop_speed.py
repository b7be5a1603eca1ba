"""Speed of the README's measure-retune loop, against a reference implementation in the same run.

Runs, in a scratch folder with a copy of ``examples/``, the Quick start build of the soil-probe
example and then the loop block of README.md command by command, once with this checkout and
once with a reference commit (default: the main branch, extracted with ``git archive``; its own
README's loop block), each with a fresh result cache, and prints every command's wall time and
the ratio reference / this checkout.  Targets on an idle 2-core machine: retune <= 10 s,
report <= 10 s, match <= 2 s.

    OPENBLAS_NUM_THREADS=1 python benchmarks/loop_speed.py [--reference REV] [--skip-reference]
"""

from __future__ import annotations

import argparse
import os
import re
import shlex
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TARGETS_S = {"retune": 10.0, "report": 10.0, "match": 2.0}
QUICK_START = "python3 -m footgen build examples/soil-probe-2g4.json -o build/"


def loop_commands(readme: str) -> list[str]:
    section = readme.split("## After the first prototype", 1)[1]
    block = re.search(r"```\n(.*?)```", section, re.S)
    assert block, "README has no loop block"
    return [QUICK_START] + [line for line in block.group(1).splitlines() if line.strip()]


def run_loop(source: Path, readme: str, scratch: Path) -> list[tuple[str, float]]:
    """Each command's wall time (s), footgen imported from ``source``."""
    work = scratch / "work"
    shutil.copytree(source / "examples", work / "examples", ignore=shutil.ignore_patterns("wren-probe-board"))
    env = dict(os.environ, PYTHONPATH=str(source), FOOTGEN_CACHE_DIR=str(scratch / "cache"), OPENBLAS_NUM_THREADS="1",
               PYTHONDONTWRITEBYTECODE="1")
    times = []
    for command in loop_commands(readme):
        args = shlex.split(command)[3:]
        start = time.perf_counter()
        proc = subprocess.run([sys.executable, "-m", "footgen", *args], cwd=work, env=env, capture_output=True, text=True)
        elapsed = time.perf_counter() - start
        if proc.returncode != 0:
            raise SystemExit(f"{command} failed in {source}: {proc.stderr.strip()[-500:]}")
        times.append((args[0], elapsed))
    return times


def extract(rev: str, into: Path) -> Path:
    archive = subprocess.run(["git", "-C", str(ROOT), "archive", rev], capture_output=True, check=True).stdout
    into.mkdir(parents=True)
    subprocess.run(["tar", "-x", "-C", str(into)], input=archive, check=True)
    return into


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--reference", default="main", help="git revision of the reference implementation")
    parser.add_argument("--skip-reference", action="store_true", help="time this checkout only")
    opts = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        tmp_path = Path(tmp)
        ours = run_loop(ROOT, (ROOT / "README.md").read_text("utf-8"), tmp_path / "ours")
        theirs = None
        if not opts.skip_reference:
            ref = extract(opts.reference, tmp_path / "ref-src")
            theirs = run_loop(ref, (ref / "README.md").read_text("utf-8"), tmp_path / "ref")
    print(f"{'command':<10} {'this (s)':>9} {'target':>7}" + ("  reference (s)  ratio" if theirs else ""))
    ref_times = {}
    for name, t in theirs or []:
        ref_times.setdefault(name, t)  # the first run of each command (the loop runs each once)
    for name, t in ours:
        target = TARGETS_S.get(name)
        line = f"{name:<10} {t:9.2f} {('<= %g' % target) if target else '':>7}"
        if theirs and name in ref_times:
            line += f"  {ref_times[name]:13.2f}  {ref_times[name] / t:5.1f}x"
        print(line)
    print(f"load average at the end: {os.getloadavg()[0]:.2f} (targets hold on an idle machine)")


if __name__ == "__main__":
    main()
