"""footgen yield: the tolerances section, the seeded draws, the surrogate against brute-force full
solves, known physics of the sensitivities, the command's errors and plots.

Sample counts are small on purpose (full MoM solves take seconds each); the solves are kept in
the test cache, so a second run is quick.
"""

from __future__ import annotations

import copy
import dataclasses
import json

import numpy as np
import pytest
from click.testing import CliRunner

from footgen.cli import main
from footgen.physics.ifa import PrintedIfa
from footgen.spec import parse_spec
from footgen.yieldmc import run as yr
from footgen.yieldmc import surrogate as sg
from footgen.yieldmc import tolerance as tol
from footgen.yieldmc.executors import LocalRunner

from conftest import ROOT, load_json, write_spec

SOIL = load_json(ROOT / "examples" / "soil-probe-2g4.json")
#: The soil probe's sized arm, given explicitly so the tests need no sizing.
ARM = {"length_mm": 17.794, "height_mm": 5.1, "feed_short_spacing_mm": 1.767}
#: The physics model has the enclosure wall (``PrintedIfa.cover``) once that work is merged.
HAS_WALL = "cover" in {f.name for f in dataclasses.fields(PrintedIfa)}
ZERO = {name: {"plus_minus_percent" if unit == "%" else "plus_minus_mm": 0} for name, (_, unit, _, _) in tol.SPEC_ENTRIES.items()}


def _spec(tolerances: dict | None = None, **changes) -> dict:
    data = copy.deepcopy(SOIL)
    data["arm"] = dict(ARM)
    if tolerances is not None:
        data["tolerances"] = tolerances
    data.update(changes)
    return data


def _only(**given) -> dict:
    """Every spread zero except those given."""
    return {**ZERO, **given}


# ------------------------------------------------------------------------ spec and draws


def test_defaults_fill_every_missing_spread_and_zero_turns_one_off() -> None:
    params = {p.key: p for p in tol.parameters(_spec())}
    assert params["laminate_eps_r"].half_width == tol.DEFAULT_EPS_R_PERCENT
    assert params["etch"].half_width == tol.DEFAULT_ETCH_MM and params["etch"].unit == "mm"
    assert {"ground_width", "ground_length"} <= set(params)
    assert not any(k.startswith("enclosure") for k in params)  # no enclosure section: inactive
    off = tol.parameters(_spec({"etch": {"plus_minus_mm": 0}, "laminate_eps_r": {"plus_minus_percent": 2, "distribution": "uniform"}}))
    keys = {p.key: p for p in off}
    assert "etch" not in keys and keys["laminate_eps_r"].half_width == 2 and keys["laminate_eps_r"].distribution == "uniform"
    assert tol.parameters(_spec(ZERO)) == ()


def test_enclosure_spreads_act_only_with_an_enclosure_and_parts_take_their_series_class() -> None:
    keys = [p.key for p in tol.parameters(_spec(), has_enclosure=True)]
    assert {"enclosure_eps_r", "enclosure_thickness", "enclosure_distance"} <= set(keys)
    parts = tol.parameters(_spec({"matching_parts": {"series": "E12"}}), ("series L 3.9 nH", "shunt C 1 pF"))
    part_params = [p for p in parts if p.on_parts]
    # IEC 60063 (from memory): E12 is the +-10 % class
    assert [p.half_width for p in part_params] == [10.0, 10.0] and part_params[0].distribution == "uniform"


def test_draws_are_per_sample_whoever_draws_them() -> None:
    params = tol.parameters(_spec())
    whole = tol.deviations(params, 7, 0, 20)
    assert np.array_equal(whole[5:12], tol.deviations(params, 7, 5, 12))  # a chunk draws the same boards
    fewer = tuple(p for p in params if p.key != "laminate_thickness")
    kept = [i for i, p in enumerate(params) if p.key != "laminate_thickness"]
    assert np.array_equal(tol.deviations(fewer, 7, 0, 20), whole[:, kept])  # switching one off moves no other
    assert not np.array_equal(whole, tol.deviations(params, 8, 0, 20))
    many = tol.deviations(params, 3, 0, 2000)
    for j, p in enumerate(params):
        assert np.all(np.abs(many[:, j]) <= p.half_width + 1e-12)
        # normal with the half-width at 3 sigma: sample std near half-width / 3 (+-10 %)
        assert abs(np.std(many[:, j]) / (p.half_width / 3) - 1) < 0.1


