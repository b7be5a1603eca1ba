"""Cross-field checks of a parsed spec: what JSON Schema cannot express and needs no sizing
(geometry feasibility comes later).  Each check raises :class:`footgen.errors.SpecError` naming
the field to change, the value and a value that works; :func:`fab_findings` lists the spec's
own values that break the fab profile's minimums.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

from footgen.constants import C0_M_PER_S
from footgen.errors import SpecError
from footgen.spec import FAB_SLACK_MM, Spec

#: Largest shunt-via drill per stub width (common practice, no source: a hole much wider than
#: the short leg it grounds is not a via of that leg any more).
MAX_VIA_DRILL_PER_STUB_WIDTH = 4.0
#: The column of shunt vias reaches at most this fraction of the ground plane's length.
MAX_VIA_COLUMN_PER_GROUND_LENGTH = 0.5


def cross_checks(spec: Spec) -> None:
    """Checks across fields that JSON Schema cannot express and that need no sizing (geometry
    feasibility comes later); each raises :class:`SpecError` naming the field to change."""
    for check in CROSS_CHECKS.values():
        check(spec)


def _check_arm_and_ground(spec: Spec) -> None:
    cl = spec.clearance
    w = spec.trace_width_mm
    if spec.arm.height_mm is not None and spec.arm.height_mm + w / 2 > cl.depth_mm:
        nearest = cl.depth_mm - w / 2
        raise SpecError("$.arm.height_mm", spec.arm.height_mm, f"arm copper would leave the clearance area (depth {cl.depth_mm:g} mm); at most {nearest:g}")
    if spec.ground_plane.width_mm < cl.width_mm and abs(spec.ground_plane.offset_mm) > 0.5 * (spec.ground_plane.width_mm + cl.width_mm):
        raise SpecError("$.ground_plane.offset_mm", spec.ground_plane.offset_mm, "the ground plane must lie below the clearance area")
    for number, _ in spec.history:
        if number > spec.revision:
            raise SpecError("$.history", number, f"history names revision {number}, above revision {spec.revision}")
    if spec.feed.pad_width_mm < w:
        raise SpecError("$.feed.pad_width_mm", spec.feed.pad_width_mm, f"must be >= trace_width_mm ({w:g})")
    if spec.arm.feed_short_spacing_mm is not None:
        from footgen.sizing import min_spacing_mm  # imports this module: only when needed

        least = min_spacing_mm(spec)
        if spec.arm.feed_short_spacing_mm + FAB_SLACK_MM < least:
            raise SpecError(
                "$.arm.feed_short_spacing_mm", spec.arm.feed_short_spacing_mm,
                f"the feed and short legs, their pads and vias need the fab clearance between them; at least {least:.3f}",
            )


@dataclass(frozen=True)
class FabFinding:
    """A fab-rule error visible in the spec alone (before any sizing): the rule checker's rule
    name and the spec field, its value and the value that passes."""

    rule: str
    error: SpecError

    def line(self) -> str:
        return f"error: {self.rule}: {self.error}"


def fab_findings(spec: Spec) -> list[FabFinding]:
    """Copper widths, gaps and vias against the fab profile: the rule checks that need no sizing
    (``validate`` reports them; the build's rule check finds them again on the layout)."""
    fab = spec.fab
    raw_short = spec.raw.get("short", {}) if isinstance(spec.raw, dict) else {}
    out: list[FabFinding] = []

    def below(rule: str, path: str, value: float, limit: float, what: str) -> None:
        if value + FAB_SLACK_MM < limit:
            out.append(FabFinding(rule, SpecError(path, value, f"below the fab minimum {what} of profile {fab.name!r}; at least {limit:g}")))

    raw_feed = spec.raw.get("feed", {}) if isinstance(spec.raw, dict) else {}
    widths = {  # a width left to its default (the trace width) is reported once, as the trace's
        "$.trace_width_mm": (spec.trace_width_mm, True),
        "$.short.stub_width_mm": (spec.short.stub_width_mm, "stub_width_mm" in raw_short),
        "$.feed.pad_width_mm": (spec.feed.pad_width_mm, "pad_width_mm" in raw_feed),
        "$.feed.pad_length_mm": (spec.feed.pad_length_mm, True),
    }
    for path, (value, given) in widths.items():
        if given:
            below("trace_width", path, value, fab.min_trace_mm, "copper width")
    below("ground_edge_distance", "$.feed.port_gap_mm", spec.feed.port_gap_mm, fab.min_clearance_mm, "copper clearance")
    if spec.short.via_count:
        below("via_drill", "$.short.via_drill_mm", spec.short.via_drill_mm, fab.min_drill_mm, "drill")
        ring_path = "$.short.via_annular_ring_mm" if "via_annular_ring_mm" in raw_short else "$.fab.min_annular_ring_mm"
        below("annular_ring", ring_path, spec.short.via_annular_ring_mm, fab.min_annular_ring_mm, "annular ring")
    return out


def _check_vias(spec: Spec) -> None:
    short, cl, fab = spec.short, spec.clearance, spec.fab
    if not short.via_count:
        return
    most = MAX_VIA_DRILL_PER_STUB_WIDTH * short.stub_width_mm
    if short.via_drill_mm > most + FAB_SLACK_MM:
        raise SpecError(
            "$.short.via_drill_mm", short.via_drill_mm,
            f"too wide for the {short.stub_width_mm:g} mm short stub; at most {most:g} (or widen short.stub_width_mm)",
        )
    if short.via_diameter_mm > cl.width_mm:
        raise SpecError("$.short.via_drill_mm", short.via_drill_mm, f"the via ({short.via_diameter_mm:g} mm with its ring) does not fit the {cl.width_mm:g} mm clearance area width")
    pitch = max(short.via_diameter_mm, short.via_drill_mm + fab.min_hole_to_hole_mm)
    room = MAX_VIA_COLUMN_PER_GROUND_LENGTH * spec.ground_plane.length_mm - fab.min_clearance_mm
    fits = max(int(room // pitch), 0)
    if short.via_count > fits:
        raise SpecError(
            "$.short.via_count", short.via_count,
            f"{short.via_count} vias at a {pitch:.2f} mm pitch do not fit half the {spec.ground_plane.length_mm:g} mm ground plane length; at most {fits}",
        )


def _check_meander(spec: Spec) -> None:
    style, cl, w, c = spec.style, spec.clearance, spec.trace_width_mm, spec.fab.min_clearance_mm
    if style.meander_height_mm is not None and spec.arm.height_mm is not None and style.meander_height_mm >= spec.arm.height_mm:
        raise SpecError(
            "$.style.meander_height_mm",
            style.meander_height_mm,
            f"must be below the arm height ({spec.arm.height_mm:g} mm) so the meander stays clear of the ground",
        )
    # the arm runs at most c + w/2 below the far side; a turn's bottom stays c + w/2 above the ground edge
    deepest = cl.depth_mm - 2 * c - w
    if style.meander_height_mm is not None and style.meander_height_mm > deepest + FAB_SLACK_MM:
        raise SpecError(
            "$.style.meander_height_mm", style.meander_height_mm,
            f"does not fit the {cl.depth_mm:g} mm deep clearance area with this trace and fab clearance; at most {max(deepest, 0):.2f}",
        )
    highest = cl.depth_mm - c - w / 2
    if style.min_height_mm is not None and style.min_height_mm >= highest:
        raise SpecError("$.style.min_height_mm", style.min_height_mm, f"must be below the highest arm position ({highest:.2f} mm in this clearance area)")
    narrowest = w + c
    if style.meander_pitch_mm is not None and style.meander_pitch_mm + FAB_SLACK_MM < narrowest:
        raise SpecError("$.style.meander_pitch_mm", style.meander_pitch_mm, f"neighbouring legs would break the fab clearance; at least {narrowest:g} (trace width plus copper clearance)")


def _check_meander_start(spec: Spec) -> None:
    """The first leg of a meander placed by ``meander_start_mm`` stands one minimum pitch past
    the feed leg (checked here when the feed tap is given; the sizing keeps to it otherwise)."""
    style, w, c = spec.style, spec.trace_width_mm, spec.fab.min_clearance_mm
    start = style.meander_start_mm
    if start is None:
        return
    from footgen.geometry.layout import min_meander_pitch_mm  # layout imports this module

    least_past_feed = min_meander_pitch_mm(spec)
    tap = spec.arm.feed_short_spacing_mm
    if tap is not None and start + FAB_SLACK_MM < tap + least_past_feed:
        raise SpecError(
            "$.style.meander_start_mm", start,
            f"the first leg must stand at least {least_past_feed:g} mm past the feed leg ({tap:g} mm from the short): at least {tap + least_past_feed:g}",
        )
    if spec.arm.length_mm is not None and start >= spec.arm.length_mm:
        raise SpecError("$.style.meander_start_mm", start, f"must be shorter than the arm ({spec.arm.length_mm:g} mm) or the meander never starts")
    if style.meander_legs is not None and style.meander_pitch_mm is not None:
        from footgen.geometry.layout import short_inset_mm, SIDE_MARGIN_MM

        reach = spec.clearance.width_mm - short_inset_mm(spec) - c - SIDE_MARGIN_MM - w / 2
        last_leg = start + (style.meander_legs - 1) * style.meander_pitch_mm
        if last_leg > reach + FAB_SLACK_MM:
            most = int((reach - start) // style.meander_pitch_mm) + 1 if reach >= start else 0
            raise SpecError(
                "$.style.meander_legs", style.meander_legs,
                f"the last leg would stand {last_leg:.2f} mm from the short, beyond the {reach:.2f} mm the clearance area allows; at most {max(most, 0)} legs at this pitch and start",
            )


def _path_point(k: int) -> str:
    return f"$.style.path_mm[{k}]"


def _check_path(spec: Spec) -> None:
    """An explicit centreline: its shape (geometry.path.path_problem), its legs no closer than
    the trace width plus the fab clearance, and its copper inside the clearance area."""
    path = spec.style.path_mm
    if path is None:
        return
    from footgen.geometry.layout import SIDE_MARGIN_MM, max_arm_height_mm, min_path_pitch_mm, short_inset_mm
    from footgen.geometry.path import closest_segments, path_problem

    problem = path_problem(path)
    if problem is not None:
        k, fix = problem
        raise SpecError(_path_point(k), list(path[k]), fix)
    w, ws, c = spec.trace_width_mm, spec.short.stub_width_mm, spec.fab.min_clearance_mm
    pitch = min_path_pitch_mm(spec)
    pair = closest_segments(path)
    if pair is not None and pair[2] + FAB_SLACK_MM < pitch:
        i, j, d = pair
        what = "overlaps" if d <= FAB_SLACK_MM else f"comes {d:.3f} mm (centre to centre) from"
        raise SpecError(
            _path_point(j), list(path[j]),
            f"the segment ending here {what} the segment ending at point {i} (self-overlap or legs too close); keep at least {pitch:g} mm (trace width plus the fab clearance)",
        )
    for k in range(2, len(path)):
        seg_d = _segment_distance(((0.0, 0.0), (0.0, path[0][1])), (path[k - 1], path[k]))
        if seg_d + FAB_SLACK_MM < (w + ws) / 2 + c:
            raise SpecError(_path_point(k), list(path[k]), f"the path comes {seg_d:.3f} mm (centre to centre) from the short leg; keep at least {(w + ws) / 2 + c:g}")
    top = max_arm_height_mm(spec)
    lowest = w / 2 + c
    inset = short_inset_mm(spec)
    x_lo = -inset + c + SIDE_MARGIN_MM + w / 2
    x_hi = spec.clearance.width_mm - inset - c - SIDE_MARGIN_MM - w / 2
    for k, (x, y) in enumerate(path):
        if y > top + FAB_SLACK_MM:
            raise SpecError(_path_point(k), [x, y], f"the copper leaves the clearance area (depth {spec.clearance.depth_mm:g} mm, board edge and fab clearance included); y at most {top:.3f}")
        if y < lowest - FAB_SLACK_MM:
            raise SpecError(_path_point(k), [x, y], f"the copper comes closer to the ground edge than the fab clearance; y at least {lowest:.3f}")
        if not x_lo - FAB_SLACK_MM <= x <= x_hi + FAB_SLACK_MM:
            raise SpecError(_path_point(k), [x, y], f"the copper leaves the clearance area ({spec.clearance.width_mm:g} mm wide, the short {inset:.3f} mm from its start); x from {x_lo:.3f} to {x_hi:.3f}")


def _segment_distance(a: tuple[tuple[float, float], tuple[float, float]], b: tuple[tuple[float, float], tuple[float, float]]) -> float:
    from shapely.geometry import LineString

    return float(LineString(a).distance(LineString(b)))


#: The second band must lie at least this factor above the main band (centres): the arms of a
#: dual-band IFA are told apart by length, and bands closer than this want one wider arm or a
#: matching network (common practice, no source).
MIN_SECOND_BAND_RATIO = 1.6


def _check_second_arm(spec: Spec) -> None:
    second = spec.second_arm
    if second is None:
        return
    ratio = second.target.center_hz / spec.target.center_hz
    if ratio < MIN_SECOND_BAND_RATIO:
        raise SpecError(
            "$.second_arm.target", second.target.label,
            f"the second band must lie at least {MIN_SECOND_BAND_RATIO:g} times above the main band "
            f"({spec.target.center_hz / 1e6:.1f} MHz, so above {MIN_SECOND_BAND_RATIO * spec.target.center_hz / 1e6:.0f} MHz); "
            "put the lower band in target",
        )
    from footgen.geometry.dualband import arm_gap_min_mm  # imports this module: only when needed

    gap = arm_gap_min_mm(spec)
    w, cl, main_h = spec.trace_width_mm, spec.clearance, spec.arm.height_mm
    if second.height_mm is not None and main_h is not None and abs(second.height_mm - main_h) + FAB_SLACK_MM < gap + w:
        raise SpecError(
            "$.second_arm.height_mm", second.height_mm,
            f"the arms' copper must stay {gap:g} mm apart (copper clearance and trace width); "
            f"at most {main_h - gap - w:.3f} under or at least {main_h + gap + w:.3f} above the main arm ({main_h:g} mm)",
        )
    if second.height_mm is not None and second.height_mm + w / 2 > cl.depth_mm:
        raise SpecError("$.second_arm.height_mm", second.height_mm,
                        f"arm copper would leave the clearance area (depth {cl.depth_mm:g} mm); at most {cl.depth_mm - w / 2:g}")
    if second.meander_height_mm is not None and second.kind != "meandered":
        raise SpecError("$.second_arm.meander_height_mm", second.meander_height_mm, 'applies to kind "meandered" only; remove it or set kind')


#: The cross-field checks, run in this order by :func:`_cross_checks`.
#: The enclosure wall enters the models quasi-statically (footgen.physics.board_edge), which
#: holds while the wall is close to the copper on the scale of the wavelength: its distance at
#: most this fraction of the free-space wavelength at the band's top (common practice, no source).
MAX_ENCLOSURE_DISTANCE_PER_WAVELENGTH = 0.1


def _check_enclosure(spec: Spec) -> None:
    if spec.enclosure is None:
        return
    farthest = MAX_ENCLOSURE_DISTANCE_PER_WAVELENGTH * C0_M_PER_S / spec.target.high_hz * 1e3
    if spec.enclosure.distance_mm > farthest:
        raise SpecError("$.enclosure.distance_mm", spec.enclosure.distance_mm,
                        f"the wall model holds up to a tenth of the wavelength at the band's top; at most "
                        f"{math.floor(farthest * 10) / 10:g}, or leave out enclosure (a wall that far hardly moves the resonance)")


CROSS_CHECKS: dict[str, Callable[[Spec], None]] = {
    "path": _check_path,
    "arm_and_ground": _check_arm_and_ground,
    "enclosure": _check_enclosure,
    "vias": _check_vias,
    "meander": _check_meander,
    "meander_start": _check_meander_start,
    "second_arm": _check_second_arm,
}
