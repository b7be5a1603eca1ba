"""The copper drawing a reviewer signs off: every sizing dimension, pads, board edge, legend,
KiCad's axes, rule-check markers and a summary, as SVG (always) and PNG (when asked).

Plain geometry on a :class:`footgen.canvas.Canvas`; no plotting library.  The footprint is drawn
unrotated (as KiCad shows it at rotation 0, mirrored for a left-running arm); the summary states
the rotation and the axis arrows show where KiCad's +x and +y point.  Dimensions sit in lanes
outside the copper, packed so that no two labels overlap; :func:`drawing` returns the canvas so
tests can check every text box.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

from shapely import affinity
from shapely.geometry import MultiPolygon, Polygon, box
from shapely.geometry.base import BaseGeometry

from footgen.canvas import Box, Canvas, Circle, Shape, Text, text_height, text_width
from footgen.dimlines import (
    GRID_SLACK_MM, LANE_GAP_PX, LANE_PX, SIZE_DIM, Dim, Frame, Note, arrow, draw_dim, lane_widths, line, pack_lanes, text_centered, wrap,
)
from footgen.draw_dual import legs_words, second_arm_dims, second_arm_heights, second_arm_line
from footgen.geometry.layout import Layout
from footgen.spec import Spec

#: Ground shown this far below the deepest pad (mm); the plane itself may be much larger.
GROUND_VIEW_MM = 2.0
CANVAS_WIDTH_PX = 1100.0
MARGIN_PX = 16.0
#: Tallest the copper view may get before the width stops setting the scale (px).
MAX_VIEW_HEIGHT_PX = 430.0
SIZE_TITLE, SIZE_SUB, SIZE_NOTE = 17.0, 13.0, 12.0
LINE_GAP_PX = 4.0
#: A callout one row further down is worth this much horizontal leader (px).
NOTE_ROW_COST_PX = 120.0
COLORS = {
    "ground": "#c3ccd6",
    "copper": "#d9822b",
    "pad": "#9c4f12",
    "keepout": "#e7f0fa",
    "keepout_edge": "#2b6cb0",
    "via": "#333333",
    "edge": "#2b6cb0",
    "violation": "#c53030",
    "text": "#1a202c",
    "note": "#4a5568",
}

Point = tuple[float, float]


def _polys(geom: BaseGeometry) -> list[Polygon]:
    if isinstance(geom, MultiPolygon):
        return list(geom.geoms)
    return [geom] if isinstance(geom, Polygon) and not geom.is_empty else []


def rotation_of(layout: Layout) -> int:
    """The footprint's rotation (degrees counter-clockwise), read off the feed leg, which stands
    on the ground edge pointing into the clearance area (+y before placement)."""
    (x0, y0), (x1, y1) = layout.copper.trace("feed_leg").points[:2]
    ux, uy = x1 - x0, y1 - y0
    return round(math.degrees(math.atan2(-ux, uy))) % 360


def violation_point(v) -> Point:
    """A rule violation's location in the layout's own frame (mm, y up); violations carry
    KiCad's footprint frame (y down)."""
    return (v.x_mm, -v.y_mm + 0.0)


# --------------------------------------------------------------------------------- dimensions


@dataclass(frozen=True)
class Plane:
    """The footprint unrotated: every shape in drawing-plane mm (y up, ground edge at y = 0)."""

    antenna: Polygon
    pad1: Polygon  # the feed pad's rectangle
    pad2: list[Polygon]
    vias: list[tuple[Point, float, float]]
    ground: BaseGeometry
    clearance: Polygon
    notch: Polygon
    edge: tuple[Point, Point]
    arm: list[Point]
    direction: int  # +1: the arm runs towards +x, -1: towards -x
    view: tuple[float, float, float, float]
    #: A dual-band IFA's second arm: its centreline and the copper of both arms (main, second).
    second_arm: tuple[Point, ...] = ()
    arm_copper: tuple[Polygon, Polygon] | None = None