def test_perturbations_move_the_named_quantity() -> None:
    from footgen.prediction import copper_ifa, sized

    spec = parse_spec(_spec())
    ifa = copper_ifa(spec, sized(spec, "tline"))
    wider = tol.PERTURBATIONS["etch"](ifa, 0.05)
    assert wider.trace_width_m == pytest.approx(ifa.trace_width_m + 5e-5) and wider.port_gap_m == pytest.approx(ifa.port_gap_m - 5e-5)
    assert tol.PERTURBATIONS["laminate_eps_r"](ifa, 10).laminate.eps_r == pytest.approx(1.1 * ifa.laminate.eps_r)
    assert tol.PERTURBATIONS["arm_length"](ifa, 1.0).arm_length_m == pytest.approx(ifa.arm_length_m + 1e-3)
    assert tol.PERTURBATIONS["feed_tap"](ifa, 0.2).feed_short_spacing_m == pytest.approx(ifa.feed_short_spacing_m + 2e-4)
    assert tol.PERTURBATIONS["enclosure_eps_r"](ifa, 10) == ifa  # no enclosure wall: nothing to change


@pytest.mark.parametrize("tolerances, field", [
    ({"etch": {"plus_minus_mm": 0.5}}, "$.tolerances.etch.plus_minus_mm"),  # eats the 0.5 mm port gap
    ({"etch": {"plus_minus_mm": -0.1}}, "$.tolerances.etch.plus_minus_mm"),
    ({"laminate_eps_r": {"plus_minus_percent": 5, "distribution": "triangle"}}, "$.tolerances.laminate_eps_r.distribution"),
    ({"matching_parts": {"series": "E7"}}, "$.tolerances.matching_parts.series"),
    ({"etch_mm": 0.1}, "$.tolerances"),
])
def test_bad_tolerances_are_one_line_naming_the_field(tmp_path, tolerances: dict, field: str) -> None:
    path = write_spec(tmp_path, _spec(tolerances))
    result = CliRunner().invoke(main, ["yield", str(path), "--samples", "5", "--model", "tline", "--workers", "1",
                                       "--json", str(tmp_path / "y.json")])
    assert result.exit_code == 2, result.output
    lines = [line for line in result.output.splitlines() if line.startswith("footgen: error")]
    assert len(lines) == 1 and field in lines[0], result.output
    assert not (tmp_path / "y.json").exists()


def test_bad_options_are_refused_before_any_solve(tmp_path) -> None:
    path = write_spec(tmp_path, _spec())
    for args in (["--samples", "0"], ["--model", "nope"], ["--full", "--centre"]):
        result = CliRunner().invoke(main, ["yield", str(path), *args])
        assert result.exit_code == 2 and "footgen: error" in result.output, (args, result.output)


# ------------------------------------------------------------------- yields and physics


def _run(data: dict, samples: int, **kw) -> yr.YieldReport:
    with LocalRunner(1) as runner:
        return yr.run_yield(parse_spec(data), samples, 11, runner, **kw)


@pytest.mark.parametrize("target, verdict", [({"band": "ism_2g4"}, 1.0), ({"low_mhz": 2520.0, "high_mhz": 2600.0}, 0.0)])
def test_zero_tolerance_gives_the_nominal_verdict_exactly(target: dict, verdict: float) -> None:
    report = _run(_spec(ZERO, target=target), 50, checks=1)
    nominal = report.nominal.nominal.worst_db[0]
    assert (nominal <= sg.LEVEL_10DB) == bool(verdict)
    assert report.as_dict()["yield_10db"] == verdict  # exactly 0 or 1, as the nominal response says
    assert np.all(report.nominal.figures.worst_db == nominal)
    assert report.sensitivities == []


