"""Wire models of a printed IFA for the thin-wire solver (:mod:`footgen.physics.mom`).

Copper centrelines become wires of equivalent radius ``a = w / 4`` for a flat strip of width ``w``
(Balanis, "Antenna Theory", 4th ed., ch. 9, table of equivalent radii of conductors: thin flat
strip ``a_e = 0.25 w``; from memory).  The ground plane becomes a wire grid of pitch
``<= lambda / 15`` at the highest frequency (wire-grid surfaces want <= lambda / 10, common practice,
no source; the finer pitch is from our convergence study, below), refined towards its radiating
edge and graded up to ``lambda / 10`` beyond ``0.3 lambda`` from the antenna (rows below the
edge, columns beside the antenna's stretch of it; only where that saves lines), with wire radius
from the equal-area rule ``2 pi a = s`` (Ludwig, "Wire grid modeling of surfaces", IEEE Trans.
Antennas Propag. 35(9), 1987; from memory) applied with the local spacing
``s`` of each grid line (the mean of its gaps to the neighbouring lines: fine rows near the edge get
thin wires; a radius from the coarse pitch there made neighbouring wires overlap and the resonance
jump by several per cent), capped so that segments stay >= 4 radii long.  Segments: antenna <= lambda / 40 and <= a quarter
of the smallest feature but >= 4 trace radii; grid <= lambda / 20; the ground edge under the
antenna at the antenna's segment length.  A laminate ending at the board edge beyond the antenna
enters as the equivalent laterally infinite slab of :mod:`footgen.physics.board_edge`.  The delta-gap source is the one-segment wire
across the port gap between the ground edge and the feed leg.  All wires lie in ``z = 0``; the
laminate is handed to the solver as a :class:`footgen.physics.mom.Slab` under the copper.

Every geometry the layout generator makes must give a model the solver accepts: a piece shorter
than twice its equivalent radius (a port gap under a wide trace, a short tail) keeps its length
and gets a thinner radius just inside the solver's limit; the source spans at most half the height
of the arm above the feed; arm vertices closer than ``VERTEX_MERGE_M`` merge; a ground corner
within half a leg width of a leg moves onto it.  A leg that misses the ground plane is refused.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from footgen.constants import C0_M_PER_S
from footgen.errors import SolverError
from footgen.physics.board_edge import equivalent_laminate
from footgen.physics.ifa import PrintedIfa
from footgen.physics.mom import MIN_SEGMENT_TO_RADIUS, Slab, Wire, WireModel
from footgen.physics.problem_size import check_model_size

STRIP_EQUIVALENT_RADIUS_FACTOR = 0.25  # a = w / 4, Balanis 4th ed. ch. 9 (from memory)
SEGMENTS_PER_WAVELENGTH = 40.0  # segment <= lambda / 40 (stricter than the lambda / 20 rule)
DETAIL_SEGMENTS = 4.0  # segments across the smallest antenna feature (height, leg spacing)
GRID_SEGMENTS_PER_WAVELENGTH = 20.0  # grid segment <= lambda / 20 (task rule)
# Ground grid: pitch <= lambda / 15, first row below the edge half a trace width down, rows growing
# by 1.5x up to the pitch.  Chosen by self-convergence on the development cases of
# tests/fullwave (f at min |S11| against a grid of lambda / 30 pitch, quarter-width edge rows,
# lambda / 80 segments): within 0.04 % on straight arms, 0.35 % on the meander; the earlier
# lambda / 10 grid with its first row one arm height down was up to 2.5 % off that limit on tall
# arms (measured; tests/test_fullwave_reference.py keeps the development cases within
# MOM_MESH_CONVERGENCE_REL_TOL).
GRID_PITCH_PER_WAVELENGTH = 15.0
EDGE_ROW_TRACE_WIDTHS = 0.5  # first grid row below the edge at this many trace widths
GRID_GROWTH = 1.5  # grid rows grow geometrically from the edge up to the pitch
# Grading away from the antenna: beyond GRID_NEAR_WAVELENGTHS of the antenna's stretch of the
# edge (in x) and of the edge itself (in y), the grid lines keep growing by GRID_GROWTH up to
# lambda / 10 (the common-practice limit for wire-grid surfaces, no source).  The current there
# is weak and smooth; measured against the ungraded grid on the development and validation
# cases of tests/fullwave (f at min |S11|): see DEVELOPERS.md.
GRID_FAR_PITCH_PER_WAVELENGTH = 10.0
GRID_NEAR_WAVELENGTHS = 0.3
MIN_SEGMENT_TO_GRID_RADIUS = 4.0  # grid-wire radius capped at segment length / 4
# antenna segments >= 4 equivalent radii: the reduced thin-wire kernel degrades when segments
# approach the radius (we saw ~1 % resonance drift at 2.5 radii); common practice, no source
MIN_SEGMENT_TO_TRACE_RADIUS = 4.0
GEOMETRY_TOL_M = 1e-9
# A piece too short for its trace radius (a port gap, a short tail, a leg stub under a wide trace)
# is one segment with its radius capped just inside the solver's thin-wire limit: a short fat
# piece is mostly a corner and its self-inductance changes little (keeps the model solvable).
SHORT_PIECE_RADIUS_MARGIN = 1.05
# Arm vertices (and the feed junction) closer than this are merged: no printed feature is this
# small, and a sub-micron piece would only spoil the conditioning of the matrix.
VERTEX_MERGE_M = 1e-6
# The delta-gap source spans the port gap above the ground edge, at most this fraction of the
# height of the arm above the feed (a gap reaching the arm would leave no feed leg).
SOURCE_MAX_HEIGHT_FRACTION = 0.5


@dataclass(frozen=True)
class MeshControl:
    """Segmentation limits for one wire model (all lengths in metres)."""

    f_max_hz: float
    segments_per_wavelength: float = SEGMENTS_PER_WAVELENGTH
    detail_segments: float = DETAIL_SEGMENTS
    grid_pitch_per_wavelength: float = GRID_PITCH_PER_WAVELENGTH
    grid_segments_per_wavelength: float = GRID_SEGMENTS_PER_WAVELENGTH
    edge_row_trace_widths: float = EDGE_ROW_TRACE_WIDTHS
    grid_growth: float = GRID_GROWTH
    #: pitch far from the antenna (lines per wavelength); None: the near pitch everywhere
    grid_far_pitch_per_wavelength: float | None = GRID_FAR_PITCH_PER_WAVELENGTH
    grid_near_wavelengths: float = GRID_NEAR_WAVELENGTHS

    @property
    def wavelength_m(self) -> float:
        return C0_M_PER_S / self.f_max_hz

    @property
    def max_segment_m(self) -> float:
        return self.wavelength_m / self.segments_per_wavelength

    @property
    def grid_max_segment_m(self) -> float:
        """Ground-grid segments: the task's lambda / 20 rule (the grid carries smoother current)."""
        return self.wavelength_m / self.grid_segments_per_wavelength

    @property
    def grid_pitch_m(self) -> float:
        return self.wavelength_m / self.grid_pitch_per_wavelength

    @property
    def grid_far_pitch_m(self) -> float:
        """Grid pitch far from the antenna (never finer than :attr:`grid_pitch_m`)."""
        if self.grid_far_pitch_per_wavelength is None:
            return self.grid_pitch_m
        return max(self.grid_pitch_m, self.wavelength_m / self.grid_far_pitch_per_wavelength)

    @property
    def grid_near_m(self) -> float:
        """Distance from the antenna within which the grid keeps :attr:`grid_pitch_m`."""
        return self.grid_near_wavelengths * self.wavelength_m