def unrotate(layout: Layout, rotation_deg: int) -> Plane:
    def turn(g: BaseGeometry) -> BaseGeometry:
        return affinity.rotate(g, -rotation_deg, origin=(0.0, 0.0))

    c, s = _unit_cs(rotation_deg)

    def pt(p: Point) -> Point:
        x, y = p
        return (c * x + s * y + 0.0, -s * x + c * y + 0.0)

    clearance = turn(layout.clearance_box)
    notch = next((turn(k.polygon) for k in layout.keepouts if k.front_only), box(0, 0, 0, 0))
    pads = [p for p in layout.pads if p.kind == "smd" and p.number == "2"]
    pad2 = [turn(p.polygon) for p in pads]
    vias = [(pt(v.center), v.size[0] / 2, (v.drill_mm or 0.0) / 2) for v in layout.vias]
    edge_pts = [pt(p) for p in layout.board_edge.coords]
    arm = [pt(p) for p in layout.copper.arm_path]
    antenna = turn(layout.antenna)
    owned = [clearance, notch, antenna, *pad2]
    x0 = min(g.bounds[0] for g in owned)
    x1 = max(g.bounds[2] for g in owned)
    y0 = min(g.bounds[1] for g in owned) - GROUND_VIEW_MM
    y1 = max(max(y for _, y in edge_pts), clearance.bounds[3])
    ground = turn(layout.ground).intersection(box(x0 - 1.0, y0, x1 + 1.0, 0.0))
    direction = 1 if arm[-1][0] >= arm[0][0] else -1
    second = tuple(pt(p) for p in layout.copper.second_arm_path or ())
    arms = (turn(layout.copper.trace("arm").polygon()), turn(layout.copper.trace("second_arm").polygon())) if second else None
    return Plane(antenna, turn(layout.pad("1").polygon_anchor), pad2, vias, ground, clearance, notch, (edge_pts[0], edge_pts[-1]), arm, direction, (x0 - 1.0, y0, x1 + 1.0, y1),
                 second, arms)


def dimensions(plane: Plane, layout: Layout) -> tuple[list[Dim], list[Note]]:
    d, m = layout.dims, plane.direction
    h, s, w = d["arm_height_mm"], d["feed_short_spacing_mm"], d["trace_width_mm"]
    ws = d["short_width_mm"]
    cx0, cy0, cx1, cy1 = plane.clearance.bounds
    near_x, far_x = (cx0, cx1) if m > 0 else (cx1, cx0)
    near, far = ("left", "right") if m > 0 else ("right", "left")
    xs = -m * s  # short leg centreline
    top = h + w / 2
    dims = [
        Dim("x", (xs, h + ws / 2), (0.0, top), f"feed tap {s:.2f}", "top"),
        Dim("x", (near_x, cy1), (xs, h + ws / 2), f"inset {abs(xs - near_x):.2f}", "top"),
    ]
    arm = plane.arm
    verticals = [a[0] for a, b in zip(arm, arm[1:]) if abs(a[0] - b[0]) < GRID_SLACK_MM]
    notes: list[Note] = []
    if len(verticals) >= 2:
        pitch = abs(verticals[1] - verticals[0])
        dims.append(Dim("x", (verticals[0], top), (verticals[1], top), f"pitch {pitch:.2f}", "top"))
        notes.append(Note(arm[-1], f"arm {d['arm_length_mm']:.2f} along the centreline, {int(d['meander_turns'])} turns"))
    else:
        dims.append(Dim("x", (arm[0][0], top), (arm[-1][0], top), f"arm {d['arm_length_mm']:.2f}", "top"))
    if plane.second_arm:  # after the feed tap and inset (pack_lanes then searches the order)
        dims[2:2] = second_arm_dims(plane, d)
    dims.append(Dim("x", (cx0, cy1), (cx1, cy1), f"clearance area width {d['clearance_width_mm']:.2f}", "top"))
    dims.append(Dim("y", (near_x, 0.0), (xs - m * ws / 2, h), f"height {h:.2f}", near))
    dims.append(Dim("y", (near_x, 0.0), (near_x, cy1), f"depth {d['clearance_depth_mm']:.2f}", near))
    (ex0, ey), (ex1, _) = plane.edge
    edge_gap = ey - cy1
    if edge_gap > GRID_SLACK_MM:
        dims.append(Dim("y", (near_x, cy1), (near_x, ey), f"edge {edge_gap:.2f}", near))
    bottom, crest = min(p[1] for p in arm), max(p[1] for p in arm)  # snapped to the grid
    if bottom < crest - GRID_SLACK_MM:
        low = max((p for p in arm if abs(p[1] - bottom) < GRID_SLACK_MM), key=lambda p: m * p[0])
        high = max((p for p in arm if abs(p[1] - crest) < GRID_SLACK_MM), key=lambda p: m * p[0])
        dims.append(Dim("y", high, low, f"meander height {crest - bottom:.2f}", far))
    flats = [(a, b) for a, b in zip(arm, arm[1:]) if abs(a[1] - b[1]) < GRID_SLACK_MM and abs(a[0] - b[0]) > w]
    a, b = max(flats, key=lambda seg: max(m * seg[0][0], m * seg[1][0]))
    tx = max(a[0], b[0]) - w / 2 if m > 0 else min(a[0], b[0]) + w / 2
    if plane.second_arm:  # before the trace's (pack_lanes then searches the order)
        dims += second_arm_heights(plane, d, far)
    dims.append(Dim("y", (tx, a[1] - w / 2), (tx, a[1] + w / 2), f"trace {w:.2f}", far))
    if plane.second_arm and d.get("second_arm_meander_legs"):
        notes.append(Note(plane.second_arm[-1], f"second arm {d['second_arm_length_mm']:.2f} along the centreline, "
                                                 f"{legs_words(int(d['second_arm_meander_legs']))}"))
    return dims, notes


