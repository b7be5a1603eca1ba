"""Radiation of a built antenna: efficiency, directivity, realised gain and pattern from the MoM
currents (:mod:`footgen.physics.farfield`), principal-cut and 3-D plots, far-field CSV.

Frame of every angle shown to users: KiCad's footprint frame, x and y as in the footprint (y down
on the canvas, origin at the feed point), z = x cross y (into the board, from F.Cu towards B.Cu);
theta is measured from +z, phi from +x towards +y.  The solver works in the canonical frame of
the layout (arm towards +x, ground at y < 0); the currents are mirrored and rotated into the
footprint frame as the layout is (:func:`footgen.geometry.layout.placement_matrix`).  Estimates
never replace measurement.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from footgen.physics.farfield import (
    Pattern,
    PowerBudget,
    SegmentCurrents,
    db10,
    pattern_grid,
    peak_intensity,
    solve_radiation,
)
from footgen.physics.ifa import PrintedIfa

if TYPE_CHECKING:
    from footgen.spec import Spec

Z0_OHM = 50.0
#: grid step (degrees) of the pattern files (cuts, 3-D view, CSV)
FILE_STEP_DEG = 2.0
#: the three principal cuts: (title, the fixed angle, its value in degrees)
CUTS = (("x-z plane (phi = 0)", "phi", 0.0), ("y-z plane (phi = 90)", "phi", 90.0),
        ("board plane x-y (theta = 90)", "theta", 90.0))
#: plots show this many dB below the rounded-up peak (common practice for pattern plots, no source)
DB_RANGE = 25.0
#: the 3-D surface uses every n-th grid line (an SVG with every 2-degree facet is megabytes)
SURFACE_STRIDE = 3


def mom_summary(ifa: PrintedIfa, freq_hz: float, f_max_hz: float,
                mesh: dict[str, float] | None = None) -> "RadiationSummary":
    """Efficiency, peak directivity and peak realised gain of ``ifa`` at ``freq_hz`` (peak found by
    :func:`footgen.physics.farfield.peak_intensity`, no full pattern grid)."""
    from footgen.sizing import mom_solver

    seg, budget = solve_radiation(mom_solver(ifa, f_max_hz, mesh), freq_hz, Z0_OHM)
    return RadiationSummary.from_budget(budget, peak_intensity(seg, freq_hz)[0])


IDENTITY = (1, 0, 0, 1)
FRAME_NOTE = "x, y: KiCad footprint axes (y down), z = x cross y (into the board)"


def in_frame(seg: SegmentCurrents, matrix: tuple[int, int, int, int]) -> SegmentCurrents:
    """Segments moved by the in-plane matrix ``(a, b, c, d)``; z flips with a mirror so the frame
    stays right-handed."""
    a, b, c, d = matrix
    m = np.array([[a, b, 0.0], [c, d, 0.0], [0.0, 0.0, float(a * d - b * c)]])
    return SegmentCurrents(seg.starts_m @ m.T, seg.ends_m @ m.T, seg.i_start_a, seg.i_end_a, seg.loss_perimeter_m)


def mom_pattern(ifa: PrintedIfa, freq_hz: float, f_max_hz: float, step_deg: float,
                mesh: dict[str, float] | None = None, frame: tuple[int, int, int, int] = IDENTITY) -> Pattern:
    """Pattern and power budget of ``ifa`` at ``freq_hz`` on the wire mesh a sweep up to
    ``f_max_hz`` uses (:func:`footgen.sizing.mom_solver`; ``mesh`` as there), in the frame the
    in-plane matrix ``frame`` maps the canonical frame to."""
    from footgen.sizing import mom_solver

    seg, budget = solve_radiation(mom_solver(ifa, f_max_hz, mesh), freq_hz, Z0_OHM)
    return pattern_grid(in_frame(seg, frame), budget, step_deg)


@dataclass(frozen=True)
class RadiationSummary:
    """The figures predict prints (band centre)."""

    freq_hz: float
    radiation_efficiency: float
    total_efficiency: float
    peak_directivity_dbi: float
    peak_realised_gain_dbi: float
    accepted_w: float
    radiated_w: float
    conductor_loss_w: float
    dielectric_loss_w: float

    @classmethod
    def of(cls, pattern: Pattern) -> "RadiationSummary":
        """From a pattern grid (peak = the grid's largest value)."""
        return cls.from_budget(pattern.budget, float(pattern.intensity_w_per_sr.max()))

    @classmethod
    def from_budget(cls, b: PowerBudget, peak_w_per_sr: float) -> "RadiationSummary":
        d_max = 4.0 * np.pi * peak_w_per_sr / b.radiated_w
        g_max = 4.0 * np.pi * peak_w_per_sr / b.accepted_w * b.mismatch_factor
        return cls(b.freq_hz, b.radiation_efficiency, b.total_efficiency, float(db10(d_max)), float(db10(g_max)),
                   b.accepted_w, b.radiated_w, b.conductor_loss_w, b.dielectric_loss_w)

    def as_dict(self) -> dict[str, float]:
        """Rounded figures for JSON output (units in the keys)."""
        return {
            "freq_mhz": round(self.freq_hz / 1e6, 6),
            "radiation_efficiency": round(self.radiation_efficiency, 4),
            "total_efficiency": round(self.total_efficiency, 4),
            "peak_directivity_dbi": round(self.peak_directivity_dbi, 3),
            "peak_realised_gain_dbi": round(self.peak_realised_gain_dbi, 3),
            "conductor_loss_fraction": round(self.conductor_loss_w / self.accepted_w, 4),
            "dielectric_loss_fraction": round(self.dielectric_loss_w / self.accepted_w, 4),
        }

    def lines(self) -> list[str]:
        loss = self.accepted_w
        return [
            f"radiation efficiency at {self.freq_hz / 1e6:.2f} MHz: {100 * self.radiation_efficiency:.1f} % "
            f"(copper loss {100 * self.conductor_loss_w / loss:.1f} %, laminate loss "
            f"{100 * self.dielectric_loss_w / loss:.1f} % of the accepted power)",
            f"total efficiency (with mismatch): {100 * self.total_efficiency:.1f} %",
            f"peak realised gain: {self.peak_realised_gain_dbi:.2f} dBi (peak directivity {self.peak_directivity_dbi:.2f} dBi)",
        ]


def _cut(pattern: Pattern, fixed: str, value_deg: float) -> tuple[np.ndarray, np.ndarray]:
    """Angle in the cut plane (degrees, 0..360) and realised gain (power ratio) along it."""
    g = pattern.realised_gain
    th, ph = pattern.theta_deg, pattern.phi_deg
    if fixed == "theta":
        i = int(np.argmin(np.abs(th - value_deg)))
        return ph.copy(), g[i, :]
    j = int(np.argmin(np.abs(ph - value_deg)))
    opp = int(np.argmin(np.abs(ph - (value_deg + 180.0) % 360.0)))
    angle = np.concatenate([th, 360.0 - th[-2:0:-1]])
    return angle, np.concatenate([g[:, j], g[-2:0:-1, opp]])


def _stable_svg_ids(svg: bytes) -> bytes:
    """Renumber matplotlib's clip-path ids in order of appearance: a polar axes' clip-path id
    hashes an object that differs between runs even with a fixed ``svg.hashsalt``."""
    import re

    ids: dict[bytes, bytes] = {}

    def sub(match: re.Match) -> bytes:
        return ids.setdefault(match.group(0), b"clip%04d" % len(ids))

    return re.sub(rb"\bp[0-9a-f]{10}\b", sub, svg)


def _figure_bytes(fig) -> tuple[bytes, bytes]:
    from footgen.plots import figure_bytes

    svg, png = figure_bytes(fig)
    return _stable_svg_ids(svg), png


def plot_pattern(pattern: Pattern, title: str) -> dict[str, tuple[bytes, bytes]]:
    """``{"cuts": (svg, png), "3d": (svg, png)}``: the principal cuts (polar, dBi) and a 3-D view
    of the realised gain with the board axes drawn (deterministic bytes)."""
    from matplotlib.figure import Figure

    peak = float(db10(pattern.peak_realised_gain))
    top = 5.0 * np.ceil(peak / 5.0)
    floor = top - DB_RANGE
    f_mhz = pattern.budget.freq_hz / 1e6
    fig = Figure(figsize=(10.5, 4.2))
    for k, (name, fixed, value) in enumerate(CUTS):
        ax = fig.add_subplot(1, 3, k + 1, projection="polar")
        angle, g = _cut(pattern, fixed, value)
        ax.plot(np.deg2rad(np.append(angle, angle[0] + 360.0)), np.maximum(np.append(db10(g), db10(g[0])), floor),
                color="#2b6cb0", lw=1.4)
        ax.set_ylim(floor, top)
        ax.set_title(name, fontsize=9)
        ax.tick_params(labelsize=7)
        ax.set_rlabel_position(100)
        axis_names = {"phi": ("+z", "+x" if value == 0.0 else "+y"), "theta": ("+x", "+y")}[fixed]
        ax.set_xticks(np.deg2rad([0, 90, 180, 270]))
        ax.set_xticklabels([f"0 ({axis_names[0]})", f"90 ({axis_names[1]})", "180", "270"], fontsize=7)
        # phi cuts: theta clockwise from +z at the top; board plane: phi clockwise from +x at the
        # right, so +y points down as on the KiCad canvas
        ax.set_theta_direction(-1)
        if fixed == "phi":
            ax.set_theta_zero_location("N")
    fig.suptitle(f"{title}: realised gain (dBi) at {f_mhz:.1f} MHz, peak {peak:.2f} dBi; {FRAME_NOTE}", fontsize=9)
    fig.tight_layout()
    cuts = _figure_bytes(fig)

    fig3 = Figure(figsize=(6.0, 5.5))
    ax3 = fig3.add_subplot(1, 1, 1, projection="3d")
    rows = np.unique(np.append(np.arange(0, pattern.theta_deg.size, SURFACE_STRIDE), pattern.theta_deg.size - 1))
    cols = np.arange(0, pattern.phi_deg.size, SURFACE_STRIDE)
    th = np.deg2rad(pattern.theta_deg[rows])[:, None]
    ph = np.deg2rad(np.append(pattern.phi_deg[cols], 360.0))[None, :]
    g_db = db10(pattern.realised_gain[np.ix_(rows, cols)])
    g_db = np.concatenate([g_db, g_db[:, :1]], axis=1)
    r = np.maximum(g_db - floor, 0.0)
    x, y, z = r * np.sin(th) * np.cos(ph), r * np.sin(th) * np.sin(ph), r * np.cos(th) + 0.0 * ph
    from matplotlib import cm
    from matplotlib.colors import Normalize

    norm = Normalize(floor, top)
    ax3.plot_surface(x, y, z, facecolors=cm.viridis(norm(g_db)), rstride=1, cstride=1, linewidth=0,
                     antialiased=False, shade=False, rasterized=True)
    reach = float(r.max()) * 1.35
    for vec, label in (((1, 0, 0), "x"), ((0, 1, 0), "y"), ((0, 0, 1), "z")):
        ax3.plot([0, reach * vec[0]], [0, reach * vec[1]], [0, reach * vec[2]], color="black", lw=1.2)
        ax3.text(1.05 * reach * vec[0], 1.05 * reach * vec[1], 1.05 * reach * vec[2], label, fontsize=10)
    ax3.set_box_aspect((1, 1, 1))
    for setter in (ax3.set_xlim, ax3.set_ylim, ax3.set_zlim):
        setter(-reach, reach)
    ax3.set_axis_off()
    mappable = cm.ScalarMappable(norm=norm, cmap=cm.viridis)
    fig3.subplots_adjust(left=-0.1, right=0.95, bottom=-0.05, top=0.95)
    fig3.colorbar(mappable, ax=ax3, shrink=0.6, label="realised gain (dBi)")
    ax3.set_title(f"{title}: realised gain at {f_mhz:.1f} MHz\n(radius = dBi above {floor:.0f} dBi; {FRAME_NOTE})",
                  fontsize=9)
    return {"cuts": cuts, "3d": _figure_bytes(fig3)}


def pattern_csv(pattern: Pattern) -> bytes:
    """Far-field table: theta, phi (deg), directivity, gain and realised gain (dBi), with the power
    budget in comment lines (fixed formatting: same pattern, same bytes)."""
    b = pattern.budget
    head = [
        "# footgen far field from the thin-wire MoM currents; estimates never replace measurement",
        f"# frame: {FRAME_NOTE}; theta from +z, phi from +x towards +y",
        f"# freq_mhz={b.freq_hz / 1e6:.6f} accepted_w={b.accepted_w:.6e} radiated_w={b.radiated_w:.6e} "
        f"conductor_loss_w={b.conductor_loss_w:.6e} dielectric_loss_w={b.dielectric_loss_w:.6e}",
        f"# radiation_efficiency={b.radiation_efficiency:.6f} total_efficiency={b.total_efficiency:.6f} "
        f"s11_db={20 * np.log10(max(abs(b.s11), 1e-12)):.4f}",
        "theta_deg,phi_deg,directivity_dbi,gain_dbi,realised_gain_dbi",
    ]
    d, g, rg = (db10(a) for a in (pattern.directivity, pattern.gain, pattern.realised_gain))
    rows = [f"{t:.1f},{p:.1f},{d[i, j]:.4f},{g[i, j]:.4f},{rg[i, j]:.4f}"
            for i, t in enumerate(pattern.theta_deg) for j, p in enumerate(pattern.phi_deg)]
    return ("\n".join(head + rows) + "\n").encode("ascii")


def spec_pattern(spec: "Spec", freq_hz: float | None = None, step_deg: float = FILE_STEP_DEG) -> Pattern:
    """Pattern of the antenna ``spec`` builds, at ``freq_hz`` (default: the band centre), on the
    wire mesh predict's sweep uses."""
    from footgen.build import run
    from footgen.geometry.layout import generate_copper, placement_matrix
    from footgen.model import printed_ifa
    from footgen.sizing import PREDICTION_HALF_SPAN

    result = run(spec)
    ifa = printed_ifa(spec, generate_copper(spec, result.sizing))
    f0 = spec.target.center_hz
    f = f0 if freq_hz is None else freq_hz
    return mom_pattern(ifa, f, max((1 + PREDICTION_HALF_SPAN) * f0, f), step_deg, frame=placement_matrix(spec))


def pattern_files(pattern: Pattern, stem: str, title: str) -> dict[str, bytes]:
    """File name -> bytes: ``<stem>-cuts.svg/.png``, ``<stem>-3d.svg/.png``, ``<stem>.csv``."""
    plots = plot_pattern(pattern, title)
    files = {f"{stem}.csv": pattern_csv(pattern)}
    for key, (svg, png) in plots.items():
        files[f"{stem}-{key}.svg"] = svg
        files[f"{stem}-{key}.png"] = png
    return files
