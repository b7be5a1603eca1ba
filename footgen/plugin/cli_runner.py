"""Find and call the ``footgen`` command from KiCad's Python (standard library only).

The KiCad plugin never imports footgen itself (KiCad's Python has no numpy or shapely): it
edits a spec file, runs ``footgen build`` in a subprocess and reads the files the build wrote.
"""

from __future__ import annotations

import json
import os
import shlex
import shutil
import subprocess
import sys
from dataclasses import dataclass, field
from pathlib import Path

#: Environment variable naming the footgen command (may hold arguments, e.g. "python -m footgen").
FOOTGEN_CMD_ENV = "FOOTGEN_CMD"
#: Default library nickname and folder of generated footprints (the CLI's default too).
DEFAULT_LIBRARY = "footgen_antennas"
BUILD_TIMEOUT_S = 300
#: Exit codes of the footgen command line (its documented contract).
EXIT_OK = 0
EXIT_RULES = 1
EXIT_INPUT = 2
EXIT_OVERWRITE = 3
EXIT_KICAD = 4
EXIT_INTERNAL = 5
EXIT_MEANINGS = {
    EXIT_OK: "ok",
    EXIT_RULES: "the rule check found errors (no footprint written)",
    EXIT_INPUT: "bad input (spec or option)",
    EXIT_OVERWRITE: "refused to overwrite a hand-edited file",
    EXIT_KICAD: "KiCad missing or failed",
    EXIT_INTERNAL: "internal error in footgen (please report it with the spec)",
}
INSTALL_HELP = (
    "footgen was not found. Install it into its own Python 3.10+ environment (system Pythons "
    "refuse pip outside one): `pipx install <footgen checkout>`, or in the checkout run "
    "`bash scripts/quickstart.sh` (makes .venv). Then set the environment variable "
    f"{FOOTGEN_CMD_ENV} to the full command (e.g. /home/me/footgen/.venv/bin/footgen) in KiCad: "
    "Preferences > Configure Paths > Environment Variables, and restart the PCB editor. "
    "Without it the plugin tries `footgen` on PATH and ~/.local/bin/footgen."
)
#: Where a user-level install puts the command when PATH (as KiCad sees it) lacks it.
USER_BIN_DIRS = (Path.home() / ".local" / "bin",)


class FootgenNotFound(RuntimeError):
    """No usable footgen command; the message says how to install one."""


class FootgenFailed(RuntimeError):
    """footgen ran but refused the job (bad spec, overwrite refused ...)."""

    def __init__(self, message: str, returncode: int, stderr: str) -> None:
        super().__init__(message)
        self.returncode = returncode
        self.stderr = stderr


@dataclass(frozen=True)
class BuildResult:
    """What one ``footgen build`` produced."""

    returncode: int
    out_dir: Path
    name: str
    library: str
    stdout: str
    stderr: str
    check: dict = field(default_factory=dict)

    @property
    def ok(self) -> bool:
        return self.returncode == EXIT_OK and bool(self.check.get("ok", False))

    @property
    def footprint_path(self) -> Path:
        return self.out_dir / f"{self.library}.pretty" / f"{self.name}.kicad_mod"

    @property
    def png_path(self) -> Path:
        return self.out_dir / f"{self.name}.png"

    @property
    def report_path(self) -> Path:
        return self.out_dir / f"{self.name}.report.md"

    @property
    def violations(self) -> list[dict]:
        return list(self.check.get("violations", []))

    def summary(self) -> str:
        """One paragraph for a message box."""
        if self.ok:
            return f"{self.name}: rule check passed (fab profile {self.check.get('fab', {}).get('name', '?')})."
        lines = [f"{self.name}: {len(self.violations)} rule violation(s):"]
        lines += [f"  - {_violation_line(v)}" for v in self.violations]
        return "\n".join(lines)


def _violation_line(v: dict) -> str:
    keys = ("severity", "rule", "message")
    parts = [str(v[k]) for k in keys if k in v]
    return ": ".join(parts) if parts else json.dumps(v, sort_keys=True)


