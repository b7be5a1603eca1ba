"""The whole footprint layout in mm: antenna copper, pads, vias, keep-outs, outlines.

Built in the canonical frame (ground edge on the x axis, ground at y < 0, arm towards +x,
origin at the feed point on the ground edge), then mirrored for a left-running arm, rotated
and snapped to the grid once.  Pure geometry: shapely in, shapely out; nothing about KiCad.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
import numpy as np
import shapely
from shapely.geometry import LineString, Point, Polygon, box
from shapely.geometry.base import BaseGeometry

from footgen.board_limits import design_limits
from footgen.errors import InfeasibleSpecError, SpecError
from footgen.geometry.ifa import IfaCopper, Trace, counted_meander_min_length_mm, counted_meander_pitch_mm
from footgen.geometry.matching_pads import MatchingPads, matching_pads
from footgen.geometry.registry import get_generator
from footgen.spec import Spec

#: Gap kept between the antenna copper and the sides of the clearance (mm), on top of the fab
#: clearance; common practice, no source.
SIDE_MARGIN_MM = 0.5
#: Courtyard expansion around everything the footprint owns (mm); KiCad library convention.
COURTYARD_MARGIN_MM = 0.25
#: Meander turn-to-turn gap must be at least this multiple of the trace width, so neighbouring
#: turns do not couple so tightly that the meander stops radiating like a line (common
#: practice, no source); the fab clearance is the other lower bound.
MEANDER_GAP_PER_WIDTH = 1.0
#: Default lowest meander height as a fraction of the arm height (common practice, no source).
MEANDER_MIN_HEIGHT_FRACTION = 0.4
#: How far the short leg's copper reaches into the ground pad below the ground edge (mm), so
#: the two join over a solid overlap; common practice, no source.
SHORT_ROOT_OVERLAP_MM = 0.2
#: Silkscreen line width (mm); KiCad library convention.
SILK_WIDTH_MM = 0.12
FAB_WIDTH_MM = 0.1
COURTYARD_WIDTH_MM = 0.05
#: Half-size of the box that stands for "the half-plane beyond the ground edge" (mm).
HALF_PLANE_MM = 10_000.0


@dataclass(frozen=True)
class PadShape:
    """A pad: ``number`` "1" is the feed (RF net), "2" the ground (short and shunt vias)."""

    number: str
    kind: str  # "smd" or "thru"
    shape: str  # "rect", "circle" or "custom"
    center: tuple[float, float]
    size: tuple[float, float]
    drill_mm: float | None = None
    rotation_deg: int = 0
    #: For custom pads: the full copper outline (absolute coordinates).
    outline: Polygon | None = None
    #: A land a part is soldered to (paste and mask opening), not bare antenna copper.
    solderable: bool = False

    @property
    def polygon(self) -> BaseGeometry:
        """The pad's whole copper (for a custom pad its full outline)."""
        if self.shape == "custom" and self.outline is not None:
            return self.outline
        return self.polygon_anchor

    @property
    def polygon_anchor(self) -> BaseGeometry:
        """The pad's basic shape (a custom pad's anchor rectangle)."""
        if self.shape == "circle":
            return Point(self.center).buffer(self.size[0] / 2, quad_segs=32)
        w, h = self.size
        if self.rotation_deg % 180:
            w, h = h, w
        cx, cy = self.center
        return box(cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2)


@dataclass(frozen=True)
class KeepOut:
    """A rule area on all copper layers, or on the antenna's own (front) copper layer only."""

    name: str
    polygon: Polygon
    no_tracks: bool
    no_vias: bool
    no_pour: bool
    front_only: bool = False


