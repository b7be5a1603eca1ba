"""Dimension lines, callouts and text placement on a :class:`footgen.canvas.Canvas`.

A dimension measures two feature points of the drawing plane (mm, y up) along x or y; it is
drawn in a lane outside the copper with extension lines, arrows and its label.  Lanes are packed
greedily so that no two labels meet.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from typing import Iterable, Sequence

from footgen.canvas import Canvas, Shape, Text, text_height, text_width

Point = tuple[float, float]
#: Coordinates equal within this are the same line (mm): the layout is snapped to a 1 nm grid.
GRID_SLACK_MM = 1e-5
LANE_PX = 24.0  # spacing of horizontal dimension lanes
LANE_GAP_PX = 12.0  # between the copper and the first lane, and between labels in a lane
ARROW_PX = 7.0
#: Most dimensions on one side whose every order :func:`pack_lanes` tries (7! orders).
MAX_ORDER_SEARCH = 7
#: An extension line keeps this far from any label it passes (px).
EXTENSION_CLEAR_PX = 6.0
SIZE_DIM = 12.0
DIM_COLOR = "#1a202c"


@dataclass(frozen=True)
class Dim:
    """A linear dimension in the drawing plane (mm): ``axis`` "x" (horizontal, in a lane above
    or below the copper) or "y" (vertical, in a lane at one side); ``a``/``b`` are the two
    feature points the extension lines start from."""

    axis: str
    a: Point
    b: Point
    label: str
    side: str  # "top", "bottom", "left" or "right"


@dataclass(frozen=True)
class Note:
    """A callout: text below the copper with a leader line to ``target`` (mm)."""

    target: Point
    label: str


# --------------------------------------------------------------------------------- lane packing


@dataclass(frozen=True)
class Placed:
    """A dimension laid out in lane coordinates: ``lo``/``hi`` along the dimension (px from the
    drawing-plane origin, y growing upwards), the label's span and where it sits."""

    dim: Dim
    lo: float
    hi: float
    span: tuple[float, float]
    label_at: str  # "inside", "between" (arrows outside), "after" (beyond hi) or "before" (beyond lo)
    lane: int = 0


def _place_dim(dim: Dim, k: float, limit: tuple[float, float], avoid: Sequence[float]) -> Placed:
    """Where the label goes: between the arrows when it fits, else between arrows drawn outside,
    else beyond one end (for horizontal dimensions the end whose label crosses no other
    dimension's extension line in ``avoid``, inside ``limit``)."""
    i = 0 if dim.axis == "x" else 1
    lo, hi = sorted((k * dim.a[i], k * dim.b[i]))
    along = text_width(dim.label, SIZE_DIM) if dim.axis == "x" else text_height(SIZE_DIM)
    pad = ARROW_PX + 4
    if hi - lo >= along + 2 * ARROW_PX + 6:
        return Placed(dim, lo, hi, (lo, hi), "inside")
    if hi - lo >= along + 6:
        return Placed(dim, lo, hi, (lo - pad, hi + pad), "between")
    if dim.axis == "y":
        return Placed(dim, lo, hi, (lo - pad, hi + pad + along), "after")
    after, before = (hi + pad, hi + pad + along), (lo - pad - along, lo - pad)

    def crosses(span: tuple[float, float]) -> bool:
        return any(span[0] - 3 <= x <= span[1] + 3 for x in avoid)

    options = [("after", after), ("before", before)]
    fits = [(name, span) for name, span in options if limit[0] <= span[0] and span[1] <= limit[1]] or options
    name, span = next(((n, sp) for n, sp in fits if not crosses(sp)), fits[0])
    return Placed(dim, lo, hi, (min(lo - pad, span[0]), max(hi + pad, span[1])), name)


