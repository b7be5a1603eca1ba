"""The limits a footprint is laid out and checked against.

A fab profile says what the fab can make; a board whose design rules were never changed checks
its own defaults (``_board_defaults`` in ``data/fab_profiles.json``).  A footprint that is to drop
into such a board meets the larger of the two for every distance the board's rule check measures
between the footprint's own items.
"""

from __future__ import annotations

import json
from dataclasses import fields, replace
from functools import lru_cache
from importlib import resources

from footgen.spec import FabLimits


@lru_cache(maxsize=1)
def board_defaults() -> dict[str, float]:
    """The default design rules of a new board, by fab-limit field name (mm)."""
    data = json.loads(resources.files("footgen.data").joinpath("fab_profiles.json").read_text("utf-8"))
    return {k: float(v) for k, v in data["_board_defaults"].items() if k.startswith("min_")}


#: Board defaults that bind only the board's own items (a track width limits tracks, not the
#: footprint's pad copper), so they do not raise the footprint's limits.
BOARD_ITEMS_ONLY = frozenset({"min_trace_mm"})


def design_limits(fab: FabLimits) -> FabLimits:
    """``fab`` with every limit on the footprint's own items raised to the board default where
    that is stricter."""
    floor = board_defaults()
    names = [f.name for f in fields(FabLimits) if f.name in floor and f.name not in BOARD_ITEMS_ONLY]
    return replace(fab, **{name: max(getattr(fab, name), floor[name]) for name in names})