def drawing_subtitle(spec: Spec) -> str:
    """The drawing's subtitle: the band (both bands of a dual-band IFA, each with its arm's
    kind), the style and the revision."""
    def band(t) -> str:
        return f"{t.low_hz / 1e6:g}-{t.high_hz / 1e6:g} MHz"

    second = spec.second_arm
    if second is None:
        return f"{band(spec.target)}, {spec.style.kind}, revision {spec.revision}"
    return (f"{band(spec.target)} (main arm, {spec.style.kind}) and {band(second.target)} (second arm, {second.kind}), "
            f"revision {spec.revision}")


def pad_notes(layout: Layout, plane: Plane) -> list[Note]:
    pw, pl = layout.pad("1").size
    w2, l2 = layout.pad("2").size
    gap = layout.dims["port_gap_mm"]
    vias = layout.vias
    via_text = f", {len(vias)} vias, drill {vias[0].drill_mm:.2f}" if vias else ""
    p1, p2 = plane.pad1.centroid, plane.pad2[0].centroid
    return [
        Note((p1.x, p1.y), f"pad 1 (feed) {pw:.2f} wide x {pl:.2f} long, port gap {gap:.2f}"),
        Note((p2.x, p2.y), f"pad 2 (ground) {w2:.2f} wide x {l2:.2f} long{via_text}"),
    ]


def summary_lines(layout: Layout, rotation_deg: int, violations: Sequence) -> list[str]:
    d = layout.dims
    pw, pl = layout.pad("1").size
    lines = [
        f"Arm length {d['arm_length_mm']:.2f} mm along the centreline (from above the short to the open end), "
        f"arm height {d['arm_height_mm']:.2f} mm, feed tap {d['feed_short_spacing_mm']:.2f} mm, "
        f"trace width {d['trace_width_mm']:.2f} mm, short width {d['short_width_mm']:.2f} mm.",
    ]
    if layout.copper.meander_pitch_mm is not None and d["meander_turns"]:
        lines.append(f"Meander: {int(d['meander_turns'])} turns at a pitch of {layout.copper.meander_pitch_mm:.2f} mm, "
                     f"{_meander_height(layout):.2f} mm high.")
    lines += [
        f"Clearance area {d['clearance_width_mm']:.2f} x {d['clearance_depth_mm']:.2f} mm; copper area {d['copper_area_mm2']:.2f} mm^2; "
        f"feed pad {pw:.2f} mm wide x {pl:.2f} mm long.",
        "All dimensions in mm. Coordinates: KiCad footprint frame, mm, y down, origin at the feed point.",
        (f"The footprint is rotated {rotation_deg} deg counter-clockwise in KiCad; it is drawn unrotated and the "
         "+x / +y arrows show KiCad's axes." if rotation_deg else "The footprint is not rotated: this is how KiCad shows it."),
    ]
    if violations:
        lines.append(f"Rule check: {len(violations)} violation(s), marked in red:")
        for n, v in enumerate(violations, start=1):
            x, y = violation_point(v)
            lines.append(f"{n}. {v.rule}: {v.message}, measured {v.measured_mm:.3f} mm, allowed >= {v.allowed_mm:.3f} mm "
                         f"at ({x:.2f}, {-y + 0.0:.2f}).")
    else:
        lines.append("Rule check: no violations against the fab profile.")
    return lines