def strip_equivalent_radius_m(width_m: float) -> float:
    """Equivalent wire radius of a thin flat strip: ``0.25 w`` (Balanis 4th ed. ch. 9, from memory)."""
    return STRIP_EQUIVALENT_RADIUS_FACTOR * width_m


def equal_area_grid_radius_m(pitch_m: float) -> float:
    """Wire-grid radius by the equal-area rule ``2 pi a = pitch`` (Ludwig 1987, from memory)."""
    return pitch_m / (2.0 * math.pi)


def _n_segments(length_m: float, max_segment_m: float) -> int:
    return max(1, int(math.ceil(length_m / max_segment_m - 1e-9)))


def solvable_radius_m(segment_m: float, radius_m: float) -> float:
    """``radius_m``, capped so that ``segment_m`` stays inside the solver's length/radius limit."""
    return min(radius_m, segment_m / (MIN_SEGMENT_TO_RADIUS * SHORT_PIECE_RADIUS_MARGIN))


def _straight(p0: tuple[float, float], p1: tuple[float, float], max_seg_m: float, radius_m: float,
              perimeter_m: float = 0.0) -> Wire:
    length = math.hypot(p1[0] - p0[0], p1[1] - p0[1])
    n = _n_segments(length, max_seg_m)
    return Wire((p0[0], p0[1], 0.0), (p1[0], p1[1], 0.0), n, solvable_radius_m(length / n, radius_m), perimeter_m)