def label_span(p: Placed) -> tuple[float, float]:
    """Where a placed dimension's label lies along it (lane coordinates, as ``lo``/``hi``)."""
    along = text_width(p.dim.label, SIZE_DIM) if p.dim.axis == "x" else text_height(SIZE_DIM)
    pad = ARROW_PX + 4
    if p.label_at == "after":
        return (p.hi + pad, p.hi + pad + along)
    if p.label_at == "before":
        return (p.lo - pad - along, p.lo - pad)
    mid = (p.lo + p.hi) / 2
    return (mid - along / 2, mid + along / 2)


def _extension_at(p: Placed, k: float) -> tuple[float, float]:
    """Where a placed dimension's extension lines run (lane coordinates): they cross every lane
    nearer the copper than its own."""
    i = 0 if p.dim.axis == "x" else 1
    return (k * p.dim.a[i], k * p.dim.b[i])


def _crossed(label: tuple[float, float], extensions: Iterable[float]) -> bool:
    return any(label[0] - EXTENSION_CLEAR_PX <= e <= label[1] + EXTENSION_CLEAR_PX for e in extensions)


def crossings(placed: Sequence[Placed], k: float) -> int:
    """Extension lines that cross a label of a nearer lane."""
    return sum(_crossed(label_span(q), _extension_at(p, k)) for p in placed for q in placed if q.lane < p.lane)


def pack_lanes(dims: Sequence[Dim], k: float, limit: tuple[float, float], *, search_order: bool = False) -> list[Placed]:
    """Lanes for ``dims`` (:func:`pack_in_order`).  ``search_order``: keep extension lines off
    labels (``avoid_crossings``) and try every order of up to MAX_ORDER_SEARCH dimensions,
    keeping the first with the fewest extension lines across labels, then the fewest lanes (the
    given order wins ties).  Without it, the given order and first free lanes."""
    if not search_order:
        return pack_in_order(dims, k, limit)
    if len(dims) > MAX_ORDER_SEARCH:
        return pack_in_order(dims, k, limit, avoid_crossings=True)
    best: tuple[tuple[int, int], list[Placed]] | None = None
    for order in itertools.permutations(dims):
        placed = pack_in_order(order, k, limit, avoid_crossings=True)
        key = (crossings(placed, k), 1 + max((p.lane for p in placed), default=-1))
        if best is None or key < best[0]:
            best = (key, placed)
    assert best is not None
    return best[1]


def pack_in_order(dims: Sequence[Dim], k: float, limit: tuple[float, float], *, avoid_crossings: bool = False) -> list[Placed]:
    """Greedy lane assignment in the given order: each dimension takes the first lane where its
    span (label included) keeps LANE_GAP_PX from every other span; ``avoid_crossings``: the
    first such lane where no extension line crosses a label either (its own across the labels
    of nearer lanes, those of farther lanes across its label), if there is one."""
    lanes: list[list[tuple[float, float]]] = []
    out: list[Placed] = []
    for dim in dims:
        i = 0 if dim.axis == "x" else 1
        avoid = [k * p[i] for other in dims if other is not dim for p in (other.a, other.b)]
        p = _place_dim(dim, k, limit, avoid)
        a, b = p.span
        free = [n for n, lane in enumerate(lanes + [[]]) if all(b + LANE_GAP_PX <= c or d + LANE_GAP_PX <= a for c, d in lane)]
        clear = [n for n in free if avoid_crossings
                 and not any(_crossed(label_span(q), _extension_at(p, k)) for q in out if q.lane < n)
                 and not any(_crossed(label_span(p), _extension_at(q, k)) for q in out if q.lane > n)]
        n = (clear or free)[0]
        if n == len(lanes):
            lanes.append([])
        lanes[n].append((a, b))
        out.append(Placed(p.dim, p.lo, p.hi, p.span, p.label_at, n))
    return out


def lane_widths(placed: Iterable[Placed]) -> list[float]:
    widths: dict[int, float] = {}
    for p in placed:
        widths[p.lane] = max(widths.get(p.lane, 0.0), text_width(p.dim.label, SIZE_DIM) + 8.0)
    return [widths[i] for i in sorted(widths)]


# --------------------------------------------------------------------------------- composition


