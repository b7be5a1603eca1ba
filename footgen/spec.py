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
import math
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any, Callable

import jsonschema

from footgen.bands import BANDS
from footgen.errors import SpecError
from footgen.strict_json import MAX_JSON_DEPTH, read_json
from footgen.resources import shipped

SCHEMA_RESOURCE = "footgen-spec-v1.schema.json"
#: Shunt-via defaults (mm), raised to the fab profile's minimum where that is larger.
DEFAULT_VIA_DRILL_MM = 0.3
DEFAULT_VIA_RING_MM = 0.15
#: Slack on comparisons against fab minimums (mm), as in the rule checker.
FAB_SLACK_MM = 1e-6


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
class EnclosureSpec:
    """Plastic enclosure wall over the antenna's copper side (spec section ``enclosure``)."""

    eps_r: float
    thickness_mm: float
    distance_mm: float


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
    #: Straight run from the short leg to the first meander leg (None: one minimum pitch past
    #: the feed leg, as before this field existed).
    meander_start_mm: float | None = None
    #: Exactly this many meander legs (None: as many as the arm length needs).
    meander_legs: int | None = None
    #: An explicit arm centreline (mm, from the short: x along the ground edge in the arm's
    #: direction, y above the ground edge); None: built by the rule above.
    path_mm: tuple[tuple[float, float], ...] | None = None

    @property
    def generator(self) -> str:
        """Name of the copper generator (footgen.geometry.registry.GENERATORS)."""
        return "path" if self.path_mm is not None else self.kind


@dataclass(frozen=True)
class ArmSpec:
    length_mm: float | None = None
    height_mm: float | None = None
    feed_short_spacing_mm: float | None = None


@dataclass(frozen=True)
class SecondArmSpec:
    """A dual-band IFA's second arm (spec section ``second_arm``): its band, where it runs
    (``under`` or ``above`` the main arm), its shape, and the length and height if fixed."""

    target: Target
    position: str  # "under" | "above"
    kind: str  # "straight" | "meandered"
    meander_height_mm: float | None = None
    length_mm: float | None = None
    height_mm: float | None = None


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
    #: The second arm of a dual-band IFA (``None``: one arm, one band).
    second_arm: SecondArmSpec | None = None

    @property
    def targets(self) -> tuple[Target, ...]:
        """The bands the antenna serves: the main arm's, then the second arm's (if any)."""
        return (self.target,) if self.second_arm is None else (self.target, self.second_arm.target)
    #: The enclosure wall over the antenna; ``None``: open air above the board.
    enclosure: EnclosureSpec | None = None

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
    if "u0000" in err.validator_value or "\x00" in err.validator_value:
        return "must be one line of printable characters: no line breaks, tabs or other control characters"
    return "use letters, digits, '_', '.' or '-' (at most 64 characters, starting with a letter or digit)"


def _fix_max_length(err: jsonschema.ValidationError) -> str:
    return f"too long ({len(err.instance)} characters); at most {err.validator_value}"


def _fix_max_items(err: jsonschema.ValidationError) -> str:
    return f"too many entries ({len(err.instance)}); at most {err.validator_value}"


def _fix_min_items(err: jsonschema.ValidationError) -> str:
    return f"needs at least {err.validator_value} items"


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
    "maxLength": _fix_max_length,
    "maxItems": _fix_max_items,
    "minItems": _fix_min_items,
    "required": _fix_required,
    "additionalProperties": _fix_additional,
    "oneOf": _fix_one_of,
}


def _did_you_mean(word: object, choices: list[str]) -> str:
    close = difflib.get_close_matches(str(word), choices, n=1)
    return f" (did you mean {close[0]!r}?)" if close else ""


_FORM_ERRORS = ("required", "additionalProperties", "const")


def _best_error(errors: list[jsonschema.ValidationError]) -> jsonschema.ValidationError:
    best = jsonschema.exceptions.best_match(errors)
    for err in errors:
        if err.validator == "oneOf" and err.context and best.json_path.startswith(err.json_path):
            return _best_branch_error(err)
    # For oneOf, prefer the branch that matches the user's discriminating keys, if any.
    while best.validator == "oneOf" and best.context:
        keyed = [e for e in best.context if e.validator not in ("required", "additionalProperties", "const")]
        if not keyed:
            break
        best = jsonschema.exceptions.best_match(keyed)
    return best


