"""Yield plots: histograms of the resonance and of the worst in-band S11, and the cloud of S11
curves of the samples around the nominal one (matplotlib object API through
:func:`footgen.plots.figure_bytes`: same data, same bytes).  Legends sit below the axes so no
label covers a curve or another label."""

from __future__ import annotations

import numpy as np

from footgen.yieldmc import surrogate as sg
from footgen.yieldmc.run import YieldReport

BINS = 40
BAND_COLOR = "#c6f6d5"
SAMPLE_COLOR = "#2b6cb0"
NOMINAL_COLOR = "#c53030"
LEVEL_COLOR = "#4a5568"
#: Room between the two histogram panels (fraction of a panel's width): the outer tick labels
#: stay apart.
PANEL_GAP = 0.22
#: At most this many frequency ticks: four-digit MHz labels stay apart.
MAX_TICKS = 6


def _histograms(report: YieldReport):
    from matplotlib.figure import Figure
    from matplotlib.ticker import MaxNLocator

    spec = report.spec
    o = report.nominal
    s = o.summary()
    fig = Figure(figsize=(10.0, 4.6))
    res_ax, s11_ax = fig.subplots(1, 2)
    lo, hi = spec.target.low_hz / 1e6, spec.target.high_hz / 1e6
    res_ax.axvspan(lo, hi, color=BAND_COLOR, alpha=0.8, lw=0, label=f"target band {lo:g}-{hi:g} MHz")
    res_ax.hist(o.figures.resonance_hz / 1e6, bins=BINS, color=SAMPLE_COLOR, alpha=0.85, label="samples")
    res_ax.axvline(s["nominal"]["resonance_mhz"], color=NOMINAL_COLOR, lw=1.4, label="nominal design")
    res_ax.set_xlabel("resonance (MHz)", fontsize=8)
    res_ax.set_ylabel("samples", fontsize=8)
    res_ax.set_title("resonance", fontsize=9)
    s11_ax.hist(o.figures.worst_db, bins=BINS, color=SAMPLE_COLOR, alpha=0.85, label="samples")
    s11_ax.axvline(sg.LEVEL_10DB, color=LEVEL_COLOR, lw=1.0, ls="--", label="-10 dB")
    s11_ax.axvline(sg.LEVEL_6DB, color=LEVEL_COLOR, lw=1.0, ls=":", label="-6 dB")
    s11_ax.axvline(s["nominal"]["worst_s11_in_band_db"], color=NOMINAL_COLOR, lw=1.4, label="nominal design")
    s11_ax.set_xlabel("worst S11 in the target band (dB)", fontsize=8)
    s11_ax.set_title(f"yield {100 * s['yield_10db']:.1f} % at -10 dB, {100 * s['yield_6db']:.1f} % at -6 dB", fontsize=9)
    for ax in (res_ax, s11_ax):
        ax.xaxis.set_major_locator(MaxNLocator(MAX_TICKS))
        ax.tick_params(labelsize=7)
        ax.grid(True, lw=0.3)
        ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.16), ncol=4, frameon=False)
    fig.suptitle(f"{spec.name}: {s['samples']} boards ({report.method}, seed {report.seed})", fontsize=10)
    fig.subplots_adjust(left=0.07, right=0.98, top=0.86, bottom=0.24, wspace=PANEL_GAP)
    return fig


def _cloud(report: YieldReport):
    from matplotlib.figure import Figure
    from matplotlib.ticker import MaxNLocator

    spec = report.spec
    grids = report.grids
    assert grids is not None
    f = grids.eval_hz / 1e6
    o = report.nominal
    fig = Figure(figsize=(8.0, 5.0))
    ax = fig.subplots()
    lo, hi = spec.target.low_hz / 1e6, spec.target.high_hz / 1e6
    ax.axvspan(lo, hi, color=BAND_COLOR, alpha=0.8, lw=0, label=f"target band {lo:g}-{hi:g} MHz")
    curves = o.figures.curves_db
    for k, row in enumerate(curves):
        ax.plot(f, row, color=SAMPLE_COLOR, lw=0.5, alpha=0.25, label=f"{curves.shape[0]} samples" if k == 0 else None)
    ax.plot(f, o.nominal.curves_db[0], color=NOMINAL_COLOR, lw=1.6, label="nominal design")
    ax.axhline(sg.LEVEL_10DB, color=LEVEL_COLOR, lw=1.0, ls="--", label="-10 dB")
    ax.set_xlim(float(f[0]), float(f[-1]))
    ax.set_ylim(max(float(np.min(curves)) if curves.size else -30.0, -45.0) - 1.0, 0.5)
    ax.set_xlabel("frequency (MHz)", fontsize=8)
    ax.set_ylabel("|S11| (dB)", fontsize=8)
    ax.xaxis.set_major_locator(MaxNLocator(MAX_TICKS))
    ax.tick_params(labelsize=7)
    ax.grid(True, lw=0.3)
    ax.set_title(f"{spec.name}: S11 of {curves.shape[0]} of {o.figures.worst_db.size} boards ({report.method})", fontsize=9)
    ax.legend(fontsize=7, loc="upper center", bbox_to_anchor=(0.5, -0.12), ncol=4, frameon=False)
    fig.tight_layout()
    return fig


def yield_plots(report: YieldReport) -> dict[str, tuple[bytes, bytes]]:
    """``{"hist": (svg, png), "cloud": (svg, png)}``."""
    from footgen.plots import figure_bytes

    return {"hist": figure_bytes(_histograms(report)), "cloud": figure_bytes(_cloud(report))}
