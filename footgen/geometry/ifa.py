"""Parametric IFA copper: plain functions of explicit mm parameters that return centrelines.

Frame (mm): the ground edge is the x axis, the copper lies at y > 0, the feed leg stands at
x = 0 and the short leg at x = -feed_short_spacing_mm; the arm runs towards +x.  Mirroring and
rotation happen later, on the whole layout.  No I/O, nothing about KiCad.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import shapely
from shapely.geometry import LineString, Polygon

from footgen.errors import InfeasibleSpecError

Point = tuple[float, float]

#: Lengths below this are treated as zero when building paths (mm).
LENGTH_EPS_MM = 1e-9


@dataclass(frozen=True)
class Trace:
    """One copper trace: a centreline polyline of axis-parallel segments and its width."""

    role: str
    points: tuple[Point, ...]
    width_mm: float

    def polygon(self) -> Polygon:
        line = LineString(self.points)
        return line.buffer(self.width_mm / 2, cap_style="flat", join_style="mitre")

    def segments(self) -> list[tuple[Point, Point]]:
        return list(zip(self.points, self.points[1:]))


@dataclass(frozen=True)
class IfaCopper:
    """The antenna's copper as traces, plus the centreline quantities physics needs."""

    traces: tuple[Trace, ...]
    arm_path: tuple[Point, ...]
    feed_x_mm: float
    short_x_mm: float
    height_mm: float
    meander_count: int
    meander_pitch_mm: float | None = None
    #: A dual-band IFA's second arm: centreline from its junction on the feed leg (x = feed) to
    #: its open end; None for a single-band IFA.
    second_arm_path: tuple[Point, ...] | None = None

    @cached_property
    def polygon(self) -> Polygon:
        merged = shapely.union_all([t.polygon() for t in self.traces])
        return merged

    @property
    def arm_length_mm(self) -> float:
        return path_length(self.arm_path)

    def trace(self, role: str) -> Trace:
        return next(t for t in self.traces if t.role == role)


def path_length(points: tuple[Point, ...]) -> float:
    return sum(math.dist(a, b) for a, b in zip(points, points[1:]))


def truncate_path(points: list[Point], length_mm: float) -> tuple[Point, ...]:
    """The first ``length_mm`` of a polyline (the path must be at least that long)."""
    out = [points[0]]
    left = length_mm
    for a, b in zip(points, points[1:]):
        seg = math.dist(a, b)
        if seg >= left - LENGTH_EPS_MM:
            t = left / seg if seg > 0 else 0.0
            end = (a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1]))
            if math.dist(end, out[-1]) > LENGTH_EPS_MM:
                out.append(end)
            return tuple(out)
        out.append(b)
        left -= seg
    raise ValueError("path shorter than requested length")


def meander_centreline(x0_mm: float, height_mm: float, start_x_mm: float, depth_mm: float, pitch_mm: float,
                       legs: int, *, run_after_last: bool) -> list[Point]:
    """Centreline from ``(x0_mm, height_mm)`` along the top to ``start_x_mm``, then ``legs`` legs
    of ``depth_mm`` alternately down and up, ``pitch_mm`` apart, joined by runs of one pitch (and
    one after the last leg if ``run_after_last``)."""
    points: list[Point] = [(x0_mm, height_mm), (start_x_mm, height_mm)]
    y = height_mm
    for k in range(legs):
        x = start_x_mm + k * pitch_mm
        y = height_mm - depth_mm if y == height_mm else height_mm
        points.append((x, y))
        if run_after_last or k < legs - 1:
            points.append((x + pitch_mm, y))
    return points


def leg_traces(
    *, height_mm: float, feed_short_spacing_mm: float, trace_width_mm: float, short_width_mm: float, feed_root_mm: float, short_root_mm: float
) -> tuple[Trace, Trace]:
    s = feed_short_spacing_mm
    # The short leg runs past the arm's top edge so the outer corner is filled; the legs start
    # feed_root_mm / short_root_mm below the ground edge, inside their pads.
    short = Trace("short_leg", ((-s, -short_root_mm), (-s, height_mm + trace_width_mm / 2)), short_width_mm)
    feed = Trace("feed_leg", ((0.0, -feed_root_mm), (0.0, height_mm)), trace_width_mm)
    return feed, short


