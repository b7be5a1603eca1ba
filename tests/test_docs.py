"""Documentation promises that can be checked mechanically: the README's spec table names every
field of the schema, the schema's stated defaults are the code's, and help examples name real
templates."""

from __future__ import annotations

import json
import re

from click.testing import CliRunner

from conftest import ROOT
from footgen import starters
from footgen.cli import main
from footgen.geometry.layout import SIDE_MARGIN_MM, short_inset_mm
from footgen.spec import load_spec

README = (ROOT / "README.md").read_text("utf-8")
SCHEMA = json.loads((ROOT / "schemas" / "footgen-spec-v1.schema.json").read_text("utf-8"))
SPEC_TABLE_FIELDS_SKIPPED = {"$schema", "schema_version", "name", "library", "description", "revision", "history"}


def _field_names(node: dict) -> set[str]:
    names: set[str] = set()
    for key, sub in node.get("properties", {}).items():
        names.add(key)
        names |= _field_names(sub)
    for branch in node.get("oneOf", []) + node.get("anyOf", []):
        names |= _field_names(branch)
    return names


def test_readme_spec_table_names_every_schema_field() -> None:
    table = README.split("## The spec", 1)[1].split("\n## ", 1)[0]
    missing = []
    for section, sub in SCHEMA["properties"].items():
        if section in SPEC_TABLE_FIELDS_SKIPPED:
            continue
        for name in {section} | _field_names(sub):
            if name.startswith("min_") and section == "fab":
                continue  # the fab overrides are listed in the fab profile table
            if f"`{name}`" not in table and f'"{name}"' not in table:
                missing.append(f"{section}.{name}")
    assert not missing, missing


def test_schema_short_inset_default_is_the_code_default() -> None:
    text = SCHEMA["properties"]["clearance"]["properties"]["short_inset_mm"]["description"]
    margin = float(re.search(r"plus a ([0-9.]+) mm margin", text).group(1))
    assert margin == SIDE_MARGIN_MM
    spec = load_spec(ROOT / "examples" / "soil-probe-2g4.json")
    assert spec.clearance.short_inset_mm is None
    expected = spec.short.stub_width_mm / 2 + spec.fab.min_clearance_mm + margin
    assert abs(short_inset_mm(spec) - expected) < 1e-12


def test_help_examples_name_real_templates() -> None:
    names = {name for name, _ in starters.list_templates()}
    helps = [CliRunner().invoke(main, ["--help"]).output, CliRunner().invoke(main, ["new", "--help"]).output]
    named = set(re.findall(r"footgen new ([a-z0-9][a-z0-9-]*)", "\n".join(helps)))
    assert named, "the help shows no 'footgen new TEMPLATE' example"
    assert named <= names, named - names
