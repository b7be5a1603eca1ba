"""The disk cache of finished sizings and board-edge solves (footgen.sizing_cache): exact round
trip, a key that changes with the spec, model and code, and never required."""

from __future__ import annotations

import copy
import json
import os
import subprocess
import sys

import pytest

from footgen import sizing, sizing_cache
from footgen.geometry.layout import Sizing
from footgen.physics import board_edge
from footgen.spec import parse_spec

from conftest import ROOT, load_json

SOIL = ROOT / "examples" / "soil-probe-2g4.json"


@pytest.fixture
def cache(tmp_path, monkeypatch):
    monkeypatch.setenv(sizing_cache.CACHE_ENV, str(tmp_path / "cache"))
    return tmp_path / "cache"


def _spec(**arm):
    raw = copy.deepcopy(load_json(SOIL))
    raw["arm"] = arm
    return parse_spec(raw)


def test_round_trip_is_exact(cache) -> None:
    s = Sizing(17.123456789012345, 4.6, 1.9000000000000001, "method", ("a", "b"), meander_pitch_mm=2.0 / 3.0)
    sizing_cache.store("id", "mom", s)
    assert sizing_cache.load("id", "mom") == s
    assert sizing_cache.load("id", "tline") is None
    assert sizing_cache.load("other", "mom") is None


def test_key_follows_the_resolved_spec_and_the_code(monkeypatch) -> None:
    a, b = _spec(), _spec(height_mm=4.0)
    assert sizing_cache.spec_key(a) == sizing_cache.spec_key(_spec())
    assert sizing_cache.spec_key(a) != sizing_cache.spec_key(b)
    key = sizing_cache.cache_key(sizing_cache.spec_key(a), "mom")
    monkeypatch.setattr(sizing_cache, "code_fingerprint", lambda: "another build of footgen")
    assert sizing_cache.cache_key(sizing_cache.spec_key(a), "mom") != key


def test_corrupt_or_foreign_entries_are_ignored(cache) -> None:
    sizing_cache.store("id", "mom", Sizing(1.0, 2.0, 3.0, "m"))
    (entry,) = cache.glob("*.json")
    entry.write_text("{not json")
    assert sizing_cache.load("id", "mom") is None
    entry.write_text(json.dumps({"key": "someone else's", "sizing": {}}))
    assert sizing_cache.load("id", "mom") is None


def test_cache_off_and_unwritable_folder(tmp_path, monkeypatch) -> None:
    monkeypatch.setenv(sizing_cache.CACHE_ENV, "")
    assert sizing_cache.cache_dir() is None
    sizing_cache.store("id", "mom", Sizing(1.0, 2.0, 3.0, "m"))
    assert sizing_cache.load("id", "mom") is None
    blocker = tmp_path / "file"
    blocker.write_text("")
    monkeypatch.setenv(sizing_cache.CACHE_ENV, str(blocker / "below-a-file"))
    sizing_cache.store("id", "mom", Sizing(1.0, 2.0, 3.0, "m"))  # no error: the cache is optional
    assert sizing_cache.load("id", "mom") is None


def test_size_reuses_a_finished_sizing(cache, monkeypatch) -> None:
    spec = _spec()
    sizing.size.cache_clear()
    first = sizing.size(spec, "tline")
    sizing.size.cache_clear()

    def must_not_run(*args, **kwargs):
        raise AssertionError("sized again despite the cache")

    monkeypatch.setattr(sizing, "_size_with", must_not_run)
    assert sizing.size(spec, "tline") == first
    sizing.size.cache_clear()


def test_board_edge_solutions_are_carried_to_a_new_process(cache) -> None:
    key = (0.8e-3, 4.6e-3, 4.4, 1.6e-3, 1e-3)
    eps = board_edge._equivalent_eps_r(*key)
    sizing_cache._board_edge_state.update(loaded=False, stored=0)
    sizing_cache.sync_board_edge()
    code = ("import sys; from footgen import sizing_cache; from footgen.physics import board_edge;"
            "sizing_cache.sync_board_edge(); print(repr(board_edge.solved_cross_sections()[tuple(map(float, sys.argv[1:]))]))")
    out = subprocess.run([sys.executable, "-c", code, *map(repr, key)], capture_output=True, text=True, check=True,
                         env=dict(os.environ, FOOTGEN_CACHE_DIR=str(cache)))
    assert float(out.stdout) == eps
