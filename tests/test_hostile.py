"""Hostile input: malformed JSON, every schema field pushed out of range or to the wrong type,
strings that would break a KiCad file, cross-field nonsense, oversized problems and internal
failures.  Every case ends in one bounded line on stderr with a documented exit code: no
traceback, no hang, nothing absurd accepted, nothing written."""

from __future__ import annotations

import copy
import json
import math
import resource
import subprocess
from pathlib import Path

import pytest
from click.testing import CliRunner

from footgen.cli import main
from footgen.errors import EXIT_INTERNAL, MAX_MESSAGE_CHARS, SpecError
from footgen.spec import load_schema, parse_spec

from conftest import ROOT, footgen_cmd, load_json, with_field

BASE = load_json(ROOT / "examples" / "soil-probe-2g4.json")
BASE_TEXT = json.dumps(BASE, indent=2)
#: Sizing fixed in the spec: the build needs no solve (fast cases that still reach the writer).
FIXED_ARM = {"length_mm": 20.0, "height_mm": 4.5, "feed_short_spacing_mm": 2.0}


def _one_clean_line(result, code: int = 2) -> str:
    assert result.exit_code == code, (result.exit_code, result.output)
    assert isinstance(result.exception, SystemExit)  # a clean exit, never a traceback
    lines = [line for line in result.stderr.splitlines() if line.strip()]
    assert len(lines) == 1, lines
    assert lines[0].startswith("footgen: ") and len(lines[0]) <= MAX_MESSAGE_CHARS + len("footgen: error: ")
    assert "Traceback" not in result.output
    return lines[0]


def _validate_bytes(tmp_path: Path, raw: bytes):
    spec = tmp_path / "hostile.json"
    spec.write_bytes(raw)
    return CliRunner().invoke(main, ["validate", str(spec)])


# ---------------------------------------------------------------------------------------------
# 1. JSON text: literals JSON does not allow, duplicate keys, sizes, nesting, encodings

NUMBER_FIELDS_IN_TEXT = ['"eps_r": 4.4', '"thickness_mm": 1.6', '"width_mm": 26.0', '"depth_mm": 6.0', '"trace_width_mm": 0.8',
                         '"pad_length_mm": 1.0', '"port_gap_mm": 0.5', '"via_count": 2', '"length_mm": 55.0', '"loss_tangent": 0.02']
BAD_LITERALS = ["NaN", "Infinity", "-Infinity", "1e999", "-1e999", "9" * 5000, "1" + "0" * 41, "0." + "1" * 60]


def _sub(old: str, new: str) -> bytes:
    """The base spec's text with ``old`` replaced once (which must be there)."""
    assert old in BASE_TEXT, old
    return BASE_TEXT.replace(old, new, 1).encode()


def _replace_value(field: str, literal: str) -> bytes:
    key = field.split(":")[0]
    assert field in BASE_TEXT, field
    return BASE_TEXT.replace(field, f"{key}: {literal}", 1).encode()


