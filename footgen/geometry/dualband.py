"""The second arm of a dual-band IFA: where it sits, and its copper added to the main IFA's.

Canonical frame as in :mod:`footgen.geometry.ifa` (feed leg at x = 0, arms towards +x).  The
second arm branches off the feed leg at its own height, under the main arm (between it and the
ground edge) or above it (the feed leg then runs on up past the main arm to meet it), and runs
the same way as the main arm, straight or meandered with its turns away from the main arm.  The
copper of both arms, the legs and the feed stays one polygon (pad 1).  Pure geometry, mm.
"""

from __future__ import annotations

from dataclasses import replace

from footgen.errors import InfeasibleSpecError
from footgen.geometry.ifa import IfaCopper, Point, Trace, meandered_ifa, path_length
from footgen.spec import Spec

#: The copper gap between the two arms is at least this many trace widths (and the fab's
#: copper clearance): arms closer than that couple so strongly that they stop resonating as
#: two arms (common practice, no source).
ARM_GAP_PER_WIDTH = 1.0
#: Default height of a second arm under the main arm, as a fraction of the main arm's height
#: (common practice, no source: halfway-up keeps the upper band's arm off the ground edge and
#: clear of the main arm).
UNDER_HEIGHT_FRACTION = 0.6
#: Default height of the main arm when the second arm runs above it, as a fraction of the
#: highest arm position (common practice, no source).
MAIN_UNDER_SECOND_FRACTION = 0.6
LENGTH_EPS_MM = 1e-9


def arm_gap_min_mm(spec: Spec) -> float:
    """Least copper gap between the arms: the fab clearance or ARM_GAP_PER_WIDTH trace widths."""
    return max(spec.fab.min_clearance_mm, ARM_GAP_PER_WIDTH * spec.trace_width_mm)


def lowest_arm_mm(spec: Spec) -> float:
    """Lowest centreline any arm may run at: its copper the fab clearance above the ground edge,
    and above the port gap with a trace width of feed leg to spare."""
    w = spec.trace_width_mm
    return max(w / 2 + spec.fab.min_clearance_mm, spec.feed.port_gap_mm + 1.5 * w)


def default_heights_mm(spec: Spec, top_mm: float) -> tuple[float, float]:
    """(main arm height, second arm height) for the spec, each as given or by default: under,
    the main arm at ``top_mm`` (the highest position) and the second at UNDER_HEIGHT_FRACTION
    of it; above, the second arm at the top (a meandered one just above the main arm, its turns
    rising to the top) and the main arm at MAIN_UNDER_SECOND_FRACTION of the top."""
    second = spec.second_arm
    assert second is not None
    step = arm_gap_min_mm(spec) + spec.trace_width_mm
    if second.position == "under":
        main = spec.arm.height_mm if spec.arm.height_mm is not None else top_mm
        h2 = second.height_mm if second.height_mm is not None else max(lowest_arm_mm(spec), min(UNDER_HEIGHT_FRACTION * main, main - step))
        return main, h2
    main = spec.arm.height_mm if spec.arm.height_mm is not None else MAIN_UNDER_SECOND_FRACTION * top_mm
    if second.height_mm is not None:
        return main, second.height_mm
    return main, (main + step if second.kind == "meandered" else max(top_mm, main + step))


def second_arm_path(spec: Spec, *, length_mm: float, height_mm: float, main_height_mm: float,
                    x_max_mm: float, top_mm: float, min_pitch_mm: float) -> tuple[Point, ...]:
    """Centreline of the second arm from the feed leg (x = 0) at ``height_mm``; a meandered arm
    turns away from the main arm (down under it, up above it) within the room there."""
    second = spec.second_arm
    assert second is not None
    w = spec.trace_width_mm
    if length_mm <= LENGTH_EPS_MM:
        raise InfeasibleSpecError("$.second_arm.length_mm", length_mm, "must be > 0")
    if second.kind == "straight" or length_mm <= x_max_mm + LENGTH_EPS_MM:  # a meander that fits straight is straight
        if length_mm > x_max_mm + LENGTH_EPS_MM:
            raise InfeasibleSpecError(
                "$.second_arm.length_mm" if second.length_mm is not None else "$.clearance.width_mm",
                round(length_mm, 3) if second.length_mm is not None else spec.clearance.width_mm,
                f"a straight second arm of {length_mm:.2f} mm needs the arm room to reach x = {length_mm:.2f} mm from the feed, "
                f"at most {x_max_mm:.2f} fits: widen the clearance or use kind meandered")
        return ((0.0, height_mm), (length_mm, height_mm))
    below = height_mm < main_height_mm
    room = (height_mm - lowest_arm_mm(spec)) if below else (top_mm - height_mm)
    depth = second.meander_height_mm if second.meander_height_mm is not None else room
    if depth > room + LENGTH_EPS_MM:
        raise InfeasibleSpecError("$.second_arm.meander_height_mm", round(depth, 3),
                                  f"turns {'under' if below else 'above'} the arm have {max(room, 0):.2f} mm of room; at most that")
    # the main IFA's meander layout with the feed as its start (no short leg before it); turns
    # fall below the arm, so an arm above the main one is laid out mirrored about its height
    try:
        copper = meandered_ifa(arm_length_mm=length_mm, height_mm=height_mm, feed_short_spacing_mm=0.0,
                               trace_width_mm=w, short_width_mm=w, x_max_mm=x_max_mm, min_pitch_mm=min_pitch_mm,
                               meander_height_mm=depth)
    except InfeasibleSpecError as exc:  # said in the second arm's own fields
        given = {"meander_height_mm": second.meander_height_mm, "arm_length_mm": second.length_mm}
        fallback = {"meander_height_mm": "$.second_arm.height_mm", "arm_length_mm": "$.clearance.width_mm"}
        path = f"$.second_arm.{exc.path.replace('arm_', '', 1) if exc.path == 'arm_length_mm' else exc.path}" if given.get(exc.path) is not None else fallback.get(exc.path, "$.second_arm")
        raise InfeasibleSpecError(path, exc.value, exc.fix) from None
    if below:
        return copper.arm_path
    return tuple((x, 2 * height_mm - y) for x, y in copper.arm_path)


