"""The enclosure wall over the antenna (spec section ``enclosure``): spec, model and physics.

The openEMS check of the wall's resonance shift is in tests/test_fullwave_reference.py.
"""

from __future__ import annotations

import dataclasses
import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st
from conftest import ROOT, load_fullwave_module, load_json, with_field

from footgen.cli import main
from footgen.errors import SolverError, SpecError
from footgen.physics.board_edge import (
    equivalent_eps_r_strip_at_board_edge,
    equivalent_eps_r_strip_covered,
    equivalent_laminate,
)
from footgen.physics.ifa import Cover
from footgen.physics.quasistatic2d import (
    Layer,
    capacitance_coplanar_f_per_m,
    strip_beside_ground_edge_board_capacitance_f_per_m,
)
from footgen.spec import EnclosureSpec, parse_spec

BASE = load_json(ROOT / "examples" / "soil-probe-2g4.json")
WALL = {"eps_r": 3.0, "thickness_mm": 2.0, "distance_mm": 1.0}
COVERED = with_field(BASE, "enclosure", WALL)

ifa_cases = load_fullwave_module("ifa_cases")
#: A development board of tests/fullwave (straight arm, FR-4, laminate ending 2 mm beyond it).
BOARD = ifa_cases.case_to_ifa(ifa_cases.case_by_name("dev_straight_16"))


# --- spec --------------------------------------------------------------------------------------

def test_enclosure_section_is_parsed_in_mm() -> None:
    assert parse_spec(COVERED).enclosure == EnclosureSpec(eps_r=3.0, thickness_mm=2.0, distance_mm=1.0)
    assert parse_spec(BASE).enclosure is None


def test_enclosure_reaches_the_physics_in_si() -> None:
    from footgen.geometry.layout import Sizing, generate_copper
    from footgen.model import printed_ifa

    trial = Sizing(17.0, 5.0, 1.8, "trial")
    bare = printed_ifa(parse_spec(BASE), generate_copper(parse_spec(BASE), trial))
    covered = printed_ifa(parse_spec(COVERED), generate_copper(parse_spec(COVERED), trial))
    assert bare.cover is None
    assert covered.cover == Cover(eps_r=3.0, thickness_m=pytest.approx(2e-3), distance_m=pytest.approx(1e-3))
    assert dataclasses.replace(covered, cover=None) == bare


BAD_ENCLOSURES = [
    ("eps_r_below_one", with_field(COVERED, "enclosure.eps_r", 0.5), "$.enclosure.eps_r"),
    ("eps_r_huge", with_field(COVERED, "enclosure.eps_r", 40), "$.enclosure.eps_r"),
    ("thickness_zero", with_field(COVERED, "enclosure.thickness_mm", 0), "$.enclosure.thickness_mm"),
    ("thickness_huge", with_field(COVERED, "enclosure.thickness_mm", 11), "$.enclosure.thickness_mm"),
    ("distance_zero", with_field(COVERED, "enclosure.distance_mm", 0), "$.enclosure.distance_mm"),
    ("distance_huge", with_field(COVERED, "enclosure.distance_mm", 51), "$.enclosure.distance_mm"),
    # 2483.5 MHz: a tenth of the wavelength is 12.07 mm
    ("distance_beyond_model", with_field(COVERED, "enclosure.distance_mm", 20), "$.enclosure.distance_mm"),
    ("distance_missing", with_field(BASE, "enclosure", {"eps_r": 3.0, "thickness_mm": 2.0}), "distance_mm"),
    ("unknown_field", with_field(COVERED, "enclosure.colour", "grey"), "colour"),
    ("string_value", with_field(COVERED, "enclosure.eps_r", "3"), "$.enclosure.eps_r"),
]


