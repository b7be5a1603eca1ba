"""The design spec: JSON Schema validation, then frozen dataclasses with every default resolved.

The schema in ``schemas/footgen-spec-v1.schema.json`` is the single source of truth for the
format; this module only turns validated data into typed values and adds the checks a schema
cannot express (cross-field ones).  Every failure is a :class:`SpecError` whose message is one
line: JSON path, offending value, what is allowed.
"""

from __future__ import annotations

import difflib
import hashlib
import json
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any, Callable

import jsonschema

from footgen.bands import BANDS
from footgen.errors import SpecError
from footgen.resources import shipped

SCHEMA_RESOURCE = "footgen-spec-v1.schema.json"
#: Shunt-via defaults (mm), raised to the fab profile's minimum where that is larger.
DEFAULT_VIA_DRILL_MM = 0.3
DEFAULT_VIA_RING_MM = 0.15


def load_schema() -> dict:
    """The spec's JSON Schema (shipped inside the package as ``footgen.schemas``)."""
    return json.loads(shipped("schemas").joinpath(SCHEMA_RESOURCE).read_text("utf-8"))


def load_fab_profiles() -> dict[str, dict]:
    data = json.loads(resources.files("footgen.data").joinpath("fab_profiles.json").read_text("utf-8"))
    return {name: values for name, values in data.items() if not name.startswith("_")}


# ---------------------------------------------------------------------------------------------
# dataclasses (mm and Hz, as the field names say)


@dataclass(frozen=True)
class Target:
    low_hz: float
    high_hz: float
    label: str

    @property
    def center_hz(self) -> float:
        return 0.5 * (self.low_hz + self.high_hz)


@dataclass(frozen=True)
class LaminateSpec:
    eps_r: float
    thickness_mm: float
    loss_tangent: float
    copper_thickness_mm: float


@dataclass(frozen=True)
class ClearanceSpec:
    width_mm: float
    depth_mm: float
    arm_direction: str
    short_inset_mm: float | None
    edge_distance_mm: float


@dataclass(frozen=True)
class StyleSpec:
    kind: str  # "straight" | "meandered"
    fit: bool = False
    min_height_mm: float | None = None
    meander_height_mm: float | None = None
    meander_pitch_mm: float | None = None


@dataclass(frozen=True)
class ArmSpec:
    length_mm: float | None = None
    height_mm: float | None = None
    feed_short_spacing_mm: float | None = None


@dataclass(frozen=True)
class FeedSpec:
    pad_width_mm: float
    pad_length_mm: float
    port_gap_mm: float


@dataclass(frozen=True)
class ShortSpec:
    stub_width_mm: float
    via_count: int
    via_drill_mm: float
    via_annular_ring_mm: float

    @property
    def via_diameter_mm(self) -> float:
        """Copper diameter of one shunt via (drill plus two annular rings)."""
        return self.via_drill_mm + 2 * self.via_annular_ring_mm

    @property
    def pad_span_mm(self) -> float:
        """Width the ground pad needs: the stub or, with vias, the larger of stub and via."""
        return max(self.stub_width_mm, self.via_diameter_mm if self.via_count else 0.0)


@dataclass(frozen=True)
class GroundPlaneSpec:
    width_mm: float
    length_mm: float
    offset_mm: float


@dataclass(frozen=True)
class FabLimits:
    name: str
    min_trace_mm: float
    min_clearance_mm: float
    min_drill_mm: float
    min_annular_ring_mm: float
    min_hole_to_hole_mm: float
    min_copper_to_edge_mm: float
    #: Copper to the wall of a hole in other copper (KiCad's "copper to hole clearance").
    min_hole_clearance_mm: float


@dataclass(frozen=True)
class OutputSpec:
    rotation_deg: int
    grid_nm: int
    drawing_png: bool


