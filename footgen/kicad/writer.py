"""KiCad footprint writer: a :class:`~footgen.geometry.layout.Layout` to ``.kicad_mod`` text.

Knows the KiCad s-expression format (through kiutils) and nothing of physics.  Layout
coordinates are mm with y up; KiCad's are mm with y down, so y is negated here and only here.

What KiCad 9 needs (see DEVELOPERS.md): the antenna is one custom pad (pad 1, the feed, on
F.Cu only: no paste, no mask opening) whose outline touches the ground pad (pad 2, with the
plated shunt vias numbered 2 as well); a net-tie group "1, 2" makes that short legitimate;
the clearance is a rule area on every copper layer; keep-out settings are always explicit.
"""

from __future__ import annotations

from dataclasses import dataclass

from kiutils.footprint import DrillDefinition, Footprint, Pad, PadOptions
from kiutils.items.common import Effects, Font, Position
from kiutils.items.fpitems import FpLine, FpPoly, FpText
from kiutils.items.gritems import GrPoly
from kiutils.items.zones import Hatch, KeepoutSettings, Zone, ZonePolygon
from shapely.geometry import LineString, Polygon

from footgen.geometry.layout import COURTYARD_WIDTH_MM, FAB_WIDTH_MM, SILK_WIDTH_MM, Layout, PadShape

#: Every copper layer KiCad 9 knows, as KiCad itself lists them in a rule area.  A single
#: "*.Cu" entry is NOT equivalent: KiCad moves such a zone to a "Rescue" layer.
COPPER_LAYERS: tuple[str, ...] = ("F.Cu", "B.Cu") + tuple(f"In{i}.Cu" for i in range(1, 31))
#: Decimal places written for mm values (1 nm).
MM_DECIMALS = 6
#: Solid zone connection for the ground pad and the shunt vias (KiCad's code 2).
ZONE_CONNECT_SOLID = 2
TEXT_SIZE_MM = 1.0
TEXT_THICKNESS_MM = 0.15


@dataclass(frozen=True)
class FootprintMeta:
    """Identity of the footprint (no physics)."""

    name: str
    library: str
    description: str
    tags: str
    properties: tuple[tuple[str, str], ...]
    edit_stamp: str  # 8 hex digits; fixed per spec so output is byte-stable


def _mm(value: float) -> float:
    return round(value, MM_DECIMALS) + 0.0


def _pos(x: float, y: float, angle: float | None = None) -> Position:
    return Position(X=_mm(x), Y=_mm(-y), angle=angle)


def _ring(poly: Polygon, dx: float = 0.0, dy: float = 0.0) -> list[Position]:
    if poly.interiors:
        raise ValueError("polygon with holes cannot be written as one KiCad polygon")
    coords = list(poly.exterior.coords)[:-1]
    return [_pos(x - dx, y - dy) for x, y in coords]


#: Layers of a land a part is soldered to (the matching network's pads).
SOLDERABLE_LAYERS = ("F.Cu", "F.Paste", "F.Mask")


def _font() -> Effects:
    return Effects(font=Font(height=TEXT_SIZE_MM, width=TEXT_SIZE_MM, thickness=TEXT_THICKNESS_MM))


def _pad(pad: PadShape) -> Pad:
    w, h = pad.size
    if pad.rotation_deg % 180:
        w, h = h, w  # rectangles are written unrotated with swapped sides
    cx, cy = pad.center
    common = dict(number=pad.number, position=_pos(cx, cy), size=Position(X=_mm(w), Y=_mm(h)))
    if pad.kind == "thru":
        return Pad(
            type="thru_hole",
            shape="circle",
            drill=DrillDefinition(diameter=_mm(pad.drill_mm or 0.0)),
            layers=["*.Cu"],
            zoneConnect=ZONE_CONNECT_SOLID,
            **common,
        )
    if pad.shape == "custom":
        assert pad.outline is not None
        primitive = GrPoly(coordinates=_ring(pad.outline, cx, cy), width=0, fill="yes")
        return Pad(
            type="smd",
            shape="custom",
            layers=["F.Cu"],
            customPadOptions=PadOptions(clearance="outline", anchor="rect"),
            customPadPrimitives=[primitive],
            **common,
        )
    layers = SOLDERABLE_LAYERS if pad.solderable else ["F.Cu"]
    return Pad(type="smd", shape="rect", layers=list(layers), zoneConnect=ZONE_CONNECT_SOLID, **common)


