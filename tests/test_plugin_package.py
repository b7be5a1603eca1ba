"""The KiCad plugin-manager archive built by scripts/build_plugin.py.

Outside truth: KiCad's package JSON schema (pcm.v1, vendored in schemas/ from the KiCad source
repository; KiCad 9.0.8 ships its own copy in /usr/share/kicad/schemas/), Pillow's PNG reader,
CPython's ``sys.stdlib_module_names`` and KiCad 9's own plugin loader (``pcbnew.LoadPlugins``).
"""

from __future__ import annotations

import ast
import io
import json
import os
import subprocess
import sys
import zipfile
from pathlib import Path

import jsonschema
import pytest
from PIL import Image

from conftest import ROOT
from footgen.testrun import kicad_python

BUILD_SCRIPT = ROOT / "scripts" / "build_plugin.py"
VENDORED_SCHEMA = ROOT / "schemas" / "kicad-pcm.v1.schema.json"
#: Where KiCad 9 (Debian package kicad 9.0.8) installs its own copy of the schema.
INSTALLED_SCHEMA = Path("/usr/share/kicad/schemas/pcm.v1.schema.json")
#: The package icon size KiCad's plugin manager expects (KiCad add-on documentation, "icon.png
#: 64x64" in the archive's resources/ folder; from memory).
PACKAGE_ICON_PX = 64
#: Modules a file under footgen/plugin/ may import besides the standard library and its siblings.
ALLOWED_THIRD_PARTY = {"pcbnew", "wx"}
SUBPROCESS_TIMEOUT_S = 300