@dataclass(frozen=True)
class Spec:
    name: str
    library: str
    description: str
    revision: int
    history: tuple[tuple[int, str], ...]
    target: Target
    laminate: LaminateSpec
    clearance: ClearanceSpec
    style: StyleSpec
    trace_width_mm: float
    arm: ArmSpec
    feed: FeedSpec
    short: ShortSpec
    ground_plane: GroundPlaneSpec
    fab: FabLimits
    output: OutputSpec
    raw: dict = field(repr=False, compare=False, hash=False)

    @property
    def digest(self) -> str:
        """SHA-256 of the canonical JSON of the spec as given (the footprint records it)."""
        return spec_digest(self.raw)


def spec_digest(data: dict) -> str:
    canonical = json.dumps(data, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(canonical.encode("ascii")).hexdigest()


# ---------------------------------------------------------------------------------------------
# validation messages: one line per error, keyed by the failing JSON Schema keyword


def _fix_minimum(err: jsonschema.ValidationError) -> str:
    return f"must be >= {err.validator_value}"


def _fix_maximum(err: jsonschema.ValidationError) -> str:
    return f"must be <= {err.validator_value}"


def _fix_exclusive_minimum(err: jsonschema.ValidationError) -> str:
    return f"must be > {err.validator_value}"


def _fix_enum(err: jsonschema.ValidationError) -> str:
    choices = ", ".join(json.dumps(v) for v in err.validator_value)
    hint = _did_you_mean(err.instance, [str(v) for v in err.validator_value])
    return f"must be one of {choices}{hint}"


def _fix_const(err: jsonschema.ValidationError) -> str:
    return f"must be {json.dumps(err.validator_value)}"


def _fix_type(err: jsonschema.ValidationError) -> str:
    return f"must be of type {err.validator_value}"


def _fix_pattern(err: jsonschema.ValidationError) -> str:
    return "use letters, digits, '_', '.' or '-' (at most 64 characters, starting with a letter or digit)"


def _fix_required(err: jsonschema.ValidationError) -> str:
    missing = [name for name in err.validator_value if name not in (err.instance or {})]
    return f"missing required field {missing[0]!r}" if missing else err.message


def _fix_additional(err: jsonschema.ValidationError) -> str:
    allowed = list(err.schema.get("properties", {}))
    extra = sorted(set(err.instance) - set(allowed))
    name = extra[0] if extra else "?"
    return f"unknown field {name!r}{_did_you_mean(name, allowed)}; allowed: {', '.join(allowed)}"


def _fix_one_of(err: jsonschema.ValidationError) -> str:
    options = []
    for sub in err.validator_value:
        req = sub.get("required", [])
        options.append("{" + ", ".join(req) + "}")
    return "must have exactly one of the forms " + " or ".join(options)


_FIXES: dict[str, Callable[[jsonschema.ValidationError], str]] = {
    "minimum": _fix_minimum,
    "maximum": _fix_maximum,
    "exclusiveMinimum": _fix_exclusive_minimum,
    "enum": _fix_enum,
    "const": _fix_const,
    "type": _fix_type,
    "pattern": _fix_pattern,
    "required": _fix_required,
    "additionalProperties": _fix_additional,
    "oneOf": _fix_one_of,
}


def _did_you_mean(word: object, choices: list[str]) -> str:
    close = difflib.get_close_matches(str(word), choices, n=1)
    return f" (did you mean {close[0]!r}?)" if close else ""


def _best_error(errors: list[jsonschema.ValidationError]) -> jsonschema.ValidationError:
    best = jsonschema.exceptions.best_match(errors)
    # For oneOf, prefer the branch that matches the user's discriminating keys, if any.
    while best.validator == "oneOf" and best.context:
        keyed = [e for e in best.context if e.validator not in ("required", "additionalProperties", "const")]
        if not keyed:
            break
        best = jsonschema.exceptions.best_match(keyed)
    return best


def _error_for(err: jsonschema.ValidationError) -> SpecError:
    fixer = _FIXES.get(err.validator)
    fix = fixer(err) if fixer else err.message
    return SpecError(err.json_path, err.instance if err.validator != "additionalProperties" else _extra(err), fix)


def _extra(err: jsonschema.ValidationError) -> object:
    allowed = set(err.schema.get("properties", {}))
    extra = sorted(set(err.instance) - allowed)
    return extra[0] if extra else err.instance


def validate(data: object) -> None:
    """Raise :class:`SpecError` for the most relevant schema violation, if any."""
    validator = jsonschema.Draft202012Validator(load_schema())
    errors = list(validator.iter_errors(data))
    if errors:
        raise _error_for(_best_error(errors))


# ---------------------------------------------------------------------------------------------
# loading


def read_json(path: Path) -> dict:
    try:
        text = Path(path).read_text("utf-8")
    except FileNotFoundError:
        raise SpecError(str(path), "missing", "no such spec file; start one with `footgen new`") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise SpecError(str(path), "unreadable", f"cannot read the file ({exc.__class__.__name__})") from None
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise SpecError(f"{path}:{exc.lineno}:{exc.colno}", "invalid JSON", exc.msg) from None


def load_spec(path: Path) -> Spec:
    """Read, validate and resolve a spec file."""
    return parse_spec(read_json(path))


def parse_spec(data: object) -> Spec:
    """Validate ``data`` against the schema and build the :class:`Spec` with defaults resolved."""
    validate(data)
    assert isinstance(data, dict)
    fab = _fab(data.get("fab", {"profile": "standard"}))
    width = float(data["trace_width_mm"])
    feed = data.get("feed", {})
    short = data.get("short", {})
    style = data["style"]
    out = data.get("output", {})
    spec = Spec(
        name=data["name"],
        library=data.get("library", "footgen_antennas"),
        description=data.get("description", ""),
        revision=int(data.get("revision", 1)),
        history=tuple((int(h["revision"]), h["note"]) for h in data.get("history", [])),
        target=_target(data["target"]),
        laminate=LaminateSpec(
            eps_r=float(data["laminate"]["eps_r"]),
            thickness_mm=float(data["laminate"]["thickness_mm"]),
            loss_tangent=float(data["laminate"].get("loss_tangent", 0.02)),
            copper_thickness_mm=float(data["laminate"].get("copper_thickness_mm", 0.035)),
        ),
        clearance=ClearanceSpec(
            width_mm=float(data["clearance"]["width_mm"]),
            depth_mm=float(data["clearance"]["depth_mm"]),
            arm_direction=data["clearance"].get("arm_direction", "right"),
            short_inset_mm=_opt(data["clearance"].get("short_inset_mm")),
            edge_distance_mm=float(data["clearance"].get("edge_distance_mm", 0.0)),
        ),
        style=StyleSpec(
            kind=style["kind"],
            fit=style.get("meander") == "fit",
            min_height_mm=_opt(style.get("min_height_mm")),
            meander_height_mm=_opt(style.get("meander_height_mm")),
            meander_pitch_mm=_opt(style.get("meander_pitch_mm")),
        ),
        trace_width_mm=width,
        arm=ArmSpec(
            length_mm=_opt(data.get("arm", {}).get("length_mm")),
            height_mm=_opt(data.get("arm", {}).get("height_mm")),
            feed_short_spacing_mm=_opt(data.get("arm", {}).get("feed_short_spacing_mm")),
        ),
        feed=FeedSpec(
            pad_width_mm=float(feed.get("pad_width_mm", width)),
            pad_length_mm=float(feed.get("pad_length_mm", 1.0)),
            port_gap_mm=float(feed.get("port_gap_mm", 0.5)),
        ),
        short=ShortSpec(
            stub_width_mm=float(short.get("stub_width_mm", width)),
            via_count=int(short.get("via_count", 2)),
            via_drill_mm=float(short.get("via_drill_mm", max(DEFAULT_VIA_DRILL_MM, fab.min_drill_mm))),
            via_annular_ring_mm=float(short.get("via_annular_ring_mm", max(DEFAULT_VIA_RING_MM, fab.min_annular_ring_mm))),
        ),
        ground_plane=_ground(data["ground_plane"]),
        fab=fab,
        output=OutputSpec(
            rotation_deg=int(out.get("rotation_deg", 0)),
            grid_nm=int(out.get("grid_nm", 1)),
            drawing_png=bool(out.get("drawing_png", True)),
        ),
        raw=data,
    )
    _cross_checks(spec)
    return spec


def _opt(value: Any) -> float | None:
    return None if value is None else float(value)


def _target(data: dict) -> Target:
    if "band" in data:
        band = BANDS[data["band"]]
        return Target(band.low_hz, band.high_hz, band.key)
    if "center_mhz" in data:
        center = float(data["center_mhz"]) * 1e6
        half = 0.5 * float(data.get("bandwidth_mhz", 0.0)) * 1e6
        if half >= center:
            raise SpecError("$.target.bandwidth_mhz", data["bandwidth_mhz"], "must be smaller than twice center_mhz")
        return Target(center - half, center + half, f"{data['center_mhz']} MHz")
    low, high = float(data["low_mhz"]) * 1e6, float(data["high_mhz"]) * 1e6
    if high <= low:
        raise SpecError("$.target.high_mhz", data["high_mhz"], f"must be above low_mhz ({data['low_mhz']})")
    return Target(low, high, f"{data['low_mhz']}-{data['high_mhz']} MHz")


def _ground(data: dict) -> GroundPlaneSpec:
    return GroundPlaneSpec(float(data["width_mm"]), float(data["length_mm"]), float(data.get("offset_mm", 0.0)))


def _fab(data: dict) -> FabLimits:
    profiles = load_fab_profiles()
    name = data["profile"]
    if name not in profiles:
        raise SpecError("$.fab.profile", name, f"unknown fab profile{_did_you_mean(name, list(profiles))}; shipped: {', '.join(profiles)}")
    values = {k: v for k, v in profiles[name].items() if k.startswith("min_")}
    values.update({k: v for k, v in data.items() if k.startswith("min_")})
    return FabLimits(name=name, **{k: float(v) for k, v in values.items()})


def _cross_checks(spec: Spec) -> None:
    """Checks across fields that JSON Schema cannot express (geometry feasibility comes later)."""
    cl = spec.clearance
    w = spec.trace_width_mm
    if spec.arm.height_mm is not None and spec.arm.height_mm + w / 2 > cl.depth_mm:
        nearest = cl.depth_mm - w / 2
        raise SpecError("$.arm.height_mm", spec.arm.height_mm, f"arm copper would leave the clearance (depth {cl.depth_mm} mm); at most {nearest:g}")
    if spec.ground_plane.width_mm < cl.width_mm and abs(spec.ground_plane.offset_mm) > 0.5 * (spec.ground_plane.width_mm + cl.width_mm):
        raise SpecError("$.ground_plane.offset_mm", spec.ground_plane.offset_mm, "the ground plane must lie below the clearance")
    for number, _ in spec.history:
        if number > spec.revision:
            raise SpecError("$.history", number, f"history names revision {number}, above revision {spec.revision}")
    via_span = spec.short.via_diameter_mm
    if spec.short.via_count and via_span > cl.width_mm:
        raise SpecError("$.short.via_drill_mm", spec.short.via_drill_mm, "the via does not fit the clearance width")
    style = spec.style
    if style.meander_height_mm is not None and spec.arm.height_mm is not None and style.meander_height_mm >= spec.arm.height_mm:
        raise SpecError(
            "$.style.meander_height_mm",
            style.meander_height_mm,
            f"must be below the arm height ({spec.arm.height_mm} mm) so the meander stays clear of the ground",
        )
    if spec.feed.pad_width_mm < w:
        raise SpecError("$.feed.pad_width_mm", spec.feed.pad_width_mm, f"must be >= trace_width_mm ({w})")
