"""Command line: a thin click layer; each command lazily imports the one library call it makes.

Exit codes: 0 success; 1 rule violations (the build or check found fab-rule errors);
2 bad input (spec, measurement or option); 3 refused to overwrite a hand-edited file;
4 KiCad missing or failed; 5 internal error (a bug: one line asking for a report);
130 interrupted.  Every error is one line on stderr.
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path

# The solvers work on matrices of a few hundred unknowns, where extra BLAS threads cost more
# than they give; set before numpy is first imported (the commands import it lazily).
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import click  # noqa: E402

from footgen import __version__  # noqa: E402
from footgen.errors import EXIT_INTERNAL, FootgenError, one_line  # noqa: E402

EXIT_RULES = 1
EXIT_INPUT = 2
EXIT_INTERRUPTED = 130


#: click 8.2+ raises this for a bare `footgen`; older versions print the help themselves.
_NO_ARGS_IS_HELP = getattr(click.exceptions, "NoArgsIsHelpError", ())


def _error(message: str) -> None:
    click.echo(f"footgen: error: {one_line(message)}", err=True)


class FootgenGroup(click.Group):
    """Turns every error into one line on stderr and its exit code: :class:`FootgenError` and
    option errors as such, anything else as an internal error (never a traceback)."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):  # type: ignore[override]
        if not standalone_mode:
            return super().main(args, prog_name, complete_var, standalone_mode, **extra)
        try:
            code = super().main(args, prog_name, complete_var, standalone_mode=False, **extra)
        except _NO_ARGS_IS_HELP as exc:  # plain `footgen`: the help, as click prints it
            click.echo(exc.ctx.get_help())
            sys.exit(0)
        except click.ClickException as exc:  # option and argument errors: one line, not click's three
            hint = f" (see `{exc.ctx.command_path} --help`)" if getattr(exc, "ctx", None) is not None else ""
            _error(exc.format_message() + hint)
            sys.exit(exc.exit_code)
        except click.exceptions.Abort:
            _error("interrupted")
            sys.exit(EXIT_INTERRUPTED)
        sys.exit(code if isinstance(code, int) else 0)

    def invoke(self, ctx: click.Context):  # type: ignore[override]
        try:
            return super().invoke(ctx)
        except (click.ClickException, click.exceptions.Exit, click.exceptions.Abort):
            raise
        except FootgenError as exc:
            _error(str(exc))
            ctx.exit(exc.exit_code)
        except OSError as exc:  # e.g. an output folder that cannot be written
            where = f"{exc.filename}: " if exc.filename else ""
            _error(f"{where}{exc.strerror or exc}")
            ctx.exit(EXIT_INPUT)
        except (Exception, RecursionError, MemoryError) as exc:  # noqa: BLE001 - a bug: say so in one line
            click.echo(
                f"footgen: internal error: {one_line(f'{exc.__class__.__name__}: {exc}', 160)}; this is a bug in "
                f"footgen {__version__}: please report it with the spec and command that caused it",
                err=True,
            )
            ctx.exit(EXIT_INTERNAL)


@click.group(cls=FootgenGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="footgen")
def main() -> None:
    """Printed inverted-F antenna footprints for KiCad from a JSON design spec.

    \b
    Example:
      footgen new ism-2g4-straight -o my_antenna.json
      footgen build my_antenna.json -o build/
    """


@main.command("new")
@click.argument("template", required=False)
@click.option("-o", "--output", "output", type=click.Path(dir_okay=False, path_type=Path), help="Spec file to write.")
@click.option("--list", "list_", is_flag=True, help="List the starter templates.")
@click.option("--force", is_flag=True, help="Replace an existing spec file.")
def new_cmd(template: str | None, output: Path | None, list_: bool, force: bool) -> None:
    """Start a spec from a starter TEMPLATE.

    \b
    Example:
      footgen new --list
      footgen new ism-915-meander -o tracker.json
    """
    from footgen import starters

    if list_ or template is None:
        for name, summary in starters.list_templates():
            click.echo(f"{name:24s} {summary}")
        return
    if output is None:
        raise click.UsageError("give -o/--output SPEC.json")
    starters.write_template(template, output, force=force)
    click.echo(f"wrote {output}")


