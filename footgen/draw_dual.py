"""The drawing's dimensions of a dual-band IFA's second arm: its reach from the feed leg, its
height above the ground edge, the copper gap to the main arm, and its line in the summary.

Works on :class:`footgen.draw.Plane` (the footprint unrotated, drawing-plane mm, y up).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Sequence

from shapely.geometry import box

from footgen.dimlines import GRID_SLACK_MM, Dim, Point
from footgen.geometry.dualband import second_arm_style

if TYPE_CHECKING:
    from footgen.draw import Plane


def _far_end(points: Sequence[Point], y: float, m: int) -> Point:
    """Of ``points`` at height ``y``, the one furthest along the arm direction ``m``."""
    return max((p for p in points if abs(p[1] - y) < GRID_SLACK_MM), key=lambda p: m * p[0])


def second_arm_dims(plane: Plane, d: dict[str, float]) -> list[Dim]:
    """The second arm's reach from the feed leg's centreline, along its top edge (its length
    when straight; a meandered one's length is a callout)."""
    path, w = plane.second_arm, d["trace_width_mm"]
    h2 = path[0][1]
    end = max(path, key=lambda p: plane.direction * p[0])
    length = f"second arm {d['second_arm_length_mm']:.2f}" if len(path) == 2 else f"second arm reach {abs(end[0] - path[0][0]):.2f}"
    return [Dim("x", (path[0][0], h2 + w / 2), (end[0], end[1] + w / 2), length, "top")]


def arm_gap(plane: Plane) -> tuple[Point, Point]:
    """The copper gap between the arms where they face each other (over the x range both
    span): (point on the second arm, point on the main arm), each the far end of its facing edge."""
    assert plane.arm_copper is not None
    main, second = plane.arm_copper
    lo, hi = max(main.bounds[0], second.bounds[0]), min(main.bounds[2], second.bounds[2])
    strip = box(lo, -1e6, hi, 1e6)
    m = plane.direction
    under = second.bounds[1] < main.bounds[1]
    faces = []
    for poly, top in ((second, under), (main, not under)):
        part = poly.intersection(strip)
        y = part.bounds[3] if top else part.bounds[1]
        faces.append(_far_end(poly.exterior.coords, y, m))
    return faces[0], faces[1]


def second_arm_heights(plane: Plane, d: dict[str, float], far: str) -> list[Dim]:
    """The second arm's height above the ground edge (to its centreline, at the far end of its
    run there) and the copper gap to the main arm, both on the far side."""
    path = plane.second_arm
    h2 = path[0][1]
    cx0, _, cx1, _ = plane.clearance.bounds
    far_x = cx1 if plane.direction > 0 else cx0
    a, b = arm_gap(plane)
    return [
        Dim("y", a, b, f"arm gap {abs(b[1] - a[1]):.2f}", far),
        Dim("y", (far_x, 0.0), _far_end(path, h2, plane.direction), f"second arm height {h2:.2f}", far),
    ]


def second_arm_line(plane: Plane, d: dict[str, float], kind: str | None) -> str:
    """The summary's line on a dual-band IFA's second arm (``kind``: the spec's, else read off
    the copper)."""
    legs = int(d.get("second_arm_meander_legs", 0))
    style = second_arm_style(kind or ("meandered" if legs else "straight"), legs)
    a, b = arm_gap(plane)
    return (f"Second arm {d['second_arm_length_mm']:.2f} mm along the centreline from the feed leg, "
            f"{d['second_arm_height_mm']:.2f} mm above the ground edge, {'under' if a[1] < b[1] else 'above'} the main arm, "
            f"{style}{f' with {legs_words(legs)}' if legs else ''}; copper gap to the main arm {abs(b[1] - a[1]):.2f} mm.")


def legs_words(legs: int) -> str:
    return f"{legs} leg" if legs == 1 else f"{legs} legs"