def find_footgen(explicit: str | None = None) -> list[str]:
    """The footgen command as an argument list: ``explicit``, $FOOTGEN_CMD, PATH, ~/.local/bin."""
    for text in (explicit, os.environ.get(FOOTGEN_CMD_ENV)):
        if text:
            argv = shlex.split(text)
            if shutil.which(argv[0]) or Path(argv[0]).is_file():
                return argv
            raise FootgenNotFound(f"{text!r} (from {FOOTGEN_CMD_ENV} or the plugin settings) is not an executable. {INSTALL_HELP}")
    found = shutil.which("footgen")
    if found:
        return [found]
    for folder in USER_BIN_DIRS:
        candidate = folder / ("footgen.exe" if sys.platform.startswith("win") else "footgen")
        if candidate.is_file() and os.access(candidate, os.X_OK):
            return [str(candidate)]
    raise FootgenNotFound(INSTALL_HELP)


def _run(argv: list[str], timeout_s: float = BUILD_TIMEOUT_S) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    # KiCad's embedded Python sets these for itself; they would break another interpreter.
    for var in ("PYTHONHOME", "PYTHONPATH", "PYTHONEXECUTABLE"):
        env.pop(var, None)
    try:
        return subprocess.run(argv, capture_output=True, text=True, timeout=timeout_s, env=env)
    except FileNotFoundError:
        raise FootgenNotFound(f"{argv[0]}: no such program. {INSTALL_HELP}") from None
    except subprocess.TimeoutExpired:
        raise FootgenFailed(f"{' '.join(argv)} did not finish within {timeout_s:g} s", -1, "") from None


def _last_error(proc: subprocess.CompletedProcess) -> str:
    lines = (proc.stderr or proc.stdout or "").strip().splitlines()
    return lines[-1] if lines else f"exit code {proc.returncode}"


def list_templates(cmd: list[str] | None = None) -> list[tuple[str, str]]:
    """(name, summary) of every starter template (``footgen new --list``)."""
    proc = _run((cmd or find_footgen()) + ["new", "--list"])
    if proc.returncode != EXIT_OK:
        raise FootgenFailed(f"footgen new --list failed: {_last_error(proc)}", proc.returncode, proc.stderr)
    out = []
    for line in proc.stdout.splitlines():
        if line.strip():
            name, _, summary = line.strip().partition(" ")
            out.append((name, summary.strip()))
    return out


def new_spec(template: str, spec_path: Path, cmd: list[str] | None = None, *, force: bool = False) -> Path:
    """Write a spec from a starter template (``footgen new TEMPLATE -o SPEC``)."""
    argv = (cmd or find_footgen()) + ["new", template, "-o", str(spec_path)] + (["--force"] if force else [])
    proc = _run(argv)
    if proc.returncode != EXIT_OK:
        raise FootgenFailed(f"footgen new {template} failed: {_last_error(proc)}", proc.returncode, proc.stderr)
    return Path(spec_path)


def build(spec_path: Path, out_dir: Path, cmd: list[str] | None = None, *, force: bool = False, allow_violations: bool = False) -> BuildResult:
    """Run ``footgen build SPEC -o OUT``.  Rule violations (exit 1) are a result, not an error;
    bad input, refused overwrites and other failures raise :class:`FootgenFailed`."""
    spec = read_spec(spec_path)
    argv = (cmd or find_footgen()) + ["build", str(spec_path), "-o", str(out_dir), "--png"]  # the dialog shows the PNG
    argv += (["--force"] if force else []) + (["--allow-violations"] if allow_violations else [])
    proc = _run(argv)
    if proc.returncode not in (EXIT_OK, EXIT_RULES):
        meaning = EXIT_MEANINGS.get(proc.returncode, "unexpected failure")
        raise FootgenFailed(f"footgen build: {meaning}: {_last_error(proc)}", proc.returncode, proc.stderr)
    name = str(spec["name"])
    check_path = Path(out_dir) / f"{name}.check.json"
    check = json.loads(check_path.read_text("utf-8")) if check_path.exists() else {}
    return BuildResult(proc.returncode, Path(out_dir), name, str(spec.get("library", DEFAULT_LIBRARY)), proc.stdout, proc.stderr, check)


def predict_plot(spec_path: Path, plot_path: Path, cmd: list[str] | None = None) -> Path:
    """The predicted S11 plot (``footgen predict SPEC --plot FILE``; the calibrated prediction
    when the spec carries a measurement calibration); returns the PNG."""
    plot_path = Path(plot_path)
    argv = (cmd or find_footgen()) + ["predict", str(spec_path), "--plot", str(plot_path.with_suffix(".png")), "--force"]
    proc = _run(argv)
    if proc.returncode != EXIT_OK:
        raise FootgenFailed(f"footgen predict failed: {_last_error(proc)}", proc.returncode, proc.stderr)
    return plot_path.with_suffix(".png")


# --- spec files ------------------------------------------------------------------------------

