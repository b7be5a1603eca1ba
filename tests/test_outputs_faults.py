"""Output writing under faults: file modes, concurrent writers, a damaged manifest, a full disk,
kill -9 mid-write, a symlinked output folder, and the hand-edit refusal before any solve."""

from __future__ import annotations

import errno
import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest
from click.testing import CliRunner

from footgen import outputs
from footgen.cli import main
from footgen.errors import FootgenError, OverwriteRefusedError
from footgen.outputs import MANIFEST_NAME, write_outputs

from conftest import ROOT

SOIL = ROOT / "examples" / "soil-probe-2g4.json"


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def _temps(folder: Path) -> list[Path]:
    return [p for p in folder.rglob("*.tmp")]


@pytest.mark.parametrize("umask, mode", [(0o022, 0o644), (0o027, 0o640), (0o002, 0o664)])
def test_files_get_the_mode_an_ordinary_write_gives(tmp_path: Path, umask: int, mode: int) -> None:
    old = os.umask(umask)
    try:
        written = write_outputs(tmp_path, {"a.txt": b"a", "lib.pretty/b.kicad_mod": b"b"})
    finally:
        os.umask(old)
    for path in written + [tmp_path / MANIFEST_NAME]:
        assert path.stat().st_mode & 0o777 == mode, path


WRITER = """
import sys
from footgen.outputs import write_outputs
folder, tag, rounds = sys.argv[1], sys.argv[2], int(sys.argv[3])
for i in range(rounds):
    write_outputs(folder, {f"{tag}-{i}.txt": f"{tag} {i}".encode() * 1000})
"""


def test_concurrent_writers_keep_every_manifest_entry(tmp_path: Path) -> None:
    rounds = 25
    procs = [
        subprocess.Popen([sys.executable, "-c", WRITER, str(tmp_path), tag, str(rounds)], stderr=subprocess.PIPE, text=True)
        for tag in ("a", "b", "c")
    ]
    for proc in procs:
        _, err = proc.communicate(timeout=300)
        assert proc.returncode == 0, err
    manifest = json.loads((tmp_path / MANIFEST_NAME).read_text())["files"]
    expected = {f"{tag}-{i}.txt" for tag in "abc" for i in range(rounds)}
    assert set(manifest) == expected
    # a later writer accepts every file (none is taken for hand-edited)
    write_outputs(tmp_path, {name: (tmp_path / name).read_bytes() for name in expected})
    assert not _temps(tmp_path)


@pytest.mark.parametrize("damage", [b'{"generator": "footgen", "files": {"a.txt": "ab', b"", b"\x00\x00\x00", b"[1, 2]", b'{"files": 3}'])
def test_damaged_manifest_is_refused_in_one_line_and_force_rebuilds_it(tmp_path: Path, damage: bytes) -> None:
    write_outputs(tmp_path, {"a.txt": b"one", "b.txt": b"two"})
    (tmp_path / MANIFEST_NAME).write_bytes(damage)
    before = _snapshot(tmp_path)
    with pytest.raises(OverwriteRefusedError) as err:
        write_outputs(tmp_path, {"a.txt": b"three"})
    assert "\n" not in str(err.value) and "--force" in str(err.value)
    assert _snapshot(tmp_path) == before  # nothing replaced
    write_outputs(tmp_path, {"a.txt": b"three"}, force=True)
    assert json.loads((tmp_path / MANIFEST_NAME).read_text())["files"] == {"a.txt": outputs.sha256_bytes(b"three")}
    write_outputs(tmp_path, {"a.txt": b"four"})  # the rebuilt manifest vouches for a.txt again
    assert (tmp_path / "a.txt").read_bytes() == b"four"


def test_truncated_manifest_through_the_cli(tmp_path: Path) -> None:
    runner = CliRunner()
    svg = tmp_path / "x.svg"
    assert runner.invoke(main, ["draw", str(SOIL), "-o", str(svg)]).exit_code == 0
    manifest = tmp_path / MANIFEST_NAME
    manifest.write_bytes(manifest.read_bytes()[:20])
    refused = runner.invoke(main, ["draw", str(SOIL), "-o", str(svg)])
    assert refused.exit_code == 3 and len(refused.stderr.strip().splitlines()) == 1
    forced = runner.invoke(main, ["draw", str(SOIL), "-o", str(svg), "--force"])
    assert forced.exit_code == 0, forced.stderr
    assert "x.svg" in json.loads(manifest.read_text())["files"]