@pytest.mark.parametrize("case_id, data, expected", BAD_ENCLOSURES, ids=[c[0] for c in BAD_ENCLOSURES])
def test_bad_enclosure_one_line_error_nothing_written(tmp_path: Path, case_id: str, data: dict, expected: str) -> None:
    spec = tmp_path / "bad.json"
    spec.write_text(json.dumps(data), "utf-8")
    out = tmp_path / "out"
    result = CliRunner().invoke(main, ["build", str(spec), "-o", str(out)])
    assert result.exit_code == 2, result.output
    assert isinstance(result.exception, SystemExit)
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert len(lines) == 1, lines
    assert lines[0].startswith("footgen: error: ") and expected in lines[0]
    assert not out.exists() or not any(out.rglob("*"))


def test_distance_limit_names_the_largest_distance() -> None:
    with pytest.raises(SpecError) as err:
        parse_spec(with_field(COVERED, "enclosure.distance_mm", 20))
    # 0.1 * c / 2483.5 MHz = 12.07 mm, said rounded down
    assert "at most 12" in str(err.value) and "leave out enclosure" in str(err.value)


# --- 2-D solver with a layer above the copper ----------------------------------------------------

#: Coplanar conductors on the interface of two dielectric half-spaces: eps_eff = (eps1 + eps2) / 2
#: exactly (the field splits evenly between the half-spaces; conformal mapping, e.g. Gupta, Garg,
#: Bahl, Bhartia, "Microstrip Lines and Slotlines", 2nd ed. 1996, ch. 7, from memory).  A thick
#: layer from a tiny distance stands for the upper half-space; the solver's 0.4 % air-capacitance
#: error (module docstring) and the layer's finite size give this tolerance.
HALF_SPACE_REL_TOL = 0.01


@pytest.mark.parametrize("eps_below, eps_above", [(1.0, 3.0), (4.4, 3.0)])
def test_layer_above_gives_the_two_half_space_mean(eps_below: float, eps_above: float) -> None:
    w, g = 1e-3, 2e-3
    edges = (0.0, g, g + w)
    conductors = ((-math.inf, 0.0, 0.0), (g, g + w, 1.0))
    upper = Layer(eps_above, 1e-6, 1.0)
    c = capacitance_coplanar_f_per_m(edges, conductors, eps_below, math.inf, None, upper)
    c_air = capacitance_coplanar_f_per_m(edges, conductors, 1.0, math.inf, None, Layer(1.0, 1e-6, 1.0))
    assert c / c_air == pytest.approx(0.5 * (eps_below + eps_above), rel=HALF_SPACE_REL_TOL)


def test_air_layer_changes_nothing_but_the_grid() -> None:
    args = (0.8e-3, 4.6e-3, 4.4, 1.6e-3, 2.0e-3)
    with_air = strip_beside_ground_edge_board_capacitance_f_per_m(*args, Layer(1.0, 1e-3, 2e-3))
    # same physics on a different grid: the solver's stated accuracy (module docstring, 0.4 %)
    assert with_air == pytest.approx(strip_beside_ground_edge_board_capacitance_f_per_m(*args), rel=0.004)


# --- equivalent slab -------------------------------------------------------------------------------

def test_wall_of_eps_r_one_is_no_wall() -> None:
    assert equivalent_laminate(dataclasses.replace(BOARD, cover=Cover(1.0, 2e-3, 1e-3))) == equivalent_laminate(BOARD)


def _eps(cover: Cover) -> float:
    return equivalent_laminate(dataclasses.replace(BOARD, cover=cover)).eps_r


def test_wall_raises_the_equivalent_permittivity_more_when_closer_and_denser() -> None:
    """Known physics (quasi-static effective permittivity, from memory): a dielectric in the
    fringing field raises the line's eps_eff, the more the nearer it is and the higher its eps_r,
    and a far wall approaches no wall."""
    bare = equivalent_laminate(BOARD).eps_r
    near, mid, far = (_eps(Cover(3.0, 2e-3, d)) for d in (0.5e-3, 2e-3, 10e-3))
    assert near > mid > far > bare
    assert _eps(Cover(4.0, 2e-3, 1e-3)) > _eps(Cover(2.5, 2e-3, 1e-3)) > bare
    assert _eps(Cover(3.0, 3e-3, 1e-3)) > _eps(Cover(3.0, 1e-3, 1e-3))
    assert far - bare < 0.1 * (near - bare)


