"""`footgen pattern`, `footgen predict --json` and the loop report's efficiency line."""

from __future__ import annotations

import dataclasses
import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from footgen.cli import main
from footgen.physics.farfield import PowerBudget
from footgen.radiation import FILE_STEP_DEG, RadiationSummary

from conftest import ROOT

PALLET = ROOT / "examples" / "pallet-tag-868.json"  # the quickest example to size and solve
CSV_DB_ROUNDING = 2e-4  # the CSV prints dB to 1e-4
SPHERE_MEAN_TOL = 0.01  # 2-degree product rule of a smooth pattern (common practice, no source)
PATTERN_FILES = ("tag-cuts.png", "tag-cuts.svg", "tag-3d.png", "tag-3d.svg", "tag.csv")


def test_pattern_writes_plots_and_csv_with_identical_bytes(tmp_path: Path) -> None:
    outputs = []
    for folder in ("a", "b"):
        out = tmp_path / folder
        out.mkdir()
        result = CliRunner().invoke(main, ["pattern", str(PALLET), "-o", str(out / "tag")])
        assert result.exit_code == 0, result.output
        assert "radiation efficiency at 866.50 MHz" in result.output
        assert "peak realised gain" in result.output
        outputs.append({name: (out / name).read_bytes() for name in PATTERN_FILES})
    assert outputs[0] == outputs[1]
    files = outputs[0]
    assert files["tag-cuts.png"].startswith(b"\x89PNG") and files["tag-3d.png"].startswith(b"\x89PNG")
    assert b"<svg" in files["tag-cuts.svg"][:500] and b"<svg" in files["tag-3d.svg"][:500]
    text = files["tag.csv"].decode("ascii").splitlines()
    header = text.index("theta_deg,phi_deg,directivity_dbi,gain_dbi,realised_gain_dbi")
    rows = np.array([[float(v) for v in line.split(",")] for line in text[header + 1:]])
    n_theta, n_phi = int(180 / FILE_STEP_DEG) + 1, int(360 / FILE_STEP_DEG)
    assert rows.shape == (n_theta * n_phi, 5)
    # gain = directivity + 10 log10(radiation efficiency), realised gain below gain
    eff = float(next(t for t in text if "radiation_efficiency=" in t).split("radiation_efficiency=")[1].split()[0])
    assert np.allclose(rows[:, 3] - rows[:, 2], 10 * np.log10(eff), atol=CSV_DB_ROUNDING)
    assert np.all(rows[:, 4] <= rows[:, 3] + CSV_DB_ROUNDING)
    # directivity averages to 1 over the sphere (the grid's own quadrature, 2-degree steps)
    theta = np.deg2rad(rows[:, 0])
    w = np.sin(theta) * np.deg2rad(FILE_STEP_DEG) ** 2
    w[(rows[:, 0] == 0.0) | (rows[:, 0] == 180.0)] *= 0.5
    assert float(np.sum(10 ** (rows[:, 2] / 10) * w) / (4 * np.pi)) == pytest.approx(1.0, abs=SPHERE_MEAN_TOL)


def test_pattern_refuses_a_bad_frequency_in_one_line(tmp_path: Path) -> None:
    result = CliRunner().invoke(main, ["pattern", str(PALLET), "-o", str(tmp_path / "p"), "--freq-mhz", "-5"])
    assert result.exit_code != 0
    assert "--freq-mhz" in result.output and "Traceback" not in result.output
    assert not any(tmp_path.iterdir())


def test_predict_json_has_s11_and_radiation_figures(tmp_path: Path) -> None:
    out = tmp_path / "pred.json"
    result = CliRunner().invoke(main, ["predict", str(PALLET), "--json", str(out)])
    assert result.exit_code == 0, result.output
    data = json.loads(out.read_text("utf-8"))
    rad = data["radiation"]
    assert set(rad) >= {"radiation_efficiency", "total_efficiency", "peak_realised_gain_dbi", "peak_directivity_dbi"}
    assert 0.0 < rad["total_efficiency"] <= rad["radiation_efficiency"] < 1.0
    assert rad["peak_realised_gain_dbi"] <= rad["peak_directivity_dbi"]
    assert f"radiation efficiency at 866.50 MHz: {100 * rad['radiation_efficiency']:.1f} %" in result.output
    assert data["resonance_mhz"] > 0.0
    assert data["band_10db_mhz"] is None or len(data["band_10db_mhz"]) == 2


def test_predict_with_the_tline_model_has_no_radiation(tmp_path: Path) -> None:
    out = tmp_path / "pred.json"
    result = CliRunner().invoke(main, ["predict", str(PALLET), "--model", "tline", "--json", str(out)])
    assert result.exit_code == 0, result.output
    assert json.loads(out.read_text("utf-8"))["radiation"] is None
    assert "radiation efficiency" not in result.output


def test_loop_report_shows_efficiency_beside_s11() -> None:
    from footgen import loop_report
    from footgen.spec import load_spec

    data = loop_report.prepare(load_spec(PALLET), model="tline")
    assert data.radiation is None  # no currents in the transmission-line model
    budget = PowerBudget(866.5e6, 1.0, 0.8, 0.05, 0.15, 0.1 + 0.0j)
    data = dataclasses.replace(data, radiation=RadiationSummary.from_budget(budget, 0.12))
    md = loop_report.markdown(data, {"copper": "c.png", "s11": "s.png", "smith": "m.png"})
    s11_at = md.index("## S11")
    eff_at = md.index("Predicted radiation efficiency at 866.50 MHz: 80.0 %")
    assert s11_at < eff_at < md.index("## Match")
    assert "Predicted total efficiency (with mismatch): 79.2 %." in md