def test_full_disk_changes_nothing_simulated(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    write_outputs(tmp_path, {"a.txt": b"old a", "b.txt": b"old b", "c.txt": b"old c"})
    before = _snapshot(tmp_path)
    calls = {"n": 0}
    real = outputs._write_all

    def fill_up(fd: int, data: bytes) -> None:
        calls["n"] += 1
        if calls["n"] == 3:  # the third file finds the disk full
            raise OSError(errno.ENOSPC, "No space left on device")
        real(fd, data)

    monkeypatch.setattr(outputs, "_write_all", fill_up)
    with pytest.raises(FootgenError) as err:
        write_outputs(tmp_path, {"a.txt": b"new a", "b.txt": b"new b", "c.txt": b"new c"})
    assert "disk is full" in str(err.value) and "no file was changed" in str(err.value)
    assert _snapshot(tmp_path) == before
    assert not _temps(tmp_path)


def test_full_disk_on_a_small_tmpfs(tmp_path: Path) -> None:
    mount = tmp_path / "small"
    mount.mkdir()
    if shutil.which("mount") is None or os.geteuid() != 0:
        pytest.skip("needs root to mount a small tmpfs (the simulated full disk above still runs)")
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=64k", "tmpfs", str(mount)], capture_output=True)
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here: {done.stderr.decode().strip()}")
    try:
        write_outputs(mount, {"a.bin": b"a" * 8000, "b.bin": b"b" * 8000})
        before = _snapshot(mount)
        with pytest.raises(FootgenError) as err:
            write_outputs(mount, {"a.bin": b"A" * 8000, "b.bin": b"B" * 200_000})
        assert "disk is full" in str(err.value)
        assert _snapshot(mount) == before
        assert not _temps(mount)
        fd = os.open(mount / "filler.bin", os.O_WRONLY | os.O_CREAT)  # use up what is left
        try:
            while True:
                os.write(fd, b"f" * 4096)
        except OSError as exc:
            assert exc.errno == errno.ENOSPC
        finally:
            os.close(fd)
        result = CliRunner().invoke(main, ["draw", str(SOIL), "-o", str(mount / "big.png")])
        assert result.exit_code == 2 and len(result.stderr.strip().splitlines()) == 1, result.stderr
        assert "Traceback" not in result.output
    finally:
        subprocess.run(["umount", str(mount)], check=False)


KILLED_WRITER = """
import sys
from footgen.outputs import write_outputs
folder, round_ = sys.argv[1], int(sys.argv[2])
body = {f"f{k}.bin": bytes([round_ % 256, k]) * 300_000 for k in range(6)}
print("go", flush=True)
while True:
    write_outputs(folder, body)
"""


def test_kill_9_mid_write_leaves_no_temps_and_no_false_hand_edit(tmp_path: Path) -> None:
    for round_ in range(8):
        proc = subprocess.Popen([sys.executable, "-c", KILLED_WRITER, str(tmp_path), str(round_)], stdout=subprocess.PIPE, text=True)
        assert proc.stdout.readline().strip() == "go"
        time.sleep(0.05 + 0.037 * round_)
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=60)
        proc.stdout.close()
        # the next writer cleans up and accepts whatever old or new content landed
        files = {f"f{k}.bin": bytes([100 + round_, k]) * 10 for k in range(6)}
        write_outputs(tmp_path, files)
        assert not _temps(tmp_path)
        assert all((tmp_path / name).read_bytes() == body for name, body in files.items())


def test_symlinked_output_folder_is_refused(tmp_path: Path) -> None:
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    link = tmp_path / "out"
    link.symlink_to(elsewhere, target_is_directory=True)
    result = CliRunner().invoke(main, ["draw", str(SOIL), "-o", str(link / "x.svg")])
    assert result.exit_code == 2 and "symbolic link" in result.stderr
    assert not any(elsewhere.iterdir())


def test_symlinked_library_folder_is_refused(tmp_path: Path) -> None:
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    out = tmp_path / "out"
    out.mkdir()
    (out / "lib.pretty").symlink_to(elsewhere, target_is_directory=True)
    with pytest.raises(FootgenError, match="symbolic link"):
        write_outputs(out, {"lib.pretty/a.kicad_mod": b"x"})
    assert not any(elsewhere.iterdir())


def test_hand_edits_refused_before_any_solve_listing_every_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    spec = json.loads(SOIL.read_text())
    report = tmp_path / f"{spec['name']}.report.md"
    check = tmp_path / f"{spec['name']}.check.json"
    write_outputs(tmp_path, {report.name: b"report", check.name: b"{}"})
    report.write_text("my notes")
    check.write_text("{ }")

    def no_solve(*_args, **_kwargs):
        raise AssertionError("the spec was solved before the hand-edit check")

    import footgen.build

    monkeypatch.setattr(footgen.build, "run", no_solve)
    result = CliRunner().invoke(main, ["build", str(SOIL), "-o", str(tmp_path)])
    assert result.exit_code == 3, result.output
    line = result.stderr.strip()
    assert "\n" not in line and report.name in line and check.name in line and "edited since footgen wrote it" in line


def test_draw_refuses_a_hand_edited_drawing_before_any_solve(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    svg = tmp_path / "a.svg"
    write_outputs(tmp_path, {svg.name: b"<svg/>"})
    svg.write_text("<svg>mine</svg>")
    import footgen.build

    def no_solve(*_args, **_kwargs):
        raise AssertionError("the spec was solved before the hand-edit check")

    monkeypatch.setattr(footgen.build, "run", no_solve)
    result = CliRunner().invoke(main, ["draw", str(SOIL), "-o", str(svg)])
    assert result.exit_code == 3 and "a.svg edited since footgen wrote it" in result.stderr
    assert svg.read_text() == "<svg>mine</svg>"