def arm_point_above_x(ifa: PrintedIfa, x_m: float) -> tuple[int, float]:
    """Index of the first horizontal arm piece spanning ``x_m`` and its centreline ``y``."""
    path = ifa.arm_path_m
    for i, ((x0, y0), (x1, y1)) in enumerate(zip(path, path[1:])):
        if abs(y1 - y0) < GEOMETRY_TOL_M and min(x0, x1) - GEOMETRY_TOL_M <= x_m <= max(x0, x1) + GEOMETRY_TOL_M:
            return i, y0
    raise SolverError(f"feed_x_m = {x_m!r}: no horizontal arm piece passes above the feed leg; move the feed")


def _arm_polyline_with_feed(ifa: PrintedIfa) -> tuple[list[tuple[float, float]], tuple[float, float]]:
    """Arm vertices with the feed-leg junction inserted (once, on the first piece above it)."""
    piece, y_arm = arm_point_above_x(ifa, ifa.feed_x_m)
    junction = (ifa.feed_x_m, y_arm)
    pts = [tuple(p) for p in ifa.arm_path_m]
    for end in (piece, piece + 1):
        if math.dist(pts[end], junction) < VERTEX_MERGE_M:
            pts[end] = junction  # the junction is (or replaces) an arm vertex
            return _merge_close_vertices(pts, junction), junction
    return _merge_close_vertices(pts[: piece + 1] + [junction] + pts[piece + 1 :], junction), junction


def _merge_close_vertices(pts: list[tuple[float, float]], keep: tuple[float, float]) -> list[tuple[float, float]]:
    """Drop vertices closer than ``VERTEX_MERGE_M`` to the previous kept one (never ``keep``, the
    feed junction, nor the first vertex above the short leg; a dropped last vertex moves the end)."""
    out = [pts[0]]
    for p in pts[1:]:
        if math.dist(p, out[-1]) >= VERTEX_MERGE_M:
            out.append(p)
        elif p == keep and len(out) > 1:
            out[-1] = p
    return out


def _graded_lines(start_m: float, stop_m: float, fine_m: float, pitch_m: float, growth: float,
                  near_m: float = math.inf, far_pitch_m: float | None = None) -> list[float]:
    """Grid lines from ``start`` towards ``stop`` (either direction): first step ``fine``, growing by
    ``growth`` up to ``pitch``, the last gap stretched or merged to end exactly at ``stop``.  Beyond
    ``near`` from ``start`` the steps grow on up to ``far_pitch`` and, once there, the rest is split
    into equal gaps of at most ``far_pitch``."""
    direction = 1.0 if stop_m > start_m else -1.0
    total = abs(stop_m - start_m)
    far = pitch_m if far_pitch_m is None else max(far_pitch_m, pitch_m)
    lines = [0.0]
    step = min(fine_m, pitch_m)
    while True:
        if far_pitch_m is not None and step >= far * (1.0 - 1e-9):
            rest = total - lines[-1]
            n = math.ceil(rest / far - 1e-9)
            lines += [lines[-1] + rest * i / n for i in range(1, n)]
            break
        if lines[-1] + step >= total - 0.5 * step:
            break
        lines.append(lines[-1] + step)
        step = min(step * growth, pitch_m if lines[-1] < near_m - GEOMETRY_TOL_M else far)
    lines.append(total)
    return [start_m + direction * v for v in lines]


