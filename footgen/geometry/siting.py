"""Where on a board an antenna's clearance area fits: pure shapely geometry in board mm.

The board comes in as plain data (:class:`BoardView`): the outline, the ground pours and every
other piece of copper or footprint body.  Both KiCad front doors (the SWIG action plugin and
the IPC-API plugin) read their board into that data and ask this module; nothing here knows
KiCad.  Coordinates are KiCad's board frame (mm, y down); rotations are KiCad's (degrees,
counter-clockwise on screen).

A *site* is a place for the clearance area along a straight piece of the outline: the area
(``width_mm`` along the edge, ``depth_mm`` inward) starts ``edge_distance_mm`` inside the edge,
the ground edge lies behind it, the ground pour continues from there into the board.  The
footprint's own frame has the ground edge on y = 0, the clearance area towards -y and the arm
along +x for ``arm_direction`` "right"; :func:`feed_point` turns a site and the built
footprint's clearance offset into the feed point.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from shapely.geometry import LineString, Point, Polygon
from shapely.ops import unary_union

#: Step along an edge between tried positions of the clearance area (mm).
SITE_STEP_MM = 0.5
#: Overlap area below which two shapes only touch (mm^2), and length below which an edge
#: piece is ignored (mm).
TOUCH_AREA_MM2 = 1e-6
MIN_EDGE_MM = 1e-3
#: How far into the board the ground pour must continue behind the ground edge for a site (mm).
GROUND_PROBE_MM = 0.5
#: Outline containment slack (mm): KiCad's outline arcs and our boxes meet at rounding level.
OUTLINE_SLACK_MM = 1e-4
#: Decimals of positions and rotations handed to KiCad (1 nm, 1 micro-degree).
MM_DECIMALS = 6
#: Where the feed is assumed to sit from the area's start before the footprint is built (mm):
#: only places the ground probe of a proposal; the built footprint is checked again.
FEED_OFFSET_GUESS_MM = 3.0


@dataclass(frozen=True)
class Obstacle:
    """Copper or a footprint body the clearance area must stay off (``label`` names it)."""

    label: str
    polygon: Polygon


@dataclass(frozen=True)
class BoardView:
    """What placement needs to know about a board (mm, KiCad frame)."""

    outline: Polygon
    ground: tuple[Polygon, ...]  # the ground net's pours, any copper layer
    obstacles: tuple[Obstacle, ...] = ()
    focus_mm: tuple[float, float] | None = None  # selected item or view centre
    copper_clearance_mm: float = 0.0  # board's copper clearance kept around other copper


@dataclass(frozen=True)
class Site:
    """One place for the clearance area.  ``corner_mm`` is the area's corner on the ground edge
    at the low end along ``along`` (unit vector along the edge); ``inward`` points into the board."""

    corner_mm: tuple[float, float]
    along: tuple[float, float]
    inward: tuple[float, float]
    rotation_deg: float
    arm_direction: str
    edge_distance_mm: float
    ground_width_mm: float
    ground_length_mm: float
    focus_distance_mm: float
    edge_index: int

    def to_dict(self) -> dict:
        return {
            "corner_mm": list(self.corner_mm), "along": list(self.along), "inward": list(self.inward),
            "rotation_deg": self.rotation_deg, "arm_direction": self.arm_direction,
            "edge_distance_mm": self.edge_distance_mm, "ground_width_mm": self.ground_width_mm,
            "ground_length_mm": self.ground_length_mm, "focus_distance_mm": self.focus_distance_mm,
            "edge_index": self.edge_index,
        }

    @classmethod
    def from_dict(cls, data: dict) -> "Site":
        return cls(
            tuple(data["corner_mm"]), tuple(data["along"]), tuple(data["inward"]), float(data["rotation_deg"]),
            str(data["arm_direction"]), float(data["edge_distance_mm"]), float(data["ground_width_mm"]),
            float(data["ground_length_mm"]), float(data["focus_distance_mm"]), int(data["edge_index"]),
        )


def _r(value: float) -> float:
    return round(value, MM_DECIMALS) + 0.0


def rotation_for_inward(inward: tuple[float, float]) -> float:
    """KiCad rotation that turns the footprint's +y (towards its ground) onto ``inward``.
    KiCad rotates local (x, y) by t to (x cos t + y sin t, -x sin t + y cos t)."""
    return _r(math.degrees(math.atan2(inward[0], inward[1])) % 360.0)


def local_x(rotation_deg: float) -> tuple[float, float]:
    """Where the footprint's +x points on the board at ``rotation_deg``."""
    t = math.radians(rotation_deg)
    return (math.cos(t), -math.sin(t))


