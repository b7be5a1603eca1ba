"""Click commands of the measure-and-retune loop: retune, diff, match, report.

Registered on the main group by ``footgen/cli.py``.  Each command imports the library it calls
inside its body (so ``footgen --help`` stays fast); user errors are FootgenError subclasses,
which the main group prints as one line with a non-zero exit.
"""

from __future__ import annotations

from pathlib import Path

import click

from footgen.errors import SpecError


def _progress(message: str) -> None:
    click.echo(message, err=True)


def _model_option(func):
    return click.option("--model", default=None, help="Response model (default: the sizing's default model).")(func)


def _model(name: str | None) -> str:
    from footgen import sizing

    if name is None:
        return sizing.DEFAULT_MODEL
    if name not in sizing.MODELS:
        raise SpecError("--model", name, f"unknown response model; known: {', '.join(sorted(sizing.MODELS))}")
    return name


def _uncalibrated_option(func):
    return click.option("--uncalibrated", is_flag=True,
                        help="Show the bare model: leave out the calibration the revision holds.")(func)


@click.command("retune")
@click.argument("spec", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--measured", "measured", required=True, type=click.Path(dir_okay=False, path_type=Path), help="Touchstone .s1p/.s2p sweep of the built board.")
@click.option("-o", "--output", "output", required=True, type=click.Path(dir_okay=False, path_type=Path), help="New spec file (next revision).")
@click.option("--measured-date", default=None, help="Date of the measurement, YYYY-MM-DD (default: the date the file's comments name).")
@click.option("--target-mhz", type=float, default=None, help="Target resonance (default: band centre).")
@click.option("--force", is_flag=True, help="Replace an existing output spec (never the input or an earlier revision) and edited build files.")
@click.option("--build", "build_dir", type=click.Path(file_okay=False, path_type=Path), default=None, help="Also rebuild the footprint into this folder.")
@_model_option
def retune_cmd(spec: Path, measured: Path, output: Path, measured_date: str | None, target_mhz: float | None, force: bool,
               build_dir: Path | None, model: str | None) -> None:
    """Retune SPEC from a measured S11 sweep of the board built from it: writes the next
    revision with the arm length (and, if the match is poor, the feed tap) corrected and the
    calibration learned from the sweep, which predict, match and report then apply.

    \b
    Example:
      footgen retune sensor.json --measured sweep.s1p -o sensor-r2.json --build build/
    """
    from footgen.retune import check_output, retune, write_retuned_spec
    from footgen.rf.touchstone import read_s11
    from footgen.spec import load_spec

    old = load_spec(spec)
    check_output(old, output, input_path=spec, force=force)
    measurement = read_s11(measured)
    if old.second_arm is not None:  # two bands: each arm trimmed by its own band's measurement
        from footgen.retune_dual import retune_dual

        result = retune_dual(old, measurement, model=_model(model), progress=_progress)
        write_retuned_spec(result, output, force=force, input_path=spec)
        click.echo(f"wrote {output} (revision {result.new_spec.revision}): {result.history_note}")
        for line in result.lines():
            click.echo(line)
    else:
        result = retune(old, measurement, model=_model(model), f_target_hz=None if target_mhz is None else target_mhz * 1e6,
                        measured_date=measured_date, progress=_progress)
        write_retuned_spec(result, output, force=force, input_path=spec)
        click.echo(f"wrote {output} (revision {result.new_spec.revision}): {result.history_note}")
        click.echo(result.calibration.line())
        click.echo(f"calibrated model of revision {result.new_spec.revision}: resonance {result.predicted_freq_hz / 1e6:.2f} MHz, "
                   f"R {result.predicted_r_ohm:.1f} ohm")
    for note in result.notes:
        click.echo(f"note: {note}", err=True)
    if build_dir is not None:
        from footgen.build import run, write_build

        _progress(f"retune: building revision {result.new_spec.revision} into {build_dir}")
        built = run(result.new_spec)
        for path in write_build(built, build_dir, force=force):
            click.echo(f"wrote {path}")


@click.command("diff")
@click.argument("old", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("new", type=click.Path(dir_okay=False, path_type=Path))
@click.option("-o", "--overlay", "overlay", type=click.Path(dir_okay=False, path_type=Path), default=None, help="Overlay drawing to write (.svg; a .png is written beside it).")
@click.option("--force", is_flag=True, help="Replace overlay files edited by hand.")
@_model_option
def diff_cmd(old: Path, new: Path, overlay: Path | None, force: bool, model: str | None) -> None:
    """Compare two revisions: two spec files or two footgen .kicad_mod footprints.

    \b
    Example:
      footgen diff sensor.json sensor-r2.json -o overlay.svg
    """
    from footgen.outputs import write_outputs
    from footgen.revdiff import diff_files, diff_lines, overlay_svg_png

    diff = diff_files(old, new, model=_model(model))
    for line in diff_lines(diff):
        click.echo(line)
    if overlay is not None:
        if overlay.suffix.lower() != ".svg":
            raise SpecError("--overlay", str(overlay), "give a .svg file name (the .png goes beside it)")
        svg, png = overlay_svg_png(diff)
        folder = overlay.parent if str(overlay.parent) else Path(".")
        for path in write_outputs(folder, {overlay.name: svg, overlay.with_suffix(".png").name: png}, force=force):
            click.echo(f"wrote {path}")


@click.command("match")
@click.argument("spec", required=False, type=click.Path(dir_okay=False, path_type=Path))
@click.option("--measured", type=click.Path(dir_okay=False, path_type=Path), default=None, help="Touchstone sweep to match (else SPEC's predicted Zin).")
@click.option("--f0-mhz", type=float, default=None, help="Match frequency (default: SPEC's band centre).")
@click.option("--band-mhz", nargs=2, type=float, default=None, help="Band LOW HIGH judged for the choice (default: SPEC's band, else f0 alone).")
@click.option("--series", type=click.Choice(["E12", "E24"]), default="E24", show_default=True, help="Preferred value series for the parts.")
@click.option("--package", type=click.Choice(["0402", "0603"]), default="0402", show_default=True, help="Chip size of the parts (sets value ranges and parasitics).")
@_uncalibrated_option
@_model_option
def match_cmd(spec: Path | None, measured: Path | None, f0_mhz: float | None, band_mhz: tuple[float, float] | None,
              series: str, package: str, uncalibrated: bool, model: str | None) -> None:
    """List the L and pi matching networks that can be built from 0402/0603 RF parts (values
    snapped to E12/E24, parasitics included) for a measured or predicted input impedance, with
    |S11| at f0, the worst |S11| in the band and the loss in the network.

    \b
    Example:
      footgen match --measured sweep.s1p --f0-mhz 868 --band-mhz 863 870
      footgen match sensor.json
    """
    import numpy as np

    from footgen.numfmt import impedance_ohm
    from footgen.rf import match_plan

    band = None
    loaded = None
    if spec is not None:
        from footgen.spec import load_spec

        loaded = load_spec(spec)
        band = (loaded.target.low_hz, loaded.target.high_hz)
    if measured is not None:
        from footgen.rf.touchstone import read_s11

        m = read_s11(measured)
        freq = np.asarray(m.freq_hz)
        z = m.z0_ohm * (1 + m.s11) / (1 - m.s11)
        what = f"measured ({measured.name})"
    elif loaded is not None:
        from footgen.prediction import predict_spec

        name = _model(model)
        prediction = predict_spec(loaded, model=name, calibrate=not uncalibrated)
        click.echo(prediction.calibration_line())
        freq, z = prediction.freq_hz, prediction.zin_ohm
        what = f"predicted ({name} model{', calibrated' if prediction.calibration else ''})"
    else:
        raise click.UsageError("give SPEC or --measured FILE")
    if f0_mhz is None:
        if loaded is None:
            raise click.UsageError("give --f0-mhz (or SPEC for its band centre)")
        f0 = loaded.target.center_hz
    else:
        f0 = f0_mhz * 1e6
    if band_mhz is not None:
        if not band_mhz[0] <= f0 / 1e6 <= band_mhz[1]:
            raise SpecError("--band-mhz", list(band_mhz), f"the band must hold f0 ({f0 / 1e6:g} MHz)")
        band = (band_mhz[0] * 1e6, band_mhz[1] * 1e6)
    if band is not None:
        band = (max(band[0], freq[0]), min(band[1], freq[-1]))
    plan = match_plan.plan_match(freq, z, f0, band_hz=band, series=series, package=package)
    z0 = plan.z_at_f0_ohm
    click.echo(f"{what} Zin at {f0 / 1e6:.3f} MHz: {impedance_ohm(z0, 2)}")
    for i, c in enumerate(plan.candidates):
        mark = "*" if i == plan.chosen else " "
        click.echo(f"{mark} {c.describe()}: |S11| {c.s11_db_at_f0:.1f} dB at f0, worst {c.worst_s11_db_in_band:.1f} dB in band, "
                   f"loss {c.worst_loss_db_in_band:.2f} dB")
    for line in plan.not_offered:
        click.echo(f"  not offered: {line}")
    click.echo(plan.verdict())
    click.echo(f"parts: {series} values as {package} chip parts ({match_plan.ranges_text(package)}; with loss from Q and "
               f"self-resonance, {match_plan.PARTS_NOTE}); estimates only")


@click.command("report")
@click.argument("spec", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--measured", type=click.Path(dir_okay=False, path_type=Path), default=None, help="Touchstone sweep of the built board.")
@click.option("-o", "--out", "out_dir", required=True, type=click.Path(file_okay=False, path_type=Path), help="Output folder.")
@click.option("--previous", type=click.Path(dir_okay=False, path_type=Path), default=None, help="Previous revision's spec, for the before/after table.")
@click.option("--previous-measured", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Sweep of the previous revision's board: calibrates this revision's prediction instead of the calibration it holds (needs --previous).")
@click.option("--measured-date", default=None, help="Date of the --previous-measured sweep, YYYY-MM-DD (default: the date its comments name).")
@click.option("--series", type=click.Choice(["E12", "E24"]), default="E24", show_default=True)
@click.option("--package", type=click.Choice(["0402", "0603"]), default="0402", show_default=True, help="Chip size of the matching parts.")
@click.option("--force", is_flag=True, help="Replace report files edited by hand.")
@_uncalibrated_option
@_model_option
def report_cmd(spec: Path, measured: Path | None, out_dir: Path, previous: Path | None, previous_measured: Path | None,
               measured_date: str | None, series: str, package: str, force: bool, uncalibrated: bool, model: str | None) -> None:
    """Write the revision report of SPEC (Markdown, copper drawing, S11 plot, Smith chart,
    match parts list) into OUT.  The prediction is calibrated by the calibration SPEC holds.

    \b
    Example:
      footgen report sensor-r2.json --previous sensor.json -o report/
      footgen report sensor-r2.json --measured sweep-r2.s1p -o report/
    """
    from footgen.loop_report import write_report
    from footgen.rf.touchstone import read_s11
    from footgen.spec import load_spec

    if previous_measured is not None and previous is None:
        raise click.UsageError("--previous-measured needs --previous (the spec that sweep was measured on)")
    name = _model(model)
    loaded = load_spec(spec)
    measurement = read_s11(measured) if measured is not None else None
    prev = load_spec(previous) if previous is not None else None
    calibration = None
    if previous_measured is not None:
        from footgen.comparison import calibrate

        calibration = calibrate(prev, read_s11(previous_measured), model=name, measured_date=measured_date).calibration
    for path in write_report(loaded, out_dir, measurement, previous=prev, calibration=calibration, uncalibrated=uncalibrated,
                             model=name, series=series, package=package, force=force, progress=_progress):
        click.echo(f"wrote {path}")


COMMANDS = (retune_cmd, diff_cmd, match_cmd, report_cmd)
