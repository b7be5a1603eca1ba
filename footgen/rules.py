"""Fab rule checks on the layout (not on the KiCad file).

Each rule is a function ``(layout, fab) -> list[Violation]`` in :data:`RULES`.  Every violation
names the rule, the measured and the allowed value in mm, a location in KiCad's footprint frame
(mm, y down, origin at the feed point), and the spec field to change with a value that passes.

Rules on distances a board's own rule check measures between the footprint's items (pad to pad,
copper to hole, hole to hole, drill, annular ring, copper to edge) use :func:`design_limits`: the
fab's limit or a default board's, whichever is stricter.  The others use the fab's limits.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import asdict, dataclass, replace
from typing import Callable

import shapely
from shapely.geometry import Polygon
from shapely.geometry.base import BaseGeometry
from shapely.ops import nearest_points

from footgen.board_limits import design_limits
from footgen.geometry.ifa import Trace
from footgen.geometry.layout import Layout
from footgen.spec import FabLimits

#: Slack for floating-point and 1 nm grid snapping when comparing against a limit (mm).
RULE_TOLERANCE_MM = 1e-5
#: Area below which the part of a polygon lost to a morphological opening is numerical noise (mm^2).
OPENING_NOISE_MM2 = 1e-6


@dataclass(frozen=True)
class Violation:
    rule: str
    measured_mm: float
    allowed_mm: float
    x_mm: float
    y_mm: float  # KiCad's footprint frame: y down
    message: str
    severity: str = "error"
    #: The spec field (JSON path) to change, and a value for it that passes this rule.
    field: str = ""
    fix_value: float | str = 0.0  # a string for a choice field (e.g. a package)

    def line(self) -> str:
        return (
            f"{self.severity}: {self.rule}: {self.message}: measured {self.measured_mm:.4f} mm, "
            f"allowed >= {self.allowed_mm:.4f} mm at ({self.x_mm:.3f}, {self.y_mm:.3f}) mm; "
            f"fix: set {self.field} to {_fmt(self.fix_value)}"
        )

    def as_dict(self) -> dict:
        data = asdict(self)
        for key in ("measured_mm", "allowed_mm", "x_mm", "y_mm", "fix_value"):
            if isinstance(data[key], float):
                data[key] = round(data[key], 6)
        return data


def _fmt(value: float | str) -> str:
    if isinstance(value, str):
        return f'"{value}"'
    return f"{value:.3f}".rstrip("0").rstrip(".")


def _up(value: float) -> float:
    """Round a passing value up to the next micrometre, so it still passes when printed."""
    return math.ceil(round(value * 1000.0, 6)) / 1000.0


def _where(a: BaseGeometry, b: BaseGeometry) -> tuple[float, float]:
    pa, pb = nearest_points(a, b)
    return (0.5 * (pa.x + pb.x), 0.5 * (pa.y + pb.y))


def _too_close(rule: str, a: BaseGeometry, b: BaseGeometry, allowed: float, what: str) -> list[Violation]:
    distance = a.distance(b)
    if distance + RULE_TOLERANCE_MM >= allowed:
        return []
    x, y = _where(a, b)
    return [Violation(rule, distance, allowed, x, y, what)]


def _trace_segments(trace: Trace) -> list[Polygon]:
    half = trace.width_mm / 2
    return [shapely.geometry.LineString(seg).buffer(half, cap_style="flat", join_style="mitre") for seg in trace.segments()]


# --- rules ------------------------------------------------------------------------------------


def rule_trace_width(layout: Layout, fab: FabLimits) -> list[Violation]:
    """Every trace at least the fab's minimum width, and no narrow neck in the merged copper."""
    out = []
    for trace in layout.copper.traces:
        if trace.width_mm + RULE_TOLERANCE_MM < fab.min_trace_mm:
            (x0, y0), (x1, y1) = trace.points[0], trace.points[1]
            out.append(Violation("trace_width", trace.width_mm, fab.min_trace_mm, (x0 + x1) / 2, (y0 + y1) / 2, f"{trace.role} is too narrow"))
    if not out:
        r = fab.min_trace_mm / 2 - RULE_TOLERANCE_MM
        opened = layout.antenna.buffer(-r, join_style="mitre").buffer(r, join_style="mitre")
        lost = layout.antenna.difference(opened.buffer(RULE_TOLERANCE_MM, join_style="mitre"))
        if lost.area > OPENING_NOISE_MM2:
            c = lost.representative_point()
            out.append(Violation("trace_width", 0.0, fab.min_trace_mm, c.x, c.y, "copper narrower than the minimum width (neck)"))
    return out