@dataclass(frozen=True)
class Frame:
    """Drawing-plane mm (y up) to canvas px (y down)."""

    k: float
    ox: float
    oy: float

    def __call__(self, p: Point) -> Point:
        return (self.ox + self.k * p[0], self.oy - self.k * p[1])


def arrow(tip: Point, direction: Point, color: str) -> Shape:
    dx, dy = direction
    n = math.hypot(dx, dy) or 1.0
    dx, dy = dx / n, dy / n
    bx, by = tip[0] - ARROW_PX * dx, tip[1] - ARROW_PX * dy
    half = ARROW_PX * 0.35
    return Shape(((tip[0], tip[1]), (bx - half * dy, by + half * dx), (bx + half * dy, by - half * dx)), fill=color)


def line(a: Point, b: Point, color: str, width: float = 0.8, dash=None) -> Shape:
    return Shape((a, b), stroke=color, width=width, closed=False, dash=dash)


def text_centered(cx: float, cy: float, label: str, size: float, **kw) -> Text:
    return Text(cx - text_width(label, size) / 2, cy - text_height(size) / 2, label, size, **kw)


def draw_dim(cv: Canvas, p: Placed, frame: Frame, lane_pos: float) -> None:
    """Extension lines, dimension line, arrows and label of one placed dimension."""
    col = DIM_COLOR
    dim = p.dim
    if dim.axis == "x":
        A, B = frame(dim.a), frame(dim.b)
        y = lane_pos
        for P in (A, B):
            cv.add(line(P, (P[0], y + (-3 if y < P[1] else 3)), col, 0.6))
        xa, xb = sorted((A[0], B[0]))
        ends, along, mk = (xa, xb), (1.0, 0.0), lambda t: (t, y)
    else:
        A, B = frame(dim.a), frame(dim.b)
        x = lane_pos
        for P in (A, B):
            cv.add(line(P, (x + (-3 if x < P[0] else 3), P[1]), col, 0.6))
        ya, yb = sorted((A[1], B[1]))
        ends, along, mk = (ya, yb), (0.0, 1.0), lambda t: (x, t)
    lo, hi = ends
    if hi - lo >= 2 * ARROW_PX + 2 and p.label_at != "between":
        cv.add(line(mk(lo), mk(hi), col))
        cv.add(arrow(mk(lo), (-along[0], -along[1]), col))
        cv.add(arrow(mk(hi), along, col))
    else:  # arrows outside, pointing in
        cv.add(line(mk(lo - ARROW_PX - 4), mk(hi + ARROW_PX + 4), col))
        cv.add(arrow(mk(lo), along, col))
        cv.add(arrow(mk(hi), (-along[0], -along[1]), col))
    label = dim.label
    tw, th = text_width(label, SIZE_DIM), text_height(SIZE_DIM)
    if dim.axis == "x":
        if p.label_at in ("inside", "between"):
            cv.add(text_centered((lo + hi) / 2, y, label, SIZE_DIM, background="#ffffff"))
        elif p.label_at == "after":
            cv.add(Text(hi + ARROW_PX + 4, y - th / 2, label, SIZE_DIM, background="#ffffff"))
        else:
            cv.add(Text(lo - ARROW_PX - 4 - tw, y - th / 2, label, SIZE_DIM, background="#ffffff"))
    else:
        if p.label_at in ("inside", "between"):
            cv.add(text_centered(x, (lo + hi) / 2, label, SIZE_DIM, background="#ffffff"))
        else:  # above the upper end (screen y grows downwards)
            cv.add(Text(x - tw / 2, lo - ARROW_PX - 4 - th, label, SIZE_DIM, background="#ffffff"))


def wrap(text: str, width: float, size: float) -> list[str]:
    """Words of ``text`` in lines no wider than ``width`` (estimated widths)."""
    out, current = [], ""
    for word in text.split(" "):
        trial = f"{current} {word}" if current else word
        if current and text_width(trial, size) > width:
            out.append(current)
            current = word
        else:
            current = trial
    return out + [current]