def with_second_arm(spec: Spec, copper: IfaCopper, sizing) -> IfaCopper:
    """``copper`` with the sized second arm added: its trace, and the feed leg run up to it when
    it lies above the main arm.  Refuses arms closer than :func:`arm_gap_min_mm`."""
    from footgen.geometry.layout import arm_x_limit_mm, max_arm_height_mm, min_meander_pitch_mm

    if sizing.second_arm_length_mm is None or sizing.second_arm_height_mm is None:
        raise InfeasibleSpecError("$.second_arm", "unsized", "the second arm needs a length and a height (sizing)")
    w = spec.trace_width_mm
    h2 = sizing.second_arm_height_mm
    h = copper.height_mm
    gap = arm_gap_min_mm(spec)
    if abs(h2 - h) + LENGTH_EPS_MM < gap + w:
        raise InfeasibleSpecError("$.second_arm.height_mm", round(h2, 3),
                                  f"the arms' copper must stay {gap:g} mm apart; at most {h - gap - w:.3f} or at least {h + gap + w:.3f}")
    top = max_arm_height_mm(spec)
    if h2 > top + LENGTH_EPS_MM or h2 < lowest_arm_mm(spec) - LENGTH_EPS_MM:
        raise InfeasibleSpecError("$.second_arm.height_mm", round(h2, 3),
                                  f"must lie between {lowest_arm_mm(spec):.3f} and {top:.3f} (ground edge, port gap and clearance depth)")
    path = second_arm_path(spec, length_mm=sizing.second_arm_length_mm, height_mm=h2, main_height_mm=h,
                           x_max_mm=arm_x_limit_mm(spec, sizing.feed_short_spacing_mm), top_mm=top,
                           min_pitch_mm=min_meander_pitch_mm(spec))
    arm2 = Trace("second_arm", path, w)
    traces = list(copper.traces)
    if h2 > h:  # the feed leg runs on up past the main arm to the second arm
        feed = copper.trace("feed_leg")
        traces[traces.index(feed)] = replace(feed, points=(feed.points[0], (0.0, h2)))
    main_arm = copper.trace("arm")
    clear = arm2.polygon().distance(main_arm.polygon())
    if clear + 1e-6 < gap:
        raise InfeasibleSpecError(
            "$.second_arm.length_mm" if spec.second_arm.length_mm is not None else "$.second_arm.height_mm",
            round(sizing.second_arm_length_mm if spec.second_arm.length_mm is not None else h2, 3),
            f"the second arm comes {clear:.3f} mm from the main arm's copper (a meander turn); it needs {gap:g}: "
            "shorten it, move it, or put it on the other side of the main arm")
    traces.append(arm2)
    return replace(copper, traces=tuple(traces), second_arm_path=path)


def second_arm_length_mm(copper: IfaCopper) -> float:
    """Centreline length of the second arm (0 without one)."""
    return path_length(copper.second_arm_path) if copper.second_arm_path else 0.0


def meander_legs(path: tuple[Point, ...]) -> int:
    """Legs (segments across the arm's run, here vertical) of an arm's centreline: 0 when straight."""
    return sum(1 for (x0, _), (x1, _) in zip(path, path[1:]) if abs(x1 - x0) <= LENGTH_EPS_MM)


def second_arm_style(kind: str, legs: int) -> str:
    """The second arm's shape in words: a meandered arm whose length fits straight has no legs,
    and says so."""
    return "meandered style; fits straight, no legs needed" if kind == "meandered" and not legs else kind