def rule_turn_gap(layout: Layout, fab: FabLimits) -> list[Violation]:
    """Copper-to-copper gaps inside the antenna: meander turns, legs, arm segments."""
    pieces: list[tuple[str, int, Polygon]] = []
    for trace in layout.copper.traces:
        for i, poly in enumerate(_trace_segments(trace)):
            pieces.append((trace.role, i, poly))
    out = []
    for (ra, ia, pa), (rb, ib, pb) in itertools.combinations(pieces, 2):
        if ra == rb and abs(ia - ib) <= 1:
            continue  # consecutive segments of one trace share a corner
        if pa.intersects(pb):
            if _joined_by_design(ra, ia, rb, ib):
                continue
            c = pa.intersection(pb).representative_point()
            out.append(Violation("copper_clearance", 0.0, fab.min_clearance_mm, c.x, c.y, f"{ra} segment {ia} merges with {rb} segment {ib}"))
            continue
        out += _too_close("copper_clearance", pa, pb, fab.min_clearance_mm, f"gap between {ra} segment {ia} and {rb} segment {ib}")
    return out


def _joined_by_design(ra: str, ia: int, rb: str, ib: int) -> bool:
    """Legs join the arm's first (straight) segment; legs never join each other; a dual-band
    IFA's second arm joins the feed leg with its first segment and never touches the main arm."""
    roles = {ra: ia, rb: ib}
    if "second_arm" in roles and len(roles) == 2:
        return "feed_leg" in roles and roles["second_arm"] == 0
    if "arm" in roles and len(roles) == 2:
        return roles["arm"] == 0
    return False


def rule_ground_edge_distance(layout: Layout, fab: FabLimits) -> list[Violation]:
    """RF copper (feed pad, feed leg, arm) to the ground pour; the short leg is ground itself."""
    rf = shapely.union_all([t.polygon() for t in layout.copper.traces if t.role != "short_leg"] + [layout.pad("1").polygon_anchor])
    return _too_close("ground_edge_distance", rf, layout.ground, fab.min_clearance_mm, "RF copper too close to the ground pour")


def rule_pad_clearance(layout: Layout, fab: FabLimits) -> list[Violation]:
    """Feed pad and feed leg to the ground pad and the shunt vias."""
    rf = shapely.union_all([layout.pad("1").polygon_anchor, layout.copper.trace("feed_leg").polygon()])
    allowed = design_limits(fab).min_clearance_mm
    out = []
    for pad in layout.pads:
        if pad.number == "2":
            out += _too_close("pad_clearance", rf, pad.polygon, allowed, f"feed copper too close to ground {pad.kind} pad")
    return out


def rule_copper_to_edge(layout: Layout, fab: FabLimits) -> list[Violation]:
    allowed = design_limits(fab).min_copper_to_edge_mm
    return _too_close("copper_to_edge", layout.antenna, layout.board_edge, allowed, "antenna copper too close to the board edge")


def rule_via_drill(layout: Layout, fab: FabLimits) -> list[Violation]:
    fab = design_limits(fab)
    out = []
    for via in layout.vias:
        if via.drill_mm is not None and via.drill_mm + RULE_TOLERANCE_MM < fab.min_drill_mm:
            out.append(Violation("via_drill", via.drill_mm, fab.min_drill_mm, *via.center, "shunt via drill below the fab minimum"))
    return out


