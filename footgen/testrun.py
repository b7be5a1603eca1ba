"""Run KiCad itself on a generated footprint: load it, place it on a test board, run DRC.

KiCad is driven only through subprocesses (``kicad-cli`` and ``python3 -m footgen.plugin.board``
under an interpreter that has KiCad's ``pcbnew`` module), because KiCad's parser can take the
whole Python process down on a bad file and never says why.  The KiCad used is this system's,
or one installed in a separate root file system (``$FOOTGEN_KICAD_ROOT``, entered with
``chroot`` in a private mount namespace), which is how the tests reach KiCad 9 and 10 at once.

This module sits above the pipeline (it builds footprints with :mod:`footgen.build`), beside the
CLI; :mod:`footgen.kicad` below it only writes files.
"""

from __future__ import annotations

import json
import os
import re
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
    "install KiCad 9 or 10 (Debian 12/13: apt-get install -t <codename>-backports kicad) so that "
    "kicad-cli and the pcbnew Python module are available, or set FOOTGEN_KICAD_PYTHON"
)
KICAD_TIMEOUT_S = 300
#: Enter a KiCad root: private mounts (gone when the command ends), the host folders the
#: command reads and writes bound at the same paths, then chroot.
_CHROOT_SCRIPT = r"""
set -e
root=$1; shift
mount -t proc proc "$root/proc"
mount --rbind /dev "$root/dev"
while [ "$1" != "--" ]; do mkdir -p "$root$1"; mount --rbind "$1" "$root$1"; shift; done
shift
exec chroot "$root" "$@"
"""


@dataclass(frozen=True)
class KiCad:
    """One KiCad installation: this system's (``root`` None) or one in a separate root."""

    root: Path | None = None

    @classmethod
    def from_env(cls) -> "KiCad":
        root = os.environ.get("FOOTGEN_KICAD_ROOT")
        return cls(Path(root)) if root else cls()

    @property
    def label(self) -> str:
        return str(self.root) if self.root else "system"

    def available(self) -> bool:
        try:
            self.major()
            self.python()
        except KiCadError:
            return False
        return True

    def cli(self) -> str:
        if self.root is not None:
            path = self.root / "usr/bin/kicad-cli"
            if not path.exists():
                raise KiCadError(f"kicad-cli not found in {self.root}: run scripts/install_kicad10.sh")
            return "/usr/bin/kicad-cli"
        path = shutil.which("kicad-cli")
        if path is None:
            raise KiCadError(f"kicad-cli not found: {INSTALL_HINT}")
        return path

    def python(self) -> str:
        if self.root is not None:
            return _probe_python(self, ("/usr/bin/python3",))
        return _probe_python(self, tuple(filter(None, (os.environ.get("FOOTGEN_KICAD_PYTHON"), sys.executable, SYSTEM_PYTHON))))

    def version(self) -> tuple[int, int, int]:
        """KiCad's version, parsed from ``kicad-cli --version``."""
        return _version(self)

    def major(self) -> int:
        return self.version()[0]

    def command(self, argv: list[str], paths: list[Path]) -> list[str]:
        """``argv`` as a command line for this installation; ``paths`` are the host folders it
        reads or writes (seen at the same paths inside a separate root)."""
        if self.root is None:
            return argv
        binds = sorted({str(_existing(Path(p).resolve())) for p in paths})
        return ["unshare", "-m", "sh", "-c", _CHROOT_SCRIPT, "sh", str(self.root), *binds, "--", *argv]


def _existing(path: Path) -> Path:
    """``path`` or its nearest existing parent (a folder KiCad is to create is bound by its parent)."""
    while not path.exists() and path != path.parent:
        path = path.parent
    return path


@lru_cache(maxsize=None)
def _version(kicad: KiCad) -> tuple[int, int, int]:
    with tempfile.TemporaryDirectory() as cfg:
        proc = _run(kicad.command([kicad.cli(), "--version"], [Path(cfg)]), _env(cfg), "kicad-cli --version")
    match = re.search(r"(\d+)\.(\d+)\.(\d+)", proc.stdout)
    if match is None:
        raise KiCadError(f"kicad-cli --version printed no version: {proc.stdout.strip()!r}")
    return (int(match[1]), int(match[2]), int(match[3]))


@lru_cache(maxsize=None)
def _probe_python(kicad: KiCad, candidates: tuple[str, ...]) -> str:
    for exe in candidates:
        try:
            probe = subprocess.run(kicad.command([exe, "-c", "import pcbnew"], []), capture_output=True, timeout=120)
        except (OSError, subprocess.TimeoutExpired):
            continue
        if probe.returncode == 0:
            return exe
    raise KiCadError(f"no Python with KiCad's pcbnew module in {kicad.label}: {INSTALL_HINT}")


def kicad_python() -> str:
    """An interpreter of this system's KiCad that can import pcbnew."""
    return KiCad().python()


def kicad_cli() -> str:
    """This system's ``kicad-cli``."""
    return KiCad().cli()


