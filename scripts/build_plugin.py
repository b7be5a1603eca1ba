#!/usr/bin/env python3
"""Build the KiCad plugin-manager archive of footgen's PCB-editor plugin.

    python scripts/build_plugin.py [-o DIST_DIR] [--version X.Y.Z]

Writes two archives into DIST_DIR, each checked against the vendored KiCad package schema
schemas/kicad-pcm.v1.schema.json and each declaring its runtime:

- footgen-kicad-plugin-<version>.zip (runtime ``swig``): ``metadata.json`` from
  footgen/plugin/pcm/metadata.template.json, ``plugins/`` (the files of footgen/plugin/ that
  KiCad's own Python can import, and the toolbar icon), ``resources/icon.png`` (64 x 64);
- footgen-kicad-ipc-plugin-<version>.zip (runtime ``ipc``): ``metadata.json`` from
  ipc-metadata.template.json, ``plugins/`` with ``plugin.json`` (KiCad's API plugin schema),
  ``requirements.txt`` (kicad-python), the IPC door and the shared placement code.

The archives are byte-stable: sorted entries, fixed timestamps.  Prints each archive's path,
SHA-256 and sizes (for a repository entry).
"""

from __future__ import annotations

import argparse
import hashlib
import io
import json
import re
import sys
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import footgen  # noqa: E402
from footgen.plugin.pcm import icon  # noqa: E402

PLUGIN_DIR = ROOT / "footgen" / "plugin"
TEMPLATE = PLUGIN_DIR / "pcm" / "metadata.template.json"
IPC_TEMPLATE = PLUGIN_DIR / "pcm" / "ipc-metadata.template.json"
#: The IPC door imports kicad-python: never in the SWIG archive, whose files KiCad's own Python imports.
IPC_ONLY = ("ipc_door.py",)
#: What the IPC archive carries from footgen/plugin/ (the door and the code it shares).
IPC_FILES = ("__init__.py", "board.py", "board_view.py", "cli_runner.py", "ipc_door.py", "placement.py")
IPC_EXTRA = ("plugin.json", "requirements.txt")
SCHEMA = ROOT / "schemas" / "kicad-pcm.v1.schema.json"
#: Icon sizes: the package icon KiCad's plugin manager shows, and the toolbar button.
PACKAGE_ICON_PX = 64
TOOLBAR_ICON_PX = 24
TOOLBAR_ICON_NAME = "icon.png"
#: Zip entry timestamp (the earliest a zip can store), so the archive is byte-stable.
ZIP_DATE_TIME = (1980, 1, 1, 0, 0, 0)
VERSION_RE = re.compile(r"^\d{1,4}(\.\d{1,4}(\.\d{1,6})?)?$")


def plugin_files() -> dict[str, bytes]:
    """Archive path -> content of the plugin folder (Python files only, no sub-packages)."""
    files = {f"plugins/{p.name}": p.read_bytes() for p in sorted(PLUGIN_DIR.glob("*.py")) if p.name not in IPC_ONLY}
    files[f"plugins/{TOOLBAR_ICON_NAME}"] = icon.png_bytes(TOOLBAR_ICON_PX)
    return files


def ipc_plugin_files() -> dict[str, bytes]:
    """Archive path -> content of the IPC-API plugin folder."""
    files = {f"plugins/{name}": (PLUGIN_DIR / name).read_bytes() for name in IPC_FILES}
    files.update({f"plugins/{name}": (PLUGIN_DIR / "pcm" / name).read_bytes() for name in IPC_EXTRA})
    files[f"plugins/{TOOLBAR_ICON_NAME}"] = icon.png_bytes(TOOLBAR_ICON_PX)
    return files


def metadata(version: str, template: Path = TEMPLATE) -> dict:
    if not VERSION_RE.match(version):
        raise SystemExit(f"version {version!r}: KiCad wants major[.minor[.patch]] digits, e.g. 0.1.0")
    text = template.read_text("utf-8").replace("{version}", version)
    return json.loads(text)


def validate(meta: dict) -> None:
    """Check ``meta`` against KiCad's package schema (vendored); exit with the first error."""
    import jsonschema

    schema = json.loads(SCHEMA.read_text("utf-8"))
    errors = sorted(jsonschema.Draft7Validator(schema).iter_errors(meta), key=lambda e: list(e.path))
    if errors:
        where = "/".join(str(p) for p in errors[0].path) or "(top)"
        raise SystemExit(f"metadata.json does not match the KiCad package schema at {where}: {errors[0].message}")


#: Archive name -> (metadata template, plugin files).
ARCHIVES = {
    "footgen-kicad-plugin": (TEMPLATE, plugin_files),
    "footgen-kicad-ipc-plugin": (IPC_TEMPLATE, ipc_plugin_files),
}


def archive_bytes(version: str, kind: str = "footgen-kicad-plugin") -> bytes:
    template, files_of = ARCHIVES[kind]
    meta = metadata(version, template)
    validate(meta)
    files = {"metadata.json": (json.dumps(meta, indent=2) + "\n").encode("utf-8")}
    files.update(files_of())
    files["resources/icon.png"] = icon.png_bytes(PACKAGE_ICON_PX)
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as zf:
        for name in sorted(files):
            info = zipfile.ZipInfo(name, ZIP_DATE_TIME)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.external_attr = 0o644 << 16
            zf.writestr(info, files[name])
    return buffer.getvalue()


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Build footgen's KiCad plugin-manager archive.")
    parser.add_argument("-o", "--out", type=Path, default=ROOT / "dist", help="Output folder (default: dist/).")
    parser.add_argument("--version", default=footgen.__version__, help="Package version (default: footgen's).")
    args = parser.parse_args(argv)
    built = {kind: archive_bytes(args.version, kind) for kind in ARCHIVES}
    args.out.mkdir(parents=True, exist_ok=True)
    for kind, data in built.items():
        path = args.out / f"{kind}-{args.version}.zip"
        path.write_bytes(data)
        with zipfile.ZipFile(path) as zf:
            install_size = sum(i.file_size for i in zf.infolist())
        print(path)
        print(f"download_sha256 {hashlib.sha256(data).hexdigest()}")
        print(f"download_size {len(data)}")
        print(f"install_size {install_size}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
