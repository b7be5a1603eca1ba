"""Pads for a matching network on the feed (spec section ``matching_network``), in mm.

Canonical frame as in :mod:`footgen.geometry.layout` (ground edge on the x axis, ground at y < 0,
feed pad 1 hanging below the edge at x = 0).  The network runs down from the feed pad, in the
feed notch of the ground pour:

- the series part stands vertically under the feed pad: its upper pad (number 1, the antenna
  node) overlaps the feed pad, its lower pad (number 3) is where the radio's 50 ohm track
  connects;
- a shunt part lies horizontally to the right of each node (pi: both nodes; L: the antenna node
  only): its inner pad overlaps the node's series pad, its outer pad (number 2) is ground, joined
  by the pour, which the notch leaves around it.

The starting assembly is a 0 ohm link in the series place and nothing in the shunt places: the
antenna then works as without the network, and the parts a match needs go in after measuring.
Land sizes are typical for the chip size (common practice, no source).
"""

from __future__ import annotations

from dataclasses import dataclass

from shapely.geometry import Polygon, box

from footgen.errors import InfeasibleSpecError

#: Overlap of a part's pad with the copper of its node (mm), so the two join over an area.
NODE_OVERLAP_MM = 0.1


@dataclass(frozen=True)
class Land:
    """Land pattern of a two-terminal chip part: pad length along the part, pad width across
    it, and pad centre-to-centre distance (mm; common practice, no source)."""

    pad_length_mm: float
    pad_width_mm: float
    pitch_mm: float


LANDS: dict[str, Land] = {
    "0402": Land(0.5, 0.6, 1.0),
    "0603": Land(0.8, 0.9, 1.6),
}
#: Shunt places of each network kind: the nodes that get a part to ground.
SHUNT_NODES: dict[str, tuple[str, ...]] = {"pi": ("antenna", "radio"), "L": ("antenna",)}


@dataclass(frozen=True)
class MatchPad:
    """One pad of the network: its number (1 antenna node, 3 radio node, 2 ground), its copper
    rectangle and the place (part) it belongs to."""

    number: str
    rect: Polygon
    place: str


@dataclass(frozen=True)
class MatchingPads:
    """All pads of the network and what the report tells the assembler."""

    pads: tuple[MatchPad, ...]
    package: str
    kind: str

    @property
    def places(self) -> tuple[tuple[str, str, str], ...]:
        """(place, between pads, starting assembly) for each part place."""
        rows = [("series", "pad 1 (antenna) - pad 3 (radio)", "0 ohm link")]
        for node in SHUNT_NODES[self.kind]:
            rows.append((f"shunt at the {node} node", f"pad {'1' if node == 'antenna' else '3'} ({node}) - pad 2 (ground)", "not fitted"))
        return tuple(rows)

    def rf(self) -> list[Polygon]:
        return [p.rect for p in self.pads if p.number != "2"]

    def ground(self) -> list[Polygon]:
        return [p.rect for p in self.pads if p.number == "2"]


def _rect(cx: float, cy: float, w: float, h: float) -> Polygon:
    return box(cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2)


def matching_pads(*, kind: str, package: str, feed_pad_width_mm: float, feed_pad_length_mm: float,
                  min_clearance_mm: float) -> MatchingPads:
    """The network's pads under a feed pad of the given size (canonical frame, mm)."""
    land = LANDS[package]
    a, b, c = land.pad_length_mm, land.pad_width_mm, land.pitch_mm
    if c - b < min_clearance_mm or c - a < min_clearance_mm:
        raise InfeasibleSpecError("$.matching_network.package", package,
                                  f"the {package} land leaves less than the fab clearance ({min_clearance_mm} mm) between pads; use 0603")
    y_antenna = -feed_pad_length_mm - a / 2 + NODE_OVERLAP_MM
    y_radio = y_antenna - c
    x_inner = b / 2 + a / 2 - NODE_OVERLAP_MM
    x_outer = x_inner + c
    if x_outer - a / 2 - feed_pad_width_mm / 2 < min_clearance_mm:
        raise InfeasibleSpecError("$.feed.pad_width_mm", feed_pad_width_mm,
                                  f"too wide for {package} matching pads beside it; at most {2 * (x_outer - a / 2 - min_clearance_mm):.2f} mm")
    pads = [MatchPad("1", _rect(0.0, y_antenna, b, a), "series"), MatchPad("3", _rect(0.0, y_radio, b, a), "series")]
    for node in SHUNT_NODES[kind]:
        y, number = (y_antenna, "1") if node == "antenna" else (y_radio, "3")
        pads.append(MatchPad(number, _rect(x_inner, y, a, b), f"shunt at the {node} node"))
        pads.append(MatchPad("2", _rect(x_outer, y, a, b), f"shunt at the {node} node"))
    return MatchingPads(tuple(pads), package, kind)


def assembly_lines(section: dict | None, chosen: tuple[tuple[str, str], ...] | None = None) -> list[str]:
    """Markdown lines telling which pads get which part, for a spec's ``matching_network``
    section (none without one).  ``chosen``: (place, part) of a recommended match, listed beside
    the starting assembly."""
    if section is None:
        return []
    pads = MatchingPads((), section.get("package", "0402"), section.get("network", "pi"))
    lines = ["## Matching pads", "", f"{pads.package} lands of a {pads.kind} network on the feed; the radio's 50 ohm track "
             "connects to pad 3.", ""]
    if chosen is None:
        lines += ["| place | pads | starting assembly |", "| --- | --- | --- |"]
        return lines + [f"| {place} | {between} | {start} |" for place, between, start in pads.places]
    fitted = dict(chosen)
    missing = [place for place in fitted if place not in {row[0] for row in pads.places}]
    lines += ["| place | pads | starting assembly | recommended match |", "| --- | --- | --- | --- |"]
    lines += [f"| {place} | {between} | {start} | {fitted.get(place, start)} |" for place, between, start in pads.places]
    if missing:
        lines += ["", f"The recommended match needs a {', '.join(missing)}, which these {pads.kind} pads do not have."]
    return lines
