"""Drawing of the footprint's copper with its main dimensions, as SVG and PNG bytes.

Uses matplotlib's object API (no pyplot, no global backend), with the SVG hash salt and the
metadata fixed so the same layout gives byte-identical files.
"""

from __future__ import annotations

import io

import matplotlib
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.figure import Figure
from matplotlib.patches import Polygon as PolygonPatch
from shapely.geometry import MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry

from footgen.geometry.layout import Layout

#: Ground shown this far below the ground edge (mm); the plane itself may be much larger.
GROUND_VIEW_MM = 4.0
PNG_DPI = 150
#: Dimension arrows stand this far beside the copper they measure (mm).
DIM_OFFSET_MM = 1.5
COLORS = {
    "ground": "#9aa5b1",
    "copper": "#d9822b",
    "pad": "#b8651b",
    "keepout": "#e7f0fa",
    "via": "#333333",
    "edge": "#2b6cb0",
    "dim": "#1a202c",
}


def patches(ax, geom: BaseGeometry, **style) -> None:
    polys = geom.geoms if isinstance(geom, MultiPolygon) else [geom]
    for poly in polys:
        if isinstance(poly, Polygon) and not poly.is_empty:
            ax.add_patch(PolygonPatch(list(poly.exterior.coords), closed=True, **style))


def _dimension(ax, a: tuple[float, float], b: tuple[float, float], text: str) -> None:
    ax.annotate("", xy=b, xytext=a, arrowprops=dict(arrowstyle="<->", color=COLORS["dim"], lw=0.8))
    mx, my = (a[0] + b[0]) / 2, (a[1] + b[1]) / 2
    ax.text(mx, my, text, fontsize=7, color=COLORS["dim"], ha="center", va="bottom",
            bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.8))


def _main_dimensions(ax, layout: Layout) -> None:
    """Arm height beside the feed leg, feed-to-short spacing between the legs (any placement)."""
    d = layout.dims
    copper = layout.copper
    (ax0, ay0), (ax1, ay1) = copper.arm_path[0], copper.arm_path[1]
    norm = max(((ax1 - ax0) ** 2 + (ay1 - ay0) ** 2) ** 0.5, 1e-9)
    ux, uy = (ax1 - ax0) / norm, (ay1 - ay0) / norm  # along the arm, towards the open end
    fx, fy = layout.feed_point
    tx, ty = copper.trace("feed_leg").points[-1]
    off = DIM_OFFSET_MM
    _dimension(ax, (fx + off * ux, fy + off * uy), (tx + off * ux, ty + off * uy), f"h {d['arm_height_mm']:.2f}")
    (sx0, sy0), (sx1, sy1) = copper.trace("short_leg").points
    sx, sy = 0.5 * (sx0 + sx1), 0.5 * (sy0 + sy1)
    s = d["feed_short_spacing_mm"]
    _dimension(ax, (sx, sy), (sx + s * ux, sy + s * uy), f"s {s:.2f}")


def figure(layout: Layout, title: str, subtitle: str) -> Figure:
    fig = Figure(figsize=(8.0, 4.5))
    ax = fig.add_subplot(1, 1, 1)
    x0, y0, x1, y1 = layout.courtyard.bounds
    view = layout.ground.intersection(layout.courtyard.buffer(GROUND_VIEW_MM, join_style="mitre"))
    patches(ax, view, facecolor=COLORS["ground"], edgecolor="none", alpha=0.6, label="ground pour")
    for k in layout.keepouts:
        patches(ax, k.polygon, facecolor=COLORS["keepout"], edgecolor=COLORS["edge"], hatch="//", lw=0.6, ls="--")
    patches(ax, layout.antenna, facecolor=COLORS["copper"], edgecolor="black", lw=0.4)
    for pad in layout.pads:
        if pad.kind == "smd" and pad.shape != "custom":
            patches(ax, pad.polygon, facecolor=COLORS["pad"], edgecolor="black", lw=0.4)
    for via in layout.vias:
        ax.add_patch(matplotlib.patches.Circle(via.center, via.size[0] / 2, fc=COLORS["pad"], ec="black", lw=0.4))
        ax.add_patch(matplotlib.patches.Circle(via.center, (via.drill_mm or 0) / 2, fc="white", ec="black", lw=0.3))
    ex, ey = layout.board_edge.xy
    ax.plot(ex, ey, color=COLORS["edge"], lw=1.2)
    d = layout.dims
    _main_dimensions(ax, layout)
    ax.text(x0, y0 - 1.0, (f"arm {d['arm_length_mm']:.2f} mm, height {d['arm_height_mm']:.2f} mm, "
                           f"feed-short {d['feed_short_spacing_mm']:.2f} mm, trace {d['trace_width_mm']:.2f} mm, "
                           f"meander turns {int(d['meander_turns'])}"), fontsize=7, va="top")
    ax.set_title(f"{title}\n{subtitle}", fontsize=9)
    ax.set_aspect("equal")
    ax.set_xlim(x0 - 1.0, x1 + 1.0)
    ax.set_ylim(y0 - GROUND_VIEW_MM, y1 + 2.5)
    ax.set_xlabel("x (mm), feed point at 0; ground edge at y = 0 before rotation", fontsize=7)
    ax.set_ylabel("y (mm)", fontsize=7)
    ax.tick_params(labelsize=7)
    fig.tight_layout()
    return fig


def render_svg_png(layout: Layout, title: str, subtitle: str) -> tuple[bytes, bytes]:
    """SVG and PNG bytes of the copper drawing (deterministic for a given layout)."""
    return figure_bytes(figure(layout, title, subtitle))


def figure_bytes(fig: Figure) -> tuple[bytes, bytes]:
    """SVG and PNG bytes of any matplotlib Figure, deterministic (fixed SVG hash salt, no date)."""
    svg, png = io.BytesIO(), io.BytesIO()
    with matplotlib.rc_context({"svg.hashsalt": "footgen", "svg.fonttype": "none"}):
        FigureCanvasSVG(fig)
        fig.savefig(svg, format="svg", metadata={"Date": None, "Creator": "footgen"})
    FigureCanvasAgg(fig)
    fig.savefig(png, format="png", dpi=PNG_DPI, metadata={"Software": "footgen"})
    return svg.getvalue(), png.getvalue()
