"""An IFA whose arm follows a centreline the designer drew: axis-parallel segments in mm.

The path is given from the short: its first point stands above the short leg at x = 0 and its
first segment runs along the ground edge away from the short (larger x, same height y); y is the
height above the ground edge.  The feed leg stands ``feed_short_spacing_mm`` from the short,
under that first segment.  Pure geometry, no I/O, nothing about KiCad.
"""

from __future__ import annotations

import math

from shapely.geometry import LineString

from footgen.errors import InfeasibleSpecError
from footgen.geometry.ifa import LENGTH_EPS_MM, IfaCopper, Point, Trace, leg_traces, path_length


def path_problem(path_mm: tuple[Point, ...]) -> tuple[int, str] | None:
    """The first shape error of a path as (point index, what is wrong and the fix), or None:
    the first point at x = 0 above the ground edge, every segment axis-parallel and of non-zero
    length, the first one running along the ground edge to larger x, no segment turning back
    on the previous one."""
    x0, y0 = path_mm[0]
    if abs(x0) > LENGTH_EPS_MM or y0 <= 0.0:
        return 0, "the path starts above the short leg: its first point must be [0, height] with height > 0"
    for k in range(1, len(path_mm)):
        (xa, ya), (xb, yb) = path_mm[k - 1], path_mm[k]
        if math.dist((xa, ya), (xb, yb)) <= LENGTH_EPS_MM:
            return k, f"repeats point {k - 1}; remove it"
        if abs(xa - xb) > LENGTH_EPS_MM and abs(ya - yb) > LENGTH_EPS_MM:
            return k, f"the segment from point {k - 1} [{xa:g}, {ya:g}] is not axis-parallel; give it the x or the y of point {k - 1}"
        if k >= 2:
            (xp, yp) = path_mm[k - 2]
            ux, uy = xa - xp, ya - yp
            vx, vy = xb - xa, yb - ya
            if ux * vy - uy * vx == 0.0 and ux * vx + uy * vy < 0.0:
                return k, f"turns back on the segment before it (self-overlap); drop point {k - 1} or turn at a right angle"
    (xa, ya), (xb, yb) = path_mm[0], path_mm[1]
    if abs(ya - yb) > LENGTH_EPS_MM or xb <= xa:
        return 1, "the first segment must run along the ground edge away from the short (same y as point 0, larger x)"
    return None


def closest_segments(path_mm: tuple[Point, ...]) -> tuple[int, int, float] | None:
    """The pair of non-adjacent segments whose centrelines come closest: (i, j, distance), the
    segments numbered by their end point (segment k runs from point k - 1 to point k)."""
    lines = [LineString([a, b]) for a, b in zip(path_mm, path_mm[1:])]
    best: tuple[int, int, float] | None = None
    for i in range(len(lines)):
        for j in range(i + 2, len(lines)):
            d = lines[i].distance(lines[j])
            if best is None or d < best[2]:
                best = (i + 1, j + 1, d)
    return best


def path_ifa(
    *,
    path_mm: tuple[Point, ...],
    arm_length_mm: float,
    height_mm: float,
    feed_short_spacing_mm: float,
    trace_width_mm: float,
    short_width_mm: float,
    min_pitch_mm: float,
    feed_root_mm: float = 0.0,
    short_root_mm: float = 0.0,
) -> IfaCopper:
    """An IFA whose arm centreline is ``path_mm`` (from the short, see the module doc), its last
    segment shortened or lengthened so the arm is ``arm_length_mm`` long.  The feed leg must
    stand under the first segment, at least ``min_pitch_mm`` before its end when the path turns
    there, and clear of every later segment by ``min_pitch_mm`` centre to centre."""
    s = feed_short_spacing_mm
    h = path_mm[0][1]
    if abs(h - height_mm) > LENGTH_EPS_MM:
        raise InfeasibleSpecError("height_mm", height_mm, f"the path sets the arm height: {h:g}")
    points = [(x - s, y) for x, y in path_mm]
    drawn = path_length(tuple(points))
    (xa, ya), (xb, yb) = points[-2], points[-1]
    last = math.dist((xa, ya), (xb, yb))
    new_last = last + arm_length_mm - drawn
    if new_last <= LENGTH_EPS_MM:
        raise InfeasibleSpecError("arm_length_mm", round(arm_length_mm, 4), f"shorter than the path without its last segment: more than {drawn - last:.3f}")
    t = new_last / last
    points[-1] = (xa + t * (xb - xa), ya + t * (yb - ya))
    first_end = points[1][0]
    room = min_pitch_mm if len(points) > 2 else trace_width_mm / 2
    if first_end < room - LENGTH_EPS_MM:
        raise InfeasibleSpecError(
            "feed_short_spacing_mm", round(s, 4),
            f"the feed leg must stand under the path's first segment, {room:.3f} mm before its end: at most {path_mm[1][0] - room:.3f}",
        )
    feed_line = LineString([(0.0, 0.0), (0.0, h)])
    for k in range(2, len(points)):
        d = feed_line.distance(LineString([points[k - 1], points[k]]))
        if d < min_pitch_mm - LENGTH_EPS_MM:
            raise InfeasibleSpecError(
                "feed_short_spacing_mm", round(s, 4),
                f"the feed leg comes {d:.3f} mm (centre to centre) from the path's segment {k - 1}-{k}, below the minimum {min_pitch_mm:.3f}; move the feed tap",
            )
    arm_path = tuple(points)
    feed, short = leg_traces(
        height_mm=h, feed_short_spacing_mm=s, trace_width_mm=trace_width_mm, short_width_mm=short_width_mm,
        feed_root_mm=feed_root_mm, short_root_mm=short_root_mm,
    )
    arm = Trace("arm", ((-s - short_width_mm / 2, h),) + arm_path[1:], trace_width_mm)
    legs = [a[0] for a, b in zip(arm_path, arm_path[1:]) if abs(a[0] - b[0]) < LENGTH_EPS_MM]
    # the pitch said of a drawn path (drawing, report): the spacing of its first two legs
    pitch = abs(legs[1] - legs[0]) if len(legs) >= 2 else None
    return IfaCopper((short, feed, arm), arm_path, 0.0, -s, h, len(legs), pitch)
