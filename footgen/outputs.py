"""Writing output files: atomically, never over a file a person edited, safe under concurrent
builds, a full disk and a kill at any moment.

Each output folder holds ``footgen-manifest.json`` with the SHA-256 of every file footgen wrote
there.  Before replacing a file, its current content must match the manifest (it is still what
footgen wrote); a file that is missing from the manifest or differs was made or edited by hand
and is only replaced with ``force``.

One write goes in phases, under an exclusive lock on the folder (concurrent builds into one
folder take turns, so neither loses the other's manifest entries):

1. every file is written to a temporary file beside its target (a full disk fails here, and
   nothing has changed);
2. the manifest records the new hashes as *pending* beside the old ones;
3. the temporary files are renamed over their targets;
4. the manifest is rewritten with the new hashes only.

A kill at any moment leaves each file either old or new, both of which the manifest accepts;
temporary files left by a kill are removed by the next write into the folder.  Files get the
permissions an ordinary write gives (0666 less the umask, 0644 typically).
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import json
import os
import tempfile
import time
from pathlib import Path
from typing import Iterator

from footgen.errors import FootgenError, OverwriteRefusedError

MANIFEST_NAME = "footgen-manifest.json"
#: Temporary files are named ``.<target name>.footgen-<random>.tmp`` beside their target.
TMP_MARK = ".footgen-"
TMP_SUFFIX = ".tmp"
#: Largest manifest read (bytes): thousands of entries fit in far less.
MAX_MANIFEST_BYTES = 10_000_000
#: Without fcntl (Windows), a lock file made with O_EXCL is retried this long (s) at this step (s).
LOCK_WAIT_S = 60.0
LOCK_STEP_S = 0.05
LOCK_FILE_NAME = ".footgen-manifest.lock"


def sha256_bytes(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def file_mode() -> int:
    """The mode an ordinary ``open(path, "w")`` gives a new file: 0666 less the umask."""
    mask = os.umask(0o022)
    os.umask(mask)
    return 0o666 & ~mask


def _write_all(fd: int, data: bytes) -> None:
    """Write every byte of ``data`` to ``fd`` (a separate function so tests can fill the disk)."""
    view = memoryview(data)
    while view:
        view = view[os.write(fd, view):]


def _write_temp(path: Path, data: bytes) -> Path:
    """``data`` in a new temporary file beside ``path``, flushed to disk, with the usual mode."""
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}{TMP_MARK}", suffix=TMP_SUFFIX, dir=path.parent)
    try:
        if hasattr(os, "fchmod"):  # mkstemp makes 0600; give what an ordinary write gives
            os.fchmod(fd, file_mode())
        _write_all(fd, data)
        os.fsync(fd)
    except BaseException:
        os.close(fd)
        Path(tmp).unlink(missing_ok=True)
        raise
    os.close(fd)
    return Path(tmp)


def atomic_write(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = _write_temp(path, data)
    try:
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


# ---------------------------------------------------------------------------------------------
# the manifest


def _manifest_data(folder: Path, *, force: bool) -> dict:
    path = Path(folder) / MANIFEST_NAME
    try:
        with open(path, "rb") as handle:
            raw = handle.read(MAX_MANIFEST_BYTES + 1)
    except FileNotFoundError:
        return {}
    except OSError as exc:
        raise FootgenError(f"{path}: cannot read the manifest ({exc.strerror})") from None
    try:
        if len(raw) > MAX_MANIFEST_BYTES:
            raise ValueError("too large")
        data = json.loads(raw.decode("utf-8"))
        files = data["files"]
        if not isinstance(files, dict) or not isinstance(data.get("pending", {}), dict):
            raise ValueError("not a manifest")
        return data
    except (ValueError, KeyError, TypeError, AttributeError, RecursionError):
        if force:
            return {}  # rebuilt from this write's files
        raise OverwriteRefusedError(
            f"{path}: damaged manifest (not footgen's JSON); pass --force to rebuild it from this build's files"
        ) from None


def read_manifest(folder: Path, *, force: bool = False) -> dict[str, set[str]]:
    """Every hash footgen recorded for each file in ``folder`` (a pending write adds a second)."""
    return _known(_manifest_data(folder, force=force))


def _known(data: dict) -> dict[str, set[str]]:
    known: dict[str, set[str]] = {}
    for section in ("files", "pending"):
        for rel, digest in data.get(section, {}).items():
            known.setdefault(str(rel), set()).add(str(digest))
    return known


def _write_manifest(folder: Path, files: dict[str, str], pending: dict[str, str] | None = None) -> None:
    body: dict[str, object] = {"generator": "footgen", "files": dict(sorted(files.items()))}
    if pending:
        body["pending"] = dict(sorted(pending.items()))
    atomic_write(folder / MANIFEST_NAME, (json.dumps(body, indent=2) + "\n").encode("utf-8"))


# ---------------------------------------------------------------------------------------------
# checks


def _safe_folder(folder: Path, rels: list[str]) -> None:
    """Refuse an output folder (or a sub-folder footgen writes into) that is a symbolic link:
    footgen writes only where it was told, never through a link to elsewhere."""
    candidates = [folder] + sorted({folder / Path(rel).parent for rel in rels if Path(rel).parent != Path(".")})
    for path in candidates:
        if path.is_symlink():
            raise FootgenError(f"{path}: is a symbolic link; give the real folder as the output (footgen does not write through links)")
    for rel in rels:
        if Path(rel).is_absolute() or ".." in Path(rel).parts:
            raise FootgenError(f"{rel}: output names stay inside the output folder")


def edited_files(folder: Path, rels: list[str], manifest: dict[str, set[str]]) -> list[Path]:
    """Files among ``rels`` that footgen wrote and a person changed since."""
    out = []
    for rel in sorted(rels):
        target = Path(folder) / rel
        if rel in manifest and target.is_file() and sha256_bytes(target.read_bytes()) not in manifest[rel]:
            out.append(target)
    return out


def _refusal(folder: Path, edited: list[Path], foreign: list[Path]) -> OverwriteRefusedError:
    """One line naming every refused file (relative to ``folder``)."""
    def names(paths: list[Path]) -> str:
        return ", ".join(str(p.relative_to(folder)) if p.is_relative_to(folder) else str(p) for p in paths)

    parts = []
    if edited:
        parts.append(f"{names(edited)} edited since footgen wrote it")
    if foreign:
        parts.append(f"{names(foreign)} exists and was not written by footgen")
    count = len(edited) + len(foreign)
    what = "it" if count == 1 else f"these {count} files"
    return OverwriteRefusedError(f"{folder}: {'; '.join(parts)}; keep your edits elsewhere or pass --force to replace {what}")


def precheck_edits(folder: Path, rels: list[str], *, force: bool) -> None:
    """Before any work: refuse if a file the command would write was edited by hand (all such
    files are listed).  Files footgen never wrote are checked at write time (their content may
    turn out identical)."""
    folder = Path(folder)
    if force or not folder.is_dir():
        return
    _safe_folder(folder, rels)
    edited = edited_files(folder, rels, read_manifest(folder))
    if edited:
        raise _refusal(folder, edited, [])


def check_overwrite(folder: Path, files: dict[str, bytes], *, force: bool, manifest: dict[str, set[str]] | None = None) -> None:
    """Raise :class:`OverwriteRefusedError` listing every target that exists and was not written
    by footgen (or was edited since), unless ``force``."""
    if force:
        return
    manifest = read_manifest(folder) if manifest is None else manifest
    edited, foreign = [], []
    for rel, data in sorted(files.items()):
        target = Path(folder) / rel
        if not target.exists():
            continue
        current = sha256_bytes(target.read_bytes())
        if current == sha256_bytes(data):
            continue  # identical content: rewriting changes nothing
        if rel not in manifest:
            foreign.append(target)
        elif current not in manifest[rel]:
            edited.append(target)
    if edited or foreign:
        raise _refusal(Path(folder), edited, foreign)


# ---------------------------------------------------------------------------------------------
# locking and clean-up


@contextlib.contextmanager
def folder_lock(folder: Path) -> Iterator[None]:
    """Exclusive lock on ``folder`` for one read-modify-write of its files and manifest."""
    try:
        import fcntl
    except ImportError:  # pragma: no cover - Windows: a lock file made with O_EXCL
        yield from _lock_file(folder)
        return
    fd = os.open(folder, os.O_RDONLY)
    try:
        fcntl.flock(fd, fcntl.LOCK_EX)
        yield
    finally:
        os.close(fd)  # closing releases the lock


def _lock_file(folder: Path) -> Iterator[None]:  # pragma: no cover - used where fcntl is missing
    lock = Path(folder) / LOCK_FILE_NAME
    deadline = time.monotonic() + LOCK_WAIT_S
    while True:
        try:
            os.close(os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY))
            break
        except FileExistsError:
            if time.monotonic() > deadline:
                raise FootgenError(f"{lock}: another footgen run holds this folder; delete the file if none is running") from None
            time.sleep(LOCK_STEP_S)
    try:
        yield
    finally:
        lock.unlink(missing_ok=True)


def remove_stale_temps(folder: Path, rels: list[str]) -> None:
    """Delete temporary files a killed run left beside the targets (call with the lock held)."""
    for sub in sorted({(Path(folder) / rel).parent for rel in rels} | {Path(folder)}):
        if not sub.is_dir() or sub.is_symlink():
            continue
        for tmp in sub.glob(f".*{TMP_MARK}*{TMP_SUFFIX}"):
            if tmp.is_file() and not tmp.is_symlink():
                tmp.unlink(missing_ok=True)


# ---------------------------------------------------------------------------------------------
# writing


def write_outputs(folder: Path, files: dict[str, bytes], *, force: bool = False) -> list[Path]:
    """Write ``files`` (paths relative to ``folder``) as described in the module docstring."""
    folder = Path(folder)
    rels = sorted(files)
    _safe_folder(folder, rels)
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise FootgenError(f"{folder}: cannot make the output folder ({exc.strerror})") from None
    with folder_lock(folder):
        _safe_folder(folder, rels)
        remove_stale_temps(folder, rels)
        data = _manifest_data(folder, force=force)
        recorded = {str(k): str(v) for k, v in data.get("files", {}).items()}
        for rel, digest in data.get("pending", {}).items():  # a killed run's files that did land
            if (folder / rel).is_file() and sha256_bytes((folder / rel).read_bytes()) == digest:
                recorded[str(rel)] = str(digest)
        check_overwrite(folder, files, force=force, manifest=_known(data))
        new = {rel: sha256_bytes(body) for rel, body in files.items()}
        temps: dict[str, Path] = {}
        try:
            for rel in rels:  # phase 1: a full disk fails here, before anything is replaced
                target = folder / rel
                target.parent.mkdir(parents=True, exist_ok=True)
                temps[rel] = _write_temp(target, files[rel])
            _write_manifest(folder, recorded, pending=new)  # phase 2
        except OSError as exc:
            for tmp in temps.values():
                tmp.unlink(missing_ok=True)
            raise _write_failed(folder, exc) from None
        except BaseException:
            for tmp in temps.values():
                tmp.unlink(missing_ok=True)
            raise
        try:
            for rel in rels:  # phase 3
                os.replace(temps[rel], folder / rel)
                del temps[rel]
        finally:  # a failed rename: the files not yet replaced keep their old content
            for tmp in temps.values():
                tmp.unlink(missing_ok=True)
        recorded.update(new)
        try:
            _write_manifest(folder, recorded)  # phase 4
        except OSError as exc:  # the pending entries still vouch for the new files
            raise _write_failed(folder, exc, replaced=True) from None
    return [folder / rel for rel in rels]


def _write_failed(folder: Path, exc: OSError, *, replaced: bool = False) -> FootgenError:
    why = "the disk is full" if exc.errno == errno.ENOSPC else (exc.strerror or exc.__class__.__name__)
    state = "the new files are in place but the manifest update failed; run again" if replaced else "no file was changed"
    return FootgenError(f"{folder}: cannot write the outputs ({why}); {state}")