def _best_branch_error(err: jsonschema.ValidationError) -> jsonschema.ValidationError:
    """The error of a oneOf: in the forms whose discriminating constants (``kind``) the spec
    matches, the first error about a value (a range, a type); the oneOf itself (listing the
    forms) when every form only misses or adds fields."""
    branches: dict[object, list[jsonschema.ValidationError]] = {}
    for sub in err.context:
        branches.setdefault(sub.relative_schema_path[0], []).append(sub)
    matching = [subs for subs in branches.values() if not any(e.validator == "const" for e in subs)]
    keyed = [e for subs in matching for e in subs if e.validator not in _FORM_ERRORS]
    if keyed:
        return jsonschema.exceptions.best_match(keyed)
    return err


def _error_for(err: jsonschema.ValidationError) -> SpecError:
    fixer = _FIXES.get(err.validator)
    fix = fixer(err) if fixer else err.message
    return SpecError(err.json_path, err.instance if err.validator != "additionalProperties" else _extra(err), fix)


def _extra(err: jsonschema.ValidationError) -> object:
    allowed = set(err.schema.get("properties", {}))
    extra = sorted(set(err.instance) - allowed)
    return extra[0] if extra else err.instance


def _non_finite(data: object, path: str = "$", depth: int = 0) -> tuple[str, float] | None:
    """The first NaN or infinite number in ``data`` (JSON Schema's range checks let NaN pass)."""
    if depth > MAX_JSON_DEPTH:
        raise SpecError(path, "nested too deep", f"arrays and objects nest at most {MAX_JSON_DEPTH} deep in a spec")
    if isinstance(data, float) and not math.isfinite(data):
        return path, data
    items = data.items() if isinstance(data, dict) else enumerate(data) if isinstance(data, list) else ()
    for key, value in items:
        found = _non_finite(value, f"{path}.{key}" if isinstance(key, str) else f"{path}[{key}]", depth + 1)
        if found:
            return found
    return None


def validate(data: object) -> None:
    """Raise :class:`SpecError` for the most relevant schema violation, if any."""
    bad = _non_finite(data)
    if bad:
        raise SpecError(bad[0], bad[1], "must be a finite number")
    validator = jsonschema.Draft202012Validator(load_schema())
    errors = list(validator.iter_errors(data))
    if errors:
        raise _error_for(_best_error(errors))


# ---------------------------------------------------------------------------------------------
# loading


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
            meander_start_mm=_opt(style.get("meander_start_mm")),
            meander_legs=None if style.get("meander_legs") is None else int(style["meander_legs"]),
            path_mm=None if style.get("path_mm") is None else tuple((float(x), float(y)) for x, y in style["path_mm"]),
        ),
        trace_width_mm=width,
        arm=_arm(data.get("arm", {}), style),
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
            drawing_png=bool(out.get("drawing_png", False)),
        ),
        raw=data,
        second_arm=_second_arm(data["second_arm"]) if "second_arm" in data else None,
        enclosure=_enclosure(data.get("enclosure")),
    )
    from footgen.spec_checks import cross_checks  # the checks import this module's types

    cross_checks(spec)
    return spec


def _opt(value: Any) -> float | None:
    return None if value is None else float(value)


def _arm(arm: dict, style: dict) -> ArmSpec:
    """The arm section; an explicit path gives the arm's height and (unless ``length_mm`` trims
    its last segment) its length."""
    length, height = _opt(arm.get("length_mm")), _opt(arm.get("height_mm"))
    path = style.get("path_mm")
    if path is not None:
        from footgen.geometry.ifa import path_length  # geometry imports this module: only here

        points = tuple((float(x), float(y)) for x, y in path)
        y0 = points[0][1]
        if height is not None and abs(height - y0) > FAB_SLACK_MM:
            raise SpecError("$.arm.height_mm", height, f"style.path_mm sets the arm height ({y0:g} mm, its first point's y); remove arm.height_mm or make it {y0:g}")
        height = y0
        if length is None:
            length = path_length(points)
    return ArmSpec(length_mm=length, height_mm=height, feed_short_spacing_mm=_opt(arm.get("feed_short_spacing_mm")))


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


def _second_arm(data: dict) -> SecondArmSpec:
    try:
        target = _target(data["target"])
    except SpecError as exc:  # the same checks as the main target, said at this section's path
        raise SpecError(exc.path.replace("$.target", "$.second_arm.target", 1), exc.value, exc.fix) from None
    return SecondArmSpec(
        target=target,
        position=data.get("position", "under"),
        kind=data.get("kind", "straight"),
        meander_height_mm=_opt(data.get("meander_height_mm")),
        length_mm=_opt(data.get("length_mm")),
        height_mm=_opt(data.get("height_mm")),
    )
def _enclosure(data: dict | None) -> EnclosureSpec | None:
    if data is None:
        return None
    return EnclosureSpec(float(data["eps_r"]), float(data["thickness_mm"]), float(data["distance_mm"]))


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