@pytest.fixture(scope="module")
def spread_run() -> tuple[yr.YieldReport, yr.YieldReport]:
    """A wide eps_r spread (the yield lands between 0 and 1) and a wide etch spread: the
    surrogate on 300 boards with 3 check solves, and the brute force on 8 boards of the same seed."""
    data = _spec(_only(laminate_eps_r={"plus_minus_percent": 12, "distribution": "uniform"}, etch={"plus_minus_mm": 0.1}))
    return _run(data, 300, checks=3), _run(data, 8, full=True)


def test_surrogate_yield_agrees_with_brute_force_full_solves_within_its_stated_error(spread_run) -> None:
    sur, brute = spread_run
    s = sur.as_dict()
    assert 0.05 < s["yield_10db"] < 0.95  # a spread that decides the yield
    # board by board (boards 3..7 were not used to state the error): a verdict may differ only
    # where the surrogate puts the board within the stated error of -10 dB
    e = s["stated_s11_error_db"]
    surrogate_worst = sur.nominal.figures.worst_db[:8]
    full_worst = brute.nominal.figures.worst_db
    for k in range(8):
        if abs(surrogate_worst[k] - sg.LEVEL_10DB) > e:
            assert (surrogate_worst[k] <= sg.LEVEL_10DB) == (full_worst[k] <= sg.LEVEL_10DB), k
    assert np.max(np.abs(surrogate_worst - full_worst)) <= e
    # the same 8 boards: the brute-force yield inside the surrogate's stated range for them
    lo = np.mean(surrogate_worst <= sg.LEVEL_10DB - e)
    hi = np.mean(surrogate_worst <= sg.LEVEL_10DB + e)
    assert lo <= brute.as_dict()["yield_10db"] <= hi
    assert s["surrogate_check"]["samples"] == 3 and s["yield_10db_range"][0] <= s["yield_10db"] <= s["yield_10db_range"][1]


def test_sensitivity_ranking_matches_one_at_a_time_full_solves(spread_run) -> None:
    from footgen.prediction import copper_ifa, resonance, sized

    sur, _ = spread_run
    spec, grids = sur.spec, sur.grids
    ifa = copper_ifa(spec, sized(spec))
    base = resonance(grids.eval_hz, yr.solve_task(ifa, grids.eval_hz, solved_points=yr.EVAL_SOLVED_POINTS)).freq_hz
    moved = {}
    for p in sur.params:  # full solves at half the half-width: points the table was not fitted on
        z = yr.solve_task(tol.perturbed(ifa, (p,), (p.half_width / 2,)), grids.eval_hz, solved_points=yr.EVAL_SOLVED_POINTS)
        moved[p.key] = abs(resonance(grids.eval_hz, z).freq_hz - base)
    brute_rank = sorted(moved, key=lambda k: -moved[k])
    assert [row["name"] for row in sur.sensitivities] == brute_rank


def test_resonance_falls_with_eps_r_as_one_over_root_eps_eff(spread_run) -> None:
    sur, _ = spread_run
    row = next(r for r in sur.sensitivities if r["name"] == "laminate_eps_r")
    f0 = sur.nominal.nominal.resonance_hz[0] / 1e6
    # f ~ 1/sqrt(eps_eff), eps_eff = 1 + q (eps_r - 1) with a filling factor 0 < q < 1 (quasi-TEM
    # transmission-line theory, from memory): d ln f / d ln eps_r = -eps_r q / (2 eps_eff), between
    # -0.5 and 0; a printed IFA at a board edge keeps much of its field in air (q well below 1)
    log_slope = row["resonance_mhz_per_unit"] * 100 / f0  # per % -> per unit of ln eps_r
    assert -0.5 < log_slope < -0.05