def _column_lines(x_min_m: float, x_max_m: float, zone: tuple[float, float], pitch_m: float, far_pitch_m: float,
                  growth: float) -> list[float]:
    """Grid columns over ``[x_min, x_max]``: the uniform ``pitch`` from ``x_min`` inside ``zone`` (the
    antenna's stretch of the edge widened by the near distance), growing by ``growth`` up to
    ``far_pitch`` outside it on either side."""
    n = max(1, math.ceil((x_max_m - x_min_m) / pitch_m))
    uniform = [x_min_m + i * (x_max_m - x_min_m) / n for i in range(n + 1)]
    if far_pitch_m <= pitch_m:
        return uniform
    inside = [u for u in uniform if zone[0] - GEOMETRY_TOL_M <= u <= zone[1] + GEOMETRY_TOL_M]
    if not inside:  # a zone narrower than the pitch: the line nearest to its centre
        inside = [min(uniform, key=lambda u: abs(u - 0.5 * (zone[0] + zone[1])))]
    first = min(pitch_m * growth, far_pitch_m)
    def outward(start: float, stop: float) -> list[float]:
        if abs(stop - start) <= GEOMETRY_TOL_M:
            return []
        return _graded_lines(start, stop, first, far_pitch_m, growth, near_m=0.0, far_pitch_m=far_pitch_m)[1:]

    # a side keeps its uniform lines unless grading saves some (the same grid, to the last bit)
    left = min([u for u in uniform if u < inside[0]], outward(inside[0], x_min_m)[::-1], key=len)
    right = min([u for u in uniform if u > inside[-1]], outward(inside[-1], x_max_m), key=len)
    return left + inside + right


def _merge_required(uniform: list[float], required: list[float], min_gap_m: float) -> list[float]:
    """Union of grid coordinates, dropping uniform ones closer than ``min_gap`` to a required one."""
    kept = [u for u in uniform if all(abs(u - r) >= min_gap_m for r in required)]
    keys = sorted(set(np.round(np.array(kept + required) / GEOMETRY_TOL_M).astype(np.int64).tolist()))
    return [k * GEOMETRY_TOL_M for k in keys]


def _local_spacings(lines_m: list[float]) -> list[float]:
    """Spacing each grid line represents: the mean of its gaps to the neighbouring lines (the
    one gap at either end), the ``pitch`` of the local equal-area rule."""
    gaps = np.abs(np.diff(np.asarray(lines_m, float)))  # a grid has >= 2 lines each way
    left = np.concatenate([[gaps[0]], gaps])
    right = np.concatenate([gaps, [gaps[-1]]])
    return (0.5 * (left + right)).tolist()