def read_spec(spec_path: Path) -> dict:
    try:
        data = json.loads(Path(spec_path).read_text("utf-8"))
    except (OSError, json.JSONDecodeError) as exc:
        raise FootgenFailed(f"{spec_path}: cannot read the spec ({exc})", EXIT_INPUT, "") from None
    if not isinstance(data, dict) or "name" not in data or "schema_version" not in data:
        raise FootgenFailed(f"{spec_path}: not a footgen spec (no 'schema_version' and 'name' fields)", EXIT_INPUT, "")
    return data


def write_spec(spec: dict, spec_path: Path) -> Path:
    """Write the spec as indented JSON through a temporary file and a rename."""
    spec_path = Path(spec_path)
    spec_path.parent.mkdir(parents=True, exist_ok=True)
    tmp = spec_path.with_name(f".{spec_path.name}.tmp")
    tmp.write_text(json.dumps(spec, indent=2) + "\n", "utf-8")
    os.replace(tmp, spec_path)
    return spec_path


#: Dialog fields and where each lives in the spec (dotted path).  The CLI validates values.
SPEC_FIELDS = {
    "name": "name",
    "library": "library",
    "band": "target.band",
    "center_mhz": "target.center_mhz",
    "eps_r": "laminate.eps_r",
    "thickness_mm": "laminate.thickness_mm",
    "loss_tangent": "laminate.loss_tangent",
    "clearance_width_mm": "clearance.width_mm",
    "clearance_depth_mm": "clearance.depth_mm",
    "arm_direction": "clearance.arm_direction",
    "arm_length_mm": "arm.length_mm",
}
#: Fields that replace their whole parent object (the target is one of several forms).
EXCLUSIVE_PARENTS = {"target"}
#: The two style forms the dialog offers.
STYLE_FORMS = {"straight": {"kind": "straight"}, "meandered": {"kind": "meandered", "meander": "fit"}}


def spec_fields(spec: dict) -> dict:
    """The dialog's fields as found in ``spec`` (missing ones left out)."""
    out = {}
    for key, path in SPEC_FIELDS.items():
        node = spec
        for part in path.split("."):
            node = node.get(part) if isinstance(node, dict) else None
        if node is not None:
            out[key] = node
    style = spec.get("style", {})
    if isinstance(style, dict) and style.get("kind") in STYLE_FORMS:
        out["style"] = style["kind"]
    return out


def apply_fields(spec: dict, fields: dict) -> dict:
    """A copy of ``spec`` with the dialog's ``fields`` set (None leaves a field unchanged)."""
    out = json.loads(json.dumps(spec))
    for key, value in fields.items():
        if value is None:
            continue
        if key == "style":
            if value not in STYLE_FORMS:
                raise ValueError(f"style {value!r}: use one of {sorted(STYLE_FORMS)}")
            if out.get("style", {}).get("kind") != value:
                out["style"] = dict(STYLE_FORMS[value])
            continue
        if key not in SPEC_FIELDS:
            raise ValueError(f"unknown spec field {key!r}: use one of {sorted(SPEC_FIELDS)}")
        parts = SPEC_FIELDS[key].split(".")
        node = out
        for part in parts[:-1]:
            if part in EXCLUSIVE_PARENTS:
                node[part] = {}
            node = node.setdefault(part, {})
        node[parts[-1]] = value
    return out


#: How the dialog's text boxes turn into spec values (the CLI checks ranges and names).
FIELD_TYPES = {
    "name": str,
    "library": str,
    "band": str,
    "center_mhz": float,
    "eps_r": float,
    "thickness_mm": float,
    "loss_tangent": float,
    "clearance_width_mm": float,
    "clearance_depth_mm": float,
    "arm_direction": str,
    "arm_length_mm": float,
    "style": str,
}


def fields_from_text(texts: dict[str, str]) -> dict:
    """Typed spec fields from the dialog's strings; blank boxes are left out.  Raises
    ValueError naming the field for a number that does not parse."""
    out = {}
    for key, text in texts.items():
        text = (text or "").strip()
        if not text:
            continue
        kind = FIELD_TYPES.get(key)
        if kind is None:
            raise ValueError(f"unknown spec field {key!r}: use one of {sorted(FIELD_TYPES)}")
        if kind is float:
            try:
                out[key] = float(text.replace(",", "."))
            except ValueError:
                raise ValueError(f"{key}: {text!r} is not a number; type e.g. 4.4") from None
        else:
            out[key] = text
    return out