@dataclass(frozen=True)
class Layout:
    """Everything the rule checker and the writers need, in mm."""

    copper: IfaCopper
    antenna: Polygon  # F.Cu copper of pad 1 (feed pad + legs + arm)
    pads: tuple[PadShape, ...]
    keepouts: tuple[KeepOut, ...]
    ground: Polygon  # model of the board's ground pour (F.Cu) next to the antenna
    clearance_box: Polygon
    clearance_side: Polygon  # the half-plane beyond the ground edge (clipped to a large box)
    board_edge: LineString
    courtyard: Polygon
    fab_outline: Polygon
    silk: tuple[LineString, ...]
    feed_point: tuple[float, float]
    dims: dict[str, float] = field(default_factory=dict)

    @property
    def vias(self) -> tuple[PadShape, ...]:
        return tuple(p for p in self.pads if p.kind == "thru")

    def pad(self, number: str, kind: str = "smd") -> PadShape:
        return next(p for p in self.pads if p.number == number and p.kind == kind)


@dataclass(frozen=True)
class Sizing:
    """The three numbers that size an IFA (mm), and where they came from."""

    arm_length_mm: float
    height_mm: float
    feed_short_spacing_mm: float
    method: str
    notes: tuple[str, ...] = ()
    #: A meander pitch fixed by the sizing (a fitted meander's pitch, frozen while refining so
    #: the copper changes continuously with the arm length); None: from the spec or fitted.
    meander_pitch_mm: float | None = None
    #: A dual-band IFA's second arm: centreline length from the feed leg and height (None: none).
    second_arm_length_mm: float | None = None
    second_arm_height_mm: float | None = None


# ---------------------------------------------------------------------------------------------


def max_arm_height_mm(spec: Spec) -> float:
    """Highest arm centreline that keeps the copper inside the clearance and off the board edge
    (by the fab's copper-to-edge limit or a default board's, whichever is larger)."""
    cl = spec.clearance
    to_edge = design_limits(spec.fab).min_copper_to_edge_mm
    top = min(cl.depth_mm - spec.fab.min_clearance_mm, cl.depth_mm + cl.edge_distance_mm - to_edge)
    return top - spec.trace_width_mm / 2


def short_inset_mm(spec: Spec) -> float:
    inset = spec.clearance.short_inset_mm
    return inset if inset is not None else spec.short.stub_width_mm / 2 + spec.fab.min_clearance_mm + SIDE_MARGIN_MM


def arm_x_limit_mm(spec: Spec, feed_short_spacing_mm: float) -> float:
    """Largest x of the arm centreline (canonical frame, feed at x = 0)."""
    box_x0 = -feed_short_spacing_mm - short_inset_mm(spec)
    box_x1 = box_x0 + spec.clearance.width_mm
    return box_x1 - spec.fab.min_clearance_mm - SIDE_MARGIN_MM - spec.trace_width_mm / 2


def min_meander_pitch_mm(spec: Spec) -> float:
    gap = max(spec.fab.min_clearance_mm, MEANDER_GAP_PER_WIDTH * spec.trace_width_mm)
    return spec.trace_width_mm + gap


def min_path_pitch_mm(spec: Spec) -> float:
    """Closest centre-to-centre distance of two parts of an explicit path: the fab's limit."""
    return spec.trace_width_mm + spec.fab.min_clearance_mm


def min_arm_length_mm(spec: Spec, height_mm: float, feed_short_spacing_mm: float) -> float:
    """Shortest arm the style can build: through the last leg of a meander with a fixed number
    of legs; 0 for every other style (their shortest arm is the sizing's own bound)."""
    style = spec.style
    if style.meander_legs is None or style.kind != "meandered" or style.path_mm is not None:
        return 0.0
    s = feed_short_spacing_mm
    pitch_min = min_meander_pitch_mm(spec)
    start_x = pitch_min if style.meander_start_mm is None else style.meander_start_mm - s
    room = arm_x_limit_mm(spec, s) - start_x
    depth = meander_depth_mm(spec, height_mm) or 0.0
    pitch = counted_meander_pitch_mm(room, style.meander_legs, style.meander_pitch_mm)
    return counted_meander_min_length_mm(lead_mm=start_x + s, depth_mm=depth, pitch_mm=pitch, legs=style.meander_legs)


def meander_depth_mm(spec: Spec, height_mm: float) -> float | None:
    style = spec.style
    if style.kind != "meandered":
        return None
    if style.meander_height_mm is not None:
        return style.meander_height_mm
    low = style.min_height_mm if style.min_height_mm is not None else MEANDER_MIN_HEIGHT_FRACTION * height_mm
    if low >= height_mm:
        raise SpecError("$.style.min_height_mm", low, f"must be below the arm height ({height_mm:.3f} mm)")
    return height_mm - low