@main.command("validate")
@click.argument("spec", type=click.Path(path_type=Path))
def validate_cmd(spec: Path) -> None:
    """Check SPEC against the schema, the cross-field rules and the fab rules that need no
    sizing (trace and pad widths, port gap, via drill and ring).  Exits 2 for a bad spec, 1 for
    fab-rule errors.

    \b
    Example:
      footgen validate examples/soil-probe-2g4.json
    """
    from footgen.spec import load_spec
    from footgen.spec_checks import fab_findings

    loaded = load_spec(spec)
    findings = fab_findings(loaded)
    for finding in findings:
        click.echo(finding.line(), err=True)
    if findings:
        click.echo(f"{spec}: {len(findings)} fab-rule error(s) against profile {loaded.fab.name!r}; a build would write no footprint")
        sys.exit(EXIT_RULES)
    click.echo(f"{spec}: valid ({loaded.name}, revision {loaded.revision})")


@main.command("build")
@click.argument("specs", nargs=-1, required=True, type=click.Path(path_type=Path))
@click.option("-o", "--out", "out_dir", required=True, type=click.Path(file_okay=False, path_type=Path), help="Output folder.")
@click.option("--force", is_flag=True, help="Replace files even if they were edited by hand.")
@click.option("--allow-violations", is_flag=True, help="Write the footprint even when the rule check finds errors.")
@click.option("--png", is_flag=True, help="Also write the copper drawing as PNG (as output.drawing_png: true does).")
def build_cmd(specs: tuple[Path, ...], out_dir: Path, force: bool, allow_violations: bool, png: bool) -> None:
    """Size, lay out and check each SPEC; write OUT/<library>.pretty/<name>.kicad_mod, the report,
    the rule-check JSON and the copper drawing (SVG; PNG when asked) beside it.  Several specs
    are built in one run; bad input in any of them writes nothing.

    Exits 1 (and writes no footprint for that spec) when the rule check finds errors.

    \b
    Example:
      footgen build examples/soil-probe-2g4.json -o build/
      footgen build examples/*.json -o build/
    """
    from footgen.build import build_spec_files

    failed = False
    for result, written in build_spec_files(list(specs), out_dir, force=force, allow_violations=allow_violations, png=png):
        for path in written:
            click.echo(f"wrote {path}")
        for v in result.violations:
            click.echo(f"{result.spec.name}: {v.line()}" if len(specs) > 1 else v.line(), err=True)
        failed = failed or not result.ok
    if failed:
        sys.exit(EXIT_RULES)