def ground_grid_wires(ifa: PrintedIfa, control: MeshControl, detail_m: float) -> list[Wire]:
    """Wire grid of the ground plane (``y <= 0``) with lines at the feed and short legs."""
    g = ifa.ground
    pitch = min(control.grid_pitch_m, g.width_m, g.length_m)
    far_pitch = min(control.grid_far_pitch_m, g.width_m, g.length_m)
    near = control.grid_near_m
    fine = min(pitch, control.edge_row_trace_widths * ifa.trace_width_m, ifa.height_m)
    ys = _graded_lines(0.0, -g.length_m, fine, pitch, control.grid_growth)
    if far_pitch > pitch:  # graded rows where they save some (else the same grid, to the last bit)
        ys = min(ys, _graded_lines(0.0, -g.length_m, fine, pitch, control.grid_growth, near, far_pitch), key=len)
    arm_x = [p[0] for p in ifa.arm_path_m + (ifa.second_arm_path_m or ())] + [ifa.feed_x_m, ifa.short_x_m]
    x_lo, x_hi = max(g.x_min_m, min(arm_x)), min(g.x_max_m, max(arm_x))
    uniform = _column_lines(g.x_min_m, g.x_max_m, (x_lo - near, x_hi + near), pitch, far_pitch, control.grid_growth)
    legs = (("feed_x_m", ifa.feed_x_m, ifa.trace_width_m), ("short_x_m", ifa.short_x_m, ifa.short_width_m))
    for name, x, width in legs:
        if not (g.x_min_m - 0.5 * width - GEOMETRY_TOL_M <= x <= g.x_max_m + 0.5 * width + GEOMETRY_TOL_M):
            raise SolverError(f"{name} = {x!r}: the leg must land on the ground edge "
                              f"({g.x_min_m!r} .. {g.x_max_m!r} m)")
    # a ground corner within half a leg width of a leg moves onto the leg (the leg's copper
    # reaches it anyway), so no grid wire is shorter than that
    ends = [min(g.x_min_m, *(x for _, x, _ in legs)), max(g.x_max_m, *(x for _, x, _ in legs))]
    for i, end in enumerate(ends):
        for _, x, width in legs:
            if abs(end - x) < 0.5 * width:
                ends[i] = x
    uniform = [u for u in uniform if ends[0] < u < ends[1]]
    required = ends + [ifa.feed_x_m, ifa.short_x_m]
    xs = _merge_required(uniform, required, 0.5 * fine)
    wires: list[Wire] = []
    # horizontal wires (along x) on every row, split at every column
    row_spacing = _local_spacings(ys)
    column_spacing = _local_spacings(xs)
    for row, y in enumerate(ys):
        for x0, x1 in zip(xs, xs[1:]):
            on_edge_near = row == 0 and x1 > x_lo - pitch and x0 < x_hi + pitch
            max_seg = detail_m if on_edge_near else min(pitch, control.grid_max_segment_m)
            n = _n_segments(x1 - x0, max_seg)
            radius = min(equal_area_grid_radius_m(row_spacing[row]), (x1 - x0) / n / MIN_SEGMENT_TO_GRID_RADIUS)
            wires.append(Wire((x0, y, 0.0), (x1, y, 0.0), n, radius))
    # vertical wires (along y) on every column, split at every row
    for col, x in enumerate(xs):
        for y0, y1 in zip(ys, ys[1:]):
            n = _n_segments(abs(y1 - y0), min(pitch, control.grid_max_segment_m))
            radius = min(equal_area_grid_radius_m(column_spacing[col]), abs(y1 - y0) / n / MIN_SEGMENT_TO_GRID_RADIUS)
            wires.append(Wire((x, y0, 0.0), (x, y1, 0.0), n, radius))
    return wires


def antenna_wires(ifa: PrintedIfa, control: MeshControl) -> tuple[list[Wire], float]:
    """Source, feed leg, short leg and arm wires; returns ``(wires, detail_m)`` with the source first."""
    if not (ifa.port_gap_m > 0.0):
        raise SolverError(f"port_gap_m = {ifa.port_gap_m!r}: must be a positive gap")
    arm, junction = _arm_polyline_with_feed(ifa)
    gap = min(ifa.port_gap_m, SOURCE_MAX_HEIGHT_FRACTION * junction[1])
    a_trace = strip_equivalent_radius_m(ifa.trace_width_m)
    a_short = strip_equivalent_radius_m(ifa.short_width_m)
    detail = min(control.max_segment_m,
                 min(ifa.height_m, max(ifa.feed_short_spacing_m, GEOMETRY_TOL_M)) / control.detail_segments)
    second = _second_arm_polyline(ifa, gap, junction)
    if second:  # the gap between the two arms is a feature too
        detail = min(detail, abs(second[0][1] - junction[1]) / control.detail_segments)
    detail = max(detail, MIN_SEGMENT_TO_TRACE_RADIUS * max(a_trace, a_short))
    t_cu = ifa.laminate.copper_thickness_m
    per_trace = 2.0 * (ifa.trace_width_m + t_cu)
    per_short = 2.0 * (ifa.short_width_m + t_cu)
    # the feed leg from the port gap up, split where the second arm branches off it
    leg_stops = sorted({junction[1], second[0][1]}) if second else [junction[1]]
    leg = [(ifa.feed_x_m, gap)] + [(ifa.feed_x_m, y) for y in leg_stops]
    wires = [
        Wire((ifa.feed_x_m, 0.0, 0.0), (ifa.feed_x_m, gap, 0.0), 1, solvable_radius_m(gap, a_trace), per_trace),
        _straight(leg[0], leg[1], detail, a_trace, per_trace),
        _straight((ifa.short_x_m, 0.0), arm[0], detail, a_short, per_short),
    ]
    for p0, p1 in zip(arm, arm[1:]):
        wires.append(_straight(p0, p1, detail, a_trace, per_trace))
    for p0, p1 in list(zip(leg[1:], leg[2:])) + list(zip(second, second[1:])):
        wires.append(_straight(p0, p1, detail, a_trace, per_trace))
    return wires, detail