@pytest.fixture(scope="module")
def archive(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("dist")
    proc = subprocess.run([sys.executable, str(BUILD_SCRIPT), "-o", str(out)], capture_output=True, text=True, timeout=SUBPROCESS_TIMEOUT_S)
    assert proc.returncode == 0, proc.stderr
    (path,) = out.glob("footgen-kicad-plugin-*.zip")
    assert str(path) == proc.stdout.splitlines()[0]
    return path


def _metadata(archive: Path) -> dict:
    with zipfile.ZipFile(archive) as zf:
        return json.loads(zf.read("metadata.json"))


def _errors(schema_path: Path, data: dict) -> list[str]:
    schema = json.loads(schema_path.read_text("utf-8"))
    return [f"{'/'.join(map(str, e.path))}: {e.message}" for e in jsonschema.Draft7Validator(schema).iter_errors(data)]


def test_vendored_schema_is_kicads_package_schema() -> None:
    schema = json.loads(VENDORED_SCHEMA.read_text("utf-8"))
    jsonschema.Draft7Validator.check_schema(schema)
    assert schema["$id"] == "https://go.kicad.org/pcm/schemas/v1"
    assert schema["$ref"] == "#/definitions/Package"


def test_metadata_validates_against_the_vendored_kicad_schema(archive: Path) -> None:
    """KiCad PCM schema v1 (schemas/kicad-pcm.v1.schema.json, see its README)."""
    assert _errors(VENDORED_SCHEMA, _metadata(archive)) == []


def test_the_schema_check_can_fail(archive: Path) -> None:
    """The same validation rejects metadata that breaks the schema (an identifier with a space,
    a version KiCad cannot order)."""
    bad = _metadata(archive)
    bad["identifier"] = "not valid"
    bad["versions"][0]["version"] = "v1"
    errors = _errors(VENDORED_SCHEMA, bad)
    assert any(e.startswith("identifier") for e in errors)
    assert any(e.startswith("versions/0/version") for e in errors)


def test_metadata_version_is_footgens(archive: Path) -> None:
    import footgen

    (version,) = _metadata(archive)["versions"]
    assert version["version"] == footgen.__version__
    assert version["kicad_version"] == "9.0"


def test_archive_holds_what_kicad_expects(archive: Path) -> None:
    """KiCad add-on archive layout (KiCad developer documentation, add-ons: metadata.json at the
    root, plugins/ with the plugin's __init__.py, resources/icon.png; from memory)."""
    with zipfile.ZipFile(archive) as zf:
        names = set(zf.namelist())
        icon = zf.read("resources/icon.png")
    assert {"metadata.json", "plugins/__init__.py", "resources/icon.png"} <= names
    assert {f"plugins/{n}" for n in ("action.py", "placement.py", "cli_runner.py", "board.py")} <= names
    assert all(n == "metadata.json" or n.startswith(("plugins/", "resources/")) for n in names)
    assert not any("__pycache__" in n or n.endswith(".pyc") for n in names)
    with Image.open(io.BytesIO(icon)) as image:
        assert image.format == "PNG"
        assert image.size == (PACKAGE_ICON_PX, PACKAGE_ICON_PX)


def test_archive_is_byte_stable(archive: Path, tmp_path: Path) -> None:
    proc = subprocess.run([sys.executable, str(BUILD_SCRIPT), "-o", str(tmp_path)], capture_output=True, text=True, timeout=SUBPROCESS_TIMEOUT_S)
    assert proc.returncode == 0, proc.stderr
    assert (tmp_path / archive.name).read_bytes() == archive.read_bytes()


def _imports(source: str) -> set[str]:
    tree = ast.parse(source)
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out |= {alias.name.split(".")[0] for alias in node.names}
        elif isinstance(node, ast.ImportFrom) and node.level == 0:
            out.add(node.module.split(".")[0])
    return out


def test_plugin_files_import_only_stdlib_pcbnew_wx_and_siblings(archive: Path) -> None:
    """KiCad's Python has no numpy, shapely or footgen: CPython's sys.stdlib_module_names plus
    pcbnew and wx is all a plugin file may import (relative imports reach its siblings)."""
    allowed = set(sys.stdlib_module_names) | ALLOWED_THIRD_PARTY
    with zipfile.ZipFile(archive) as zf:
        sources = {n: zf.read(n).decode("utf-8") for n in zf.namelist() if n.endswith(".py")}
    assert sources
    for name, source in sources.items():
        assert _imports(source) <= allowed, (name, _imports(source) - allowed)


def test_the_import_scan_sees_a_forbidden_import() -> None:
    assert "numpy" in _imports("import numpy as np\nfrom .board import x\n") - set(sys.stdlib_module_names)


LOAD_LIKE_KICAD = """
import json, sys
if sys.argv[2] == "no-wx":
    sys.modules["wx"] = None  # an import of wx now raises ImportError
import pcbnew
pcbnew.LoadPlugins(None, None, sys.argv[1])
name = sys.argv[3]
package = sys.modules.get(name)
plugin = getattr(package, "registered", None)
print(json.dumps({
    "trace": pcbnew.GetWizardsBackTrace(),
    "loaded": sorted(pcbnew.KICAD_PLUGINS),
    "plugin_name": plugin.GetName() if plugin else None,
    "plugin_path": plugin.GetPluginPath() if plugin else None,
    "toolbar": plugin.GetShowToolbarButton() if plugin else None,
    "icon": plugin.GetIconFileName(False) if plugin else None,
    "wx_loaded": bool(sys.modules.get("wx")),
}))
"""


@pytest.mark.kicad
@pytest.mark.parametrize("wx_mode", ["with-wx", "no-wx"])
def test_kicad_loads_and_registers_the_installed_plugin(kicad, archive: Path, tmp_path: Path, wx_mode: str) -> None:
    """KiCad 9's own loader (pcbnew.LoadPlugins over the 3rd-party plugins folder, as KiCad
    does at start-up) imports the extracted archive without a traceback and registers the
    action, also when wx cannot be imported."""
    identifier = _metadata(archive)["identifier"]
    folder_name = identifier.replace(".", "_")  # how KiCad's plugin manager names the folder (from memory)
    plugins_root = tmp_path / "3rdparty" / "plugins"
    target = plugins_root / folder_name
    with zipfile.ZipFile(archive) as zf:
        for name in zf.namelist():
            if name.startswith("plugins/"):
                dest = target / name[len("plugins/"):]
                dest.parent.mkdir(parents=True, exist_ok=True)
                dest.write_bytes(zf.read(name))
    env = dict(os.environ, KICAD_CONFIG_HOME=str(tmp_path / "kicad-config"), PYTHONWARNINGS="ignore::DeprecationWarning")
    env.pop("PYTHONPATH", None)  # the archive must work without footgen on the path
    driver = tmp_path / "load.py"
    driver.write_text(LOAD_LIKE_KICAD, "utf-8")
    proc = subprocess.run([kicad_python(), str(driver), str(plugins_root), wx_mode, folder_name], capture_output=True, text=True, env=env, timeout=SUBPROCESS_TIMEOUT_S, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    got = json.loads(proc.stdout.strip().splitlines()[-1])
    assert got["trace"] == ""
    assert folder_name in got["loaded"]
    assert got["plugin_name"] == "footgen: printed IFA antenna"
    assert got["plugin_path"] == str(target / "action.py") + "/FootgenAction"
    assert got["toolbar"] is True
    assert got["icon"] == str(target / "icon.png")
    assert got["wx_loaded"] is False  # wx is imported only when the action runs


@pytest.mark.kicad
def test_metadata_validates_against_the_schema_kicad_9_ships(kicad, archive: Path) -> None:
    """The copy of the schema installed with KiCad 9.0.8 (older than the vendored one: no
    "datasource" package type) accepts the metadata too."""
    if not INSTALLED_SCHEMA.exists():
        pytest.fail(f"{INSTALLED_SCHEMA} missing although KiCad is installed")
    assert _errors(INSTALLED_SCHEMA, _metadata(archive)) == []


# --- the IPC-API archive ---------------------------------------------------------------------

#: Schemas each KiCad ships: KiCad 9.0.8 (Debian) and KiCad 10 (Debian sid, in the chroot
#: scripts/install_kicad10.sh makes).
KICAD10_SCHEMAS = Path(os.environ.get("FOOTGEN_KICAD10_ROOT", "/opt/footgen-kicad10")) / "usr/share/kicad/schemas"
PCM_SCHEMAS = {"9": INSTALLED_SCHEMA, "10": KICAD10_SCHEMAS / "pcm.v2.schema.json"}
API_SCHEMAS = {"9": Path("/usr/share/kicad/schemas/api.v1.schema.json"), "10": KICAD10_SCHEMAS / "api.v1.schema.json"}


@pytest.fixture(scope="module")
def ipc_archive(archive: Path) -> Path:
    (path,) = archive.parent.glob("footgen-kicad-ipc-plugin-*.zip")
    return path


def _schema_or_skip(path: Path) -> Path:
    if not path.exists():
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(f"{path} missing (KiCad not installed)")
        pytest.skip(f"{path} missing (that KiCad is not installed here)")
    return path


def test_each_archive_declares_its_runtime(archive: Path, ipc_archive: Path) -> None:
    """pcm schema: runtime "swig" (KiCad's Python loads the folder) or "ipc" (an API plugin)."""
    assert [v["runtime"] for v in _metadata(archive)["versions"]] == ["swig"]
    assert [v["runtime"] for v in _metadata(ipc_archive)["versions"]] == ["ipc"]
    assert _metadata(archive)["identifier"] != _metadata(ipc_archive)["identifier"]


def test_the_swig_archive_leaves_out_the_ipc_door_and_the_ipc_archive_has_its_entry_point(archive: Path, ipc_archive: Path) -> None:
    with zipfile.ZipFile(archive) as zf:
        assert "plugins/ipc_door.py" not in zf.namelist()
    with zipfile.ZipFile(ipc_archive) as zf:
        names = set(zf.namelist())
        plugin = json.loads(zf.read("plugins/plugin.json"))
        requirements = zf.read("plugins/requirements.txt").decode()
    assert {f"plugins/{a['entrypoint']}" for a in plugin["actions"]} <= names
    assert {f"plugins/{icon}" for a in plugin["actions"] for icon in a["icons-light"] + a["icons-dark"]} <= names
    assert {"plugins/placement.py", "plugins/board_view.py", "plugins/cli_runner.py"} <= names  # shared code
    assert requirements.split(">=")[0] == "kicad-python"
    assert plugin["identifier"] == _metadata(ipc_archive)["identifier"]


@pytest.mark.parametrize("kicad_version", sorted(PCM_SCHEMAS))
def test_both_archives_validate_against_the_package_schema_each_kicad_ships(archive: Path, ipc_archive: Path, kicad_version: str) -> None:
    schema = _schema_or_skip(PCM_SCHEMAS[kicad_version])
    assert _errors(schema, _metadata(archive)) == []
    assert _errors(schema, _metadata(ipc_archive)) == []


@pytest.mark.parametrize("kicad_version", sorted(API_SCHEMAS))
def test_plugin_json_validates_against_the_api_schema_each_kicad_ships(ipc_archive: Path, kicad_version: str) -> None:
    schema = _schema_or_skip(API_SCHEMAS[kicad_version])
    with zipfile.ZipFile(ipc_archive) as zf:
        plugin = json.loads(zf.read("plugins/plugin.json"))
    assert _errors(schema, plugin) == []
    broken = dict(plugin, runtime={"type": "java"})
    assert _errors(schema, broken)  # the check can fail
