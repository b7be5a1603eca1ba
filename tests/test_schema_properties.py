"""Property tests over the spec schema: any spec the schema accepts either builds or is refused
with one clean line (a FootgenError, exit 2), never a traceback, within a time budget.

Specs are drawn from the schema itself (every number inside its stated range, every optional
field sometimes given), so a range added to the schema is exercised without changing this file.
"""

from __future__ import annotations

import copy
import json
import time

from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from footgen.cli import main
from footgen.errors import FootgenError, MAX_MESSAGE_CHARS
from footgen.spec import load_fab_profiles, load_schema, parse_spec

from conftest import EXAMPLES, TEMPLATES

#: A spec that takes longer than this to size and check counts as a hang (s); the sizing's own
#: budget is shorter, so reaching it means the guard failed.
HANG_S = 400.0


def _strategy(schema: dict, path: str = "$") -> st.SearchStrategy:
    if "$ref" in schema:  # a local reference ("#/properties/target"): the referenced schema
        node = load_schema()
        for key in schema["$ref"].lstrip("#/").split("/"):
            node = node[key]
        return _strategy(node, path)
    if "oneOf" in schema:
        return st.one_of([_strategy({**branch, **{k: v for k, v in schema.items() if k not in ("oneOf", "description")}}, path) for branch in schema["oneOf"]])
    if "const" in schema:
        return st.just(schema["const"])
    if "enum" in schema:
        return st.sampled_from(schema["enum"])
    kind = schema.get("type")
    if kind == "object":
        props = schema.get("properties", {})
        required = {k: _strategy(props[k], f"{path}.{k}") for k in schema.get("required", [])}
        optional = {k: _strategy(v, f"{path}.{k}") for k, v in props.items() if k not in required and k != "$schema"}
        return st.fixed_dictionaries(required, optional=optional)
    if kind == "number":
        low = schema.get("minimum", schema.get("exclusiveMinimum", -1e6))
        return st.floats(low, schema.get("maximum", 1e6), exclude_min="exclusiveMinimum" in schema, allow_nan=False, allow_infinity=False)
    if kind == "integer":
        return st.integers(schema.get("minimum", 0), schema.get("maximum", 10))
    if kind == "boolean":
        return st.booleans()
    if kind == "array":
        return st.lists(_strategy(schema["items"], f"{path}[]"), max_size=3)
    if kind == "string":
        if path == "$.fab.profile":
            return st.sampled_from(sorted(load_fab_profiles()) + ["no-such-profile"])
        if "pattern" in schema and schema["pattern"].startswith("^[A-Za-z0-9]"):
            return st.from_regex(r"[A-Za-z0-9][A-Za-z0-9_.-]{0,20}", fullmatch=True)
        return st.text(st.characters(blacklist_categories=("Cs",)), max_size=40)
    raise AssertionError(f"no strategy for {path}: {schema}")


def _number_leaves(schema: dict, path: tuple[str, ...] = ()) -> dict[tuple[str, ...], dict]:
    """Number fields outside oneOf sections (the ones a mutation can set on any spec)."""
    out = {}
    for key, sub in schema.get("properties", {}).items():
        if sub.get("type") in ("number", "integer"):
            out[path + (key,)] = sub
        elif sub.get("type") == "object":
            out.update(_number_leaves(sub, path + (key,)))
    return out


LEAVES = _number_leaves(load_schema())
STARTS = [json.loads(p.read_text("utf-8")) for p in EXAMPLES + TEMPLATES]


@st.composite
def _near_start(draw: st.DrawFn) -> dict:
    """An example or template with one to three number fields changed to values in their
    ranges, most near the old value: specs that mostly build, with edges nearby."""
    data = copy.deepcopy(draw(st.sampled_from(STARTS)))
    for path in draw(st.lists(st.sampled_from(sorted(LEAVES)), min_size=1, max_size=3, unique=True)):
        field = LEAVES[path]
        low = field.get("minimum", field.get("exclusiveMinimum"))
        high = field["maximum"]
        node = data
        for key in path[:-1]:
            node = node.setdefault(key, {})
        old = node.get(path[-1])
        if field.get("type") == "integer":
            value = draw(st.integers(int(low), int(high)))
        elif isinstance(old, (int, float)) and old > 0 and draw(st.booleans()):
            value = min(max(old * draw(st.floats(0.5, 2.0)), low), high)
        else:
            value = draw(st.floats(low, high, exclude_min="exclusiveMinimum" in field, allow_nan=False))
        if value == low and "exclusiveMinimum" in field:
            continue
        node[path[-1]] = value
    return data


SPECS = st.one_of(_strategy(load_schema()), _near_start())


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(SPECS)
def test_any_drawn_spec_is_accepted_or_refused_in_one_line(data: dict) -> None:
    try:
        parse_spec(data)
    except FootgenError as exc:
        assert "\n" not in str(exc) and len(str(exc)) <= MAX_MESSAGE_CHARS


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])
@given(SPECS)
def test_any_accepted_spec_sizes_and_lays_out_or_is_refused_cleanly(data: dict) -> None:
    """The whole pipeline on the fast start model (the full solver is exercised below)."""
    from footgen.build import footprint_meta
    from footgen.explain import explained
    from footgen.geometry.layout import build_layout
    from footgen.kicad.writer import render
    from footgen.rules import check
    from footgen.sizing import size

    try:
        spec = parse_spec(data)
    except FootgenError:
        return
    start = time.monotonic()
    try:
        with explained(spec.raw):
            sizing = size(spec, "tline")
            layout = build_layout(spec, sizing)
            check(layout, spec.fab)
            text = render(layout, footprint_meta(spec))
        assert text.startswith("(footprint ")
    except FootgenError as exc:
        assert "\n" not in str(exc) and len(str(exc)) <= MAX_MESSAGE_CHARS
    assert time.monotonic() - start < HANG_S


@settings(max_examples=5, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])
@given(_near_start())
def test_any_accepted_spec_checks_through_the_cli_cleanly(tmp_path_factory, data: dict) -> None:
    """Full solver, through the CLI, on specs near the shipped ones (most reach the solver):
    exit 0 or 1 (built, rules checked) or 2 (one line)."""
    spec = tmp_path_factory.mktemp("prop") / "spec.json"
    spec.write_text(json.dumps(data), "utf-8")
    start = time.monotonic()
    result = CliRunner().invoke(main, ["check", str(spec)])
    assert time.monotonic() - start < HANG_S
    assert result.exit_code in (0, 1, 2), result.output
    assert isinstance(result.exception, SystemExit) or result.exception is None
    if result.exit_code == 2:
        lines = [line for line in result.stderr.splitlines() if line.strip()]
        assert len(lines) == 1 and lines[0].startswith("footgen: error: "), lines
