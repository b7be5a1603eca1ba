"""footgen yield on a Dask cluster gives the very numbers of the local run.

The test starts a `dask scheduler` and two `dask worker` processes on localhost (subprocesses,
stopped at the end), runs `footgen yield --scheduler` against them and the same command on local
processes, and compares the JSON summaries byte for byte.  The solve cache is off on both sides,
so every solve really runs where it was sent.
"""

from __future__ import annotations

import copy
import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import pytest

from conftest import ROOT, footgen_cmd, load_json, write_spec

#: Seconds to wait for the scheduler and both workers to come up.
STARTUP_S = 180
WORKERS = 2


def _dask_cli() -> list[str]:
    here = Path(sys.executable).parent / "dask"
    if here.exists():
        return [str(here)]
    found = shutil.which("dask")
    if found is None:
        pytest.fail("the dask command is missing: install footgen[test] (dask[distributed])")
    return [found]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _env(tmp_path: Path) -> dict[str, str]:
    env = dict(os.environ)
    env.update({"FOOTGEN_CACHE_DIR": "", "OPENBLAS_NUM_THREADS": "1", "PYTHONDONTWRITEBYTECODE": "1"})
    env.pop("FOOTGEN_SCHEDULER", None)
    return env


@pytest.fixture
def cluster(tmp_path: Path):
    """A scheduler and two single-threaded workers on localhost; yields the scheduler address."""
    port = _free_port()
    address = f"tcp://127.0.0.1:{port}"
    env = _env(tmp_path)
    procs: list[subprocess.Popen] = []
    logs: list[Path] = []

    def start(name: str, args: list[str]) -> None:
        log = tmp_path / f"{name}.log"
        logs.append(log)
        with log.open("w") as handle:
            procs.append(subprocess.Popen(_dask_cli() + args, stdout=handle, stderr=subprocess.STDOUT, cwd=tmp_path, env=env,
                                          start_new_session=True))

    try:
        start("scheduler", ["scheduler", "--host", "127.0.0.1", "--port", str(port), "--dashboard-address", ":0"])
        for i in range(WORKERS):
            start(f"worker{i}", ["worker", address, "--nthreads", "1", "--no-nanny", "--dashboard-address", ":0",
                                 "--local-directory", str(tmp_path / f"w{i}"), "--name", f"w{i}"])
        deadline = time.monotonic() + STARTUP_S
        while sum("Registered to" in log.read_text(errors="replace") for log in logs[1:]) < WORKERS:
            dead = [p.args for p in procs if p.poll() is not None]
            assert not dead, f"dask process ended early: {dead}; logs: {[log.read_text(errors='replace')[-400:] for log in logs]}"
            assert time.monotonic() < deadline, [log.read_text(errors="replace")[-400:] for log in logs]
            time.sleep(0.5)
        yield address
    finally:
        for p in reversed(procs):
            if p.poll() is None:
                os.killpg(p.pid, signal.SIGTERM)
        for p in procs:
            try:
                p.wait(timeout=30)
            except subprocess.TimeoutExpired:
                os.killpg(p.pid, signal.SIGKILL)
                p.wait(timeout=30)


def test_dask_cluster_gives_the_local_numbers(tmp_path: Path, cluster: str) -> None:
    data = copy.deepcopy(load_json(ROOT / "examples" / "soil-probe-2g4.json"))
    data["arm"] = {"length_mm": 17.794, "height_mm": 5.1, "feed_short_spacing_mm": 1.767}
    data["tolerances"] = {"laminate_eps_r": {"plus_minus_percent": 8}, "laminate_thickness": {"plus_minus_percent": 0},
                          "copper_thickness": {"plus_minus_percent": 0}, "etch": {"plus_minus_mm": 0},
                          "ground_plane_size": {"plus_minus_mm": 0}}
    spec = write_spec(tmp_path, data)
    common = ["yield", str(spec), "--samples", "600", "--seed", "5", "--check", "1"]
    env = _env(tmp_path)
    local = subprocess.run(footgen_cmd() + common + ["--workers", "2", "--json", str(tmp_path / "local.json")],
                           capture_output=True, text=True, cwd=tmp_path, env=env, timeout=900)
    assert local.returncode == 0, local.stderr
    remote = subprocess.run(footgen_cmd() + common + ["--scheduler", cluster, "--json", str(tmp_path / "dask.json")],
                            capture_output=True, text=True, cwd=tmp_path, env=env, timeout=900)
    assert remote.returncode == 0, remote.stderr
    assert f"Dask cluster at {cluster} ({WORKERS} worker(s))" in remote.stderr
    assert "2 local process(es)" in local.stderr
    a, b = (tmp_path / "local.json").read_bytes(), (tmp_path / "dask.json").read_bytes()
    assert a == b
    summary = json.loads(a)
    assert summary["samples"] == 600 and summary["sensitivity"][0]["name"] == "laminate_eps_r"


def test_unreachable_scheduler_is_one_line(tmp_path: Path) -> None:
    data = copy.deepcopy(load_json(ROOT / "examples" / "soil-probe-2g4.json"))
    spec = write_spec(tmp_path, data)
    env = _env(tmp_path)
    env["FOOTGEN_SCHEDULER"] = f"tcp://127.0.0.1:{_free_port()}"
    result = subprocess.run(footgen_cmd() + ["yield", str(spec), "--samples", "5", "--model", "tline"], capture_output=True,
                            text=True, cwd=tmp_path, env=env, timeout=300)
    assert result.returncode == 2
    errors = [line for line in result.stderr.splitlines() if line.startswith("footgen: error")]
    assert len(errors) == 1 and "--scheduler" in errors[0] and "Traceback" not in result.stderr, result.stderr
