"""Plan of a minimal test board around one generated footprint (pure numbers, no KiCad).

The plan is what ``footgen.plugin.board`` (the only place that imports ``pcbnew``) turns into a
``.kicad_pcb``: an Edge.Cuts outline holding the ground plane and the clearance, a GND pour on
F.Cu and B.Cu ending at the ground edge, stitching vias, the footprint at the origin point and
a feed track on the RF net leaving the feed pad into the ground side.  Board coordinates are
KiCad's (mm, y down).
"""

from __future__ import annotations

from shapely.geometry import box

from footgen.geometry.layout import Layout, ground_x_range_mm, placement_matrix
from footgen.spec import Spec

#: Where the footprint origin (feed point) goes on the test board, KiCad mm.
BOARD_ORIGIN_MM = (100.0, 100.0)
#: Length of the feed track beyond the feed notch (mm).
FEED_TRACK_RUN_MM = 4.0
#: Pitch of the stitching-via grid joining the F.Cu and B.Cu pours (mm); common practice.
STITCH_PITCH_MM = 5.0
#: Stitching vias stay this far from the ground edge and the board edge (mm).
STITCH_MARGIN_MM = 2.0
STITCH_VIA_DRILL_MM = 0.4
STITCH_VIA_SIZE_MM = 0.8
#: The pours' own clearance to other nets (mm), never below the fab's minimum.
ZONE_CLEARANCE_MM = 0.3
ZONE_MIN_WIDTH_MM = 0.25
RF_NET = "RF_ANT"
#: The antenna node between a matching network's series part and the antenna.
ANTENNA_NET = "ANT_NODE"
GND_NET = "GND"


def test_board_plan(spec: Spec, layout: Layout, *, library: str, footprint_file: str) -> dict:
    """Everything the board builder needs, as plain JSON-able data."""
    a, b, c, d = placement_matrix(spec)
    ox, oy = BOARD_ORIGIN_MM

    def board_pt(x: float, y: float) -> list[float]:
        px, py = a * x + b * y, c * x + d * y
        return [round(ox + px, 6) + 0.0, round(oy - py, 6) + 0.0]

    def ring(poly) -> list[list[float]]:
        return [board_pt(x, y) for x, y in list(poly.exterior.coords)[:-1]]

    # canonical-frame geometry, derived from the spec exactly as the layout was
    x0, _, x1, _ = _canonical_bounds(layout, spec)
    gp = spec.ground_plane
    gx0, gx1 = ground_x_range_mm(spec, layout.dims["feed_short_spacing_mm"])
    edge_y = spec.clearance.depth_mm + spec.clearance.edge_distance_mm
    outline = box(min(gx0, x0), -gp.length_mm, max(gx1, x1), edge_y)
    ground = box(gx0, -gp.length_mm, gx1, 0.0)
    pl, gap = spec.feed.pad_length_mm, spec.feed.port_gap_mm
    # start deep enough in the pad that the track's round end stays below the ground edge
    start_y = min(-pl / 2, -spec.feed.pad_width_mm / 2)
    nets = {"rf": RF_NET, "gnd": GND_NET}
    radio = [p for p in layout.pads if p.number == "3"]
    if radio:
        # A matching network on the feed: the track leaves its radio-side pad (3); the antenna
        # node (pad 1) is a net of its own, joined to pad 3 only by the part fitted between them.
        x3, y3 = radio[0].center
        start_y = b * x3 + d * y3  # canonical y: the placement matrix is orthogonal, its inverse its transpose
        nets["antenna"] = ANTENNA_NET
    track = [board_pt(0.0, start_y), board_pt(0.0, -pl - gap - FEED_TRACK_RUN_MM)]
    vias = []
    y = -STITCH_MARGIN_MM - pl - gap - FEED_TRACK_RUN_MM
    while y > -gp.length_mm + STITCH_MARGIN_MM:
        x = gx0 + STITCH_MARGIN_MM
        while x < gx1 - STITCH_MARGIN_MM:
            if abs(x) > 2.0:  # keep the feed track's column free
                vias.append(board_pt(x, y))
            x += STITCH_PITCH_MM
        y -= STITCH_PITCH_MM
    fab = spec.fab
    return {
        "footprint": {
            "library": library,
            "name": spec.name,
            "file": footprint_file,
            "position_mm": [ox, oy],
        },
        "nets": nets,
        "outline_mm": ring(outline),
        "ground_zones": [{"layer": layer, "polygon_mm": ring(ground)} for layer in ("F.Cu", "B.Cu")],
        "zone_clearance_mm": max(ZONE_CLEARANCE_MM, fab.min_clearance_mm),
        "zone_min_width_mm": max(ZONE_MIN_WIDTH_MM, fab.min_trace_mm),
        "feed_track": {"points_mm": track, "width_mm": spec.feed.pad_width_mm},
        "stitch_vias": {"points_mm": vias, "drill_mm": STITCH_VIA_DRILL_MM, "size_mm": STITCH_VIA_SIZE_MM},
        "netclass_clearance_mm": fab.min_clearance_mm,
        "rules": {
            "min_clearance": fab.min_clearance_mm,
            "min_track_width": fab.min_trace_mm,
            "min_connection": fab.min_trace_mm,
            "min_through_hole_diameter": fab.min_drill_mm,
            "min_via_annular_width": fab.min_annular_ring_mm,
            "min_hole_to_hole": fab.min_hole_to_hole_mm,
            "min_hole_clearance": fab.min_clearance_mm,
            "min_copper_edge_clearance": fab.min_copper_to_edge_mm,
        },
    }


def _canonical_bounds(layout: Layout, spec: Spec) -> tuple[float, float, float, float]:
    """Bounds of the clearance box in the canonical frame (undo the placement matrix)."""
    a, b, c, d = placement_matrix(spec)
    # the matrix is orthogonal with integer entries: its inverse is its transpose
    pts = [(a * x + c * y, b * x + d * y) for x, y in layout.clearance_box.exterior.coords]
    xs = [p[0] for p in pts]
    ys = [p[1] for p in pts]
    return min(xs), min(ys), max(xs), max(ys)