def generate_copper(spec: Spec, sizing: Sizing) -> IfaCopper:
    """The antenna's copper in the canonical frame for ``sizing``."""
    s = sizing.feed_short_spacing_mm
    params: dict[str, float | None] = dict(
        arm_length_mm=sizing.arm_length_mm,
        height_mm=sizing.height_mm,
        feed_short_spacing_mm=s,
        trace_width_mm=spec.trace_width_mm,
        short_width_mm=spec.short.stub_width_mm,
        feed_root_mm=spec.feed.pad_length_mm / 2,
        short_root_mm=SHORT_ROOT_OVERLAP_MM,
    )
    style = spec.style
    if style.path_mm is not None:
        params.update(path_mm=style.path_mm, min_pitch_mm=min_path_pitch_mm(spec))
    elif style.kind == "meandered":
        params.update(
            x_max_mm=arm_x_limit_mm(spec, s),
            min_pitch_mm=min_meander_pitch_mm(spec),
            meander_height_mm=meander_depth_mm(spec, sizing.height_mm),
            meander_pitch_mm=style.meander_pitch_mm if sizing.meander_pitch_mm is None else sizing.meander_pitch_mm,
        )
        if style.meander_start_mm is not None:
            params["meander_start_mm"] = style.meander_start_mm
        if style.meander_legs is not None:
            params["meander_legs"] = style.meander_legs
    _check_ground_under_legs(spec, s)
    generator = get_generator(style.generator)
    try:
        copper = generator(**params)
    except InfeasibleSpecError as exc:
        raise InfeasibleSpecError(_SPEC_PATHS.get(exc.path, exc.path), exc.value, exc.fix) from None
    end_x = max(x for x, _ in copper.arm_path)
    limit = arm_x_limit_mm(spec, s)
    if end_x > limit + 1e-9:
        fits = limit + s
        raise InfeasibleSpecError(
            "$.arm.length_mm" if spec.arm.length_mm is not None else "$.clearance.width_mm",
            round(sizing.arm_length_mm, 3) if spec.arm.length_mm is not None else spec.clearance.width_mm,
            f"a straight arm of {sizing.arm_length_mm:.2f} mm needs a clearance {spec.clearance.width_mm + end_x - limit:.2f} mm wide; "
            f"at most {fits:.2f} mm fits: widen the clearance or use style meandered",
        )
    if spec.second_arm is not None:
        from footgen.geometry.dualband import with_second_arm

        copper = with_second_arm(spec, copper, sizing)
    return copper


def ground_x_range_mm(spec: Spec, feed_short_spacing_mm: float) -> tuple[float, float]:
    """x extent of the ground plane in the canonical frame (feed at x = 0)."""
    box_x0 = -feed_short_spacing_mm - short_inset_mm(spec)
    center = box_x0 + spec.clearance.width_mm / 2 + spec.ground_plane.offset_mm
    return center - spec.ground_plane.width_mm / 2, center + spec.ground_plane.width_mm / 2


def _check_ground_under_legs(spec: Spec, s: float) -> None:
    """The short must land on the ground and the feed pad sit in it: refuse a ground plane that
    does not reach under both."""
    need_lo = -s - spec.short.pad_span_mm / 2 - spec.fab.min_clearance_mm
    need_hi = spec.feed.pad_width_mm / 2 + spec.feed.port_gap_mm + spec.fab.min_clearance_mm
    gx0, gx1 = ground_x_range_mm(spec, s)
    if gx0 > need_lo + 1e-9 or gx1 < need_hi - 1e-9:
        shift = (need_lo - gx0) if gx0 > need_lo else (need_hi - gx1)
        raise InfeasibleSpecError(
            "$.ground_plane.offset_mm" if spec.ground_plane.width_mm >= need_hi - need_lo else "$.ground_plane.width_mm",
            spec.ground_plane.offset_mm if spec.ground_plane.width_mm >= need_hi - need_lo else spec.ground_plane.width_mm,
            f"the ground plane must reach under the short and the feed (x {need_lo:.2f} to {need_hi:.2f} mm from the feed); "
            f"move it by {shift:+.2f} mm (offset_mm) or widen it",
        )