@main.command("check")
@click.argument("spec", type=click.Path(path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Print the violations as JSON.")
def check_cmd(spec: Path, as_json: bool) -> None:
    """Run the fab rule check on SPEC's layout (nothing is written).

    \b
    Example:
      footgen check examples/soil-probe-2g4.json --json
    """
    from footgen.build import run
    from footgen.rules import report_dict
    from footgen.spec import load_spec

    result = run(load_spec(spec))
    if as_json:
        click.echo(json.dumps(report_dict(list(result.violations), result.spec.fab), indent=2, sort_keys=True))
    else:
        for v in result.violations:
            click.echo(v.line())
        click.echo(f"{len(result.violations)} violation(s) against fab profile {result.spec.fab.name!r}")
    if not result.ok:
        sys.exit(EXIT_RULES)


@main.command("draw")
@click.argument("spec", type=click.Path(path_type=Path))
@click.option("-o", "--output", "output", required=True, type=click.Path(dir_okay=False, path_type=Path), help="Drawing to write (.svg or .png).")
@click.option("--force", is_flag=True, help="Replace a file edited by hand.")
def draw_cmd(spec: Path, output: Path, force: bool) -> None:
    """Draw SPEC's copper with its main dimensions as SVG or PNG.

    \b
    Example:
      footgen draw examples/soil-probe-2g4.json -o antenna.svg
    """
    from footgen.build import run, second_arm_kind
    from footgen.draw import drawing
    from footgen.outputs import precheck_edits, write_outputs
    from footgen.spec import load_spec

    suffix = output.suffix.lower()
    if suffix not in (".svg", ".png"):
        raise click.BadParameter(f"{output}: use a .svg or .png file name", param_hint="--output")
    loaded = load_spec(spec)
    precheck_edits(output.parent, [output.name], force=force)  # before any solve
    result = run(loaded)
    canvas = drawing(result.layout, result.spec.name, result.spec.target.label, result.violations, second_arm_kind=second_arm_kind(result.spec))
    write_outputs(output.parent, {output.name: canvas.svg() if suffix == ".svg" else canvas.png()}, force=force)
    click.echo(f"wrote {output}")


@main.command("predict")
@click.argument("spec", type=click.Path(path_type=Path))
@click.option("--s1p", "s1p", type=click.Path(dir_okay=False, path_type=Path), help="Write the predicted S11 as Touchstone (.s1p).")
@click.option("--plot", "plot", type=click.Path(dir_okay=False, path_type=Path), help="Write the S11 plot: FILE.png and FILE.svg.")
@click.option("--model", default=None, help="Response model: mom (default) or tline (fast, rough).")
@click.option("--json", "json_path", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the summary figures as JSON (resonance, S11, band, efficiency, gain).")
@click.option("--force", is_flag=True, help="Replace files edited by hand.")
@click.option("--uncalibrated", is_flag=True, help="Show the bare model: leave out the calibration the revision holds.")
def predict_cmd(spec: Path, s1p: Path | None, plot: Path | None, model: str | None, json_path: Path | None,
                force: bool, uncalibrated: bool) -> None:
    """Predict the built antenna's input impedance and S11 around the band: resonance, Zin at
    the band centre, min S11, the -10 dB band and bandwidth.

    \b
    Example:
      footgen predict examples/soil-probe-2g4.json --plot s11.png --s1p predicted.s1p
    """
    from footgen.outputs import precheck_edits, write_outputs
    from footgen.prediction import plot_s11, predict_spec, touchstone_text
    from footgen.sizing import DEFAULT_MODEL, MODELS
    from footgen.spec import load_spec

    name = model or DEFAULT_MODEL
    if name not in MODELS:
        raise click.BadParameter(f"{name!r}: choose one of {', '.join(MODELS)}", param_hint="--model")
    loaded = load_spec(spec)
    targets = [p for p in (s1p, plot and plot.with_suffix(".png"), plot and plot.with_suffix(".svg")) if p is not None]
    for target in targets:  # before any solve
        precheck_edits(target.parent, [target.name], force=force)
    click.echo("sizing and sweeping ...", err=True)
    prediction = predict_spec(loaded, model=name, calibrate=not uncalibrated, progress=_progress_printer("sweep"), radiation=True)
    for line in prediction.summary_lines():
        click.echo(line)
    files: dict[Path, bytes] = {}
    if s1p is not None:
        files[s1p] = touchstone_text(prediction)
    if json_path is not None:
        files[json_path] = prediction.json_bytes()
    if plot is not None:
        svg, png = plot_s11(prediction)
        files[plot.with_suffix(".png")] = png
        files[plot.with_suffix(".svg")] = svg
    for path, data in files.items():
        write_outputs(path.parent, {path.name: data}, force=force)
        click.echo(f"wrote {path}")


def _progress_printer(what: str):
    """A progress(done, total) callback printing about ten lines to stderr."""
    state = {"last": -1}

    def progress(done: int, total: int) -> None:
        step = max(total // 10, 1)
        if done == total or done // step != state["last"]:
            state["last"] = done // step
            click.echo(f"  {what} {done}/{total}", err=True)

    return progress


@main.command("pattern")
@click.argument("spec", type=click.Path(path_type=Path))
@click.option("-o", "--out", "out", required=True, type=click.Path(dir_okay=False, path_type=Path),
              help="File stem: writes STEM-cuts.png/.svg, STEM-3d.png/.svg and STEM.csv.")
@click.option("--freq-mhz", type=float, default=None, help="Frequency in MHz (default: the band centre).")
@click.option("--force", is_flag=True, help="Replace files edited by hand.")
def pattern_cmd(spec: Path, out: Path, freq_mhz: float | None, force: bool) -> None:
    """Radiation pattern of the built antenna from the MoM currents: the three principal cuts and
    a 3-D view of the realised gain (dBi), and the far field as CSV.

    \b
    Example:
      footgen pattern examples/soil-probe-2g4.json -o soil-pattern
    """
    from footgen.outputs import write_outputs
    from footgen.radiation import RadiationSummary, pattern_files, spec_pattern
    from footgen.spec import load_spec

    if freq_mhz is not None and not (freq_mhz > 0.0):
        raise click.BadParameter(f"{freq_mhz!r}: give a positive frequency in MHz", param_hint="--freq-mhz")
    loaded = load_spec(spec)
    click.echo("sizing and solving ...", err=True)
    pattern = spec_pattern(loaded, None if freq_mhz is None else freq_mhz * 1e6)
    for line in RadiationSummary.of(pattern).lines():
        click.echo(line)
    files = pattern_files(pattern, out.name, loaded.name)
    write_outputs(out.parent, files, force=force)
    for name in sorted(files):
        click.echo(f"wrote {out.parent / name}")


@main.command("testboard")
@click.argument("spec", type=click.Path(path_type=Path))
@click.option("-o", "--out", "out_dir", required=True, type=click.Path(file_okay=False, path_type=Path), help="Folder for the KiCad project.")
@click.option("--drc/--no-drc", default=True, help="Run KiCad's DRC on the board afterwards.")
@click.option("--allow-violations", is_flag=True, help="Place the footprint even when the rule check finds errors.")
@click.option("--board-name", default=None, help="File name of the board, without .kicad_pcb (default: <name>-test).")
@click.option("--fab-rules", is_flag=True, help="Give the board the fab profile's design rules instead of KiCad's defaults.")
@click.option("--layers", "copper_layers", type=click.Choice(["2", "4"]), default="2", show_default=True, help="Copper layers of the board.")
def testboard_cmd(
    spec: Path, out_dir: Path, drc: bool, allow_violations: bool, board_name: str | None, fab_rules: bool, copper_layers: str
) -> None:
    """Build SPEC's footprint into a small KiCad test board (outline, GND pours on every copper
    layer, feed track) with KiCad's default design rules, fill the zones and run KiCad's DRC.
    Needs KiCad 9 or 10.

    \b
    Example:
      footgen testboard examples/soil-probe-2g4.json -o board/
    """
    from footgen.testrun import make_test_board

    report = make_test_board(
        spec, out_dir, drc=drc, allow_violations=allow_violations, board_name=board_name, fab_rules=fab_rules, copper_layers=int(copper_layers)
    )
    click.echo(f"wrote {report.board_path}")
    if report.drc is not None:
        for item in report.drc_errors:
            click.echo(f"kicad drc: {item}", err=True)
        click.echo(f"KiCad DRC: {len(report.drc_errors)} error(s), {len(report.drc_warnings)} warning(s)")
        if report.drc_errors:
            sys.exit(EXIT_RULES)


def _register_loop_commands() -> None:
    """retune, diff, match, report: the measure-and-retune loop (footgen.cli_rf); sites: the
    board placement core for the KiCad plugins (footgen.cli_place); yield: the Monte Carlo of
    the built boards (footgen.cli_yield)."""
    from footgen import cli_rf

    for command in (cli_rf.retune_cmd, cli_rf.diff_cmd, cli_rf.match_cmd, cli_rf.report_cmd):
        main.add_command(command)
    from footgen import cli_place

    main.add_command(cli_place.sites_cmd)
    from footgen import cli_yield

    main.add_command(cli_yield.yield_cmd)


_register_loop_commands()


if __name__ == "__main__":  # pragma: no cover
    main()