def test_wider_trace_slightly_lowers_the_resonance(spread_run) -> None:
    sur, _ = spread_run
    row = next(r for r in sur.sensitivities if r["name"] == "etch")
    f0 = sur.nominal.nominal.resonance_hz[0] / 1e6
    # wider copper -> slightly lower resonance (common practice, no source): below zero, and less
    # than 2 % per 0.1 mm of width
    assert row["resonance_mhz_per_unit"] < 0
    assert abs(row["resonance_mhz_per_unit"] * 0.1 / f0) < 0.02


# ------------------------------------------------------------------------- command and plots


def test_command_writes_json_and_plots_deterministically(tmp_path) -> None:
    path = write_spec(tmp_path, _spec(_only(laminate_eps_r={"plus_minus_percent": 8})))
    outs = []
    for run in ("a", "b"):
        args = ["yield", str(path), "--samples", "120", "--check", "2", "--model", "tline", "--workers", "1",
                "--json", str(tmp_path / f"{run}.json"), "--plot", str(tmp_path / run)]
        result = CliRunner().invoke(main, args)
        assert result.exit_code == 0, result.output
        outs.append([(tmp_path / f"{run}{suffix}").read_bytes() for suffix in (".json", "-hist.svg", "-hist.png", "-cloud.svg", "-cloud.png")])
    assert outs[0] == outs[1]
    summary = json.loads(outs[0][0])
    assert summary["samples"] == 120 and 0.0 <= summary["yield_10db"] <= 1.0 and 0.0 <= summary["yield_6db"] <= 1.0
    assert summary["yield_6db"] >= summary["yield_10db"]
    assert [row["rank"] for row in summary["sensitivity"]] == [1]
    assert "surrogate_check" in summary and summary["surrogate_check"]["samples"] == 2
    assert "yield, S11 <= -10 dB" in result.output and "estimates" in result.output


def test_plot_labels_do_not_overlap(spread_run) -> None:
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.text import Text

    from footgen.yieldmc import plots

    sur, _ = spread_run
    for make in (plots._histograms, plots._cloud):
        fig = make(sur)
        canvas = FigureCanvasAgg(fig)
        canvas.draw()
        renderer = canvas.get_renderer()
        hidden = set()  # labels of ticks outside the axis limits are laid out but not drawn
        for ax in fig.axes:
            for axis, limits in ((ax.xaxis, ax.get_xlim()), (ax.yaxis, ax.get_ylim())):
                for tick in axis.get_major_ticks():
                    if not min(limits) <= tick.get_loc() <= max(limits):
                        hidden |= {id(tick.label1), id(tick.label2)}
        texts = [(t.get_text(), t.get_window_extent(renderer)) for t in fig.findobj(Text)
                 if t.get_visible() and t.get_text().strip() and id(t) not in hidden]
        assert len(texts) > 10
        for i, (text_a, a) in enumerate(texts):
            for text_b, b in texts[i + 1:]:
                assert not a.overlaps(b), (make.__name__, text_a, text_b)


# ------------------------------------------------------- matching parts, enclosure, centring


def test_matching_part_tolerances_act_exactly_on_the_fitted_network() -> None:
    """A feed tap far from the match: footgen match fits parts, and their E12 tolerance (+-10 %)
    is the only spread; parts act on Zin exactly, so surrogate and full solves agree to rounding."""
    data = _spec(_only(matching_parts={"series": "E12"}), matching_network={"network": "pi", "package": "0402"})
    data["arm"]["feed_short_spacing_mm"] = 4.5
    report = _run(data, 200, checks=3, model="tline")
    parts = [p for p in report.params if p.on_parts]
    assert parts and all(p.half_width == 10.0 and "matching part" in p.label for p in parts)
    assert {r["name"] for r in report.sensitivities} == {p.key for p in parts}
    check = report.as_dict()["surrogate_check"]
    assert check["worst_s11_max_abs_db"] < 1e-6
    spread = report.nominal.figures.worst_db
    assert np.ptp(spread) > 0.01  # the parts' tolerance does move the match


