"""The command-line contract scripts rely on: files, exit codes, refusals, help examples."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from footgen.cli import main
from footgen.outputs import MANIFEST_NAME

from conftest import EXAMPLES, ROOT, load_json, run_cli, write_spec

SOIL = ROOT / "examples" / "soil-probe-2g4.json"
EXPLICIT_SPEC = ROOT / "examples" / "kestrel-beacon-2g4-matched.json"  # geometry given: no sizing


def test_build_contract_layout_and_exit_zero(tmp_path: Path) -> None:
    proc = run_cli(["build", str(SOIL), "-o", str(tmp_path)])
    assert proc.returncode == 0, proc.stderr
    spec = load_json(SOIL)
    assert (tmp_path / f"{spec['library']}.pretty" / f"{spec['name']}.kicad_mod").is_file()
    for suffix in (".report.md", ".check.json", ".svg"):
        assert (tmp_path / f"{spec['name']}{suffix}").is_file()
    assert not (tmp_path / f"{spec['name']}.png").exists()  # the PNG only when asked
    assert (tmp_path / MANIFEST_NAME).is_file()
    assert not list(tmp_path.rglob("*.tmp"))  # atomic writes leave no temp files
    report = (tmp_path / f"{spec['name']}.report.md").read_text()
    assert "radio regulations" in report and "RF-exposure" in report


def test_build_writes_the_png_only_when_asked(tmp_path: Path) -> None:
    """`--png` or `output.drawing_png: true` asks for the PNG; the default writes the SVG alone."""
    spec = load_json(EXPLICIT_SPEC)
    flagged = run_cli(["build", str(EXPLICIT_SPEC), "-o", str(tmp_path / "flag"), "--png"])
    assert flagged.returncode == 0, flagged.stderr
    assert (tmp_path / "flag" / f"{spec['name']}.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    asked = tmp_path / "asked.json"
    asked.write_text(json.dumps({**spec, "output": {**spec.get("output", {}), "drawing_png": True}}))
    proc = run_cli(["build", str(asked), "-o", str(tmp_path / "spec")])
    assert proc.returncode == 0, proc.stderr
    assert (tmp_path / "spec" / f"{spec['name']}.png").read_bytes() == (tmp_path / "flag" / f"{spec['name']}.png").read_bytes()


def test_python_dash_m_works(tmp_path: Path) -> None:
    proc = run_cli(["--version"])
    assert proc.returncode == 0 and "footgen" in proc.stdout


def test_rule_errors_exit_one_and_write_no_footprint(tmp_path: Path) -> None:
    data = load_json(SOIL)
    data["trace_width_mm"] = 0.1
    data["feed"] = {"pad_width_mm": 0.6}
    out = tmp_path / "out"
    result = CliRunner().invoke(main, ["build", str(write_spec(tmp_path, data)), "-o", str(out)])
    assert result.exit_code == 1
    assert "trace_width" in result.stderr
    assert not list(out.rglob("*.kicad_mod"))
    assert (out / f"{data['name']}.check.json").exists()  # the report says what is wrong
    forced = CliRunner().invoke(main, ["build", str(write_spec(tmp_path, data)), "-o", str(out), "--allow-violations"])
    assert forced.exit_code == 1 and list(out.rglob("*.kicad_mod"))


def test_check_json_lists_violations(tmp_path: Path) -> None:
    data = load_json(SOIL)
    data["short"] = {"via_drill_mm": 0.2}
    result = CliRunner().invoke(main, ["check", str(write_spec(tmp_path, data)), "--json"])
    assert result.exit_code == 1
    report = json.loads(result.stdout)
    assert report["ok"] is False
    assert {v["rule"] for v in report["violations"]} == {"via_drill"}
    ok = CliRunner().invoke(main, ["check", str(SOIL), "--json"])
    assert ok.exit_code == 0 and json.loads(ok.stdout)["violations"] == []


def test_refuses_to_overwrite_hand_edited_footprint(tmp_path: Path) -> None:
    runner = CliRunner()
    assert runner.invoke(main, ["build", str(SOIL), "-o", str(tmp_path)]).exit_code == 0
    fp = next(tmp_path.rglob("*.kicad_mod"))
    edited = fp.read_text().replace("REF**", "AE1")
    fp.write_text(edited)
    again = runner.invoke(main, ["build", str(SOIL), "-o", str(tmp_path)])
    assert again.exit_code == 3 and "edited since footgen wrote it" in again.stderr
    assert fp.read_text() == edited  # untouched
    forced = runner.invoke(main, ["build", str(SOIL), "-o", str(tmp_path), "--force"])
    assert forced.exit_code == 0 and fp.read_text() != edited


def test_refuses_to_overwrite_a_foreign_file(tmp_path: Path) -> None:
    spec = load_json(SOIL)
    foreign = tmp_path / f"{spec['name']}.svg"
    foreign.write_text("<svg>mine</svg>")
    result = CliRunner().invoke(main, ["build", str(SOIL), "-o", str(tmp_path)])
    assert result.exit_code == 3 and "not written by footgen" in result.stderr
    assert foreign.read_text() == "<svg>mine</svg>"


def test_rebuild_unchanged_is_allowed_and_identical(tmp_path: Path) -> None:
    runner = CliRunner()
    runner.invoke(main, ["build", str(SOIL), "-o", str(tmp_path)])
    before = {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file()}
    assert runner.invoke(main, ["build", str(SOIL), "-o", str(tmp_path)]).exit_code == 0
    after = {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file()}
    assert before == after


@pytest.mark.parametrize("command", ["new", "validate", "build", "check", "draw", "testboard"])
def test_every_command_has_help_with_an_example(command: str) -> None:
    result = CliRunner().invoke(main, [command, "--help"])
    assert result.exit_code == 0
    assert "Example:" in result.output and f"footgen {command}" in result.output


def test_new_lists_and_writes_templates(tmp_path: Path) -> None:
    runner = CliRunner()
    listing = runner.invoke(main, ["new", "--list"])
    assert listing.exit_code == 0 and "ism-2g4-straight" in listing.output
    out = tmp_path / "mine.json"
    assert runner.invoke(main, ["new", "ism-2g4-straight", "-o", str(out)]).exit_code == 0
    assert runner.invoke(main, ["validate", str(out)]).exit_code == 0
    again = runner.invoke(main, ["new", "ism-2g4-straight", "-o", str(out)])
    assert again.exit_code == 3  # never silently replaces a spec a person may have edited
    typo = runner.invoke(main, ["new", "ism-2g4-straigth", "-o", str(tmp_path / "x.json")])
    assert typo.exit_code == 2 and "did you mean 'ism-2g4-straight'" in typo.stderr


def test_draw_writes_svg_and_png(tmp_path: Path) -> None:
    for name in ("a.svg", "a.png"):
        result = CliRunner().invoke(main, ["draw", str(EXAMPLES[0]), "-o", str(tmp_path / name)])
        assert result.exit_code == 0
    assert (tmp_path / "a.svg").read_bytes().lstrip().startswith(b"<?xml")
    assert (tmp_path / "a.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    bad = CliRunner().invoke(main, ["draw", str(EXAMPLES[0]), "-o", str(tmp_path / "a.pdf")])
    assert bad.exit_code == 2


def test_unwritable_output_is_one_line_error(tmp_path: Path) -> None:
    blocker = tmp_path / "file"
    blocker.write_text("x")
    result = CliRunner().invoke(main, ["build", str(SOIL), "-o", str(blocker / "sub")])
    assert result.exit_code == 2
    assert len(result.stderr.strip().splitlines()) == 1


def test_shipped_data_found_from_a_plain_checkout() -> None:
    """Without footgen installed (isolated interpreter, only the checkout on sys.path), the schema
    and templates are found beside the package: the Quick start runs in the repo root."""
    import subprocess
    import sys

    code = (
        "import sys; sys.path.insert(0, sys.argv[1]); from footgen.resources import shipped; "
        "print(shipped('schemas').joinpath('footgen-spec-v1.schema.json').is_file(), "
        "sorted(p.name for p in shipped('templates').iterdir() if p.name.endswith('.json'))[:1])"
    )
    out = subprocess.run([sys.executable, "-I", "-S", "-c", code, str(ROOT)], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "True ['ism-2g4-meander.json']"