def _meander_height(layout: Layout) -> float:
    h = layout.copper.height_mm
    c, s = _unit_cs(rotation_of(layout))
    heights = [-s * x + c * y for x, y in layout.copper.arm_path]
    return h - min(heights)


def _unit_cs(rotation_deg: int) -> tuple[int, int]:
    return round(math.cos(math.radians(rotation_deg))), round(math.sin(math.radians(rotation_deg)))


def drawing(layout: Layout, title: str, subtitle: str, violations: Sequence = (), *, second_arm_kind: str | None = None) -> Canvas:
    """The copper drawing as a canvas (every label's box known); ``second_arm_kind``: the spec's
    kind of a dual-band IFA's second arm, for the summary."""
    rot = rotation_of(layout)
    plane = unrotate(layout, rot)
    dims, notes = dimensions(plane, layout)
    notes = pad_notes(layout, plane) + notes
    vx0, vy0, vx1, vy1 = plane.view
    gw, gh = vx1 - vx0, vy1 - vy0
    width = CANVAS_WIDTH_PX
    sides = {side: [d for d in dims if d.side == side] for side in ("top", "left", "right")}
    side_w = {"left": 0.0, "right": 0.0}
    for _ in range(4):  # lane widths depend on the scale and the scale on the lane widths
        room = width - 2 * MARGIN_PX - sum(side_w.values()) - 2 * LANE_GAP_PX
        k = min(room / gw, MAX_VIEW_HEIGHT_PX / gh)
        placed = {side: pack_lanes(ds, k, (k * vx0 - side_w["left"], k * vx1 + side_w["right"]), search_order=True)
                  for side, ds in sides.items()}
        side_w = {s: sum(lane_widths(placed[s])) for s in ("left", "right")}
    view_w, view_h = k * gw, k * gh
    total = side_w["left"] + view_w + side_w["right"] + 2 * LANE_GAP_PX
    view_left = (width - total) / 2 + side_w["left"] + LANE_GAP_PX
    cv = Canvas(width, 0.0)
    y = MARGIN_PX
    cv.add(Text(MARGIN_PX, y, title, SIZE_TITLE))
    cv.add(Text(MARGIN_PX, y + text_height(SIZE_TITLE) + 2, subtitle, SIZE_SUB, color=COLORS["note"]))
    glyph_bottom = _axes_glyph(cv, width - MARGIN_PX, y, rot)
    y = max(y + text_height(SIZE_TITLE) + text_height(SIZE_SUB) + 8, glyph_bottom + 4)
    # top lanes: as high as their labels reach above the view
    n_top = 1 + max((p.lane for p in placed["top"]), default=-1)
    view_top = y + n_top * LANE_PX + LANE_GAP_PX
    frame = Frame(k, view_left - k * vx0, view_top + k * vy1)
    _copper(cv, plane, frame)
    for p in placed["top"]:
        draw_dim(cv, p, frame, view_top - LANE_GAP_PX - (p.lane + 0.5) * LANE_PX)
    for side, sign in (("left", -1.0), ("right", 1.0)):
        widths = lane_widths(placed[side])
        edge = view_left if side == "left" else view_left + view_w
        for p in placed[side]:
            pos = edge + sign * (LANE_GAP_PX + sum(widths[: p.lane]) + widths[p.lane] / 2)
            draw_dim(cv, p, frame, pos)
    view_bottom = view_top + view_h
    _origin(cv, frame)
    y = _notes(cv, notes, frame, view_bottom + 6)
    _violations(cv, violations, frame, rot)
    y = _legend(cv, y + 10, bool(violations))
    y += 6
    entries = summary_lines(layout, rot, violations)
    if plane.second_arm:
        entries.insert(1, second_arm_line(plane, layout.dims, second_arm_kind))
    for entry in entries:
        for part in wrap(entry, width - 2 * MARGIN_PX, SIZE_NOTE):
            cv.add(Text(MARGIN_PX, y, part, SIZE_NOTE))
            y += text_height(SIZE_NOTE) + LINE_GAP_PX
    cv.height = math.ceil(y + MARGIN_PX)
    return cv


