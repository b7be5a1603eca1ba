"""Several specs built in one process, and what the explicit-geometry path imports."""

from __future__ import annotations

import copy
import subprocess
import sys
from pathlib import Path

from click.testing import CliRunner

from footgen.cli import main

from conftest import ROOT, load_json, write_spec

SOIL = ROOT / "examples" / "soil-probe-2g4.json"
#: Modules a spec with its geometry given explicitly must not load: the response models and
#: their numerics are only needed to size an antenna.
HEAVY_MODULES = ("scipy.optimize", "scipy.sparse", "scipy.linalg", "footgen.physics.mom", "footgen.physics.tline_ifa")


def explicit(name: str, length_mm: float) -> dict:
    data = copy.deepcopy(load_json(SOIL))
    data["name"] = name
    data["arm"] = {"length_mm": length_mm, "height_mm": 5.0, "feed_short_spacing_mm": 2.5}
    return data


def test_several_specs_build_as_each_alone(tmp_path: Path) -> None:
    specs = [write_spec(tmp_path, explicit(f"demo_{i}", 16.0 + i), f"s{i}.json") for i in range(3)]
    together = CliRunner().invoke(main, ["build", *map(str, specs), "-o", str(tmp_path / "all")])
    assert together.exit_code == 0, together.output
    for i, spec in enumerate(specs):
        alone = CliRunner().invoke(main, ["build", str(spec), "-o", str(tmp_path / f"one{i}")])
        assert alone.exit_code == 0, alone.output
        rel = f"soil_probe.pretty/demo_{i}.kicad_mod"
        assert (tmp_path / "all" / rel).read_bytes() == (tmp_path / f"one{i}" / rel).read_bytes()


def test_bad_spec_among_several_writes_nothing_and_names_the_file(tmp_path: Path) -> None:
    good = write_spec(tmp_path, explicit("demo_a", 16.0), "a.json")
    broken = explicit("demo_b", 16.0)
    broken["laminate"]["eps_r"] = -1.0
    bad = write_spec(tmp_path, broken, "b.json")
    result = CliRunner().invoke(main, ["build", str(good), str(bad), "-o", str(tmp_path / "out")])
    assert result.exit_code == 2
    line = result.output.strip()
    assert "\n" not in line and str(bad) in line and "eps_r" in line
    assert not (tmp_path / "out").exists()


def test_two_specs_with_one_name_are_refused(tmp_path: Path) -> None:
    a = write_spec(tmp_path, explicit("same", 16.0), "a.json")
    b = write_spec(tmp_path, explicit("same", 17.0), "b.json")
    result = CliRunner().invoke(main, ["build", str(a), str(b), "-o", str(tmp_path / "out")])
    assert result.exit_code == 2
    assert "$.name" in result.output and "same" in result.output
    assert not (tmp_path / "out").exists()


def test_explicit_geometry_loads_no_solver(tmp_path: Path) -> None:
    spec = write_spec(tmp_path, explicit("demo", 16.0))
    code = ("import sys; from footgen.build import run; from footgen.spec import load_spec; "
            f"run(load_spec(sys.argv[1])); print(' '.join(m for m in {HEAVY_MODULES!r} if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code, str(spec)], capture_output=True, text=True, check=True)
    assert out.stdout.split() == []
