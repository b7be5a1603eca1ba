"""Writing output files: atomically (temp file + rename), never over a file a person edited.

Each output folder holds ``footgen-manifest.json`` with the SHA-256 of every file footgen wrote
there.  Before replacing a file, its current content must match the manifest (it is still what
footgen wrote); a file that is missing from the manifest or differs was made or edited by hand
and is only replaced with ``force``.  The manifest is written last, so an interrupted write
leaves at worst files that are newer than the manifest: the next run refuses them until
``--force``, which is the safe side.
"""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from pathlib import Path

from footgen.errors import FootgenError, OverwriteRefusedError

MANIFEST_NAME = "footgen-manifest.json"


def sha256_bytes(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def atomic_write(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def read_manifest(folder: Path) -> dict[str, str]:
    path = Path(folder) / MANIFEST_NAME
    if not path.exists():
        return {}
    try:
        data = json.loads(path.read_text("utf-8"))
        return {str(k): str(v) for k, v in data.get("files", {}).items()}
    except (json.JSONDecodeError, AttributeError, OSError) as exc:
        raise FootgenError(f"{path}: unreadable manifest ({exc.__class__.__name__}); delete it to start over") from None


def check_overwrite(folder: Path, files: dict[str, bytes], *, force: bool) -> None:
    """Raise :class:`OverwriteRefusedError` if any target exists and was not written by footgen
    (or was edited since), unless ``force``."""
    if force:
        return
    manifest = read_manifest(folder)
    for rel, data in sorted(files.items()):
        target = Path(folder) / rel
        if not target.exists():
            continue
        current = sha256_bytes(target.read_bytes())
        if current == sha256_bytes(data):
            continue  # identical content: rewriting changes nothing
        recorded = manifest.get(rel)
        if recorded is None:
            raise OverwriteRefusedError(f"{target}: exists and was not written by footgen; move it away or pass --force to replace it")
        if recorded != current:
            raise OverwriteRefusedError(f"{target}: edited since footgen wrote it; keep your edits elsewhere or pass --force to replace it")


def write_outputs(folder: Path, files: dict[str, bytes], *, force: bool = False) -> list[Path]:
    """Write ``files`` (paths relative to ``folder``) atomically, then update the manifest."""
    folder = Path(folder)
    check_overwrite(folder, files, force=force)
    written = []
    for rel, data in sorted(files.items()):
        target = folder / rel
        atomic_write(target, data)
        written.append(target)
    manifest = read_manifest(folder) if (folder / MANIFEST_NAME).exists() else {}
    manifest.update({rel: sha256_bytes(data) for rel, data in files.items()})
    body = json.dumps({"generator": "footgen", "files": dict(sorted(manifest.items()))}, indent=2) + "\n"
    atomic_write(folder / MANIFEST_NAME, body.encode("utf-8"))
    return written
