"""An on-disk cache of model sweeps, beside the sizing cache (:mod:`footgen.sizing_cache`).

The measure-retune loop asks the same questions again and again (the sweep of revision 2 in
``predict``, ``match`` and ``report``).  Each answer is stored as JSON under a key that hashes
the question (model, physics model of the copper, frequencies) together with the fingerprint of
footgen's sources, so a changed model never reads an old answer.  The folder and the switch are
the sizing cache's (``$FOOTGEN_CACHE_DIR``; an empty value turns it off).  A cache that cannot be
read or written is skipped silently: it only ever saves time, and the outputs are byte-identical
with or without it (JSON keeps every float exactly).
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

from footgen import sizing_cache


def folder() -> Path | None:
    return sizing_cache.cache_dir()


def key(kind: str, question: str) -> str:
    return hashlib.sha256(f"{kind}\n{sizing_cache.code_fingerprint()}\n{question}".encode("utf-8")).hexdigest()


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
    sizing_cache.write_atomic(where / kind, f"{key(kind, question)}.json", json.dumps(answer))