def rule_annular_ring(layout: Layout, fab: FabLimits) -> list[Violation]:
    fab = design_limits(fab)
    out = []
    for via in layout.vias:
        ring = (via.size[0] - (via.drill_mm or 0.0)) / 2
        if ring + RULE_TOLERANCE_MM < fab.min_annular_ring_mm:
            out.append(Violation("annular_ring", ring, fab.min_annular_ring_mm, *via.center, "shunt via annular ring below the fab minimum"))
    return out


def rule_hole_to_hole(layout: Layout, fab: FabLimits) -> list[Violation]:
    fab = design_limits(fab)
    out = []
    for a, b in itertools.combinations(layout.vias, 2):
        wall = math.dist(a.center, b.center) - ((a.drill_mm or 0) + (b.drill_mm or 0)) / 2
        if wall + RULE_TOLERANCE_MM < fab.min_hole_to_hole_mm:
            x, y = (a.center[0] + b.center[0]) / 2, (a.center[1] + b.center[1]) / 2
            out.append(Violation("hole_to_hole", wall, fab.min_hole_to_hole_mm, x, y, "shunt via holes too close"))
    return out


def rule_hole_clearance(layout: Layout, fab: FabLimits) -> list[Violation]:
    """Feed-side copper (pad 1, which includes the short leg) to every via hole; KiCad checks
    this even between the pads of a net tie."""
    allowed = design_limits(fab).min_hole_clearance_mm
    out = []
    for via in layout.vias:
        hole = shapely.geometry.Point(via.center).buffer((via.drill_mm or 0.0) / 2, quad_segs=32)
        out += _too_close("hole_clearance", layout.antenna, hole, allowed, "antenna copper too close to a via hole")
    return out


def rule_keepout_cover(layout: Layout, fab: FabLimits) -> list[Violation]:
    """The clearance keep-out holds the antenna copper above the ground edge plus the fab
    clearance all round (so nothing the board places outside it comes too close)."""
    keepout = next(k.polygon for k in layout.keepouts if k.name == "antenna_clearance")
    above = layout.antenna.intersection(layout.clearance_side)
    needed = above.buffer(fab.min_clearance_mm - RULE_TOLERANCE_MM, join_style="mitre").intersection(layout.clearance_side)
    outside = needed.difference(keepout)
    if outside.area <= OPENING_NOISE_MM2:
        return []
    c = outside.representative_point()
    margin = keepout.exterior.distance(above) if keepout.contains(above) else 0.0
    return [Violation("keepout_margin", margin, fab.min_clearance_mm, c.x, c.y, "antenna copper not inside the clearance keep-out by the fab clearance")]


def rule_matching_pads(layout: Layout, fab: FabLimits) -> list[Violation]:
    """The matching network's lands: pads of different nodes apart by the fab clearance, and
    its RF pads (antenna and radio node) that far from the ground pour."""
    lands = [p for p in layout.pads if p.solderable]
    allowed = design_limits(fab).min_clearance_mm  # KiCad checks them at the board's clearance
    out = []
    for i, a in enumerate(lands):
        for b in lands[i + 1:]:
            if a.number != b.number:
                out += _too_close("matching_pad_clearance", a.polygon, b.polygon, allowed,
                                  f"matching pads {a.number} and {b.number} too close")
        if a.number != "2":
            out += _too_close("matching_pad_clearance", a.polygon, layout.ground, allowed,
                              f"matching pad {a.number} too close to the ground pour")
    return out


RULES: dict[str, Callable[[Layout, FabLimits], list[Violation]]] = {
    "trace_width": rule_trace_width,
    "copper_clearance": rule_turn_gap,
    "ground_edge_distance": rule_ground_edge_distance,
    "pad_clearance": rule_pad_clearance,
    "copper_to_edge": rule_copper_to_edge,
    "via_drill": rule_via_drill,
    "annular_ring": rule_annular_ring,
    "hole_to_hole": rule_hole_to_hole,
    "hole_clearance": rule_hole_clearance,
    "keepout_margin": rule_keepout_cover,
    "matching_pad_clearance": rule_matching_pads,
}