def _second_arm_polyline(ifa: PrintedIfa, gap_m: float, junction: tuple[float, float]) -> list[tuple[float, float]]:
    """The second arm's vertices from its junction on the feed leg (empty without a second arm).

    The junction must lie on the feed leg above the port gap and apart from the main arm's
    junction (the arms would short); a close first vertex snaps onto the leg's x."""
    if not ifa.second_arm_path_m:
        return []
    pts = [tuple(p) for p in ifa.second_arm_path_m]
    x0, y0 = pts[0]
    if abs(x0 - ifa.feed_x_m) > VERTEX_MERGE_M:
        raise SolverError(f"second_arm_path_m = {pts[0]!r}: the second arm must start on the feed leg "
                          f"(x = {ifa.feed_x_m!r} m)")
    if len(pts) < 2:
        raise SolverError(f"second_arm_path_m = {pts!r}: needs at least two points")
    if y0 <= gap_m + VERTEX_MERGE_M or abs(y0 - junction[1]) < VERTEX_MERGE_M:
        raise SolverError(f"second_arm_path_m = {pts[0]!r}: the second arm must branch off the feed leg "
                          f"above the port gap and apart from the main arm")
    pts[0] = (ifa.feed_x_m, y0)
    return _merge_close_vertices(pts, pts[0])


def ifa_wire_model(ifa: PrintedIfa, f_max_hz: float, with_ground: bool = True, with_laminate: bool = True,
                   with_loss: bool = True, control: MeshControl | None = None) -> WireModel:
    """Wire model of a printed IFA: antenna wires, ground grid, source and laminate slab.

    ``with_laminate=False`` gives the free-space model, ``with_loss=False`` lossless copper.
    """
    wires, antenna_count = _model_wires(ifa, f_max_hz, control, with_ground)
    if not with_loss:
        wires[:antenna_count] = [Wire(w.start_m, w.end_m, w.n_segments, w.radius_m) for w in wires[:antenna_count]]
    check_model_size(WireModel(tuple(wires), 0, 0), antenna_wires=antenna_count)  # before the 2-D solve and any matrix
    slab = None
    if with_laminate:
        lam = equivalent_laminate(ifa)  # the board edge beyond the antenna, as an equivalent slab
        slab = Slab(lam.eps_r, lam.thickness_m, lam.loss_tangent)
    return WireModel(tuple(wires), source_wire=0, source_segment=0, slab=slab)


def _model_wires(ifa: PrintedIfa, f_max_hz: float, control: MeshControl | None, with_ground: bool) -> tuple[list[Wire], int]:
    """All wires of the model (source first) and how many of them are the antenna's."""
    if not (f_max_hz > 0.0):
        raise SolverError(f"f_max_hz = {f_max_hz!r}: must be a positive frequency")
    control = control or MeshControl(f_max_hz=f_max_hz)
    wires, detail = antenna_wires(ifa, control)
    antenna_count = len(wires)
    if with_ground:
        wires += ground_grid_wires(ifa, control, detail)
    return wires, antenna_count


def check_ifa_model_size(ifa: PrintedIfa, f_max_hz: float, control: MeshControl | None = None) -> None:
    """Refuse at once (no laminate solve, no matrix) an ``ifa`` whose wire model would be too big
    (:func:`footgen.physics.problem_size.check_model_size`)."""
    wires, antenna_count = _model_wires(ifa, f_max_hz, control, True)
    check_model_size(WireModel(tuple(wires), 0, 0), antenna_wires=antenna_count)