def test_lossless_wall_lowers_the_equivalent_loss_tangent() -> None:
    """The wall adds no loss: the equivalent slab's higher eps_r must not add laminate loss, so
    eps_r' * tan_delta' (the slab's loss, quasi-static) stays within the laminate's own."""
    bare = equivalent_laminate(BOARD)
    covered = equivalent_laminate(dataclasses.replace(BOARD, cover=Cover(3.0, 2e-3, 1e-3)))
    assert covered.loss_tangent < bare.loss_tangent
    assert covered.eps_r * covered.loss_tangent == pytest.approx(bare.eps_r * bare.loss_tangent, rel=0.1)


def test_wall_without_board_edge_is_modelled_too() -> None:
    open_board = dataclasses.replace(BOARD, board_edge_y_m=None)
    assert equivalent_laminate(dataclasses.replace(open_board, cover=Cover(3.0, 2e-3, 1e-3))).eps_r > BOARD.laminate.eps_r


@settings(max_examples=3, deadline=None)
@given(eps_c=st.floats(1.5, 6.0), thickness_mm=st.floats(0.5, 5.0), distance_mm=st.floats(0.2, 8.0),
       height_mm=st.floats(2.0, 10.0))
def test_any_wall_raises_the_equivalent_permittivity_and_adds_no_loss(
        eps_c: float, thickness_mm: float, distance_mm: float, height_mm: float) -> None:
    """Any wall raises the equivalent eps_r over the bare board's, a denser one more, and never
    raises the loss tangent (the wall is lossless)."""
    w, t, lam = BOARD.trace_width_m, BOARD.laminate.thickness_m, BOARD.laminate
    bare = equivalent_eps_r_strip_at_board_edge(w, height_mm * 1e-3, lam.eps_r, t, 2e-3)

    def solve(eps: float) -> tuple[float, float]:
        return equivalent_eps_r_strip_covered(w, height_mm * 1e-3, lam.eps_r, t, 2e-3,
                                              Cover(eps, thickness_mm * 1e-3, distance_mm * 1e-3))

    (eps_lo, loss_lo), (eps_hi, loss_hi) = solve(eps_c), solve(eps_c + 1.0)
    assert bare < eps_lo < eps_hi
    assert 0.0 < loss_hi < loss_lo < 1.0


@pytest.mark.parametrize("cover", [Cover(0.5, 2e-3, 1e-3), Cover(3.0, 0.0, 1e-3), Cover(3.0, 2e-3, -1e-3),
                                   Cover(math.nan, 2e-3, 1e-3)])
def test_impossible_wall_is_a_solver_error(cover: Cover) -> None:
    with pytest.raises(SolverError):
        equivalent_eps_r_strip_covered(0.8e-3, 5e-3, 4.4, 1.6e-3, 2e-3, cover)


# --- the response -------------------------------------------------------------------------------

def test_wall_lowers_the_resonance_more_when_closer_and_denser() -> None:
    """Known physics (quasi-static effective permittivity, from memory): the resonance falls as
    1/sqrt(eps_eff) rises; the wall lowers it, more as the distance shrinks and eps_r rises."""
    from footgen.physics.predict import resonance_hz

    band = ifa_cases.sweep_band_hz(ifa_cases.case_by_name("dev_straight_16"))

    def f(cover: Cover | None) -> float:
        return resonance_hz(dataclasses.replace(BOARD, cover=cover), *band)

    bare = f(None)
    near, far = f(Cover(3.0, 2e-3, 1e-3)), f(Cover(3.0, 2e-3, 3e-3))
    dense = f(Cover(4.0, 2e-3, 1e-3))
    assert dense < near < far < bare
    # order of magnitude: per cent, not tenths and not tens of per cent
    assert 0.01 < 1.0 - near / bare < 0.1