TEXT_CASES: list[tuple[str, bytes, str]] = [
    (f"{field.split(':')[0].strip(chr(34))}={literal[:12]}", _replace_value(field, literal), "number")
    for field in NUMBER_FIELDS_IN_TEXT
    for literal in BAD_LITERALS
]
TEXT_CASES += [
    ("dup_top_name", _sub('"name": "soil_probe_2g4",', '"name": "a", "name": "b",'), "'name'"),
    ("dup_eps_r", _sub('"eps_r": 4.4', '"eps_r": 4.4, "eps_r": 2.2'), "'eps_r'"),
    ("dup_clearance", _sub('"style"', '"clearance": {"width_mm": 1}, "style"'), "'clearance'"),
    ("dup_same_value", _sub('"trace_width_mm": 0.8', '"trace_width_mm": 0.8, "trace_width_mm": 0.8'), "'trace_width_mm'"),
    ("dup_in_fab", _sub('"profile": "standard"', '"profile": "standard", "profile": "fine"'), "'profile'"),
    ("deep_arrays_100k", b"[" * 100_000 + b"]" * 100_000, "nest"),
    ("deep_objects_10k", b'{"a":' * 10_000 + b"1" + b"}" * 10_000, "nest"),
    ("deep_in_field", _sub('"ism_2g4"', "[" * 40 + "]" * 40), "nest"),
    ("deep_unclosed", b"[" * 50_000, "nest"),
    ("not_utf8", BASE_TEXT.replace("Wren", "Wr\udcffn").encode("utf-8", "surrogateescape"), "UTF-8"),
    ("utf16", BASE_TEXT.encode("utf-16"), "UTF-8"),
    ("binary", bytes(range(256)) * 20, "UTF-8"),
    ("empty", b"", "invalid JSON"),
    ("only_bom", b"\xef\xbb\xbf", "invalid JSON"),
    ("whitespace", b" \n\t ", "invalid JSON"),
    ("truncated", BASE_TEXT[: len(BASE_TEXT) // 2].encode(), "invalid JSON"),
    ("trailing_comma", _sub('"standard"', '"standard",'), "invalid JSON"),
    ("comment", ("// spec\n" + BASE_TEXT).encode(), "invalid JSON"),
    ("single_quotes", BASE_TEXT.replace('"', "'").encode(), "invalid JSON"),
    ("huge_file", b'{"description": "' + b"x" * 1_100_000 + b'"}', "too large"),
    ("top_list", b"[1, 2, 3]", "$"),
    ("top_string", b'"spec"', "$"),
    ("top_number", b"42", "$"),
    ("top_null", b"null", "$"),
    ("top_true", b"true", "$"),
    ("nul_bytes", b"\x00" * 100, "invalid JSON"),
]


@pytest.mark.parametrize("case_id, raw, expected", TEXT_CASES, ids=[c[0] for c in TEXT_CASES])
def test_hostile_json_text_is_refused_in_one_line(tmp_path: Path, case_id: str, raw: bytes, expected: str) -> None:
    line = _one_clean_line(_validate_bytes(tmp_path, raw))
    assert expected in line, line


def test_bom_is_accepted(tmp_path: Path) -> None:
    result = _validate_bytes(tmp_path, b"\xef\xbb\xbf" + BASE_TEXT.encode())
    assert result.exit_code == 0 and "valid" in result.stdout


# ---------------------------------------------------------------------------------------------
# 2. Every number field of the schema: out of range, wrong type, non-finite (given as Python)


def _number_fields(schema: dict, path: str = "$") -> list[tuple[str, dict]]:
    """(JSON path, field schema) of every number or integer field, oneOf branches included."""
    out = []
    if schema.get("type") in ("number", "integer"):
        out.append((path, schema))
    for key, sub in schema.get("properties", {}).items():
        out += _number_fields(sub, f"{path}.{key}")
    for branch in schema.get("oneOf", []):
        out += _number_fields(branch, path)
    if "items" in schema:
        out += _number_fields(schema["items"], f"{path}[0]")
    return out


def _base_for(path: str) -> dict:
    """A valid spec in which the section holding ``path`` is in the form that owns it."""
    data = copy.deepcopy(BASE)
    forms = {
        "$.target.center_mhz": {"center_mhz": 2440.0, "bandwidth_mhz": 80.0},
        "$.target.bandwidth_mhz": {"center_mhz": 2440.0, "bandwidth_mhz": 80.0},
        "$.target.low_mhz": {"low_mhz": 2400.0, "high_mhz": 2480.0},
        "$.target.high_mhz": {"low_mhz": 2400.0, "high_mhz": 2480.0},
    }
    if path in forms:
        data["target"] = forms[path]
    if path.startswith("$.style.min_height"):
        data["style"] = {"kind": "meandered", "meander": "fit"}
    if path.startswith("$.style.meander_"):
        data["style"] = {"kind": "meandered", "meander_height_mm": 2.0, "meander_pitch_mm": 2.0}
    if path.startswith("$.history"):
        data["history"] = [{"revision": 1, "note": "first"}]
    return data


def _put(data: dict, path: str, value: object) -> dict:
    keys = path[2:].replace("[0]", ".0").split(".")
    node: object = data
    for key in keys[:-1]:
        node = node[int(key)] if isinstance(node, list) else node.setdefault(key, {})
    node[keys[-1]] = value  # type: ignore[index]
    return data


def _bad_values(field: dict) -> list[tuple[str, object]]:
    lo = field.get("minimum", field.get("exclusiveMinimum"))
    hi = field.get("maximum")
    values: list[tuple[str, object]] = [
        ("nan", math.nan), ("inf", math.inf), ("-inf", -math.inf), ("string", "1"), ("bool", True), ("null", None),
        ("list", [1]), ("object", {"v": 1}),
    ]
    if lo is not None:
        values.append(("below_min", lo - max(abs(lo), 1.0)))
        if lo > 0:
            values.append(("tiny", 1e-300))
    if "exclusiveMinimum" in field:
        values.append(("at_exclusive_min", field["exclusiveMinimum"]))
    if hi is not None:
        values.append(("above_max", hi * 10 + 1))
        values.append(("huge", 1e300))
    if field.get("type") == "integer":
        values.append(("fraction", (lo or 0) + 1.5))
    return values


FIELD_CASES = [
    (f"{path}:{name}", path, value)
    for path, field in _number_fields(load_schema())
    for name, value in _bad_values(field)
]


@pytest.mark.parametrize("case_id, path, value", FIELD_CASES, ids=[c[0] for c in FIELD_CASES])
def test_every_number_field_refuses_out_of_range_and_wrong_types(case_id: str, path: str, value: object) -> None:
    data = _put(_base_for(path), path, value)
    with pytest.raises(SpecError) as err:
        parse_spec(data)
    message = str(err.value)
    section = path.split(".")[1].split("[")[0]
    assert section in message, message
    assert "\n" not in message and len(message) <= MAX_MESSAGE_CHARS


def test_every_number_field_has_a_stated_range() -> None:
    for path, field in _number_fields(load_schema()):
        if "enum" in field or "const" in field:
            continue
        assert "minimum" in field or "exclusiveMinimum" in field, path
        assert "maximum" in field, path


def test_fab_limit_nan_is_refused_not_switched_off() -> None:
    data = with_field(BASE, "fab", {"profile": "standard", "min_drill_mm": math.nan})
    with pytest.raises(SpecError, match=r"\$\.fab\.min_drill_mm"):
        parse_spec(data)


# ---------------------------------------------------------------------------------------------
# 3. Strings that would break a KiCad file, names that would leave the output folder

STRING_CASES = [
    ("description_newline", "description", "first\nsecond", "$.description"),
    ("description_cr", "description", "a\rb", "$.description"),
    ("description_tab", "description", "a\tb", "$.description"),
    ("description_nul", "description", "a\x00b", "$.description"),
    ("description_escape", "description", "a\x1b[31mred", "$.description"),
    ("description_del", "description", "a\x7fb", "$.description"),
    ("description_long", "description", "x" * 401, "$.description"),
    ("description_900k", "description", "y" * 900_000, "$.description"),
    ("name_slash", "name", "../../etc/passwd", "$.name"),
    ("name_dotdot", "name", "..", "$.name"),
    ("name_unicode", "name", "antenne_\u00e9", "$.name"),
    ("name_long", "name", "a" * 65, "$.name"),
    ("library_slash", "library", "lib/../../x", "$.library"),
    ("library_absolute", "library", "/tmp/x", "$.library"),
    ("profile_long", "fab.profile", "p" * 10_000, "$.fab.profile"),
    ("schema_long", "$schema", "s" * 100_000, "$schema"),
    ("history_note_long", "history", [{"revision": 1, "note": "n" * 401}], "$.history"),
    ("history_many", "history", [{"revision": 1, "note": "n"}] * 1001, "$.history"),
]


@pytest.mark.parametrize("case_id, field, value, expected", STRING_CASES, ids=[c[0] for c in STRING_CASES])
def test_hostile_strings_are_refused_in_one_bounded_line(tmp_path: Path, case_id: str, field: str, value: object, expected: str) -> None:
    spec = tmp_path / "s.json"
    spec.write_text(json.dumps(with_field(BASE, field, value)), "utf-8")
    out = tmp_path / "out"
    line = _one_clean_line(CliRunner().invoke(main, ["build", str(spec), "-o", str(out)]))
    assert expected in line, line
    assert not out.exists()


# ---------------------------------------------------------------------------------------------
# 4. Cross-field nonsense, refused by validate before any solve

CROSS_CASES = [
    ("huge_via_on_thin_stub", {"short": {"via_drill_mm": 2.5, "stub_width_mm": 0.3}}, "$.short.via_drill_mm"),
    ("eight_big_vias", {"short": {"via_count": 8, "via_drill_mm": 3.0, "stub_width_mm": 1.0}}, "$.short"),
    ("vias_longer_than_ground", {"short": {"via_count": 8, "via_drill_mm": 1.0, "stub_width_mm": 1.0}, "ground_plane": {"width_mm": 32, "length_mm": 8}}, "$.short.via_count"),
    ("meander_deeper_than_clearance", {"style": {"kind": "meandered", "meander_height_mm": 6.0, "meander_pitch_mm": 2.0}}, "$.style.meander_height_mm"),
    ("meander_pitch_below_trace", {"style": {"kind": "meandered", "meander_height_mm": 2.0, "meander_pitch_mm": 0.5}}, "$.style.meander_pitch_mm"),
    ("min_height_above_clearance", {"style": {"kind": "meandered", "meander": "fit", "min_height_mm": 6.0}}, "$.style.min_height_mm"),
    ("arm_above_clearance", {"arm": {"height_mm": 6.0}}, "$.arm.height_mm"),
    ("meander_above_arm", {"style": {"kind": "meandered", "meander_height_mm": 4.0, "meander_pitch_mm": 2.0}, "arm": {"height_mm": 3.0}}, "$.style.meander_height_mm"),
    ("pad_narrower_than_trace", {"feed": {"pad_width_mm": 0.5}}, "$.feed.pad_width_mm"),
    ("bandwidth_over_centre", {"target": {"center_mhz": 900, "bandwidth_mhz": 1900}}, "$.target.bandwidth_mhz"),
    ("band_edges_equal", {"target": {"low_mhz": 900, "high_mhz": 900}}, "$.target.high_mhz"),
    ("history_ahead", {"history": [{"revision": 5, "note": "later"}]}, "$.history"),
    ("ground_off_to_the_side", {"ground_plane": {"width_mm": 10, "length_mm": 40, "offset_mm": 200}}, "$.ground_plane.offset_mm"),
    ("pad_tiny", {"feed": {"pad_width_mm": 1e-300}}, "$.feed.pad_width_mm"),
]


@pytest.mark.parametrize("case_id, change, expected", CROSS_CASES, ids=[c[0] for c in CROSS_CASES])
def test_cross_field_nonsense_is_refused_by_validate(tmp_path: Path, case_id: str, change: dict, expected: str) -> None:
    data = copy.deepcopy(BASE)
    data.update(change)
    spec = tmp_path / "s.json"
    spec.write_text(json.dumps(data), "utf-8")
    line = _one_clean_line(CliRunner().invoke(main, ["validate", str(spec)]))
    assert expected in line, line


FAB_CASES = [
    ("trace_below_fab", {"trace_width_mm": 0.1, "feed": {"pad_width_mm": 0.6}}, "$.trace_width_mm", "trace_width"),
    ("stub_below_fab", {"short": {"stub_width_mm": 0.1}}, "$.short.stub_width_mm", "trace_width"),
    ("pad_length_below_fab", {"feed": {"pad_length_mm": 0.1}}, "$.feed.pad_length_mm", "trace_width"),
    ("port_gap_below_fab", {"feed": {"port_gap_mm": 0.05}}, "$.feed.port_gap_mm", "ground_edge_distance"),
    ("drill_below_fab", {"short": {"via_drill_mm": 0.1}}, "$.short.via_drill_mm", "via_drill"),
    ("ring_below_fab", {"short": {"via_annular_ring_mm": 0.05}}, "$.short.via_annular_ring_mm", "annular_ring"),
]


@pytest.mark.parametrize("case_id, change, path, rule", FAB_CASES, ids=[c[0] for c in FAB_CASES])
def test_validate_reports_fab_rule_errors_that_need_no_sizing(tmp_path: Path, case_id: str, change: dict, path: str, rule: str) -> None:
    data = copy.deepcopy(BASE)
    data.update(change)
    spec = tmp_path / "s.json"
    spec.write_text(json.dumps(data), "utf-8")
    result = CliRunner().invoke(main, ["validate", str(spec)])
    assert result.exit_code == 1, result.output  # fab-rule errors, as the build's rule check says
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and path in lines[0] and rule in lines[0] and "at least" in lines[0], lines


# ---------------------------------------------------------------------------------------------
# 5. Oversized problems, internal failures, errors from inside the solver


def test_huge_ground_plane_is_refused_before_allocating(tmp_path: Path) -> None:
    spec = tmp_path / "huge.json"
    spec.write_text(json.dumps(with_field(BASE, "ground_plane", {"width_mm": 1000, "length_mm": 1000})), "utf-8")
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    proc = subprocess.run(footgen_cmd() + ["check", str(spec)], capture_output=True, text=True, timeout=300)
    peak_kib = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    assert proc.returncode == 2, proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and "$.ground_plane" in lines[0] and "unknowns" in lines[0], lines
    assert max(peak_kib, before) < 2 * 2**20  # KiB: the refusal came before any large matrix


def test_sizing_time_budget(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("FOOTGEN_TIME_LIMIT_S", "0.001")
    monkeypatch.setenv("FOOTGEN_CACHE_DIR", "")  # no cached sizing: the solver must run
    from footgen.sizing import size

    size.cache_clear()  # nor one remembered from an earlier test in this process
    result = CliRunner().invoke(main, ["check", str(ROOT / "examples" / "soil-probe-2g4.json")])
    line = _one_clean_line(result)
    assert "budget" in line and "FOOTGEN_TIME_LIMIT_S" in line


@pytest.mark.parametrize("value", ["abc", "-1", "0", "nan", "1e9"])
def test_time_budget_setting_is_checked(monkeypatch: pytest.MonkeyPatch, value: str) -> None:
    monkeypatch.setenv("FOOTGEN_TIME_LIMIT_S", value)
    line = _one_clean_line(CliRunner().invoke(main, ["check", str(ROOT / "examples" / "soil-probe-2g4.json")]))
    assert "FOOTGEN_TIME_LIMIT_S" in line


def _raiser(exc: BaseException):
    def boom(*_args, **_kwargs):
        raise exc

    return boom


def _solver_errors():
    from shapely.errors import GEOSException

    from footgen.errors import SolverError
    from footgen.physics.problem_size import ModelTooLargeError

    return [
        ("board_gap", SolverError("board_gap_m = nan: must be finite"), "$.clearance.edge_distance_mm"),
        ("arm_path", SolverError("arm_path_m point (0.002, -0.089) leaves the board"), "$.clearance.width_mm"),
        ("merge_tolerance", SolverError("a segment is shorter than the node merge tolerance; refine the wire model"), "$.trace_width_mm"),
        ("feed_x", SolverError("feed_x_m = 0.01: the feed taps the arm at its open end"), "$.arm.feed_short_spacing_mm"),
        ("holes", ValueError("polygon with holes cannot be written as one KiCad polygon"), "$.style"),
        ("ring", ValueError("A linearring requires at least 4 coordinates. LinearRing"), "$.style"),
        ("geos", GEOSException("TopologyException: side location conflict"), "$.clearance"),
        ("zero_division", ZeroDivisionError("float division by zero"), "$.clearance"),
        ("too_large_ground", ModelTooLargeError(90000, 89000, 1831), "$.ground_plane"),
        ("too_large_antenna", ModelTooLargeError(5000, 100, 1831), "$.trace_width_mm"),
        ("huge_message", SolverError("x_m " * 300_000), "$.clearance"),
    ]


@pytest.mark.parametrize("case_id, exc, expected", _solver_errors(), ids=[c[0] for c in _solver_errors()])
def test_solver_and_geometry_errors_speak_the_spec(monkeypatch: pytest.MonkeyPatch, case_id: str, exc: BaseException, expected: str) -> None:
    import footgen.build

    monkeypatch.setattr(footgen.build, "size", _raiser(exc))
    line = _one_clean_line(CliRunner().invoke(main, ["check", str(ROOT / "examples" / "soil-probe-2g4.json")]))
    assert expected in line, line
    for internal in ("_m ", "_m=", "_m:", "arm_path", "board_gap", "node merge", "Exception", "Error"):
        assert internal not in line, line


@pytest.mark.parametrize("exc", [RuntimeError("boom"), KeyError("x"), RecursionError("deep"), MemoryError(), AssertionError("x" * 100_000)])
def test_internal_error_has_its_own_exit_code_and_one_line(monkeypatch: pytest.MonkeyPatch, exc: BaseException) -> None:
    import footgen.build

    monkeypatch.setattr(footgen.build, "run", _raiser(exc))
    line = _one_clean_line(CliRunner().invoke(main, ["check", str(ROOT / "examples" / "soil-probe-2g4.json")]), EXIT_INTERNAL)
    assert line.startswith("footgen: internal error:") and "report" in line
    assert EXIT_INTERNAL not in (0, 1, 2, 3, 4)


# ---------------------------------------------------------------------------------------------
# 6. Option errors: one line, exit 2

OPTION_CASES = [
    ["build"],
    ["build", "x.json"],
    ["build", "x.json", "-o"],
    ["build", "x.json", "-o", "out", "--frobnicate"],
    ["predict", str(ROOT / "examples" / "soil-probe-2g4.json"), "--model", "nec"],
    ["draw", str(ROOT / "examples" / "soil-probe-2g4.json"), "-o", "x.jpg"],
    ["new", "ism-915-meander"],
    ["nonsense-command"],
    ["--no-such-option"],
    ["check", "--json", "--json", "a", "b"],
]


@pytest.mark.parametrize("args", OPTION_CASES, ids=[" ".join(a)[-40:] for a in OPTION_CASES])
def test_option_errors_are_one_line(tmp_path: Path, args: list[str]) -> None:
    proc = subprocess.run(footgen_cmd() + args, capture_output=True, text=True, timeout=120, cwd=tmp_path)
    assert proc.returncode == 2, (proc.returncode, proc.stderr)
    lines = [line for line in proc.stderr.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("footgen: error: "), lines


# ---------------------------------------------------------------------------------------------
# 7. Measurement files: size limit before scikit-rf


def test_huge_sparse_measurement_is_refused_without_reading_it(tmp_path: Path) -> None:
    from footgen.errors import MeasurementError
    from footgen.rf.touchstone import read_s11

    sparse = tmp_path / "huge.s1p"
    with open(sparse, "wb") as handle:
        handle.truncate(2**30)  # 1 GiB of holes
    with pytest.raises(MeasurementError, match="larger than"):
        read_s11(sparse)


def test_measurement_stream_of_nul_bytes_is_refused(tmp_path: Path) -> None:
    from footgen.errors import MeasurementError
    from footgen.rf.touchstone import read_s11

    path = tmp_path / "nul.s1p"
    path.write_bytes(b"\x00" * 100_000)
    with pytest.raises(MeasurementError) as err:
        read_s11(path)
    assert "\n" not in str(err.value)


# ---------------------------------------------------------------------------------------------
# 8. A description with awkward characters loads in KiCad 9 and keeps its text

AWKWARD = 'C:\\boards\\probe "v2" (rev) ${REFERENCE} 50 \u03a9 \u2013 \u00e9t\u00e9 \\n not a newline'


def test_kicad_text_escapes_backslashes_and_refuses_control_characters() -> None:
    from footgen.kicad.writer import kicad_text

    assert kicad_text("a\\b") == "a\\\\b"
    for bad in ("a\nb", "a\tb", "a\x00b", "a\x7fb"):
        with pytest.raises(ValueError):
            kicad_text(bad)


@pytest.mark.kicad
def test_awkward_description_loads_in_kicad(tmp_path: Path, kicad: None) -> None:
    from footgen.build import run
    from footgen.testrun import upgrade_footprint

    data = with_field(with_field(BASE, "description", AWKWARD), "arm", FIXED_ARM)
    result = run(parse_spec(data))
    pretty = tmp_path / "lib.pretty"
    pretty.mkdir()
    (pretty / f"{result.spec.name}.kicad_mod").write_text(result.footprint_text, "utf-8")
    upgraded = tmp_path / "up.pretty"
    upgrade_footprint(pretty, upgraded)  # KiCad 9 as the client: raises if it cannot load the file
    text = (upgraded / f"{result.spec.name}.kicad_mod").read_text("utf-8")
    # KiCad 9 writes the description back with the same escapes it read
    escaped = AWKWARD.replace("\\", "\\\\").replace('"', '\\"')
    assert escaped in text


def test_plugin_knows_every_exit_code() -> None:
    from footgen.plugin.cli_runner import EXIT_MEANINGS

    assert EXIT_INTERNAL in EXIT_MEANINGS and "internal" in EXIT_MEANINGS[EXIT_INTERNAL]