def _keepout(name: str, poly: Polygon, *, no_tracks: bool, no_vias: bool, no_pour: bool, front_only: bool) -> Zone:
    def rule(forbidden: bool) -> str:
        return "not_allowed" if forbidden else "allowed"

    return Zone(
        net=0,
        netName="",
        layers=["F.Cu"] if front_only else list(COPPER_LAYERS),
        name=name,
        hatch=Hatch(style="edge", pitch=0.5),
        connectPads=None,
        clearance=0,
        minThickness=0.25,
        keepoutSettings=KeepoutSettings(
            tracks=rule(no_tracks), vias=rule(no_vias), pads="allowed", copperpour=rule(no_pour), footprints="allowed"
        ),
        polygons=[ZonePolygon(coordinates=_ring(poly))],
    )


def _outline(poly: Polygon, layer: str, width: float) -> FpPoly:
    return FpPoly(layer=layer, coordinates=_ring(poly), width=width, fill="none")


def _line(line: LineString, layer: str, width: float) -> list[FpLine]:
    pts = list(line.coords)
    return [FpLine(start=_pos(*a), end=_pos(*b), layer=layer, width=width) for a, b in zip(pts, pts[1:])]


def footprint(layout: Layout, meta: FootprintMeta) -> Footprint:
    """The kiutils footprint object for ``layout``."""
    fp = Footprint(version="20211014", generator="footgen", tedit=meta.edit_stamp)
    fp.libId = meta.name
    fp.description = meta.description
    fp.tags = meta.tags
    fp.properties = dict(meta.properties)
    has_vias = bool(layout.vias)
    fp.attributes.type = "through_hole" if has_vias else "smd"
    fp.attributes.excludeFromBom = True
    fp.attributes.excludeFromPosFiles = True
    fp.netTiePadGroups = ["1, 2"]

    silk_y = min(y for line in layout.silk for _, y in line.coords)
    fx0, fy0, fx1, fy1 = layout.fab_outline.bounds
    fp.graphicItems = [
        FpText(type="reference", text="REF**", position=_pos(layout.feed_point[0], silk_y - 1.2), layer="F.SilkS", effects=_font()),
        FpText(type="value", text=meta.name, position=_pos(0.5 * (fx0 + fx1), fy1 + 1.5), layer="F.Fab", effects=_font()),
        FpText(type="user", text="${REFERENCE}", position=_pos(0.5 * (fx0 + fx1), 0.5 * (fy0 + fy1)), layer="F.Fab", effects=_font()),
        _outline(layout.fab_outline, "F.Fab", FAB_WIDTH_MM),
        _outline(layout.courtyard, "F.CrtYd", COURTYARD_WIDTH_MM),
    ]
    for line in layout.silk:
        fp.graphicItems += _line(line, "F.SilkS", SILK_WIDTH_MM)
    fp.pads = [_pad(p) for p in layout.pads]
    fp.zones = [
        _keepout(k.name, k.polygon, no_tracks=k.no_tracks, no_vias=k.no_vias, no_pour=k.no_pour, front_only=k.front_only)
        for k in layout.keepouts
    ]
    return fp


def render(layout: Layout, meta: FootprintMeta) -> str:
    """The ``.kicad_mod`` file text (byte-stable for the same layout and meta)."""
    return footprint(layout, meta).to_sexpr()