def _copper(cv: Canvas, plane: Plane, frame: Frame) -> None:
    def poly(g: BaseGeometry, **style) -> None:
        for p in _polys(g):
            cv.add(Shape(tuple(frame(c) for c in p.exterior.coords[:-1]), **style))
            for hole in p.interiors:
                cv.add(Shape(tuple(frame(c) for c in hole.coords[:-1]), fill="#ffffff", stroke=style.get("stroke"), width=style.get("width", 1.0)))

    poly(plane.ground, fill=COLORS["ground"])
    poly(plane.clearance, fill=COLORS["keepout"], stroke=COLORS["keepout_edge"], width=0.8, dash=(5.0, 3.0))
    poly(plane.notch, fill=COLORS["keepout"], stroke=COLORS["keepout_edge"], width=0.6, dash=(3.0, 2.0))
    poly(plane.antenna, fill=COLORS["copper"], stroke="#000000", width=0.6)
    for p in plane.pad2:
        poly(p, fill=COLORS["pad"], stroke="#000000", width=0.6)
    for (cx, cy), r, drill in plane.vias:
        X, Y = frame((cx, cy))
        cv.add(Circle(X, Y, frame.k * r, fill=COLORS["pad"], stroke="#000000", width=0.5))
        cv.add(Circle(X, Y, frame.k * drill, fill="#ffffff", stroke="#000000", width=0.4))
    a, b = plane.edge
    cv.add(line(frame(a), frame(b), COLORS["edge"], 2.4))


def _origin(cv: Canvas, frame: Frame) -> None:
    """The footprint origin (the feed point) as a ring."""
    ox, oy = frame((0.0, 0.0))
    cv.add(Circle(ox, oy, 4.0, fill=None, stroke="#000000", width=1.2))


AXES_ARROW_PX = 24.0


def _axes_glyph(cv: Canvas, right: float, top: float, rotation_deg: int) -> float:
    """KiCad's +x and +y as they point in this drawing, top right of the title band."""
    c, s = _unit_cs(rotation_deg)
    dirs = (("+x", (c, s)), ("+y", (-s, c)))  # screen directions (y down)
    reach = AXES_ARROW_PX + 4 + text_width("+x", SIZE_DIM)
    ox = right - (reach if any(d[0] > 0 for _, d in dirs) else 6.0)
    oy = top + (reach if any(d[1] < 0 for _, d in dirs) else 6.0)
    cv.add(Circle(ox, oy, 4.0, fill=None, stroke="#000000", width=1.2))
    for label, (dx, dy) in dirs:
        tip = (ox + AXES_ARROW_PX * dx, oy + AXES_ARROW_PX * dy)
        cv.add(line((ox + 4 * dx, oy + 4 * dy), tip, "#000000", 1.2))
        cv.add(arrow(tip, (dx, dy), "#000000"))
        tw, th = text_width(label, SIZE_DIM), text_height(SIZE_DIM)
        cv.add(text_centered(tip[0] + dx * (tw / 2 + 3), tip[1] + dy * (th / 2 + 2), label, SIZE_DIM))
    caption = "KiCad footprint axes, origin (ring) at the feed point"
    x = ox - 10 - text_width(caption, SIZE_NOTE) - (reach if any(d[0] < 0 for _, d in dirs) else 0.0)
    cv.add(Text(x, oy - text_height(SIZE_NOTE) / 2, caption, SIZE_NOTE, color=COLORS["note"]))
    return oy + (reach if any(d[1] > 0 for _, d in dirs) else 6.0)


