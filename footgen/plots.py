"""matplotlib helpers for the response plots (S11, Smith chart, revision overlay).

Imported only by code that draws a plot: matplotlib is slow to import.  Figures use the object
API (no pyplot, no global backend) with the SVG hash salt and metadata fixed, so the same data
gives byte-identical files.
"""

from __future__ import annotations

import io

import matplotlib
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.backends.backend_svg import FigureCanvasSVG
from matplotlib.figure import Figure
from matplotlib.patches import Polygon as PolygonPatch
from shapely.geometry import MultiPolygon, Polygon
from shapely.geometry.base import BaseGeometry

from footgen.rf import touchstone

PNG_DPI = 150
MATCH_LEVEL_DB = touchstone.MATCH_LEVEL_DB
#: Frequency room shown on each side of the target band in the zoom panel (fraction of its width).
ZOOM_MARGIN = 0.6
MARKER_STYLE = {"resonance": ("v", "#1a202c"), "edge": ("|", "#2f855a"), "worst": ("x", "#c53030")}


def patches(ax, geom: BaseGeometry, **style) -> None:
    polys = geom.geoms if isinstance(geom, MultiPolygon) else [geom]
    for poly in polys:
        if isinstance(poly, Polygon) and not poly.is_empty:
            ax.add_patch(PolygonPatch(list(poly.exterior.coords), closed=True, **style))


def figure_bytes(fig: Figure) -> tuple[bytes, bytes]:
    """SVG and PNG bytes of any matplotlib Figure, deterministic (fixed SVG hash salt, no date)."""
    svg, png = io.BytesIO(), io.BytesIO()
    with matplotlib.rc_context({"svg.hashsalt": "footgen", "svg.fonttype": "none"}):
        FigureCanvasSVG(fig)
        fig.savefig(svg, format="svg", metadata={"Date": None, "Creator": "footgen"})
    FigureCanvasAgg(fig)
    fig.savefig(png, format="png", dpi=PNG_DPI, metadata={"Software": "footgen"})
    return svg.getvalue(), png.getvalue()


# --------------------------------------------------------------------------------- S11


def s11_markers(freq_hz: np.ndarray, s11: np.ndarray, band_hz: tuple[float, float]) -> list[tuple[str, float, float, str]]:
    """(kind, frequency in Hz, |S11| in dB, label) for the resonance (min |S11|), the -10 dB band
    edges around it and the worst |S11| inside the target band, from the complex S11."""
    f = np.asarray(freq_hz, float)
    db = touchstone.s11_db(s11)
    f_res, level = touchstone.min_s11_db(f, s11)
    at_end = f_res <= f[0] or f_res >= f[-1]
    label = (f"min |S11| {level:.1f} dB at the sweep end: no resonance inside the sweep" if at_end
             else f"resonance {f_res / 1e6:.1f} MHz, {level:.1f} dB")
    out = [("resonance", f_res, level, label)]
    for lo, hi in touchstone.band_below_db(f, s11, MATCH_LEVEL_DB):
        if lo <= f_res <= hi:
            out += [("edge", e, MATCH_LEVEL_DB, f"{MATCH_LEVEL_DB:.0f} dB edge {e / 1e6:.1f} MHz") for e in (lo, hi)]
    inside = (f >= band_hz[0]) & (f <= band_hz[1])
    if inside.any():
        j = int(np.flatnonzero(inside)[np.argmax(db[inside])])
        out.append(("worst", float(f[j]), float(db[j]), f"worst in band {db[j]:.1f} dB at {f[j] / 1e6:.1f} MHz"))
    return out


def s11_figure(title: str, band_hz: tuple[float, float], curves: list[tuple[np.ndarray, np.ndarray, dict]],
               marked: int = 0, figsize: tuple[float, float] = (10.0, 4.8),
               more_bands_hz: tuple[tuple[float, float], ...] = ()) -> Figure:
    """|S11| in dB: the full sweep on the left, the target band zoomed on the right, the band
    shaded in both; markers (resonance, -10 dB edges, worst in band) on curve ``marked``.
    ``more_bands_hz``: further target bands (a dual-band antenna's), shaded on the full sweep,
    each with its own resonance and worst in-band markers.
    ``curves`` holds (frequency Hz, complex S11, matplotlib line style) tuples."""
    fig = Figure(figsize=figsize)
    ax, zoom = fig.subplots(1, 2, gridspec_kw={"width_ratios": [3, 2]})
    lo, hi = band_hz[0] / 1e6, band_hz[1] / 1e6
    f_m, s_m, _ = curves[marked]
    markers = s11_markers(f_m, s_m, band_hz)
    curves = [(np.asarray(f, float), touchstone.s11_db(s), style) for f, s, style in curves]
    if more_bands_hz:  # a dual-band sweep: each band's markers from its own part of the sweep
        f_arr, s_arr = np.asarray(f_m, float), np.asarray(s_m)
        split = [band_hz] + list(more_bands_hz)
        markers = []
        for k, (b_lo, b_hi) in enumerate(split):
            lo_cut = 0.0 if k == 0 else np.sqrt(split[k - 1][1] * b_lo)
            hi_cut = np.inf if k == len(split) - 1 else np.sqrt(b_hi * split[k + 1][0])
            part = (f_arr >= lo_cut) & (f_arr <= hi_cut)
            if part.sum() > 2:
                markers += s11_markers(f_arr[part], s_arr[part], (b_lo, b_hi))
            if k:
                ax.axvspan(b_lo / 1e6, b_hi / 1e6, color="#fefcbf", alpha=0.9, label=f"target band {k + 1}", lw=0)
    for panel in (ax, zoom):
        panel.axvspan(lo, hi, color="#c6f6d5", alpha=0.7, label="target band", lw=0)
        panel.axhline(MATCH_LEVEL_DB, color="#718096", lw=0.7, ls="--")
        for f, s, style in curves:  # the zoom shows the sweep's own points
            panel.plot(f / 1e6, s, **(style if panel is ax else {**style, "marker": ".", "ms": 3, "label": None}))
        for kind, f, s, label in markers:
            shape, color = MARKER_STYLE[kind]
            panel.plot([f / 1e6], [s], shape, color=color, ms=8, mew=1.6, label=label if panel is ax else None, zorder=5)
        panel.grid(True, lw=0.3)
        panel.tick_params(labelsize=7)
        panel.set_xlabel("frequency (MHz)", fontsize=8)
    ax.set_ylabel("|S11| (dB)", fontsize=8)
    ax.set_title(title, fontsize=9)
    margin = ZOOM_MARGIN * (hi - lo)
    zoom.set_xlim(lo - margin, hi + margin)
    window = np.concatenate([s[(f / 1e6 >= lo - margin) & (f / 1e6 <= hi + margin)] for f, s, _ in curves])
    if window.size:
        zoom.set_ylim(min(float(window.min()), MATCH_LEVEL_DB) - 2.0, max(float(window.max()), MATCH_LEVEL_DB) + 2.0)
    zoom.set_title(f"target band {lo:g} to {hi:g} MHz (zoom)", fontsize=9)
    ax.legend(fontsize=7, loc="lower left")
    fig.tight_layout()
    return fig
