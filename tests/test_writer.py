"""KiCad writer: golden files, byte-identical rebuilds, and what KiCad 9 needs in the file."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from kiutils.footprint import Footprint

from footgen.build import run
from footgen.kicad.writer import COPPER_LAYERS
from footgen.spec import load_spec

from conftest import EXAMPLES, GOLDEN_DIR, TEMPLATES


@pytest.mark.parametrize("spec_path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_footprint_matches_golden(spec_path: Path, update_golden: bool) -> None:
    """Golden files are regenerated only with `pytest --update-golden`, never by hand."""
    text = run(load_spec(spec_path)).footprint_text
    golden = GOLDEN_DIR / f"{spec_path.stem}.kicad_mod"
    if update_golden:
        golden.write_text(text, "utf-8")
    assert golden.exists(), f"no golden file for {spec_path.name}: run pytest --update-golden"
    assert text == golden.read_text("utf-8")


@pytest.mark.parametrize("spec_path", EXAMPLES[:2], ids=[p.stem for p in EXAMPLES[:2]])
def test_same_spec_same_bytes_across_processes(spec_path: Path, tmp_path: Path) -> None:
    """Two separate processes with different hash seeds write identical files."""
    outs = []
    for seed in ("1", "2"):
        out = tmp_path / f"run{seed}"
        env = dict(os.environ, PYTHONHASHSEED=seed)
        subprocess.run([sys.executable, "-m", "footgen", "build", str(spec_path), "-o", str(out)], check=True, env=env, capture_output=True)
        outs.append({p.relative_to(out).as_posix(): p.read_bytes() for p in sorted(out.rglob("*")) if p.is_file()})
    assert outs[0].keys() == outs[1].keys() and len(outs[0]) >= 5
    for name in outs[0]:
        assert outs[0][name] == outs[1][name], name


@pytest.mark.parametrize("spec_path", EXAMPLES + TEMPLATES, ids=[p.stem for p in EXAMPLES + TEMPLATES])
def test_file_structure_kicad_needs(spec_path: Path) -> None:
    result = run(load_spec(spec_path))
    fp = Footprint.from_sexpr(_parse(result.footprint_text))
    pads = {(p.number, p.type) for p in fp.pads}
    assert ("1", "smd") in pads and ("2", "smd") in pads
    assert fp.netTiePadGroups == ["1, 2"]
    feed = next(p for p in fp.pads if p.number == "1")
    assert feed.shape == "custom" and feed.layers == ["F.Cu"]  # no paste or mask over the antenna
    assert len(feed.customPadPrimitives) == 1
    vias = [p for p in fp.pads if p.type == "thru_hole"]
    assert len(vias) == result.spec.short.via_count and all(v.number == "2" for v in vias)
    keepouts = {z.name: z for z in fp.zones}
    assert keepouts["antenna_clearance"].layers == list(COPPER_LAYERS)  # every copper layer, never "*.Cu"
    ko = keepouts["antenna_clearance"].keepoutSettings
    assert (ko.tracks, ko.vias, ko.copperpour, ko.pads) == ("not_allowed", "not_allowed", "not_allowed", "allowed")
    assert fp.properties["footgen_spec_sha256"] == result.spec.digest
    assert "0.30000000000000004" not in result.footprint_text  # rounded to 1 nm
    layers = {g.layer for g in fp.graphicItems}
    assert {"F.CrtYd", "F.Fab", "F.SilkS"} <= layers


def _parse(text: str) -> list:
    from kiutils.utils import sexpr

    return sexpr.parse_sexp(text)


def test_check_json_has_the_contract(tmp_path: Path) -> None:
    subprocess.run([sys.executable, "-m", "footgen", "build", str(EXAMPLES[0]), "-o", str(tmp_path)], check=True, capture_output=True)
    data = json.loads(next(tmp_path.glob("*.check.json")).read_text())
    assert data["ok"] is True and data["violations"] == []