_SPEC_PATHS = {
    "arm_length_mm": "$.arm.length_mm",
    "feed_short_spacing_mm": "$.arm.feed_short_spacing_mm",
    "height_mm": "$.arm.height_mm",
    "meander_start_mm": "$.style.meander_start_mm",
    "meander_legs": "$.style.meander_legs",
    "meander_height_mm": "$.style.meander_height_mm",
    "meander_pitch_mm": "$.style.meander_pitch_mm",
}


def build_layout(spec: Spec, sizing: Sizing) -> Layout:
    """Lay out the footprint for ``spec`` with the given sizing, placed and snapped."""
    return place(canonical_layout(spec, sizing), spec)


def canonical_layout(spec: Spec, sizing: Sizing) -> Layout:
    copper = generate_copper(spec, sizing)
    s = sizing.feed_short_spacing_mm
    feed, short, fab = spec.feed, spec.short, spec.fab

    # Feed pad (pad 1) sits below the ground edge, in a notch of the ground pour.
    pl, pw = feed.pad_length_mm, feed.pad_width_mm
    feed_rect = box(-pw / 2, -pl, pw / 2, 0.0)
    antenna = _single_polygon(shapely.simplify(shapely.union_all([copper.polygon, feed_rect]), 0.0))

    # Ground pad (pad 2) below the short leg, holding the shunt vias in a column.  The short leg
    # (part of pad 1's copper) overlaps pad 2 by SHORT_ROOT_OVERLAP_MM; the via holes keep the
    # copper-to-hole clearance from it (checked even between the pads of a net tie), and each
    # other the hole-to-hole distance, both at least a default board's.
    limits = design_limits(fab)
    via_d = short.via_diameter_mm
    pitch = max(via_d, short.via_drill_mm + limits.min_hole_to_hole_mm)
    n = short.via_count
    first_via_y = -(SHORT_ROOT_OVERLAP_MM + limits.min_hole_clearance_mm + short.via_drill_mm / 2)
    pad2_w = short.pad_span_mm
    pad2_len = max(pl, -first_via_y + (n - 1) * pitch + via_d / 2 if n else 0.0)
    pad2_center = (-s, -pad2_len / 2)
    pads = [
        PadShape("1", "smd", "custom", (0.0, -pl / 2), (pw, pl), outline=antenna),
        PadShape("2", "smd", "rect", pad2_center, (pad2_w, pad2_len)),
    ]
    for k in range(n):
        pads.append(PadShape("2", "thru", "circle", (-s, first_via_y - k * pitch), (via_d, via_d), drill_mm=short.via_drill_mm))

    # Clearance box, board edge, ground pour model.
    cl = spec.clearance
    bx0 = -s - short_inset_mm(spec)
    bx1 = bx0 + cl.width_mm
    clearance_box = box(bx0, 0.0, bx1, cl.depth_mm)
    edge_y = cl.depth_mm + cl.edge_distance_mm
    board_edge = LineString([(bx0, edge_y), (bx1, edge_y)])
    gx0, gx1 = ground_x_range_mm(spec, s)
    gap = feed.port_gap_mm
    notch = box(-pw / 2 - gap, -pl - gap, pw / 2 + gap, 0.0)
    network = _matching_network(spec)
    if network is not None:
        pads += [PadShape(p.number, "smd", "rect", _center(p.rect), _size(p.rect), solderable=True) for p in network.pads]
        notch = _network_notch(notch, network, gap)
    ground = box(gx0, -spec.ground_plane.length_mm, gx1, 0.0).difference(notch)
    keepouts = (
        KeepOut("antenna_clearance", clearance_box, no_tracks=True, no_vias=True, no_pour=True),
        # The notch only clears the pour beside the feed pad on its own layer; the inner and
        # bottom grounds stay under the feed (a grounded-coplanar feed).
        KeepOut("feed_notch", notch, no_tracks=False, no_vias=True, no_pour=True, front_only=True),
    )
    owned = shapely.union_all([clearance_box, notch, antenna] + [p.polygon for p in pads])
    cx0, cy0, cx1, cy1 = owned.bounds
    m = COURTYARD_MARGIN_MM
    courtyard = box(cx0 - m, cy0 - m, cx1 + m, cy1 + m)
    fab_outline = clearance_box
    # Silkscreen: an arrow below the feed notch pointing at the feed, clear of all copper pads.
    ty = notch.bounds[1] - 0.4
    silk = (
        LineString([(-0.6, ty - 0.8), (0.0, ty), (0.6, ty - 0.8), (-0.6, ty - 0.8)]),
    )
    dims = {
        "arm_length_mm": copper.arm_length_mm,
        "arm_height_mm": copper.height_mm,
        "feed_short_spacing_mm": s,
        "trace_width_mm": spec.trace_width_mm,
        "short_width_mm": spec.short.stub_width_mm,
        "clearance_width_mm": cl.width_mm,
        "clearance_depth_mm": cl.depth_mm,
        "meander_turns": float(copper.meander_count),
        "copper_area_mm2": antenna.area,
        "edge_distance_mm": cl.edge_distance_mm,
        "port_gap_mm": gap,
        "short_inset_mm": short_inset_mm(spec),
        "via_drill_mm": short.via_drill_mm,
        "meander_pitch_mm": copper.meander_pitch_mm or 0.0,
    }
    if copper.second_arm_path:
        from footgen.geometry.dualband import meander_legs
        from footgen.geometry.ifa import path_length

        dims["second_arm_length_mm"] = path_length(copper.second_arm_path)
        dims["second_arm_height_mm"] = copper.second_arm_path[0][1]
        dims["second_arm_meander_legs"] = float(meander_legs(copper.second_arm_path))
    return Layout(
        copper=copper,
        antenna=antenna,
        pads=tuple(pads),
        keepouts=keepouts,
        ground=ground,
        clearance_box=clearance_box,
        clearance_side=box(-HALF_PLANE_MM, 0.0, HALF_PLANE_MM, HALF_PLANE_MM),
        board_edge=board_edge,
        courtyard=courtyard,
        fab_outline=fab_outline,
        silk=silk,
        feed_point=(0.0, 0.0),
        dims=dims,
    )