def test_enclosure_perturbations_change_the_wall_when_there_is_one() -> None:
    from dataclasses import dataclass

    @dataclass(frozen=True)
    class Wall:
        eps_r: float
        thickness_m: float
        distance_m: float

    @dataclass(frozen=True)
    class Board:
        cover: Wall

    board = Board(Wall(3.0, 2e-3, 1e-3))
    assert tol.PERTURBATIONS["enclosure_eps_r"](board, 10).cover.eps_r == pytest.approx(3.3)
    assert tol.PERTURBATIONS["enclosure_thickness"](board, -10).cover.thickness_m == pytest.approx(1.8e-3)
    assert tol.PERTURBATIONS["enclosure_distance"](board, 0.3).cover.distance_m == pytest.approx(1.3e-3)


def test_centring_never_lowers_the_yield_and_reports_both_designs() -> None:
    data = _spec(_only(laminate_eps_r={"plus_minus_percent": 10, "distribution": "uniform"}))
    data["arm"]["length_mm"] = 18.6  # built a little long: resonance below the band centre
    report = _run(data, 300, checks=2, model="tline", centre=True)
    out = report.as_dict()
    centred = out["centred"]
    assert centred["yield_10db"] >= out["yield_10db"]  # the search includes the built design
    d = centred["design_mm"]
    assert d["arm_length_mm"] == pytest.approx(18.6 + d["arm_length_change_mm"], abs=1e-3)
    assert abs(d["arm_length_change_mm"]) <= yr.ARM_STEP_MM and abs(d["feed_tap_change_mm"]) <= yr.TAP_STEP_MM
    assert centred["surrogate_check"]["samples"] == 2


def test_full_solve_mode_solves_every_board_and_states_no_surrogate_error(tmp_path) -> None:
    path = write_spec(tmp_path, _spec(_only(laminate_eps_r={"plus_minus_percent": 8})))
    result = CliRunner().invoke(main, ["yield", str(path), "--samples", "12", "--full", "--model", "tline", "--workers", "1",
                                       "--json", str(tmp_path / "full.json")])
    assert result.exit_code == 0, result.output
    summary = json.loads((tmp_path / "full.json").read_text("utf-8"))
    assert summary["method"] == "full" and summary["samples"] == 12
    assert summary["surrogate_check"] is None and "yield_10db_model_error" not in summary
    assert "full solve of every sample" in result.output


def test_same_seed_same_numbers_on_one_or_two_local_processes() -> None:
    spec = parse_spec(_spec(_only(laminate_eps_r={"plus_minus_percent": 8}, etch={"plus_minus_mm": 0.05})))
    out = []
    for workers in (1, 2):
        with LocalRunner(workers) as runner:
            out.append(yr.run_yield(spec, 600, 4, runner, checks=2, model="tline").json_bytes())
    assert out[0] == out[1]


@pytest.mark.skipif(not HAS_WALL, reason="the enclosure wall is not in the physics model of this checkout")
def test_enclosure_spreads_enter_the_yield_when_the_spec_has_a_wall() -> None:
    data = _spec(_only(enclosure_eps_r={"plus_minus_percent": 10}, enclosure_thickness={"plus_minus_percent": 10},
                       enclosure_distance={"plus_minus_mm": 0.3}),
                 enclosure={"eps_r": 3.0, "thickness_mm": 2.0, "distance_mm": 1.0})
    report = _run(data, 100, checks=1)
    rows = {r["name"]: r for r in report.sensitivities}
    assert set(rows) == {"enclosure_eps_r", "enclosure_thickness", "enclosure_distance"}
    # a denser or nearer wall loads the antenna more: lower resonance (common practice, no source)
    assert rows["enclosure_eps_r"]["resonance_mhz_per_unit"] < 0
    assert rows["enclosure_distance"]["resonance_mhz_per_unit"] > 0
