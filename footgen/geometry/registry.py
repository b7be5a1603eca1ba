"""Registry of antenna generators by style name, with a "did you mean" lookup."""

from __future__ import annotations

import difflib
from typing import Callable

from footgen.errors import SpecError
from footgen.geometry.ifa import IfaCopper, meandered_ifa, straight_ifa
from footgen.geometry.path import path_ifa

#: By the style's generator name (``StyleSpec.generator``: its kind, or "path" for a meander
#: drawn as an explicit centreline).
GENERATORS: dict[str, Callable[..., IfaCopper]] = {
    "straight": straight_ifa,
    "meandered": meandered_ifa,
    "path": path_ifa,
}


def get_generator(name: str, *, path: str = "$.style.kind") -> Callable[..., IfaCopper]:
    try:
        return GENERATORS[name]
    except KeyError:
        close = difflib.get_close_matches(name, list(GENERATORS), n=1)
        hint = f" (did you mean {close[0]!r}?)" if close else ""
        raise SpecError(path, name, f"unknown antenna style{hint}; known: {', '.join(GENERATORS)}") from None
