"""A disk cache of finished sizings, so that `check`, `draw`, `predict` and a second `build` of the
same spec do not size it again.

The key is the SHA-256 of the resolved spec (defaults and fab profile filled in), the response model's name, the footgen version and a fingerprint
of footgen's own source files: a spec, model or code change misses the cache, so an entry can
never be stale.  The cache is never required: a missing, unreadable or corrupt entry, or a
folder that cannot be written, means the sizing is computed as if there were no cache.

The same folder keeps the board-edge cross-sections solved so far (:func:`sync_board_edge`),
keyed by the code fingerprint alone.

Location: ``$FOOTGEN_CACHE_DIR`` if set (an empty value turns the cache off), else
``$XDG_CACHE_HOME/footgen`` or ``~/.cache/footgen``.
"""

from __future__ import annotations

import functools
import hashlib
import json
import os
import tempfile
from pathlib import Path

from footgen import __version__
from footgen.geometry.layout import Sizing

CACHE_ENV = "FOOTGEN_CACHE_DIR"
#: Bump when the stored record changes shape.
RECORD_FORMAT = 1
_PACKAGE_DIR = Path(__file__).resolve().parent


def cache_dir() -> Path | None:
    """The cache folder, or None when the cache is turned off."""
    given = os.environ.get(CACHE_ENV)
    if given is not None:
        return Path(given) if given.strip() else None
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "footgen"


@functools.lru_cache(maxsize=1)
def code_fingerprint() -> str:
    """SHA-256 over footgen's Python sources and data files (relative path and bytes)."""
    h = hashlib.sha256(__version__.encode("ascii"))
    for path in sorted(_PACKAGE_DIR.rglob("*")):
        if path.suffix in (".py", ".json") and "__pycache__" not in path.parts:
            h.update(path.relative_to(_PACKAGE_DIR).as_posix().encode("utf-8") + b"\0")
            h.update(path.read_bytes())
    return h.hexdigest()


def spec_key(spec: object) -> str:
    """The spec's identity for the cache: the SHA-256 of its resolved form (the frozen Spec's
    repr, which includes the defaults and the fab profile the raw JSON only names)."""
    return hashlib.sha256(repr(spec).encode("utf-8")).hexdigest()


def cache_key(spec_id: str, model: str) -> str:
    text = json.dumps([RECORD_FORMAT, spec_id, model, __version__, code_fingerprint()])
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _record(sizing: Sizing) -> dict:
    return {
        "arm_length_mm": sizing.arm_length_mm,
        "height_mm": sizing.height_mm,
        "feed_short_spacing_mm": sizing.feed_short_spacing_mm,
        "method": sizing.method,
        "notes": list(sizing.notes),
        "meander_pitch_mm": sizing.meander_pitch_mm,
    } | ({"second_arm_length_mm": sizing.second_arm_length_mm, "second_arm_height_mm": sizing.second_arm_height_mm}
         if sizing.second_arm_length_mm is not None else {})


def load(spec_id: str, model: str) -> Sizing | None:
    """The cached sizing for this spec and model, or None."""
    folder = cache_dir()
    if folder is None:
        return None
    key = cache_key(spec_id, model)
    try:
        data = json.loads((folder / f"{key}.json").read_text("utf-8"))
        if data.get("key") != key:
            return None
        r = data["sizing"]
        pitch = r["meander_pitch_mm"]
        return Sizing(float(r["arm_length_mm"]), float(r["height_mm"]), float(r["feed_short_spacing_mm"]),
                      str(r["method"]), tuple(str(n) for n in r["notes"]),
                      meander_pitch_mm=None if pitch is None else float(pitch),
                      second_arm_length_mm=_opt_float(r.get("second_arm_length_mm")),
                      second_arm_height_mm=_opt_float(r.get("second_arm_height_mm")))
    except (OSError, ValueError, KeyError, TypeError, AttributeError):
        return None


def _opt_float(value: object) -> float | None:
    return None if value is None else float(value)  # type: ignore[arg-type]


def store(spec_id: str, model: str, sizing: Sizing) -> None:
    """Keep ``sizing`` for later runs (atomic write; silently skipped if the folder is not writable)."""
    folder = cache_dir()
    if folder is None:
        return
    key = cache_key(spec_id, model)
    write_atomic(folder, f"{key}.json", json.dumps({"key": key, "sizing": _record(sizing)}, sort_keys=True))


def write_atomic(folder: Path, name: str, text: str) -> None:
    """Write ``folder / name`` through a temporary file and a rename (skipped on any OSError)."""
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=".tmp-", suffix=".json")
        try:
            with os.fdopen(fd, "w", encoding="utf-8") as fh:
                fh.write(text)
            os.replace(tmp, folder / name)
        except BaseException:
            Path(tmp).unlink(missing_ok=True)
            raise
    except OSError:
        return


# ---------------------------------------------------------------------------------------------
# the board-edge cross-sections (footgen.physics.board_edge): about a second of 2-D solves each,
# the same for every spec with the same trace, height, laminate and board edge

_board_edge_state = {"loaded": False, "stored": 0}


def sync_board_edge() -> None:
    """Load the stored board-edge solutions into this process once, and store the process's own
    when it has solved new ones (both skipped silently when the cache is off or unusable)."""
    from footgen.physics import board_edge

    folder = cache_dir()
    if folder is None:
        return
    path = folder / f"board-edge-{code_fingerprint()[:32]}.json"
    if not _board_edge_state["loaded"]:
        _board_edge_state["loaded"] = True
        try:
            rows = json.loads(path.read_text("utf-8"))
            stored = {tuple(row[:5]): row[5] for row in rows if len(row) == 6}
            # cross-sections under an enclosure wall: 8 key numbers, equivalent eps_r, loss factor
            covered = {tuple(row[:8]): (row[8], row[9]) for row in rows if len(row) == 10}
            board_edge.add_solved(stored)
            board_edge.add_solved_covered(covered)
            _board_edge_state["stored"] = len(stored) + len(covered)
        except (OSError, ValueError, TypeError):
            _board_edge_state["stored"] = 0
    solved = board_edge.solved_cross_sections()
    covered = board_edge.solved_covered_cross_sections()
    if len(solved) + len(covered) > _board_edge_state["stored"]:
        _board_edge_state["stored"] = len(solved) + len(covered)
        rows = sorted([*key, eps] for key, eps in solved.items())
        rows += sorted(([*key, *value] for key, value in covered.items()), key=json.dumps)
        write_atomic(folder, path.name, json.dumps(rows))
