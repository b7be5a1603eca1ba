"""The printed IFA reduced to numbers, as every physics model sees it (SI units, no I/O).

Coordinates lie in the board plane.  The ground plane occupies ``y < 0`` with its radiating edge
on ``y = 0``; the antenna copper lies at ``y > 0`` in the clearance.  The feed leg runs up from the
ground edge at ``x = feed_x_m``, the short leg at ``x = short_x_m``; both end on the arm, whose
centreline ``arm_path_m`` starts above the short leg, passes above the feed leg and ends at the
open end (it may be meandered: any polyline of axis-parallel segments).  The geometry layer builds
this from a layout; physics never sees millimetres.  The laminate lies under the ground and the
clearance and ends at the board edge ``y = board_edge_y_m`` beyond the antenna (if given).

A dual-band IFA has a second, shorter arm ``second_arm_path_m`` that branches off the feed leg:
its first vertex lies on the feed leg (``x = feed_x_m``) at its own height, below the main arm or
above it (then the feed leg runs on up past the main arm to meet it), and it runs the same way as
the main arm.  The main arm (the one joined to the short) sets the lower resonance, the second
arm the upper one; both share the feed and the short.

An enclosure wall (``cover``, if given) is a dielectric layer parallel to the board over the
copper side, as far from the copper as ``Cover.distance_m``; laterally it covers the board.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Laminate:
    """Board laminate: relative permittivity, thickness, loss tangent, copper thickness (SI)."""

    eps_r: float
    thickness_m: float
    loss_tangent: float = 0.0
    copper_thickness_m: float = 35e-6


@dataclass(frozen=True)
class Cover:
    """Enclosure wall over the copper side (SI): a lossless plastic layer of relative permittivity
    ``eps_r`` and thickness ``thickness_m``, parallel to the board, its near face ``distance_m``
    above the copper."""

    eps_r: float
    thickness_m: float
    distance_m: float


@dataclass(frozen=True)
class GroundPlane:
    """Rectangular ground plane below the edge ``y = 0``: ``x`` from ``x_min_m`` to ``x_max_m``,
    ``y`` from ``-length_m`` to 0."""

    x_min_m: float
    x_max_m: float
    length_m: float

    @property
    def width_m(self) -> float:
        return self.x_max_m - self.x_min_m


@dataclass(frozen=True)
class PrintedIfa:
    """Centreline model of a printed (meandered) inverted-F antenna on one copper layer."""

    arm_path_m: tuple[tuple[float, float], ...]
    feed_x_m: float
    short_x_m: float
    trace_width_m: float
    short_width_m: float
    port_gap_m: float
    ground: GroundPlane
    laminate: Laminate
    #: The board edge beyond the antenna (the laminate ends at ``y = board_edge_y_m``); ``None``:
    #: the laminate reaches far beyond the copper.  See :mod:`footgen.physics.board_edge`.
    board_edge_y_m: float | None = None
    #: Centreline of a second arm branching off the feed leg (dual-band); ``None``: one arm.
    second_arm_path_m: tuple[tuple[float, float], ...] | None = None
    #: The enclosure wall over the copper side; ``None``: air above the board.  It enters the
    #: models through the equivalent slab of :mod:`footgen.physics.board_edge`.
    cover: Cover | None = None

    @property
    def height_m(self) -> float:
        """Height of the arm's first vertex (above the short leg) over the ground edge."""
        return self.arm_path_m[0][1]

    @property
    def arm_length_m(self) -> float:
        """Centreline length of the arm from above the short leg to the open end."""
        total = 0.0
        for (x0, y0), (x1, y1) in zip(self.arm_path_m, self.arm_path_m[1:]):
            total += ((x1 - x0) ** 2 + (y1 - y0) ** 2) ** 0.5
        return total

    @property
    def second_arm_length_m(self) -> float:
        """Centreline length of the second arm from the feed leg to its open end (0 without one)."""
        path = self.second_arm_path_m or ()
        return sum(((x1 - x0) ** 2 + (y1 - y0) ** 2) ** 0.5 for (x0, y0), (x1, y1) in zip(path, path[1:]))

    @property
    def second_arm_height_m(self) -> float | None:
        """Height of the second arm's junction with the feed leg (``None`` without a second arm)."""
        return self.second_arm_path_m[0][1] if self.second_arm_path_m else None

    @property
    def feed_short_spacing_m(self) -> float:
        return abs(self.feed_x_m - self.short_x_m)