def _matching_network(spec: Spec) -> "MatchingPads | None":
    """The pads of the spec's ``matching_network`` section, if it has one."""
    section = spec.raw.get("matching_network")
    if section is None:
        return None
    return matching_pads(kind=section.get("network", "pi"), package=section.get("package", "0402"),
                         feed_pad_width_mm=spec.feed.pad_width_mm, feed_pad_length_mm=spec.feed.pad_length_mm,
                         min_clearance_mm=design_limits(spec.fab).min_clearance_mm)


def _network_notch(notch: Polygon, network: "MatchingPads", gap: float) -> Polygon:
    """The feed notch grown to keep the pour ``gap`` from the network's RF pads, leaving its
    ground pads outside so the pour joins them."""
    grown = shapely.union_all([notch] + [p.buffer(gap, join_style="mitre") for p in network.rf()])
    cut = grown.difference(shapely.union_all(network.ground()))
    if isinstance(cut, Polygon):
        return _orient_ccw(cut)
    return _orient_ccw(max(cut.geoms, key=lambda g: g.intersection(notch).area))


def _orient_ccw(poly: Polygon) -> Polygon:
    return shapely.normalize(shapely.geometry.polygon.orient(poly, 1.0))


def _center(rect: Polygon) -> tuple[float, float]:
    x0, y0, x1, y1 = rect.bounds
    return ((x0 + x1) / 2, (y0 + y1) / 2)


def _size(rect: Polygon) -> tuple[float, float]:
    x0, y0, x1, y1 = rect.bounds
    return (x1 - x0, y1 - y0)


def _single_polygon(geom: BaseGeometry) -> Polygon:
    if isinstance(geom, Polygon):
        return geom
    raise InfeasibleSpecError("$.arm", "disconnected copper", "the antenna copper falls apart; check the feed and short dimensions")


