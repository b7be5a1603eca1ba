"""Adapter from geometry (mm) to the physics number model (SI): the one place units change."""

from __future__ import annotations

from footgen.geometry.ifa import IfaCopper
from footgen.geometry.layout import ground_x_range_mm
from footgen.physics.ifa import Cover, GroundPlane, Laminate, PrintedIfa
from footgen.spec import EnclosureSpec, Spec

MM = 1e-3
#: A final arm segment shorter than this fraction of the trace width is left out of the physics
#: model (thin-wire models need segments longer than a few wire radii, radius = width / 4); the
#: centreline length then differs by less than half a trace width.
MIN_TAIL_PER_WIDTH = 0.5


def _physics_path(path: tuple[tuple[float, float], ...], width_mm: float) -> tuple[tuple[float, float], ...]:
    if len(path) > 2:
        (x0, y0), (x1, y1) = path[-2], path[-1]
        if abs(x1 - x0) + abs(y1 - y0) < MIN_TAIL_PER_WIDTH * width_mm:
            return path[:-1]
    return path


def printed_ifa(spec: Spec, copper: IfaCopper) -> PrintedIfa:
    """The physics model of canonical-frame copper (feed at x = 0, arm towards +x)."""
    gx0, gx1 = ground_x_range_mm(spec, -copper.short_x_mm)
    gp = spec.ground_plane
    return PrintedIfa(
        arm_path_m=tuple((x * MM, y * MM) for x, y in _physics_path(copper.arm_path, spec.trace_width_mm)),
        feed_x_m=copper.feed_x_mm * MM,
        short_x_m=copper.short_x_mm * MM,
        trace_width_m=spec.trace_width_mm * MM,
        short_width_m=spec.short.stub_width_mm * MM,
        port_gap_m=spec.feed.port_gap_mm * MM,
        ground=GroundPlane(x_min_m=gx0 * MM, x_max_m=gx1 * MM, length_m=gp.length_mm * MM),
        laminate=Laminate(
            eps_r=spec.laminate.eps_r,
            thickness_m=spec.laminate.thickness_mm * MM,
            loss_tangent=spec.laminate.loss_tangent,
            copper_thickness_m=spec.laminate.copper_thickness_mm * MM,
        ),
        board_edge_y_m=(spec.clearance.depth_mm + spec.clearance.edge_distance_mm) * MM,
        second_arm_path_m=(tuple((x * MM, y * MM) for x, y in _physics_path(copper.second_arm_path, spec.trace_width_mm))
                           if copper.second_arm_path else None),
        cover=None if spec.enclosure is None else cover(spec.enclosure),
    )


def cover(enclosure: EnclosureSpec) -> Cover:
    """The physics model of the spec's enclosure wall."""
    return Cover(eps_r=enclosure.eps_r, thickness_m=enclosure.thickness_mm * MM, distance_m=enclosure.distance_mm * MM)
