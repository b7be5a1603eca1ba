"""The loop's click commands (footgen.cli_rf) on a small group built here."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import click
import numpy as np
import pytest
import skrf
from click.testing import CliRunner

from footgen import sizing
from footgen.cli import FootgenGroup
from footgen.cli_rf import COMMANDS
from footgen.retune import evaluator
from footgen.spec import load_spec, parse_spec

TEMPLATES = Path(__file__).resolve().parents[1] / "templates"
EXIT_INPUT = 2
EXIT_OVERWRITE = 3
#: The fast registered response model; the checks hold for any model of sizing.MODELS (the
#: default MoM model takes minutes per retune, so it is exercised only where marked slow).
MODEL = "tline"


@click.group(cls=FootgenGroup)
def group() -> None:
    """Test group holding only the loop commands."""


for command in COMMANDS:
    group.add_command(command)


def run(*args: str):
    """Invoke a command with the fast model (``--model`` is an option of every loop command)."""
    words = [str(a) for a in args]
    if "--help" not in words:
        words += ["--model", MODEL]
    return CliRunner().invoke(group, words, catch_exceptions=False)


@pytest.fixture()
def spec_path(tmp_path: Path) -> Path:
    path = tmp_path / "ant.json"
    path.write_text((TEMPLATES / "ism-2g4-straight.json").read_text("utf-8"), "utf-8")
    return path


@pytest.fixture()
def measured(tmp_path: Path, spec_path: Path) -> Path:
    """Synthetic board: the model of the same copper on eps_r 4.9 (invented), written by scikit-rf."""
    spec = load_spec(spec_path)
    numbers = sizing.size(spec, model=MODEL)
    raw = copy.deepcopy(spec.raw)
    raw["laminate"]["eps_r"] = 4.9
    raw["arm"] = {"length_mm": numbers.arm_length_mm, "height_mm": numbers.height_mm, "feed_short_spacing_mm": numbers.feed_short_spacing_mm}
    board = parse_spec(raw)
    f = np.linspace(2.0e9, 2.9e9, 451)
    z = sizing.MODELS[MODEL].zin_ohm(f, evaluator(board).ifa(numbers.arm_length_mm, numbers.height_mm, numbers.feed_short_spacing_mm))
    net = skrf.Network(frequency=skrf.Frequency.from_f(f, unit="hz"), s=((z - 50) / (z + 50)).reshape(-1, 1, 1), z0=50.0)
    net.comments = "synthetic board, measured 2026-11-20 (invented)"
    net.write_touchstone(str(tmp_path / "board"), form="db")
    return tmp_path / "board.s1p"


@pytest.mark.parametrize("name", ["retune", "diff", "match", "report"])
def test_help_has_an_example(name):
    result = run(name, "--help")
    assert result.exit_code == 0 and "Example:" in result.output and f"footgen {name}" in result.output


def test_retune_writes_the_next_revision_and_builds(tmp_path, spec_path, measured):
    out = tmp_path / "ant-r2.json"
    result = run("retune", spec_path, "--measured", measured, "-o", out, "--build", tmp_path / "build")
    assert result.exit_code == 0, result.output
    new = load_spec(out)
    assert new.revision == 2 and new.arm.length_mm is not None
    assert "retuned from board.s1p" in new.history[-1][1]
    assert (tmp_path / "build" / "footgen_antennas.pretty" / "ifa_2g4_straight.kicad_mod").exists()
    assert "retune:" in result.stderr  # progress on stderr
    # a second run without --force keeps the (possibly edited) file
    out.write_text(out.read_text("utf-8") + " ", "utf-8")
    kept = out.read_bytes()
    again = run("retune", spec_path, "--measured", measured, "-o", out)
    assert again.exit_code == EXIT_OVERWRITE and out.read_bytes() == kept
    assert again.stderr.count("\n") == 1 and again.stderr.startswith("footgen: error:")


@pytest.mark.parametrize("body", [
    "# MHz S RI R 50\n2400 0.1 0.2\n2410 0.1\n",  # truncated line
    "# MHz Z RI R 50\n2400 0.1 0.2\n2410 0.1 0.2\n",  # not S-parameters
    "[Version] 2.0\n# MHz S RI R 50\n",  # Touchstone v2
    "# MHz S RI R 50\n2410 0.1 0.2\n2400 0.1 0.2\n",  # falling frequency
])
def test_malformed_touchstone_gives_one_line_and_no_revision(tmp_path, spec_path, body):
    bad = tmp_path / "bad.s1p"
    bad.write_text(body, "ascii")
    out = tmp_path / "new.json"
    result = run("retune", spec_path, "--measured", bad, "-o", out)
    assert result.exit_code == EXIT_INPUT
    assert result.stderr.count("\n") == 1 and "bad.s1p" in result.stderr
    assert not out.exists()
    existing = tmp_path / "old-r2.json"
    existing.write_text("hand edited\n", "utf-8")
    forced = run("retune", spec_path, "--measured", bad, "-o", existing, "--force")
    assert forced.exit_code == EXIT_INPUT and existing.read_text("utf-8") == "hand edited\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ant.json", "bad.s1p", "old-r2.json"]


def test_diff_of_a_spec_with_itself_and_overlay(tmp_path, spec_path):
    result = run("diff", spec_path, spec_path, "-o", tmp_path / "ov.svg")
    assert result.exit_code == 0 and "no change" in result.output
    assert (tmp_path / "ov.svg").read_bytes().startswith(b"<?xml") and (tmp_path / "ov.png").exists()


def test_diff_reports_the_arm_change(tmp_path, spec_path):
    data = json.loads(spec_path.read_text("utf-8"))
    data["arm"] = {"length_mm": 19.0}
    other = tmp_path / "b.json"
    other.write_text(json.dumps(data), "utf-8")
    sized = sizing.size(load_spec(spec_path), model=MODEL).arm_length_mm
    result = run("diff", spec_path, other)
    assert result.exit_code == 0
    assert f"arm length: {sized:.4f} -> 19.0000 mm ({19.0 - sized:+.4f} mm)" in result.output


def test_match_measured_and_predicted(spec_path, measured):
    a = run("match", "--measured", measured, "--f0-mhz", "2441.75")
    assert a.exit_code == 0 and "measured (board.s1p)" in a.output and a.output.count("* ") >= 1
    b = run("match", spec_path, "--series", "E12")
    assert b.exit_code == 0 and "predicted" in b.output
    assert "L series-at-load" in b.output or "L shunt-at-load" in b.output
    d = run("match", "--measured", measured, "--f0-mhz", "2441.75", "--band-mhz", "2400", "2483.5")
    assert d.exit_code == 0 and d.output != a.output  # the band changes the worst-case column
    e = run("match", "--measured", measured, "--f0-mhz", "2441.75", "--band-mhz", "2300", "2400")
    assert e.exit_code == EXIT_INPUT and e.stderr.startswith("footgen: error: --band-mhz")
    c = run("match", "--measured", measured)
    assert c.exit_code == EXIT_INPUT and "--f0-mhz" in c.output + c.stderr


def test_report_command(tmp_path, spec_path, measured):
    result = run("report", spec_path, "--measured", measured, "-o", tmp_path / "rep")
    assert result.exit_code == 0, result.output
    md = (tmp_path / "rep" / "ifa_2g4_straight-r1.report.md").read_text("utf-8")
    assert "| measured |" in md and "Caution" in md
    assert "report:" in result.stderr


def test_report_corrected_by_the_previous_sweep(tmp_path, spec_path, measured):
    out = tmp_path / "r2.json"
    assert run("retune", spec_path, "--measured", measured, "-o", out).exit_code == 0
    result = run("report", out, "--previous", spec_path, "--previous-measured", measured, "-o", tmp_path / "rep")
    assert result.exit_code == 0, result.output
    md = (tmp_path / "rep" / "ifa_2g4_straight-r2.report.md").read_text("utf-8")
    assert "| predicted, calibrated |" in md and "Matched on the calibrated prediction" in md
    assert "$.arm.length_mm" in md
    lonely = run("report", out, "--previous-measured", measured, "-o", tmp_path / "rep2")
    assert lonely.exit_code == EXIT_INPUT and "--previous" in lonely.output + lonely.stderr
    assert not (tmp_path / "rep2").exists()


def test_diff_of_two_footprints(tmp_path, spec_path):
    from footgen import build

    paths = []
    for arm in (18.0, 19.5):
        data = json.loads(spec_path.read_text("utf-8"))
        data["arm"] = {"length_mm": arm, "height_mm": 5.3, "feed_short_spacing_mm": 1.0}
        path = tmp_path / f"a{arm}.kicad_mod"
        path.write_text(build.run(parse_spec(data)).footprint_text, "utf-8")
        paths.append(path)
    result = run("diff", *paths)
    assert result.exit_code == 0
    # a 0.8 mm strip lengthened by 1.5 mm gains 1.2 mm^2 (plane geometry)
    assert "(+1.2000 mm^2)" in result.output and "copper bounding-box width" in result.output