def straight_ifa(
    *,
    arm_length_mm: float,
    height_mm: float,
    feed_short_spacing_mm: float,
    trace_width_mm: float,
    short_width_mm: float,
    feed_root_mm: float = 0.0,
    short_root_mm: float = 0.0,
) -> IfaCopper:
    """A straight IFA: a horizontal arm of ``arm_length_mm`` at ``height_mm`` over the ground edge."""
    s = feed_short_spacing_mm
    if arm_length_mm <= s:
        raise InfeasibleSpecError("arm_length_mm", arm_length_mm, f"must exceed feed_short_spacing_mm ({s:g}) so the arm passes the feed")
    arm_path = ((-s, height_mm), (-s + arm_length_mm, height_mm))
    feed, short = leg_traces(
        height_mm=height_mm, feed_short_spacing_mm=s, trace_width_mm=trace_width_mm, short_width_mm=short_width_mm, feed_root_mm=feed_root_mm, short_root_mm=short_root_mm
    )
    arm = Trace("arm", ((-s - short_width_mm / 2, height_mm), arm_path[1]), trace_width_mm)
    return IfaCopper((short, feed, arm), arm_path, 0.0, -s, height_mm, 0)


def meandered_ifa(
    *,
    arm_length_mm: float,
    height_mm: float,
    feed_short_spacing_mm: float,
    trace_width_mm: float,
    short_width_mm: float,
    x_max_mm: float,
    min_pitch_mm: float,
    meander_height_mm: float | None = None,
    meander_pitch_mm: float | None = None,
    feed_root_mm: float = 0.0,
    short_root_mm: float = 0.0,
    meander_start_mm: float | None = None,
    meander_legs: int | None = None,
) -> IfaCopper:
    """A meandered IFA: the arm runs at ``height_mm`` past the feed, then turns down and up in
    right-angle meanders of depth ``meander_height_mm`` until its centreline is
    ``arm_length_mm`` long.  The arm's centreline stays at ``x <= x_max_mm``.

    With ``meander_pitch_mm=None`` the pitch is fitted: the fewest turns that hold the length,
    spread evenly over the room up to ``x_max_mm`` (wider pitch couples the turns less).
    A pitch below ``min_pitch_mm`` (trace width plus the smallest allowed gap) is refused.
    ``meander_start_mm``: the straight run from the short leg to the first leg (default: the
    first leg one ``min_pitch_mm`` past the feed leg).  ``meander_legs``: exactly this many legs,
    the arm running on after the last one (a fitted pitch spreads them over the room).
    """
    s = feed_short_spacing_mm
    h = height_mm
    if meander_height_mm is None or meander_height_mm <= 0:
        raise InfeasibleSpecError("meander_height_mm", meander_height_mm, "must be > 0")
    depth = meander_height_mm
    if depth < min_pitch_mm - LENGTH_EPS_MM:
        # the arm and the bottom of each turn would come closer than one pitch
        raise InfeasibleSpecError(
            "meander_height_mm", round(depth, 4), f"must be at least {min_pitch_mm:.3f} mm (trace width plus the minimum gap); raise the arm or the clearance depth"
        )
    start_x = _first_leg_x(s, min_pitch_mm, meander_start_mm)
    lead = start_x + s  # straight arm length before the first turn
    remaining = arm_length_mm - lead
    room = x_max_mm - start_x
    if meander_legs is not None:
        return _counted_meander(
            arm_length_mm=arm_length_mm, h=h, s=s, depth=depth, start_x=start_x, room=room, legs=meander_legs,
            pitch=meander_pitch_mm, min_pitch_mm=min_pitch_mm, x_max_mm=x_max_mm, trace_width_mm=trace_width_mm,
            short_width_mm=short_width_mm, feed_root_mm=feed_root_mm, short_root_mm=short_root_mm,
        )
    if remaining <= room:
        copper = straight_ifa(
            arm_length_mm=arm_length_mm,
            height_mm=h,
            feed_short_spacing_mm=s,
            trace_width_mm=trace_width_mm,
            short_width_mm=short_width_mm,
            feed_root_mm=feed_root_mm,
            short_root_mm=short_root_mm,
        )
        if copper.arm_path[-1][0] > x_max_mm + LENGTH_EPS_MM:
            raise InfeasibleSpecError("arm_length_mm", arm_length_mm, f"at most {x_max_mm + s:.3f} fits the clearance")
        return copper
    if meander_pitch_mm is None:
        turns = math.ceil((remaining - room) / depth - 1e-12)
        turns = max(turns, 1)
        pitch = room / turns
    else:
        pitch = meander_pitch_mm
        # each turn takes `depth` down or up and `pitch` across
        turns = math.ceil(remaining / (depth + pitch) - 1e-12)
    if pitch < min_pitch_mm - LENGTH_EPS_MM:
        most = room + depth * math.floor(room / min_pitch_mm) + lead
        raise InfeasibleSpecError(
            "arm_length_mm", arm_length_mm, f"needs a meander pitch of {pitch:.3f} mm, below the minimum {min_pitch_mm:.3f}; at most {most:.2f} mm fits"
        )
    points = meander_centreline(-s, h, start_x, depth, pitch, turns, run_after_last=True)
    arm_path = truncate_path(points, arm_length_mm)
    if arm_path[-1][0] > x_max_mm + LENGTH_EPS_MM:
        raise InfeasibleSpecError(
            "arm_length_mm", arm_length_mm, f"the meandered arm reaches x = {arm_path[-1][0]:.2f} mm, beyond the clearance's {x_max_mm:.2f} mm; widen the clearance or deepen the meander"
        )
    used_turns = sum(1 for a, b in zip(arm_path, arm_path[1:]) if abs(a[0] - b[0]) < LENGTH_EPS_MM)
    feed, short = leg_traces(
        height_mm=h, feed_short_spacing_mm=s, trace_width_mm=trace_width_mm, short_width_mm=short_width_mm, feed_root_mm=feed_root_mm, short_root_mm=short_root_mm
    )
    arm = Trace("arm", ((-s - short_width_mm / 2, h),) + arm_path[1:], trace_width_mm)
    return IfaCopper((short, feed, arm), arm_path, 0.0, -s, h, used_turns, pitch)