def _notes(cv: Canvas, notes: Sequence[Note], frame: Frame, top: float) -> float:
    """Callouts in rows below the view, each with a leader to its target; returns the y below
    them.  No callout covers another's target column, so the vertical leaders cross no text."""
    taken = [t.box for t in cv.texts]
    targets = [frame(n.target) for n in notes]
    th = text_height(SIZE_NOTE)
    row_h = th + 8
    bottom = top
    for note, (tx, ty) in sorted(zip(notes, targets), key=lambda nt: nt[1][0]):
        tw = text_width(note.label, SIZE_NOTE)
        others = [ox for ox, _ in targets if ox != tx]
        candidates = [tx - 6, tx + 6 - tw] + [ox + 6 for ox in others] + [ox - 6 - tw for ox in others]
        # nearest first: the text's distance from the leader's column, then from tx - 6
        candidates = sorted({min(max(c, MARGIN_PX), cv.width - MARGIN_PX - tw) for c in candidates}, key=lambda c: abs(c - tx + 6))
        placed, best = None, math.inf
        for row in range(2 * len(notes) + 1):
            y = top + row * row_h
            for x in candidates:
                mine = Box(x, y, x + tw, y + th)
                cost = max(x - tx, tx - x - tw, 0.0) + NOTE_ROW_COST_PX * row
                if cost >= best or any(mine.grow(4).intersects(b) for b in taken) or any(x - 3 <= ox <= x + tw + 3 for ox in others):
                    continue
                placed, best = (x, y, mine), cost
        if placed is None:  # a row of its own below everything placed so far
            x, y = candidates[0], max([top] + [b.y1 + 8 for b in taken])
            placed = (x, y, Box(x, y, x + tw, y + th))
        x, y, mine = placed
        ax = min(max(tx, x + 4), x + tw - 4)
        cv.add(Shape(((tx, ty), (tx, y - 4), (ax, y - 4), (ax, y)), stroke=COLORS["note"], width=0.8, closed=False))
        cv.add(Circle(tx, ty, 2.0, fill=COLORS["note"]))
        cv.add(Text(x, y, note.label, SIZE_NOTE, color=COLORS["text"], background="#ffffff"))
        taken.append(mine)
        bottom = max(bottom, mine.y1)
    return bottom


def _violations(cv: Canvas, violations: Sequence, frame: Frame, rotation_deg: int) -> None:
    c, s = _unit_cs(rotation_deg)
    taken = [t.box for t in cv.texts]
    for n, v in enumerate(violations, start=1):
        x, y = violation_point(v)
        X, Y = frame((c * x + s * y, -s * x + c * y))
        cv.add(Circle(X, Y, 7.0, fill=None, stroke=COLORS["violation"], width=2.0))
        label = str(n)
        tw, th = text_width(label, SIZE_DIM), text_height(SIZE_DIM)
        for dx, dy in ((9, -9 - th), (9, 9), (-9 - tw, -9 - th), (-9 - tw, 9), (14, -th / 2), (-14 - tw, -th / 2)):
            t = Text(X + dx, Y + dy, label, SIZE_DIM, color=COLORS["violation"], background="#ffffff")
            if t.box.x0 >= 0 and t.box.x1 <= cv.width and not any(t.box.grow(1).intersects(b) for b in taken):
                cv.add(t)
                taken.append(t.box)
                break


LEGEND = (
    ("antenna copper (pad 1)", "copper"),
    ("pad 2 (ground) and shunt vias", "pad"),
    ("ground pour", "ground"),
    ("clearance area and feed notch (rule areas)", "keepout"),
    ("board edge", "edge"),
)


def _legend(cv: Canvas, y: float, with_violations: bool) -> float:
    items = list(LEGEND) + ([("rule violation", "violation")] if with_violations else [])
    x = MARGIN_PX
    th = text_height(SIZE_NOTE)
    for label, key in items:
        w = 18 + 6 + text_width(label, SIZE_NOTE) + 18
        if x + w > cv.width - MARGIN_PX:
            x, y = MARGIN_PX, y + th + 6
        sy = y + th / 2
        if key == "edge":
            cv.add(line((x, sy), (x + 18, sy), COLORS["edge"], 2.4))
        elif key == "violation":
            cv.add(Circle(x + 9, sy, 6.0, fill=None, stroke=COLORS["violation"], width=2.0))
        else:
            dash = (4.0, 2.0) if key == "keepout" else None
            stroke = COLORS["keepout_edge"] if key == "keepout" else "#000000"
            cv.add(Shape(((x, sy - 6), (x + 18, sy - 6), (x + 18, sy + 6), (x, sy + 6)), fill=COLORS[key], stroke=stroke, width=0.6, dash=dash))
        cv.add(Text(x + 24, y, label, SIZE_NOTE))
        x += w
    return y + th + 6


def render_svg_png(layout: Layout, title: str, subtitle: str, violations: Sequence = (), *,
                   second_arm_kind: str | None = None) -> tuple[bytes, bytes]:
    """SVG and PNG bytes of the copper drawing (deterministic for a given layout)."""
    cv = drawing(layout, title, subtitle, violations, second_arm_kind=second_arm_kind)
    return cv.svg(), cv.png()
