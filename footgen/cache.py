"""A small on-disk cache of results that are costly to recompute: sizings and model sweeps.

The measure-retune loop asks the same questions again and again (the sizing of revision 1 in
``retune``, ``diff`` and ``report``; the sweep of revision 2 in ``retune``, ``predict``, ``match`` and
``report``).  Each answer is stored as JSON under a key that hashes the question together with
the footgen version and the source of every module the answer depends on, so a changed model
never reads an old answer.  The cache lives in ``$FOOTGEN_CACHE_DIR``, else
``$XDG_CACHE_HOME/footgen``, else ``~/.cache/footgen``; ``FOOTGEN_CACHE_DIR=off`` disables it.  A
cache that cannot be read or written is skipped silently: it only ever saves time, and the
outputs are byte-identical with or without it (JSON keeps every float exactly).
"""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from functools import lru_cache
from pathlib import Path
from typing import TYPE_CHECKING

import footgen

if TYPE_CHECKING:
    from footgen.geometry.layout import Sizing
    from footgen.spec import Spec

#: Modules (relative to the package) whose source decides a sizing or a sweep.
DEPENDS_ON = ("physics", "geometry", "sizing.py", "model.py", "constants.py", "spec.py", "bands.py")
OFF = "off"


@lru_cache(maxsize=1)
def code_fingerprint() -> str:
    """SHA-256 over footgen's version and the source of the modules in :data:`DEPENDS_ON`."""
    root = Path(footgen.__file__).resolve().parent
    digest = hashlib.sha256(footgen.__version__.encode("utf-8"))
    for name in DEPENDS_ON:
        path = root / name
        files = sorted(path.rglob("*.py")) if path.is_dir() else [path]
        for file in files:
            digest.update(file.relative_to(root).as_posix().encode("utf-8"))
            digest.update(file.read_bytes())
    return digest.hexdigest()


def folder() -> Path | None:
    setting = os.environ.get("FOOTGEN_CACHE_DIR")
    if setting == OFF:
        return None
    if setting:
        return Path(setting)
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "footgen"


def key(kind: str, question: str) -> str:
    return hashlib.sha256(f"{kind}\n{code_fingerprint()}\n{question}".encode("utf-8")).hexdigest()


def load(kind: str, question: str) -> object | None:
    where = folder()
    if where is None:
        return None
    try:
        return json.loads((where / kind / f"{key(kind, question)}.json").read_text("utf-8"))
    except (OSError, ValueError):
        return None


def store(kind: str, question: str, answer: object) -> None:
    where = folder()
    if where is None:
        return
    target = where / kind / f"{key(kind, question)}.json"
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=target.parent, suffix=".tmp")
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            json.dump(answer, handle)
        os.replace(tmp, target)
    except OSError:
        return


#: Spec fields that do not change the copper, left out of a sizing's question.
NOT_COPPER = ("calibration", "history", "revision", "description", "$schema")


def sized(spec: "Spec", model: str) -> "Sizing":
    """``footgen.sizing.size(spec, model)``, answered from the cache when this copper was sized
    before."""
    copper_fields = {k: v for k, v in spec.raw.items() if k not in NOT_COPPER}
    return _sized(spec, model, json.dumps([model, copper_fields], sort_keys=True))


@lru_cache(maxsize=64)
def _sized(spec: "Spec", model: str, question: str) -> "Sizing":
    from footgen import sizing
    from footgen.geometry.layout import Sizing

    answer = load("sizing", question)
    if isinstance(answer, dict):
        return Sizing(answer["arm_length_mm"], answer["height_mm"], answer["feed_short_spacing_mm"], answer["method"],
                      tuple(answer["notes"]), answer["meander_pitch_mm"])
    numbers = sizing.size(spec, model=model)
    store("sizing", question, {
        "arm_length_mm": numbers.arm_length_mm, "height_mm": numbers.height_mm,
        "feed_short_spacing_mm": numbers.feed_short_spacing_mm, "method": numbers.method,
        "notes": list(numbers.notes), "meander_pitch_mm": numbers.meander_pitch_mm,
    })
    return numbers
