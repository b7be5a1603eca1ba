"""Strict JSON for spec files: what the JSON standard allows and a spec needs, nothing more.

Python's ``json`` reads ``NaN`` and ``Infinity`` (JSON has neither), lets the last of two equal
keys win silently, recurses into any nesting depth and converts digit strings of any length.
:func:`read_json` refuses all of these with one-line :class:`SpecError` messages that say where
in the file the problem is, and bounds the file size; a UTF-8 byte-order mark is allowed.
"""

from __future__ import annotations

from collections.abc import Iterator

import json
import math
from pathlib import Path

from footgen.errors import SpecError

#: Largest spec file read (bytes): a real spec is a few kB.
MAX_SPEC_BYTES = 1_000_000
#: Deepest nesting of JSON arrays and objects accepted (a spec needs 3).
MAX_JSON_DEPTH = 32
#: Longest number literal accepted (characters): more digits than any float can carry.
MAX_NUMBER_CHARS = 40


def read_json(path: Path) -> dict:
    """Read a spec file as strict JSON: UTF-8 (a byte-order mark is allowed), no ``NaN`` or
    ``Infinity``, no key given twice in one object, bounded size, nesting and number length."""
    try:
        with open(path, "rb") as handle:
            raw = handle.read(MAX_SPEC_BYTES + 1)
    except FileNotFoundError:
        raise SpecError(str(path), "missing", "no such spec file; start one with `footgen new`") from None
    except IsADirectoryError:
        raise SpecError(str(path), "a folder", "give the spec's JSON file, not a folder") from None
    except OSError as exc:
        raise SpecError(str(path), "unreadable", f"cannot read the file ({exc.strerror or exc.__class__.__name__})") from None
    if len(raw) > MAX_SPEC_BYTES:
        raise SpecError(str(path), "too large", f"a spec file is at most {MAX_SPEC_BYTES // 1000} kB; is this the right file?")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise SpecError(str(path), "not UTF-8", f"byte {exc.start} is not UTF-8; save the file as UTF-8") from None
    return parse_json_text(text, str(path))


def parse_json_text(text: str, where: str = "spec") -> object:
    """Strict JSON from ``text`` (see :func:`read_json`); ``where`` names the source in errors."""
    depth = _nesting_depth(text)
    if depth > MAX_JSON_DEPTH:
        raise SpecError(where, f"nesting depth {depth}", f"arrays and objects nest at most {MAX_JSON_DEPTH} deep in a spec")
    try:
        return json.loads(
            text,
            object_pairs_hook=_unique_keys,
            parse_constant=_refuse_constant,
            parse_int=_parse_int,
            parse_float=_parse_float,
        )
    except json.JSONDecodeError as exc:
        raise SpecError(f"{where}:{exc.lineno}:{exc.colno}", "invalid JSON", exc.msg) from None
    except _JsonValueError as exc:
        raise SpecError(_where_in_text(text, exc.token, where), exc.value, exc.fix) from None


class _JsonValueError(ValueError):
    """A literal that strict JSON (or a spec) does not allow; raised from the decoder's hooks."""

    def __init__(self, value: str, fix: str, token: str) -> None:
        super().__init__(fix)
        self.value = value
        self.fix = fix
        self.token = token  # the text to look for outside strings, to say where it is


def _outside_strings(text: str) -> Iterator[tuple[int, str, int, int]]:
    """``(index, character, line, column)`` of every character outside JSON strings (the quotes
    themselves count as inside); a linear scan, no recursion, any input size."""
    in_string = escaped = False
    line, column = 1, 1
    for i, ch in enumerate(text):
        if in_string:
            if escaped:
                escaped = False
            elif ch == "\\":
                escaped = True
            elif ch == '"':
                in_string = False
        elif ch == '"':
            in_string = True
        else:
            yield i, ch, line, column
        line, column = (line + 1, 1) if ch == "\n" else (line, column + 1)


def _where_in_text(text: str, token: str, where: str) -> str:
    """``where:line:column`` of the first ``token`` outside JSON strings, else ``where``."""
    if not token:
        return where
    for i, _, line, column in _outside_strings(text):
        if text.startswith(token, i):
            return f"{where}:{line}:{column}"
    return where


def _nesting_depth(text: str) -> int:
    """Deepest bracket nesting outside strings."""
    depth = deepest = 0
    for _, ch, _, _ in _outside_strings(text):
        if ch in "[{":
            depth += 1
            deepest = max(deepest, depth)
        elif ch in "]}":
            depth -= 1
    return deepest


def _unique_keys(pairs: list[tuple[str, object]]) -> dict:
    out: dict = {}
    for key, value in pairs:
        if key in out:
            raise _JsonValueError(_short_text(key), f"duplicate key {_short_text(key)!r}: give each field once", "")
        out[key] = value
    return out


def _refuse_constant(name: str) -> float:
    raise _JsonValueError(name, f"{name} is not a JSON number; give a finite number", name)


def _parse_int(text: str) -> int:
    if len(text.lstrip("-")) > MAX_NUMBER_CHARS:
        raise _JsonValueError(_short_text(text), f"a number of {len(text)} digits; numbers in a spec have at most {MAX_NUMBER_CHARS}", text)
    return int(text)


def _parse_float(text: str) -> float:
    if len(text) > MAX_NUMBER_CHARS:
        raise _JsonValueError(_short_text(text), f"a number of {len(text)} characters; numbers in a spec have at most {MAX_NUMBER_CHARS}", text)
    value = float(text)
    if not math.isfinite(value):
        raise _JsonValueError(_short_text(text), "out of the range of a finite number; give a finite number", text)
    return value


def _short_text(text: str, limit: int = 40) -> str:
    return text if len(text) <= limit else text[: limit - 3] + "..."