def clearance_polygon(corner: tuple[float, float], along: tuple[float, float], inward: tuple[float, float], width_mm: float, depth_mm: float) -> Polygon:
    """The clearance area of a site: ``width_mm`` along the edge from ``corner``, ``depth_mm``
    from the ground edge towards the board edge."""
    cx, cy = corner
    ux, uy = along
    nx, ny = inward
    pts = [(cx, cy), (cx + width_mm * ux, cy + width_mm * uy)]
    pts += [(pts[1][0] - depth_mm * nx, pts[1][1] - depth_mm * ny), (cx - depth_mm * nx, cy - depth_mm * ny)]
    return Polygon(pts)


def site_problems(view: BoardView, area: Polygon, feed_mm: tuple[float, float], inward: tuple[float, float]) -> list[str]:
    """Why a clearance area cannot go here (empty list: it fits).  Checks: inside the outline,
    clear of every obstacle by the board's copper clearance, ground pour behind the feed."""
    problems = []
    if not view.outline.buffer(OUTLINE_SLACK_MM).contains(area):
        problems.append("the clearance area leaves the board outline")
    grown = area.buffer(view.copper_clearance_mm, join_style="mitre") if view.copper_clearance_mm > 0 else area
    for obstacle in view.obstacles:
        if grown.intersection(obstacle.polygon).area > TOUCH_AREA_MM2:
            problems.append(f"the clearance area overlaps {obstacle.label}")
    probe = Point(feed_mm[0] + GROUND_PROBE_MM * inward[0], feed_mm[1] + GROUND_PROBE_MM * inward[1])
    if not any(g.contains(probe) for g in view.ground):
        problems.append("no ground pour behind the feed point")
    return problems


def _edges(outline: Polygon) -> list[tuple[int, tuple[float, float], tuple[float, float]]]:
    """Straight pieces of the outline, oriented so the board is on their left in KiCad's
    y-down frame (i.e. counter-clockwise on screen), as (index, start, end)."""
    ring = outline.exterior
    coords = list(ring.coords)
    if ring.is_ccw:  # shapely's ccw is in y-up maths; KiCad's screen is y down
        coords = coords[::-1]
    out = []
    for i, (a, b) in enumerate(zip(coords, coords[1:])):
        if math.dist(a, b) > MIN_EDGE_MM:
            out.append((i, a, b))
    return out


def _ground_extent(view: BoardView, feed: tuple[float, float], along: tuple[float, float], inward: tuple[float, float]) -> tuple[float, float]:
    """(width along the ground edge, length into the board) of the ground pour that holds the
    feed point, measured on lines through a point just behind the ground edge."""
    ground = unary_union(view.ground)
    far = view.outline.length  # longer than any chord of the board
    px, py = feed[0] + GROUND_PROBE_MM * inward[0], feed[1] + GROUND_PROBE_MM * inward[1]
    line_along = LineString([(px - far * along[0], py - far * along[1]), (px + far * along[0], py + far * along[1])])
    line_in = LineString([feed, (feed[0] + far * inward[0], feed[1] + far * inward[1])])
    return _piece_length(ground.intersection(line_along), Point(px, py)), _piece_length(ground.intersection(line_in), Point(px, py))


def _piece_length(geom, through: Point) -> float:
    parts = getattr(geom, "geoms", [geom])
    for part in parts:
        if part.distance(through) < MIN_EDGE_MM:
            return _r(part.length)
    return 0.0


def _ground_start(view: BoardView, edge_pt: tuple[float, float], inward: tuple[float, float], depth_mm: float) -> float | None:
    """Distance from the edge point inward to where the ground pour begins (None: no pour)."""
    ground = unary_union(view.ground)
    far = view.outline.length
    ray = LineString([edge_pt, (edge_pt[0] + far * inward[0], edge_pt[1] + far * inward[1])])
    hit = ground.intersection(ray)
    if hit.is_empty:
        return None
    return Point(edge_pt).distance(hit)


