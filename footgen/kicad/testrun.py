"""Run KiCad 9 itself on a generated footprint: load it, place it on a test board, run DRC.

KiCad is driven only through subprocesses (``kicad-cli`` and ``python3 -m footgen.plugin.board``
under an interpreter that has KiCad's ``pcbnew`` module), because KiCad's parser can take the
whole Python process down on a bad file and never says why.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import tempfile
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import footgen
from footgen.build import run, write_build
from footgen.errors import KiCadError
from footgen.spec import load_spec
from footgen.testboard import test_board_plan

#: Debian's interpreter, the one KiCad's pcbnew module is built for.
SYSTEM_PYTHON = "/usr/bin/python3"
INSTALL_HINT = (
    "install KiCad 9 (Debian 12: apt-get install -t bookworm-backports kicad) so that kicad-cli "
    "and the pcbnew Python module are available, or set FOOTGEN_KICAD_PYTHON"
)
KICAD_TIMEOUT_S = 300


@dataclass(frozen=True)
class DrcReport:
    board_path: Path
    drc: dict | None

    def _items(self, severity: str) -> list[str]:
        if self.drc is None:
            return []
        items = list(self.drc.get("violations", [])) + list(self.drc.get("unconnected_items", []))
        return [f"{v['type']}: {v['description']}" for v in items if v.get("severity") == severity]

    @property
    def drc_errors(self) -> list[str]:
        return self._items("error")

    @property
    def drc_warnings(self) -> list[str]:
        return self._items("warning")

    def types(self, severity: str = "error") -> set[str]:
        if self.drc is None:
            return set()
        items = list(self.drc.get("violations", [])) + list(self.drc.get("unconnected_items", []))
        return {v["type"] for v in items if v.get("severity") == severity}


def kicad_cli() -> str:
    path = shutil.which("kicad-cli")
    if path is None:
        raise KiCadError(f"kicad-cli not found: {INSTALL_HINT}")
    return path


@lru_cache(maxsize=1)
def kicad_python() -> str:
    """An interpreter that can import pcbnew: $FOOTGEN_KICAD_PYTHON, this one, or Debian's."""
    candidates = [os.environ.get("FOOTGEN_KICAD_PYTHON"), sys.executable, SYSTEM_PYTHON]
    for exe in filter(None, candidates):
        try:
            probe = subprocess.run([exe, "-c", "import pcbnew"], capture_output=True, timeout=60)
        except (OSError, subprocess.TimeoutExpired):
            continue
        if probe.returncode == 0:
            return exe
    raise KiCadError(f"no Python with KiCad's pcbnew module: {INSTALL_HINT}")


def _env(config_home: str) -> dict[str, str]:
    env = dict(os.environ)
    env.setdefault("KICAD_CONFIG_HOME", config_home)
    # footgen.plugin.board needs only the standard library and pcbnew: put footgen's own folder
    # on the path so Debian's interpreter finds it without installing anything.
    root = str(Path(footgen.__file__).resolve().parent.parent)
    env["PYTHONPATH"] = root + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
    return env


def _run(cmd: list[str], env: dict[str, str], what: str) -> subprocess.CompletedProcess:
    try:
        proc = subprocess.run(cmd, capture_output=True, text=True, env=env, timeout=KICAD_TIMEOUT_S)
    except subprocess.TimeoutExpired:
        raise KiCadError(f"{what}: KiCad did not finish within {KICAD_TIMEOUT_S} s") from None
    if proc.returncode != 0:
        tail = (proc.stderr or proc.stdout).strip().splitlines()[-1:] or [f"exit code {proc.returncode}"]
        raise KiCadError(f"{what} failed: {tail[0]}")
    return proc


def upgrade_footprint(pretty_dir: Path, out_dir: Path) -> None:
    """Have KiCad load and re-save a footprint library (``kicad-cli fp upgrade``)."""
    with tempfile.TemporaryDirectory() as cfg:
        _run([kicad_cli(), "fp", "upgrade", str(pretty_dir), "-o", str(out_dir)], _env(cfg), f"kicad-cli fp upgrade {pretty_dir}")


def run_drc(board_path: Path) -> dict:
    report = board_path.with_suffix(".drc.json")
    with tempfile.TemporaryDirectory() as cfg:
        _run(
            [kicad_cli(), "pcb", "drc", "--format", "json", "--severity-all", "--units", "mm", "-o", str(report), str(board_path)],
            _env(cfg),
            f"kicad-cli pcb drc {board_path}",
        )
    return json.loads(report.read_text("utf-8"))


def make_board(plan: dict, board_path: Path) -> None:
    plan_path = board_path.with_suffix(".plan.json")
    plan_path.write_text(json.dumps(plan, indent=1, sort_keys=True) + "\n", "utf-8")
    with tempfile.TemporaryDirectory() as cfg:
        _run([kicad_python(), "-m", "footgen.plugin.board", str(plan_path), str(board_path)], _env(cfg), "building the test board")


def filled_zones(board_path: Path) -> dict[str, list[list[list[float]]]]:
    with tempfile.TemporaryDirectory() as cfg:
        proc = _run([kicad_python(), "-m", "footgen.plugin.board", "--dump-fill", str(board_path)], _env(cfg), "reading zone fills")
    return json.loads(proc.stdout.strip().splitlines()[-1])


def make_test_board(
    spec_path: Path, out_dir: Path, *, drc: bool = True, allow_violations: bool = False, board_name: str | None = None
) -> DrcReport:
    """Build the spec's footprint into ``out_dir``, make the test board there, optionally DRC it."""
    out_dir = Path(out_dir).resolve()
    result = run(load_spec(spec_path))
    write_build(result, out_dir, force=False, allow_violations=allow_violations)
    footprint = out_dir / result.footprint_relpath
    if not footprint.exists():
        raise KiCadError(f"{spec_path}: the rule check failed, so no footprint was written; fix the spec or pass --allow-violations")
    plan = test_board_plan(result.spec, result.layout, library=result.spec.library, footprint_file=str(footprint))
    board_path = out_dir / f"{board_name or result.spec.name + '-test'}.kicad_pcb"
    make_board(plan, board_path)
    return DrcReport(board_path, run_drc(board_path) if drc else None)
