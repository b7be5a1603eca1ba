"""Click command ``footgen yield``: Monte Carlo yield of the built antenna under the spec's
tolerances.  Registered on the main group by ``footgen/cli.py``; the library is imported inside
the command body."""

from __future__ import annotations

import time
from pathlib import Path

import click


@click.command("yield")
@click.argument("spec", type=click.Path(path_type=Path))
@click.option("--samples", default=1000, show_default=True, type=click.IntRange(1, 10_000_000), help="Boards drawn.")
@click.option("--seed", default=1, show_default=True, type=click.IntRange(0, 2**63 - 1), help="Seed: same seed, same numbers.")
@click.option("--json", "json_path", type=click.Path(dir_okay=False, path_type=Path), help="Write the summary as JSON.")
@click.option("--plot", "plot", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the histograms (STEM-hist.png/.svg) and the cloud of S11 curves (STEM-cloud.png/.svg).")
@click.option("--scheduler", default=None, metavar="ADDRESS",
              help="Run on the Dask cluster whose scheduler is at ADDRESS (default: $FOOTGEN_SCHEDULER, else local processes).")
@click.option("--workers", default=None, type=click.IntRange(1, 1024), help="Local worker processes (default: all cores).")
@click.option("--check", "checks", default=8, show_default=True, type=click.IntRange(0, 100_000),
              help="Samples also solved in full to check the surrogate.")
@click.option("--full", is_flag=True, help="Solve every sample in full (brute force; slow) instead of the surrogate.")
@click.option("--model", default=None, help="Response model of the full solves: mom (default) or tline (fast, rough).")
@click.option("--centre", is_flag=True, help="Also search the arm length and feed tap that maximise the yield.")
@click.option("--force", is_flag=True, help="Replace files edited by hand.")
def yield_cmd(spec: Path, samples: int, seed: int, json_path: Path | None, plot: Path | None, scheduler: str | None,
              workers: int | None, checks: int, full: bool, model: str | None, centre: bool, force: bool) -> None:
    """Monte Carlo yield of the built antenna under the spec's tolerances (laminate, etch,
    copper, ground plane, matching parts, enclosure): the share of boards with S11 <= -10 dB
    (and <= -6 dB) over the whole target band, and which tolerance matters most.

    \b
    Example:
      footgen yield examples/soil-probe-2g4.json --samples 1000 --seed 7 --json yield.json --plot yield
    """
    from footgen.outputs import precheck_edits, write_outputs
    from footgen.spec import load_spec
    from footgen.yieldmc import executors
    from footgen.yieldmc.run import run_yield
    from footgen.yieldmc.text import summary_lines

    from footgen.sizing import DEFAULT_MODEL, MODELS

    name = model or DEFAULT_MODEL
    if name not in MODELS:
        raise click.BadParameter(f"{name!r}: choose one of {', '.join(MODELS)}", param_hint="--model")
    if full and centre:
        raise click.BadParameter("--centre works on the surrogate; leave out --full", param_hint="--centre")
    loaded = load_spec(spec)
    targets = [json_path] if json_path else []
    if plot is not None:
        targets += [plot.with_name(f"{plot.name}-{kind}.{ext}") for kind in ("hist", "cloud") for ext in ("png", "svg")]
    for target in targets:  # before any solve
        precheck_edits(target.parent, [target.name], force=force)
    start = time.monotonic()
    state = {"last": ""}

    def progress(what: str, done: int, total: int) -> None:
        step = max(total // 10, 1)
        line = f"  {what} {done}/{total}"
        if (done == total or done % step == 0) and line != state["last"]:
            state["last"] = line
            click.echo(f"{line} ({time.monotonic() - start:.0f} s)", err=True)

    with executors.runner(scheduler, workers) as run_on:
        click.echo(f"yield: {samples} samples, seed {seed}, on {run_on.describe()}", err=True)
        report = run_yield(loaded, samples, seed, run_on, checks=checks, full=full, centre=centre, progress=progress, model=name)
    for line in summary_lines(report):
        click.echo(line)
    files: dict[Path, bytes] = {}
    if json_path is not None:
        files[json_path] = report.json_bytes()
    if plot is not None:
        from footgen.yieldmc.plots import yield_plots

        for kind, (svg, png) in yield_plots(report).items():
            files[plot.with_name(f"{plot.name}-{kind}.svg")] = svg
            files[plot.with_name(f"{plot.name}-{kind}.png")] = png
    for path, data in files.items():
        write_outputs(path.parent, {path.name: data}, force=force)
        click.echo(f"wrote {path}")