# --- the spec field to change for each rule, and a value that passes ----------------------------


def _deficit(v: Violation) -> float:
    return v.allowed_mm - v.measured_mm


def _fix_turn_gap(v: Violation, layout: Layout, fab: FabLimits) -> tuple[str, float]:
    d = layout.dims
    if d.get("meander_turns", 0.0) > 0:
        return "$.style.meander_pitch_mm", _up(d["meander_pitch_mm"] + _deficit(v))
    return "$.arm.feed_short_spacing_mm", _up(d["feed_short_spacing_mm"] + _deficit(v))


def _fix_hole_clearance(v: Violation, layout: Layout, fab: FabLimits) -> tuple[str, float]:
    smaller = math.floor(round((layout.dims["via_drill_mm"] - 2 * _deficit(v)) * 1000.0, 6)) / 1000.0
    if smaller >= design_limits(fab).min_drill_mm:
        return "$.short.via_drill_mm", smaller
    return "$.short.via_count", 0.0


def _fix_matching_pads(v: Violation, layout: Layout, fab: FabLimits) -> tuple[str, float | str]:
    if "ground pour" in v.message:  # a land too close to the pour: set the pour further back
        return "$.feed.port_gap_mm", _up(layout.dims["port_gap_mm"] + _deficit(v))
    return "$.matching_network.package", LARGER_PACKAGE  # lands too close to each other


#: The matching-network package whose lands stand further apart (written as "0603").
LARGER_PACKAGE = "0603"


FIXES: dict[str, Callable[[Violation, Layout, FabLimits], tuple[str, float | str]]] = {
    "trace_width": lambda v, layout, fab: ("$.trace_width_mm", _up(v.allowed_mm)),
    "copper_clearance": _fix_turn_gap,
    "ground_edge_distance": lambda v, layout, fab: ("$.feed.port_gap_mm", _up(layout.dims["port_gap_mm"] + _deficit(v))),
    "pad_clearance": lambda v, layout, fab: ("$.arm.feed_short_spacing_mm", _up(layout.dims["feed_short_spacing_mm"] + _deficit(v))),
    "copper_to_edge": lambda v, layout, fab: ("$.clearance.edge_distance_mm", _up(layout.dims["edge_distance_mm"] + _deficit(v))),
    "via_drill": lambda v, layout, fab: ("$.short.via_drill_mm", _up(v.allowed_mm)),
    "annular_ring": lambda v, layout, fab: ("$.short.via_annular_ring_mm", _up(v.allowed_mm)),
    "hole_to_hole": lambda v, layout, fab: ("$.short.via_count", 1.0),
    "hole_clearance": _fix_hole_clearance,
    "keepout_margin": lambda v, layout, fab: ("$.clearance.short_inset_mm", _up(layout.dims["short_inset_mm"] + _deficit(v))),
    "matching_pad_clearance": _fix_matching_pads,
}


def check(layout: Layout, fab: FabLimits) -> list[Violation]:
    """All violations of all rules, in a stable order, located in KiCad's footprint frame (y
    down) and each with the spec field to change and a value that passes."""
    found: list[Violation] = []
    for name, rule in RULES.items():
        for v in rule(layout, fab):
            field, value = FIXES[name](v, layout, fab)
            found.append(replace(v, y_mm=-v.y_mm + 0.0, field=field, fix_value=value))
    return found


def report_dict(violations: list[Violation], fab: FabLimits) -> dict:
    return {
        "ok": not any(v.severity == "error" for v in violations),
        "fab": asdict(fab),
        "design_limits": asdict(design_limits(fab)),
        "violations": [v.as_dict() for v in violations],
    }
