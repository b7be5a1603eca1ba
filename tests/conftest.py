"""Shared fixtures.  Tests never write into the source tree: everything goes to tmp_path."""

from __future__ import annotations

import os
import tempfile

# Small dense solves: one BLAS thread is faster (and the machine has two cores); before numpy loads.
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
# Hypothesis keeps caches in ./.hypothesis by default: put them in the temp folder instead.
os.environ.setdefault("HYPOTHESIS_STORAGE_DIRECTORY", os.path.join(tempfile.gettempdir(), "footgen-hypothesis"))
# Finished sizings are cached on disk (footgen.sizing_cache): the tests keep theirs in the temp
# folder, never in the user's cache; so do the model sweeps (footgen.cache).
os.environ.setdefault("FOOTGEN_CACHE_DIR", os.path.join(tempfile.gettempdir(), "footgen-test-cache"))

import copy  # noqa: E402
import json  # noqa: E402
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import settings

# No example database in the source tree (.hypothesis/): tests never write there.
settings.register_profile("footgen", database=None)
settings.load_profile("footgen")

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((ROOT / "examples").glob("*.json"))
TEMPLATES = sorted((ROOT / "templates").glob("*.json"))
GOLDEN_DIR = Path(__file__).resolve().parent / "golden"


def pytest_addoption(parser: pytest.Parser) -> None:
    parser.addoption(
        "--update-golden",
        action="store_true",
        help="rewrite tests/golden/*.kicad_mod from the current code (review the diff before committing)",
    )


@pytest.fixture
def update_golden(request: pytest.FixtureRequest) -> bool:
    return bool(request.config.getoption("--update-golden"))


def kicad_available() -> bool:
    if shutil.which("kicad-cli") is None:
        return False
    from footgen.testrun import KiCad

    return KiCad().available()


@pytest.fixture(scope="session")
def kicad() -> None:
    """Tests that need KiCad 9: they fail in CI (CI=true) when it is missing, skip elsewhere."""
    if kicad_available():
        return
    if os.environ.get("CI", "").lower() == "true":
        pytest.fail("KiCad 9 (kicad-cli and pcbnew) is required in CI; scripts/test.sh installs it")
    pytest.skip("KiCad 9 not installed (run scripts/test.sh to install it)")


@pytest.fixture(autouse=True)
def _kicad_config_home(tmp_path_factory: pytest.TempPathFactory, monkeypatch: pytest.MonkeyPatch) -> None:
    """KiCad writes settings on first run: keep them out of the user's home."""
    monkeypatch.setenv("KICAD_CONFIG_HOME", str(tmp_path_factory.getbasetemp() / "kicad-config"))


def with_field(data: dict, dotted: str, value: object) -> dict:
    """A deep copy of spec ``data`` with the field at the dotted path (e.g. ``"fab.min_drill_mm"``)
    set to ``value``, creating sections on the way."""
    out = copy.deepcopy(data)
    node = out
    keys = dotted.split(".")
    for key in keys[:-1]:
        node = node.setdefault(key, {})
    node[keys[-1]] = value
    return out


def load_json(path: Path) -> dict:
    return json.loads(Path(path).read_text("utf-8"))


def write_spec(tmp_path: Path, data: dict, name: str = "spec.json") -> Path:
    path = tmp_path / name
    path.write_text(json.dumps(data, indent=2), "utf-8")
    return path


def footgen_cmd() -> list[str]:
    """The CLI of the footgen under test (this interpreter's, not whatever is on PATH)."""
    return [sys.executable, "-m", "footgen"]


def run_cli(args: list[str], cwd: Path | None = None) -> subprocess.CompletedProcess:
    return subprocess.run(footgen_cmd() + args, capture_output=True, text=True, cwd=cwd, timeout=600)


NEC2_RUNNER_PATH = Path(__file__).resolve().parent / "data" / "mom" / "nec2_wire_runner.py"


def load_module(name: str, path: Path):
    """The Python file ``path`` loaded as module ``name`` (registered in ``sys.modules``), without
    writing bytecode beside it."""
    import importlib.util

    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    write_bytecode = sys.dont_write_bytecode
    sys.dont_write_bytecode = True  # keep the source tree free of __pycache__
    try:
        spec.loader.exec_module(module)
    finally:
        sys.dont_write_bytecode = write_bytecode
    return module


def load_fullwave_module(name: str):
    """A module of the openEMS reference harness in tests/fullwave/ (e.g. ``ifa_cases``)."""
    return load_module(name, ROOT / "tests" / "fullwave" / f"{name}.py")


def load_nec2_runner():
    """The nec2++ reference runner module (needs PyPI PyNEC, a test dependency)."""
    pytest.importorskip("PyNEC")
    return load_module("nec2_wire_runner", NEC2_RUNNER_PATH)
