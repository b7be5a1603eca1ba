"""One Markdown report per revision, with its images beside it.

The report holds the copper drawing, the rule-check result, the predicted (model) and measured
S11 on one plot, a Smith chart of the antenna and of the chosen match, the parts list, the
before/after numbers and the safety caution.  :func:`report_files` returns the files as bytes
(deterministic: a rerun gives identical bytes); :func:`write_report` writes them atomically.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

from footgen import sizing
from footgen.build import SAFETY_NOTE
from footgen.geometry.layout import Layout, Sizing, build_layout
from footgen.geometry.matching_pads import assembly_lines
from footgen.outputs import write_outputs
from footgen.calibration import Calibration
from footgen.rf import match_plan, matching, touchstone
from footgen.rf.parts import DEFAULT_PACKAGE
from footgen.rf.touchstone import Measurement
from footgen.errors import MeasurementError
from footgen.numfmt import impedance_ohm
from footgen.rules import Violation, check
from footgen.spec import Spec

Z0_OHM = 50.0
#: Constant-resistance circles and constant-reactance arcs drawn on the Smith chart.
SMITH_R = (0.0, 0.2, 0.5, 1.0, 2.0, 5.0)
SMITH_X = (0.2, 0.5, 1.0, 2.0, 5.0)
SMITH_ARC_POINTS = 721
MATCH_LEVEL_DB = touchstone.MATCH_LEVEL_DB

Progress = Callable[[str], None]


def _quiet(_: str) -> None:
    return None  # the same silent default as footgen.retune, kept local to avoid its import cost


# --------------------------------------------------------------------------------- Smith chart


def gamma_from_z(z_norm: np.ndarray | complex) -> np.ndarray:
    """Reflection coefficient of a normalised impedance, (z - 1)/(z + 1)."""
    z = np.asarray(z_norm, dtype=complex)
    return (z - 1.0) / (z + 1.0)


def smith_r_circle(r: float) -> tuple[tuple[float, float], float]:
    """Centre and radius of the constant-resistance circle r in the Gamma plane:
    centre (r/(1+r), 0), radius 1/(1+r) (Pozar, Microwave Engineering, 4th ed., sec. 2.4,
    from memory)."""
    return (r / (1.0 + r), 0.0), 1.0 / (1.0 + r)


def smith_x_circle(x: float) -> tuple[tuple[float, float], float]:
    """Centre and radius of the constant-reactance circle x (x != 0): centre (1, 1/x),
    radius 1/|x| (Pozar, 4th ed., sec. 2.4, from memory); only its part inside |Gamma| <= 1
    belongs to the chart."""
    return (1.0, 1.0 / x), 1.0 / abs(x)


def _smith_axes(ax) -> None:
    t = np.linspace(0.0, 2.0 * np.pi, SMITH_ARC_POINTS)
    for r in SMITH_R:
        (cx, cy), rad = smith_r_circle(r)
        ax.plot(cx + rad * np.cos(t), cy + rad * np.sin(t), color="#a0aec0" if r else "black", lw=0.5 if r else 1.0)
    for x in SMITH_X:
        for sign in (1.0, -1.0):
            (cx, cy), rad = smith_x_circle(sign * x)
            px, py = cx + rad * np.cos(t), cy + rad * np.sin(t)
            inside = px * px + py * py <= 1.0 + 1e-12
            px, py = np.where(inside, px, np.nan), np.where(inside, py, np.nan)
            ax.plot(px, py, color="#a0aec0", lw=0.5)
    ax.plot([-1.0, 1.0], [0.0, 0.0], color="#a0aec0", lw=0.5)
    _smith_labels(ax)
    ax.set_xlim(-1.2, 1.2)
    ax.set_ylim(-1.2, 1.2)
    ax.set_aspect("equal")
    ax.set_xticks([])
    ax.set_yticks([])


def _smith_labels(ax) -> None:
    """Values on the chart, normalised to Z0: each resistance circle where it crosses the real
    axis, each reactance arc where it meets the outer circle (+jx above, -jx below)."""
    style = dict(fontsize=6.5, color="#4a5568", ha="center", va="center")
    for r in SMITH_R[1:]:
        g = float(gamma_from_z(r).real)
        ax.text(g, 0.0, f"{r:g}", rotation=90, bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none"), **style)
    for x in SMITH_X:
        for sign in (1.0, -1.0):
            g = complex(gamma_from_z(complex(0.0, sign * x)))
            ax.text(1.09 * g.real, 1.09 * g.imag, f"{'+' if sign > 0 else '-'}j{x:g}", **style)
    ax.text(-1.09, 0.0, "0", **style)
    ax.text(1.09, 0.0, "inf", **style)


# --------------------------------------------------------------------------------- content


@dataclass(frozen=True)
class ReportData:
    """Everything the report shows, as numbers."""

    spec: Spec
    model: str
    sizing: Sizing
    layout: Layout
    violations: tuple[Violation, ...]
    freq_hz: np.ndarray  # the prediction sweep of the bare model
    predicted_s11: np.ndarray  # the bare model
    measured: Measurement | None
    plan: match_plan.MatchPlan
    matched_on: str  # "measured", "calibrated prediction" or "predicted"
    corrected_s11: np.ndarray | None = None  # the calibrated prediction, on corrected_freq_hz
    calibration: Calibration | None = None
    corrected_freq_hz: np.ndarray | None = None
    calibration_line: str = ""
    radiation: object | None = None  # footgen.radiation.RadiationSummary at f0 (MoM models only)


def prepare(spec: Spec, measurement: Measurement | None = None, *, calibration: Calibration | None = None,
            uncalibrated: bool = False, model: str = sizing.DEFAULT_MODEL, series: str = "E24",
            package: str = DEFAULT_PACKAGE, progress: Progress | None = None) -> ReportData:
    """Size, lay out, check, predict and match ``spec`` on the model path of ``predict``.  The
    prediction is calibrated by ``calibration`` when given, else by the calibration the revision
    holds (none with ``uncalibrated``).  The match uses the measured Zin when given, else the
    calibrated prediction, else the bare one."""
    from footgen.prediction import predict_spec, sized

    say = progress or _quiet
    say(f"report: sizing {spec.name} revision {spec.revision} with the {model} model")
    sz = sized(spec, model)
    layout = build_layout(spec, sz)
    say("report: rule check")
    violations = tuple(check(layout, spec.fab))
    say("report: predicting S11")
    pred = predict_spec(spec, model=model, calibrate=not uncalibrated, numbers=sz)
    if calibration is not None:
        from dataclasses import replace

        pred = replace(pred, calibration=calibration)
    say(f"report: {pred.calibration_line()}")
    f, s_pred = pred.bare_freq_hz, (pred.bare_zin_ohm - Z0_OHM) / (pred.bare_zin_ohm + Z0_OHM)
    f_corr = s_corr = None
    if pred.calibration is not None:
        f_corr, s_corr = pred.freq_hz, pred.s11
    f0 = spec.target.center_hz
    if measurement is not None:
        f_load = np.asarray(measurement.freq_hz, dtype=float)
        z_load = measurement.z0_ohm * (1 + measurement.s11) / (1 - measurement.s11)
        matched_on = "measured"
        if not (f_load[0] <= f0 <= f_load[-1]):
            raise MeasurementError(f"{measurement.source}: the band centre {f0 / 1e6:.2f} MHz lies outside the sweep; measure across the band")
    else:
        f_load, z_load = pred.freq_hz, pred.zin_ohm
        matched_on = "calibrated prediction" if pred.calibration is not None else "predicted"
    band = (max(spec.target.low_hz, f_load[0]), min(spec.target.high_hz, f_load[-1]))
    say(f"report: matching networks at {f0 / 1e6:.2f} MHz ({matched_on} Zin, {series}, {package})")
    plan = match_plan.plan_match(f_load, z_load, f0, band_hz=band, series=series, package=package)
    return ReportData(spec, model, sz, layout, violations, f, s_pred, measurement, plan, matched_on, s_corr,
                      pred.calibration, f_corr, pred.calibration_line(),
                      _radiation(spec, sz, model, f))


def _radiation(spec: Spec, sz: Sizing, model: str, f: np.ndarray):
    """Efficiency and peak realised gain at the band centre from the MoM currents, or None."""
    from footgen.prediction import RADIATION_MODELS

    if model not in RADIATION_MODELS:
        return None
    from footgen.prediction import copper_ifa
    from footgen.radiation import mom_summary

    return mom_summary(copper_ifa(spec, sz), spec.target.center_hz, float(f.max()), mesh=RADIATION_MODELS[model])


def _stem(spec: Spec) -> str:
    return f"{spec.name}-r{spec.revision}"


def s11_figure(data: ReportData):
    from footgen.plots import s11_figure as plot

    curves = [(data.freq_hz, data.predicted_s11, {"color": "#2b6cb0", "lw": 1.2, "label": f"predicted, bare model ({data.model})"})]
    if data.corrected_s11 is not None:
        curves.append((data.corrected_freq_hz, data.corrected_s11, {"color": "#6b46c1", "lw": 1.2, "ls": "-.",
                                                                    "label": "predicted, calibrated by a measurement"}))
    if data.measured is not None:
        curves.append((data.measured.freq_hz, data.measured.s11, {"color": "#c53030", "lw": 1.2, "label": "measured"}))
    best = data.plan.best
    if best.parts:
        curves.append((data.plan.freq_hz, best.s11, {"color": "#2f855a", "lw": 1.0, "ls": "--",
                                                     "label": f"{data.matched_on} with match ({best.label})"}))
    marked = 2 if data.measured is not None and data.corrected_s11 is not None else (1 if data.measured is not None else 0)
    title = f"{data.spec.name} revision {data.spec.revision}: S11 against 50 ohm (markers on the {curves[marked][2]['label'].split(' (')[0]} curve)"
    more = tuple((t.low_hz, t.high_hz) for t in data.spec.targets[1:])  # a dual-band antenna's second band
    return plot(title, (data.spec.target.low_hz, data.spec.target.high_hz), curves, marked=marked, more_bands_hz=more)


def smith_figure(data: ReportData):
    from matplotlib.figure import Figure

    fig = Figure(figsize=(5.5, 5.5))
    ax = fig.add_subplot(1, 1, 1)
    _smith_axes(ax)
    f = data.plan.freq_hz
    in_band = (f >= data.plan.band_hz[0]) & (f <= data.plan.band_hz[1])
    antenna = gamma_from_z(data.plan.z_load_ohm / Z0_OHM)
    ax.plot(antenna.real, antenna.imag, color="#c53030" if data.measured is not None else "#2b6cb0", lw=0.8,
            label=f"antenna ({data.matched_on})")
    ax.plot(antenna.real[in_band], antenna.imag[in_band], color="#c53030" if data.measured is not None else "#2b6cb0", lw=2.0)
    best = data.plan.best
    ax.plot(best.s11.real, best.s11.imag, color="#2f855a", lw=0.8, ls="--", label=f"with {best.label}")
    ax.plot(best.s11.real[in_band], best.s11.imag[in_band], color="#2f855a", lw=2.0)
    g0 = gamma_from_z(data.plan.z_at_f0_ohm / Z0_OHM)
    ax.plot([g0.real], [g0.imag], "o", color="black", ms=3, label=f"f0 {data.plan.f0_hz / 1e6:.2f} MHz")
    ax.legend(fontsize=7, loc="lower left")
    ax.set_title("Smith chart, normalised to 50 ohm (r: resistance, jx: reactance); thick: target band", fontsize=8)
    fig.tight_layout()
    return fig


def _band_text(freq_hz: np.ndarray, s11: np.ndarray, f0_hz: float) -> str:
    for lo, hi in touchstone.band_below_db(freq_hz, s11, MATCH_LEVEL_DB):
        if lo <= f0_hz <= hi:
            return f"{lo / 1e6:.1f} .. {hi / 1e6:.1f} MHz ({(hi - lo) / 1e6:.1f} MHz)"
    return "none around f0"


def markdown(data: ReportData, images: dict[str, str], diff_md: str | None = None) -> str:
    from footgen.comparison import measured_dip

    spec, sz, d, plan = data.spec, data.sizing, data.layout.dims, data.plan
    f0 = plan.f0_hz
    lines = [f"# {spec.name}, revision {spec.revision}", ""]
    if spec.history:
        lines += ["History:", ""] + [f"- revision {n}: {note}" for n, note in spec.history] + [""]
    lines += [f"![copper]({images['copper']})", "", "## Antenna", "", "| quantity | value |", "| --- | --- |",
              f"| band | {spec.target.low_hz / 1e6:g} to {spec.target.high_hz / 1e6:g} MHz |",
              f"| arm length | {d['arm_length_mm']:.3f} mm |",
              f"| arm height | {d['arm_height_mm']:.3f} mm |",
              f"| feed tap (feed-to-short spacing) | {d['feed_short_spacing_mm']:.3f} mm |",
              f"| copper area | {d['copper_area_mm2']:.2f} mm^2 |",
              f"| sizing | {sz.method} |", ""]
    if spec.second_arm is not None:
        from footgen.bandfigures import second_arm_rows

        lines[-3:-3] = second_arm_rows(spec, d)
    lines += ["## Rule check", ""]
    lines += [f"- {v.line()}" for v in data.violations] or [f"No violations against fab profile `{spec.fab.name}`."]
    lines += ["", "## S11", "", f"![S11]({images['s11']})", "", data.calibration_line, ""]
    f_pred, level_pred = touchstone.min_s11_db(data.freq_hz, data.predicted_s11)
    lines += ["| | resonance | \\|S11\\| at resonance | Zin at resonance | -10 dB band around f0 |", "| --- | --- | --- | --- | --- |",
              f"| predicted, bare model | {f_pred / 1e6:.2f} MHz | {level_pred:.1f} dB | "
              f"{_z(touchstone.zin_at(data.freq_hz, data.predicted_s11, f_pred))} | "
              f"{_band_text(data.freq_hz, data.predicted_s11, f0)} |"]
    if data.corrected_s11 is not None:
        cal, f_axis = data.calibration, data.corrected_freq_hz
        f_c, level_c = touchstone.min_s11_db(f_axis, data.corrected_s11)
        z_c = touchstone.zin_at(f_axis, data.corrected_s11, f_c)
        lines.append(f"| predicted, calibrated | {f_c / 1e6:.2f} MHz | {level_c:.1f} dB | {_z(z_c)} | "
                     f"{_band_text(f_axis, data.corrected_s11, f0)} |")
        lines += ["", f"Calibration: measurement `{cal.measurement_file}` (SHA-256 `{cal.measurement_sha256[:16]}...`, {cal.date}) "
                      f"of revision {cal.measured_revision} (spec SHA-256 `{cal.measured_spec_sha256[:16]}...`), measured resonance "
                      f"{cal.measured_resonance_mhz:.2f} MHz: frequency x {cal.freq_factor:.4f}, resistance x {cal.resistance_factor:.4f}."]
    if data.measured is not None:
        meas = measured_dip(data.measured, f_pred)
        lines.append(f"| measured | {meas.freq_hz / 1e6:.2f} MHz | {meas.s11_db:.1f} dB | {_z(meas.zin_ohm)} | "
                     f"{_band_text(data.measured.freq_hz, data.measured.s11, f0)} |")
        lines += ["", f"Measured / bare-model resonance: {meas.freq_hz / f_pred:.4f}."]
    if spec.second_arm is not None:
        from footgen.bandfigures import band_table

        s11 = np.asarray(data.predicted_s11)
        lines += [""] + band_table(spec, data.freq_hz, 50.0 * (1 + s11) / (1 - s11), "predicted, bare model")
        if data.measured is not None:
            m = np.asarray(data.measured.s11)
            lines += band_table(spec, data.measured.freq_hz, 50.0 * (1 + m) / (1 - m), "measured")
    if data.radiation is not None:
        lines += [""] + [f"Predicted {line}." for line in data.radiation.lines()]
    best = plan.best
    direct = plan.candidates[0]
    lines += ["", "## Match", "", f"![Smith chart]({images['smith']})", "",
              f"Matched on the {data.matched_on} input impedance {_z(plan.z_at_f0_ohm)} at {f0 / 1e6:.2f} MHz; "
              f"parts: {plan.series} values as {plan.package} chip parts ({match_plan.ranges_text(plan.package)}; "
              f"{match_plan.PARTS_NOTE}: series loss from Q, self-resonance); networks with a part outside these ranges are not offered.", "",
              "| network | parts | \\|S11\\| at f0 | worst \\|S11\\| in band | loss in the network (worst in band) |",
              "| --- | --- | --- | --- | --- |"]
    for i, c in enumerate(plan.candidates):
        mark = " (chosen)" if i == plan.chosen else ""
        lines.append(f"| {c.label}{mark} | {', '.join(p.describe() for p in c.parts) or 'direct connection'} | "
                     f"{c.s11_db_at_f0:.1f} dB | {c.worst_s11_db_in_band:.1f} dB | {c.worst_loss_db_in_band:.2f} dB |")
    lines += [""] + [f"- not offered: {line}" for line in plan.not_offered] + ["", plan.verdict(), ""]
    lines += ["Parts list of the chosen match (source side first):", ""]
    lines += [f"{i}. {p.describe()}" for i, p in enumerate(best.parts, start=1)] or ["No parts: connect directly."]
    pads = assembly_lines(spec.raw.get("matching_network"), _places(best.parts))
    lines += [""] + pads + [""] if pads else [""]
    lines += ["## Before / after", "", "| | without match | with the chosen match |", "| --- | --- | --- |",
              f"| \\|S11\\| at f0 | {direct.s11_db_at_f0:.1f} dB | {best.s11_db_at_f0:.1f} dB |",
              f"| worst \\|S11\\| in band | {direct.worst_s11_db_in_band:.1f} dB | {best.worst_s11_db_in_band:.1f} dB |",
              f"| -10 dB band around f0 | {_band_text(plan.freq_hz, direct.s11, f0)} | {_band_text(plan.freq_hz, best.s11, f0)} |", ""]
    if diff_md:
        lines += [diff_md, f"![overlay]({images['overlay']})", ""]
    lines += ["## Caution", "", SAFETY_NOTE, ""]
    return "\n".join(lines)


def _places(parts: tuple[matching.Part, ...]) -> tuple[tuple[str, str], ...]:
    """Where a network's parts (source -> load) go on the matching pads: the series part in the
    series place (a 0 ohm link if none), a shunt part before it at the radio node, after it at
    the antenna node."""
    series_at = next((i for i, p in enumerate(parts) if p.placement == matching.SERIES), None)
    places = [("series", parts[series_at].describe() if series_at is not None else "0 ohm link")]
    for i, p in enumerate(parts):
        if p.placement == matching.SHUNT:
            node = "radio" if series_at is not None and i < series_at else "antenna"
            places.append((f"shunt at the {node} node", p.describe()))
    return tuple(places)


def _z(z: complex) -> str:
    return impedance_ohm(z)


def report_files(spec: Spec, measurement: Measurement | None = None, *, previous: Spec | None = None,
                 calibration: Calibration | None = None, uncalibrated: bool = False, model: str = sizing.DEFAULT_MODEL,
                 series: str = "E24", package: str = DEFAULT_PACKAGE, progress: Progress | None = None) -> dict[str, bytes]:
    """The report's files (relative names -> bytes)."""
    from footgen.build import second_arm_kind
    from footgen.draw import drawing_subtitle, render_svg_png
    from footgen.plots import figure_bytes
    from footgen.revdiff import diff_layouts, diff_markdown, overlay_svg_png, spec_changes

    say = progress or _quiet
    data = prepare(spec, measurement, calibration=calibration, uncalibrated=uncalibrated, model=model, series=series,
                   package=package, progress=say)
    stem = _stem(spec)
    files: dict[str, bytes] = {}
    images = {}
    say("report: drawing")
    drawings = {"copper": render_svg_png(data.layout, spec.name, drawing_subtitle(spec), data.violations, second_arm_kind=second_arm_kind(spec)),
                "s11": figure_bytes(s11_figure(data)),
                "smith": figure_bytes(smith_figure(data))}
    diff_md = None
    if previous is not None:
        say("report: comparing with the previous revision")
        from footgen.prediction import sized

        old_layout = build_layout(previous, sized(previous, model))
        diff = diff_layouts(old_layout, data.layout, f"{previous.name} rev {previous.revision}", f"{spec.name} rev {spec.revision}",
                            spec_changes(previous.raw, spec.raw))
        diff_md = diff_markdown(diff)
        drawings["overlay"] = overlay_svg_png(diff)
    for key, (svg, png) in drawings.items():
        files[f"{stem}.{key}.svg"] = svg
        files[f"{stem}.{key}.png"] = png
        images[key] = f"{stem}.{key}.png"
    files[f"{stem}.report.md"] = markdown(data, images, diff_md).encode("utf-8")
    return files


def write_report(spec: Spec, out_dir: Path, measurement: Measurement | None = None, *, previous: Spec | None = None,
                 calibration: Calibration | None = None, uncalibrated: bool = False, model: str = sizing.DEFAULT_MODEL,
                 series: str = "E24", package: str = DEFAULT_PACKAGE, force: bool = False,
                 progress: Progress | None = None) -> list[Path]:
    """Write the report and its images into ``out_dir`` (atomically; files edited by hand are
    only replaced with ``force``)."""
    files = report_files(spec, measurement, previous=previous, calibration=calibration, uncalibrated=uncalibrated,
                         model=model, series=series, package=package, progress=progress)
    (progress or _quiet)(f"report: writing {len(files)} files into {out_dir}")
    return write_outputs(Path(out_dir), files, force=force)