def _first_leg_x(s: float, min_pitch_mm: float, meander_start_mm: float | None) -> float:
    """x of the first meander leg (feed at x = 0): one minimum pitch past the feed leg, or where
    ``meander_start_mm`` (measured from the short leg) puts it."""
    if meander_start_mm is None:
        return min_pitch_mm
    start_x = meander_start_mm - s
    if start_x < min_pitch_mm - LENGTH_EPS_MM:
        raise InfeasibleSpecError(
            "meander_start_mm", meander_start_mm,
            f"the first leg must stand at least {min_pitch_mm:.3f} mm (trace width plus the minimum gap) past the feed leg, "
            f"{s:.3f} mm from the short: at least {s + min_pitch_mm:.3f}",
        )
    return start_x


def counted_meander_pitch_mm(room_mm: float, legs: int, pitch_mm: float | None) -> float:
    """Pitch of a meander with a fixed number of legs: as given, or spread over ``room_mm`` (the
    last leg one pitch before the room's end)."""
    return pitch_mm if pitch_mm is not None else room_mm / legs


def counted_meander_min_length_mm(*, lead_mm: float, depth_mm: float, pitch_mm: float, legs: int) -> float:
    """Centreline length from the short to the end of the last of ``legs`` legs."""
    return lead_mm + legs * depth_mm + (legs - 1) * pitch_mm


def _counted_meander(
    *, arm_length_mm: float, h: float, s: float, depth: float, start_x: float, room: float, legs: int, pitch: float | None,
    min_pitch_mm: float, x_max_mm: float, trace_width_mm: float, short_width_mm: float, feed_root_mm: float, short_root_mm: float,
) -> IfaCopper:
    """The meander with exactly ``legs`` legs; the arm runs on at the last leg's end level."""
    pitch = counted_meander_pitch_mm(room, legs, pitch)
    if pitch < min_pitch_mm - LENGTH_EPS_MM:
        most = max(int(math.floor(room / min_pitch_mm + 1e-9)), 0)
        raise InfeasibleSpecError(
            "meander_legs", legs, f"{legs} legs need a pitch of {pitch:.3f} mm, below the minimum {min_pitch_mm:.3f} (trace width plus the minimum gap); at most {most} fit"
        )
    shortest = counted_meander_min_length_mm(lead_mm=start_x + s, depth_mm=depth, pitch_mm=pitch, legs=legs)
    if arm_length_mm < shortest - LENGTH_EPS_MM:
        raise InfeasibleSpecError("arm_length_mm", round(arm_length_mm, 4), f"too short for {legs} meander legs of {depth:.3f} mm: at least {shortest:.3f}")
    points = meander_centreline(-s, h, start_x, depth, pitch, legs, run_after_last=False)
    y = points[-1][1]
    tail = arm_length_mm - shortest
    if tail > LENGTH_EPS_MM:
        points.append((points[-1][0] + tail, y))
    arm_path = tuple(points)
    if arm_path[-1][0] > x_max_mm + LENGTH_EPS_MM:
        raise InfeasibleSpecError(
            "arm_length_mm", round(arm_length_mm, 4),
            f"the meandered arm reaches x = {arm_path[-1][0]:.2f} mm, beyond the clearance's {x_max_mm:.2f} mm; at most {arm_length_mm - arm_path[-1][0] + x_max_mm:.3f} fits",
        )
    feed, short = leg_traces(
        height_mm=h, feed_short_spacing_mm=s, trace_width_mm=trace_width_mm, short_width_mm=short_width_mm, feed_root_mm=feed_root_mm, short_root_mm=short_root_mm
    )
    arm = Trace("arm", ((-s - short_width_mm / 2, h),) + arm_path[1:], trace_width_mm)
    return IfaCopper((short, feed, arm), arm_path, 0.0, -s, h, legs, pitch)
