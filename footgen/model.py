"""Adapter from geometry (mm) to the physics number model (SI): the one place units change."""

from __future__ import annotations

from footgen.geometry.ifa import IfaCopper
from footgen.geometry.layout import short_inset_mm
from footgen.physics.ifa import GroundPlane, Laminate, PrintedIfa
from footgen.spec import Spec

MM = 1e-3


def printed_ifa(spec: Spec, copper: IfaCopper) -> PrintedIfa:
    """The physics model of canonical-frame copper (feed at x = 0, arm towards +x)."""
    s = -copper.short_x_mm
    box_x0 = -s - short_inset_mm(spec)
    center = box_x0 + spec.clearance.width_mm / 2 + spec.ground_plane.offset_mm
    gp = spec.ground_plane
    return PrintedIfa(
        arm_path_m=tuple((x * MM, y * MM) for x, y in copper.arm_path),
        feed_x_m=copper.feed_x_mm * MM,
        short_x_m=copper.short_x_mm * MM,
        trace_width_m=spec.trace_width_mm * MM,
        short_width_m=spec.short.stub_width_mm * MM,
        port_gap_m=spec.feed.port_gap_mm * MM,
        ground=GroundPlane(x_min_m=(center - gp.width_mm / 2) * MM, x_max_m=(center + gp.width_mm / 2) * MM, length_m=gp.length_mm * MM),
        laminate=Laminate(
            eps_r=spec.laminate.eps_r,
            thickness_m=spec.laminate.thickness_mm * MM,
            loss_tangent=spec.laminate.loss_tangent,
            copper_thickness_m=spec.laminate.copper_thickness_mm * MM,
        ),
    )
