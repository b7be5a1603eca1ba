"""Benchmark: how fast the everyday commands are, each in a fresh process (start-up included).

Measured in one run, against references measured in the same run:
* start-up references: the bare interpreter (``python -c pass``) and ``footgen --version``;
* a machine-speed reference: CPU time of one double-precision complex LU solve of 800 unknowns;
* ``validate``, ``check`` and ``build`` of a spec with its geometry given explicitly (no sizing);
* ``build`` of 100 explicit specs in one process;
* per bundled example: the sizing's CPU time in-process (sizing cache off), ``predict`` with an
  empty cache (sizing included), then ``build`` with a cold cache, and ``check``, ``draw`` and
  ``predict`` reusing that sizing (wall, CPU, peak RSS).

Every figure is printed beside its target (issue 13) and the run's references.

Usage: python benchmarks/cli_speed.py [--quick]   (--quick: first example only)
Last line: build_explicit_s=<s> check_s=<s> validate_s=<s> build100_s=<s> size_straight_cpu_s=<s>
           size_meander_cpu_s=<s> predict_max_s=<s> predict_max_mb=<MB> startup_s=<s> lu800_ms=<ms>
           predict_cold_max_s=<s> predict_cold_max_cpu_s=<s> predict_cold_max_mb=<MB> load_avg=<1-min load average>
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((ROOT / "examples").glob("*.json"))
REPEATS = 3
MANY_SPECS = 100
#: Targets of issue 13 (wall s unless named CPU; MB peak resident memory).
TARGETS = {"build_explicit": 0.3, "check": 0.2, "validate": 0.2, "build100": 10.0, "size_straight_cpu": 1.0,
           "size_meander_cpu": 2.0, "predict": 1.5, "predict_mb": 300.0}
#: Explicit geometry of the demo spec (invented numbers that pass the standard fab profile).
EXPLICIT_ARM = {"length_mm": 17.0, "height_mm": 5.0, "feed_short_spacing_mm": 2.5}

SIZE_SNIPPET = """
import sys, time
from footgen.spec import load_spec
from footgen.sizing import size
spec = load_spec(sys.argv[1])
t0 = time.process_time()
size(spec)
print(time.process_time() - t0)
"""


def _env(cache_dir: str) -> dict[str, str]:
    env = dict(os.environ, FOOTGEN_CACHE_DIR=cache_dir, PYTHONDONTWRITEBYTECODE="1")
    env.setdefault("OPENBLAS_NUM_THREADS", "1")
    return env


def run(args: list[str], env: dict[str, str]) -> tuple[float, float, float, str]:
    """(wall s, CPU s, peak RSS MB, stdout) of one child process (os.wait4 gives its own usage)."""
    with tempfile.TemporaryFile("w+") as out, tempfile.TemporaryFile("w+") as err:
        start = time.perf_counter()
        proc = subprocess.Popen(args, env=env, stdout=out, stderr=err, text=True)
        _, status, usage = os.wait4(proc.pid, 0)
        wall = time.perf_counter() - start
        proc.returncode = os.waitstatus_to_exitcode(status)
        out.seek(0)
        err.seek(0)
        if proc.returncode not in (0, 1):
            raise RuntimeError(f"{' '.join(args)} failed:\n{err.read()}")
        return wall, usage.ru_utime + usage.ru_stime, usage.ru_maxrss / 1024.0, out.read()


def footgen(*args: str, env: dict[str, str]) -> tuple[float, float, float, str]:
    return run([sys.executable, "-m", "footgen", *args], env)


def best(fn, repeats: int = REPEATS):
    results = [fn() for _ in range(repeats)]
    return min(results, key=lambda r: r[0])


def lu800_cpu_s() -> float:
    snippet = ("import time, numpy as np\nr = np.random.default_rng(0)\n"
               "a = r.standard_normal((800, 800)) + 1j * r.standard_normal((800, 800)); b = a[:, 0].copy()\n"
               "t = time.process_time(); np.linalg.solve(a, b); print(time.process_time() - t)")
    return min(float(run([sys.executable, "-c", snippet], _env(""))[3]) for _ in range(REPEATS))


def explicit_spec(path: Path, name: str, length_mm: float) -> Path:
    data = json.loads((ROOT / "examples" / "soil-probe-2g4.json").read_text())
    data["name"] = name
    data["arm"] = dict(EXPLICIT_ARM, length_mm=length_mm)
    path.write_text(json.dumps(data, indent=1))
    return path


def main() -> int:
    quick = "--quick" in sys.argv
    lines: dict[str, float] = {}
    with tempfile.TemporaryDirectory() as tmp_name:
        tmp = Path(tmp_name)
        env = _env(str(tmp / "cache"))
        python_s = best(lambda: run([sys.executable, "-c", "pass"], env))[0]
        startup = best(lambda: footgen("--version", env=env))[0]
        lu_ms = lu800_cpu_s() * 1e3
        print(f"# references: python -c pass {python_s:.3f} s; footgen --version {startup:.3f} s; "
              f"complex LU 800 unknowns {lu_ms:.1f} ms CPU; load average {os.getloadavg()[0]:.2f}")
        spec = explicit_spec(tmp / "explicit.json", "explicit_demo", EXPLICIT_ARM["length_mm"])
        for what, args in (("validate", ["validate", str(spec)]), ("check", ["check", str(spec)]),
                           ("build_explicit", ["build", str(spec), "-o", str(tmp / "one"), "--force"])):
            wall, cpu, rss, _ = best(lambda: footgen(*args, env=env))
            lines[what] = wall
            print(f"{what:16s} {wall:6.3f} s wall (target {TARGETS[what]} s; {wall / startup:4.2f} x --version) {cpu:6.3f} s CPU {rss:6.0f} MB")
        many = [explicit_spec(tmp / f"s{i:03d}.json", f"explicit_{i:03d}", 15.0 + 0.03 * i) for i in range(MANY_SPECS)]
        wall, cpu, rss, _ = footgen("build", *map(str, many), "-o", str(tmp / "many"), env=env)
        lines["build100"] = wall
        print(f"build {MANY_SPECS} specs   {wall:6.3f} s wall (target {TARGETS['build100']} s; {wall / startup:4.1f} x --version) {cpu:6.3f} s CPU {rss:6.0f} MB")
        size_cpu: dict[str, list[float]] = {"straight": [], "meandered": []}
        predict, cold = [], []
        for example in EXAMPLES[:1] if quick else EXAMPLES:
            kind = json.loads(example.read_text())["style"]["kind"]
            cpu_size = float(run([sys.executable, "-c", SIZE_SNIPPET, str(example)], _env(""))[3])
            size_cpu[kind].append(cpu_size)
            cold.append(footgen("predict", str(example), env=_env(str(tmp / f"cold-{example.stem}"))))
            cache = _env(str(tmp / f"cache-{example.stem}"))
            out = tmp / example.stem
            b = footgen("build", str(example), "-o", str(out), env=cache)
            c = footgen("check", str(example), env=cache)
            d = footgen("draw", str(example), "-o", str(out / "d.svg"), env=cache)
            p = best(lambda: footgen("predict", str(example), env=cache), 2)
            predict.append(p)
            print(f"{example.stem:22s} {kind:9s} sizing {cpu_size:5.2f} s CPU ({cpu_size * 1e3 / lu_ms:5.0f} x LU800); "
                  f"build {b[0]:5.2f} s ({b[1]:5.2f} CPU); check {c[0]:5.2f} s; draw {d[0]:5.2f} s; "
                  f"predict {p[0]:5.2f} s wall {p[1]:5.2f} s CPU {p[2]:4.0f} MB; predict with an empty cache "
                  f"{cold[-1][0]:5.2f} s wall {cold[-1][1]:5.2f} s CPU {cold[-1][2]:4.0f} MB", flush=True)
    straight = max(size_cpu["straight"], default=float("nan"))
    meander = max(size_cpu["meandered"], default=float("nan"))
    print(f"# targets: sizing CPU straight <= {TARGETS['size_straight_cpu']} s (max {straight:.2f}), meander <= "
          f"{TARGETS['size_meander_cpu']} s (max {meander:.2f}); predict with an empty cache <= {TARGETS['predict']} s wall "
          f"(max {max(p[0] for p in cold):.2f}, CPU max {max(p[1] for p in cold):.2f}) and <= {TARGETS['predict_mb']:.0f} MB "
          f"(max {max(p[2] for p in cold):.0f}); load average {os.getloadavg()[0]:.2f}")
    print(f"build_explicit_s={lines['build_explicit']:.3f} check_s={lines['check']:.3f} validate_s={lines['validate']:.3f} "
          f"build100_s={lines['build100']:.2f} size_straight_cpu_s={straight:.2f} size_meander_cpu_s={meander:.2f} "
          f"predict_max_s={max(p[0] for p in predict):.2f} predict_max_mb={max(p[2] for p in predict):.0f} "
          f"startup_s={startup:.3f} lu800_ms={lu_ms:.1f} predict_cold_max_s={max(p[0] for p in cold):.2f} "
          f"predict_cold_max_cpu_s={max(p[1] for p in cold):.2f} predict_cold_max_mb={max(p[2] for p in cold):.0f} "
          f"load_avg={os.getloadavg()[0]:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
