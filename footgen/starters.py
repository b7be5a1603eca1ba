"""Starter specs shipped in ``templates/`` (package ``footgen.templates``)."""

from __future__ import annotations

import difflib
import json
from pathlib import Path

from footgen.errors import OverwriteRefusedError, SpecError
from footgen.outputs import atomic_write
from footgen.resources import shipped


def _files() -> dict[str, str]:
    root = shipped("templates")
    return {p.name[: -len(".json")]: p.read_text("utf-8") for p in root.iterdir() if p.name.endswith(".json")}


def list_templates() -> list[tuple[str, str]]:
    """(name, one-line summary) of every template, sorted by name."""
    return [(name, json.loads(text).get("description", "")) for name, text in sorted(_files().items())]


def template_text(name: str) -> str:
    files = _files()
    if name not in files:
        close = difflib.get_close_matches(name, list(files), n=1)
        hint = f" (did you mean {close[0]!r}?)" if close else ""
        raise SpecError("TEMPLATE", name, f"unknown template{hint}; see `footgen new --list`")
    return files[name]


def write_template(name: str, output: Path, *, force: bool = False) -> None:
    text = template_text(name)
    if Path(output).exists() and not force:
        raise OverwriteRefusedError(f"{output}: exists; choose another name or pass --force")
    atomic_write(Path(output), text.encode("utf-8"))