def test_build_under_a_wall_names_it_and_sizes_a_shorter_arm(tmp_path: Path) -> None:
    """End to end: the footprint's description and the report name the wall, and the arm sized
    under it is shorter than the bare board's (the wall lowers the resonance)."""
    arms = {}
    for name, data in (("bare", BASE), ("covered", COVERED)):
        spec = tmp_path / f"{name}.json"
        spec.write_text(json.dumps(data), "utf-8")
        result = CliRunner().invoke(main, ["build", str(spec), "-o", str(tmp_path / name)])
        assert result.exit_code == 0, result.output
        report = (tmp_path / name / f"{data['name']}.report.md").read_text("utf-8")
        footprint = next((tmp_path / name).rglob("*.kicad_mod")).read_text("utf-8")
        words = "eps_r 3, 2 mm thick, 1 mm from the copper"
        assert (f"| enclosure wall over the copper | {words} |" in report) == (name == "covered")
        assert (f"sized under an enclosure wall ({words})" in footprint) == (name == "covered")
        arms[name] = float(report.split("| arm length (centreline, from above the short) | ")[1].split(" mm")[0])
    assert arms["covered"] < arms["bare"]


def test_covered_cross_sections_are_carried_to_a_new_process(tmp_path: Path, monkeypatch) -> None:
    import os
    import subprocess
    import sys

    from footgen import sizing_cache
    from footgen.physics import board_edge

    cache = tmp_path / "cache"
    monkeypatch.setenv(sizing_cache.CACHE_ENV, str(cache))
    solved = equivalent_eps_r_strip_covered(0.8e-3, 5e-3, 4.4, 1.6e-3, None, Cover(3.0, 2e-3, 1e-3))
    monkeypatch.setattr(sizing_cache, "_board_edge_state", {"loaded": False, "stored": 0})
    sizing_cache.sync_board_edge()
    r = board_edge._rounded
    key = (r(0.8e-3), r(4.6e-3), 4.4, r(1.6e-3), None, 3.0, r(1e-3), r(2e-3))
    assert board_edge.solved_covered_cross_sections()[key] == solved
    code = ("import json, sys; from footgen import sizing_cache; from footgen.physics import board_edge;"
            "sizing_cache.sync_board_edge(); key = tuple(json.loads(sys.argv[1]));"
            "print(json.dumps(board_edge.solved_covered_cross_sections()[key]))")
    out = subprocess.run([sys.executable, "-c", code, json.dumps(list(key))], capture_output=True, text=True,
                         check=True, env=dict(os.environ, FOOTGEN_CACHE_DIR=str(cache)))
    assert tuple(json.loads(out.stdout)) == solved


def test_line_model_sees_the_wall_too() -> None:
    """The transmission-line start point of the sizing lowers its estimate under a wall as well,
    and a wall of eps_r 1 leaves it as it is without one."""
    from footgen.physics.tline_ifa import quarter_wave_estimate_hz

    bare = quarter_wave_estimate_hz(BOARD)
    assert quarter_wave_estimate_hz(dataclasses.replace(BOARD, cover=Cover(3.0, 2e-3, 1e-3))) < bare
    assert quarter_wave_estimate_hz(dataclasses.replace(BOARD, cover=Cover(1.0, 2e-3, 1e-3))) == bare


def test_wall_errors_name_the_enclosure_section() -> None:
    from footgen.explain import translate

    with pytest.raises(SolverError) as err:
        equivalent_eps_r_strip_covered(0.8e-3, 5e-3, 4.4, 1.6e-3, 2e-3, Cover(3.0, 2e-3, 0.0))
    assert translate(err.value, COVERED).path == "$.enclosure"