def propose_sites(view: BoardView, *, width_mm: float, depth_mm: float, edge_distance_mm: float = 0.0, feed_offset_mm: float = FEED_OFFSET_GUESS_MM, step_mm: float = SITE_STEP_MM) -> list[Site]:
    """Every run of free positions along each straight outline piece gives one site: the
    position of that run nearest the focus.  Sites are sorted nearest the focus first.

    The area starts ``edge_distance_mm`` inside the edge, or where the ground pour begins if
    that is deeper (an existing cut-out in the pour: the ground edge is the pour's).
    ``feed_offset_mm`` is where the feed sits from the area's start (the arm's start end); it
    only places the ground probe, and the arm runs towards the nearer end of the edge."""
    focus = view.focus_mm or tuple(view.outline.centroid.coords[0])
    sites = []
    for index, a, b in _edges(view.outline):
        length = math.dist(a, b)
        if length + MIN_EDGE_MM < width_mm:
            continue
        u = ((b[0] - a[0]) / length, (b[1] - a[1]) / length)
        n = (u[1], -u[0])  # left of travel in y-down = into the board for this orientation
        rotation = rotation_for_inward(n)
        lx = local_x(rotation)
        positions = [min(i * step_mm, length - width_mm) for i in range(int((length - width_mm) / step_mm) + 2)]
        positions = sorted(set(_r(p) for p in positions))
        run: list[tuple[float, tuple[float, float], str, float]] = []
        runs: list[list] = []
        for s in positions:
            mid = (a[0] + (s + width_mm / 2) * u[0], a[1] + (s + width_mm / 2) * u[1])
            start = _ground_start(view, mid, n, depth_mm)
            e = edge_distance_mm if start is None else max(edge_distance_mm, start - depth_mm)
            corner = (a[0] + s * u[0] + (e + depth_mm) * n[0], a[1] + s * u[1] + (e + depth_mm) * n[1])
            # arm towards the nearer end of the edge: the feed faces the board's inside
            arm_along = u if (s + width_mm / 2) > length / 2 else (-u[0], -u[1])
            arm = "right" if arm_along[0] * lx[0] + arm_along[1] * lx[1] > 0 else "left"
            feed_s = s + feed_offset_mm if arm_along == u else s + width_mm - feed_offset_mm
            feed = (a[0] + feed_s * u[0] + (e + depth_mm) * n[0], a[1] + feed_s * u[1] + (e + depth_mm) * n[1])
            area = clearance_polygon(corner, u, n, width_mm, depth_mm)
            if site_problems(view, area, feed, n):
                if run:
                    runs.append(run)
                run = []
                continue
            run.append((s, corner, arm, e, feed))
        if run:
            runs.append(run)
        for run in runs:
            best = min(run, key=lambda item: (math.dist(_centre(item[1], u, n, width_mm, depth_mm), focus), item[0]))
            _s, corner, arm, e, feed = best
            gw, gl = _ground_extent(view, feed, u, n)
            sites.append(Site(
                (_r(corner[0]), _r(corner[1])), (_r(u[0]), _r(u[1])), (_r(n[0]), _r(n[1])), rotation, arm, _r(e), gw, gl,
                _r(math.dist(_centre(corner, u, n, width_mm, depth_mm), focus)), index,
            ))
    return sorted(sites, key=lambda site: (site.focus_distance_mm, site.edge_index, site.corner_mm))


def _centre(corner, u, n, width_mm: float, depth_mm: float) -> tuple[float, float]:
    return (corner[0] + width_mm / 2 * u[0] - depth_mm / 2 * n[0], corner[1] + width_mm / 2 * u[1] - depth_mm / 2 * n[1])


def feed_point(site: Site, *, box_lo_mm: float, width_mm: float) -> tuple[float, float]:
    """The feed point for ``site``, given where the built footprint's clearance area starts
    along its own x axis (``box_lo_mm`` < 0: the area spans x from there to there + width).
    The footprint's +x at the site's rotation decides which end of the site that is."""
    lx = local_x(site.rotation_deg)
    same = lx[0] * site.along[0] + lx[1] * site.along[1] > 0
    offset = -box_lo_mm if same else box_lo_mm + width_mm
    cx, cy = site.corner_mm
    return (_r(cx + offset * site.along[0]), _r(cy + offset * site.along[1]))


def check_placement(view: BoardView, *, feed_mm: tuple[float, float], rotation_deg: float, box_lo_mm: float, width_mm: float, depth_mm: float) -> list[str]:
    """Why the footprint's clearance area cannot go at this feed point and rotation (empty: it fits)."""
    lx = local_x(rotation_deg)
    t = math.radians(rotation_deg)
    inward = (math.sin(t), math.cos(t))  # the footprint's +y (towards its ground) on the board
    corner = (feed_mm[0] + box_lo_mm * lx[0], feed_mm[1] + box_lo_mm * lx[1])
    area = clearance_polygon(corner, lx, inward, width_mm, depth_mm)
    return site_problems(view, area, feed_mm, inward)


def view_from_dict(data: dict) -> BoardView:
    """A :class:`BoardView` from the JSON the front doors write (rings of [x, y] in mm)."""
    outline = Polygon(data["outline_mm"])
    ground = tuple(Polygon(r) for r in data.get("ground_mm", []) if len(r) >= 3)
    obstacles = tuple(Obstacle(o["label"], Polygon(o["polygon_mm"])) for o in data.get("obstacles", []) if len(o["polygon_mm"]) >= 3)
    focus = tuple(data["focus_mm"]) if data.get("focus_mm") else None
    return BoardView(outline.buffer(0) if not outline.is_valid else outline, ground, obstacles, focus, float(data.get("copper_clearance_mm", 0.0)))
