"""A yield report as lines for people (MHz, dB, per cent; no negative zero)."""

from __future__ import annotations

from footgen.build import SAFETY_NOTE
from footgen.numfmt import fixed
from footgen.yieldmc.run import Outcome, YieldReport


def _pct(x: float) -> str:
    return f"{fixed(100 * x, 1)} %"


def _outcome_lines(o: Outcome, band: str, method: str) -> list[str]:
    s = o.summary()
    y = f"{_pct(s['yield_10db'])} +- {_pct(s['sampling_error_10db'])} (sampling)"
    check = s["surrogate_check"]
    if method == "surrogate" and check and check["samples"]:
        y += (f" +- {_pct(s['yield_10db_model_error'])} (surrogate: boards within {fixed(s['stated_s11_error_db'], 2)} dB of -10 dB; "
              f"on {check['samples']} samples solved in full its worst in-band S11 was within {fixed(check['worst_s11_max_abs_db'], 2)} dB, "
              f"its resonance within {fixed(check['resonance_max_abs_mhz'], 2)} MHz)")
    res, nom = s["resonance_mhz"], s["nominal"]
    return [
        f"yield, S11 <= -10 dB over {band}: {y}",
        f"yield, S11 <= -6 dB over the band: {_pct(s['yield_6db'])}",
        f"nominal design: resonance {fixed(nom['resonance_mhz'], 1)} MHz, worst in-band S11 {fixed(nom['worst_s11_in_band_db'], 1)} dB",
        f"resonance over the samples: {fixed(res['p50'], 1)} MHz median, {fixed(res['p5'], 1)} to {fixed(res['p95'], 1)} MHz (5-95 %)",
        f"worst in-band S11 over the samples: {fixed(s['worst_s11_in_band_db']['p50'], 1)} dB median, "
        f"{fixed(s['worst_s11_in_band_db']['p95'], 1)} dB at the 95th percentile",
    ]


def summary_lines(report: YieldReport) -> list[str]:
    spec = report.spec
    band = f"{spec.target.low_hz / 1e6:.1f}-{spec.target.high_hz / 1e6:.1f} MHz"
    lines = [f"method: {'surrogate, checked against full solves' if report.method == 'surrogate' else 'full solve of every sample'} ({report.model} model); "
             f"{report.nominal.figures.worst_db.size} samples, seed {report.seed}"]
    lines += _outcome_lines(report.nominal, band, report.method)
    if report.sensitivities:
        lines.append("sensitivity, ranked by the resonance spread each tolerance causes (at -/+ its half-width):")
    else:
        lines.append("sensitivity: no tolerance is active (every spread is zero)")
    for row in report.sensitivities:
        unit = row["unit"]
        lo, hi = row["resonance_change_mhz"]
        s_lo, s_hi = row["worst_s11_change_db"]
        lines.append(
            f"  {row['rank']}. {row['label']} +-{row['plus_minus']:g} {unit}: {fixed(row['resonance_mhz_per_unit'], 3, sign=True)} MHz per {unit}, "
            f"resonance {fixed(lo, 1, sign=True)}/{fixed(hi, 1, sign=True)} MHz, worst in-band S11 {fixed(s_lo, 2, sign=True)}/{fixed(s_hi, 2, sign=True)} dB"
        )
    if report.centred is not None:
        c = report.centred.summary()
        d = report.centred.design_mm
        lines.append(
            f"centred design: arm length {d['arm_length_mm']:.3f} mm ({fixed(d['arm_length_change_mm'], 3, sign=True)}), "
            f"feed tap {d['feed_short_spacing_mm']:.3f} mm ({fixed(d['feed_tap_change_mm'], 3, sign=True)}): "
            f"yield {_pct(c['yield_10db'])} against {_pct(report.nominal.summary()['yield_10db'])} for the built design "
            "(give these in the spec's arm section to build it)"
        )
        lines += ["  " + line for line in _outcome_lines(report.centred, band, report.method)]
    lines += [f"warning: {w}" for w in report.warnings]
    lines.append(SAFETY_NOTE)
    return lines