# ---------------------------------------------------------------------------------------------
# placement: mirror, rotate, snap (exact for multiples of 90 degrees)

_ROTATIONS: dict[int, tuple[int, int, int, int]] = {
    0: (1, 0, 0, 1),
    90: (0, -1, 1, 0),
    180: (-1, 0, 0, -1),
    270: (0, 1, -1, 0),
}


def placement_matrix(spec: Spec) -> tuple[int, int, int, int]:
    """Integer matrix (a, b, c, d): canonical (x, y) -> (a x + b y, c x + d y) after mirroring
    for a left-running arm and rotating counter-clockwise by ``output.rotation_deg``."""
    a, b, c, d = _ROTATIONS[spec.output.rotation_deg]
    mx = -1 if spec.clearance.arm_direction == "left" else 1
    return (a * mx, b, c * mx, d)


def place(layout: Layout, spec: Spec) -> Layout:
    """Mirror for a left-running arm, rotate about the feed point, snap to the grid."""
    grid_mm = spec.output.grid_nm * 1e-6
    return transform_layout(layout, placement_matrix(spec), grid_mm, spec.output.rotation_deg)


def _snap(value: float, grid_mm: float) -> float:
    snapped = round(value / grid_mm) * grid_mm
    return round(snapped, 6) + 0.0  # 1 nm is 1e-6 mm; +0.0 turns -0.0 into 0.0


def transform_layout(layout: Layout, matrix: tuple[int, int, int, int], grid_mm: float, rotation_deg: int) -> Layout:
    a, b, c, d = matrix

    def pt(p: tuple[float, float]) -> tuple[float, float]:
        x, y = p
        return (_snap(a * x + b * y, grid_mm), _snap(c * x + d * y, grid_mm))

    def geom(g: BaseGeometry) -> BaseGeometry:
        return shapely.transform(g, lambda xy: _snap_array(xy @ [[a, c], [b, d]], grid_mm))

    def trace(t: Trace) -> Trace:
        return replace(t, points=tuple(pt(p) for p in t.points))

    copper = layout.copper
    placed_copper = IfaCopper(
        traces=tuple(trace(t) for t in copper.traces),
        arm_path=tuple(pt(p) for p in copper.arm_path),
        feed_x_mm=copper.feed_x_mm,
        short_x_mm=copper.short_x_mm,
        height_mm=copper.height_mm,
        meander_count=copper.meander_count,
        meander_pitch_mm=copper.meander_pitch_mm,
        second_arm_path=tuple(pt(p) for p in copper.second_arm_path) if copper.second_arm_path else None,
    )
    pads = tuple(
        replace(
            p,
            center=pt(p.center),
            outline=_orient(geom(p.outline)) if p.outline is not None else None,
            rotation_deg=(p.rotation_deg + rotation_deg) % 360,
        )
        for p in layout.pads
    )
    return replace(
        layout,
        copper=placed_copper,
        antenna=_orient(geom(layout.antenna)),
        pads=pads,
        keepouts=tuple(replace(k, polygon=_orient(geom(k.polygon))) for k in layout.keepouts),
        ground=_orient(geom(layout.ground)),
        clearance_box=_orient(geom(layout.clearance_box)),
        clearance_side=_orient(geom(layout.clearance_side)),
        board_edge=geom(layout.board_edge),
        courtyard=_orient(geom(layout.courtyard)),
        fab_outline=_orient(geom(layout.fab_outline)),
        silk=tuple(geom(s) for s in layout.silk),
        feed_point=pt(layout.feed_point),
    )


def _snap_array(xy: np.ndarray, grid_mm: float) -> np.ndarray:
    return np.round(np.round(xy / grid_mm) * grid_mm, 6) + 0.0


def _orient(g: BaseGeometry) -> BaseGeometry:
    """Counter-clockwise exteriors after a mirror, so output does not depend on the transform."""
    return shapely.normalize(shapely.geometry.polygon.orient(g, 1.0)) if isinstance(g, Polygon) else shapely.normalize(g)