@dataclass(frozen=True)
class DrcReport:
    board_path: Path
    drc: dict | None

    def _all(self) -> list[dict]:
        if self.drc is None:
            return []
        return list(self.drc.get("violations", [])) + list(self.drc.get("unconnected_items", []))

    def _items(self, severity: str) -> list[str]:
        return [f"{v['type']}: {v['description']}" for v in self._all() if v.get("severity") == severity]

    @property
    def drc_errors(self) -> list[str]:
        return self._items("error")

    @property
    def drc_warnings(self) -> list[str]:
        return self._items("warning")

    def types(self, severity: str = "error") -> set[str]:
        return {v["type"] for v in self._all() if v.get("severity") == severity}


def _env(config_home: str) -> dict[str, str]:
    env = dict(os.environ)
    env.setdefault("KICAD_CONFIG_HOME", config_home)
    # footgen.plugin.board needs only the standard library and pcbnew: put footgen's own folder
    # on the path so KiCad's interpreter finds it without installing anything.
    env["PYTHONPATH"] = _source_root() + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
    return env


def _source_root() -> str:
    return str(Path(footgen.__file__).resolve().parent.parent)


def _run(cmd: list[str], env: dict[str, str], what: str) -> subprocess.CompletedProcess:
    try:
        proc = subprocess.run(cmd, capture_output=True, text=True, env=env, timeout=KICAD_TIMEOUT_S)
    except subprocess.TimeoutExpired:
        raise KiCadError(f"{what}: KiCad did not finish within {KICAD_TIMEOUT_S} s") from None
    except OSError as exc:
        raise KiCadError(f"{what}: {exc.strerror}") from None
    if proc.returncode != 0:
        tail = (proc.stderr or proc.stdout).strip().splitlines()[-1:] or [f"exit code {proc.returncode}"]
        raise KiCadError(f"{what} failed: {tail[0]}")
    return proc


def _kicad_run(kicad: KiCad, argv: list[str], paths: list[Path], what: str) -> subprocess.CompletedProcess:
    with tempfile.TemporaryDirectory() as cfg:
        env = _env(cfg)
        config = Path(env["KICAD_CONFIG_HOME"])
        config.mkdir(parents=True, exist_ok=True)
        mounts = [*paths, Path(cfg), Path(_source_root()), config]
        return _run(kicad.command(argv, mounts), env, what)


def upgrade_footprint(pretty_dir: Path, out_dir: Path, kicad: KiCad | None = None) -> None:
    """Have KiCad load and re-save a footprint library (``kicad-cli fp upgrade``)."""
    kicad = kicad or KiCad.from_env()
    _kicad_run(kicad, [kicad.cli(), "fp", "upgrade", str(pretty_dir), "-o", str(out_dir)], [pretty_dir, out_dir], f"kicad-cli fp upgrade {pretty_dir}")


def run_drc(board_path: Path, kicad: KiCad | None = None) -> dict:
    kicad = kicad or KiCad.from_env()
    report = board_path.with_suffix(".drc.json")
    argv = [kicad.cli(), "pcb", "drc", "--format", "json", "--severity-all", "--units", "mm", "-o", str(report), str(board_path)]
    _kicad_run(kicad, argv, [board_path.parent], f"kicad-cli pcb drc {board_path}")
    return json.loads(report.read_text("utf-8"))


def make_board(plan: dict, board_path: Path, kicad: KiCad | None = None) -> None:
    kicad = kicad or KiCad.from_env()
    plan_path = board_path.with_suffix(".plan.json")
    plan_path.write_text(json.dumps(plan, indent=1, sort_keys=True) + "\n", "utf-8")
    lib_dir = Path(plan["footprint"]["file"]).parent
    argv = [kicad.python(), "-m", "footgen.plugin.board", str(plan_path), str(board_path)]
    _kicad_run(kicad, argv, [board_path.parent, lib_dir], "building the test board")


def filled_zones(board_path: Path, kicad: KiCad | None = None) -> dict[str, list[list[list[float]]]]:
    kicad = kicad or KiCad.from_env()
    argv = [kicad.python(), "-m", "footgen.plugin.board", "--dump-fill", str(board_path)]
    proc = _kicad_run(kicad, argv, [board_path.parent], "reading zone fills")
    return json.loads(proc.stdout.strip().splitlines()[-1])


def make_test_board(
    spec_path: Path,
    out_dir: Path,
    *,
    drc: bool = True,
    allow_violations: bool = False,
    board_name: str | None = None,
    fab_rules: bool = False,
    copper_layers: int = 2,
    kicad: KiCad | None = None,
) -> DrcReport:
    """Build the spec's footprint into ``out_dir``, make the test board there, optionally DRC it.

    The board keeps KiCad's default design rules unless ``fab_rules`` (then the fab profile's)."""
    out_dir = Path(out_dir).resolve()
    result = run(load_spec(spec_path))
    write_build(result, out_dir, force=False, allow_violations=allow_violations)
    footprint = out_dir / result.footprint_relpath
    if not footprint.exists():
        raise KiCadError(f"{spec_path}: the rule check failed, so no footprint was written; fix the spec or pass --allow-violations")
    plan = test_board_plan(
        result.spec, result.layout, library=result.spec.library, footprint_file=str(footprint), fab_rules=fab_rules, copper_layers=copper_layers
    )
    board_path = out_dir / f"{board_name or result.spec.name + '-test'}.kicad_pcb"
    make_board(plan, board_path, kicad)
    return DrcReport(board_path, run_drc(board_path, kicad) if drc else None)
