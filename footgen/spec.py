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
from footgen.constants import C0_M_PER_S
from footgen.errors import SpecError
from footgen.strict_json import MAX_JSON_DEPTH, read_json
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
    _cross_checks(spec)
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


#: Largest shunt-via drill per stub width (common practice, no source: a hole much wider than
#: the short leg it grounds is not a via of that leg any more).
MAX_VIA_DRILL_PER_STUB_WIDTH = 4.0
#: The column of shunt vias reaches at most this fraction of the ground plane's length.
MAX_VIA_COLUMN_PER_GROUND_LENGTH = 0.5
#: Slack on comparisons against fab minimums (mm), as in the rule checker.
FAB_SLACK_MM = 1e-6


def _cross_checks(spec: Spec) -> None:
    """Checks across fields that JSON Schema cannot express and that need no sizing (geometry
    feasibility comes later); each raises :class:`SpecError` naming the field to change."""
    for check in CROSS_CHECKS.values():
        check(spec)


def _check_arm_and_ground(spec: Spec) -> None:
    cl = spec.clearance
    w = spec.trace_width_mm
    if spec.arm.height_mm is not None and spec.arm.height_mm + w / 2 > cl.depth_mm:
        nearest = cl.depth_mm - w / 2
        raise SpecError("$.arm.height_mm", spec.arm.height_mm, f"arm copper would leave the clearance area (depth {cl.depth_mm:g} mm); at most {nearest:g}")
    if spec.ground_plane.width_mm < cl.width_mm and abs(spec.ground_plane.offset_mm) > 0.5 * (spec.ground_plane.width_mm + cl.width_mm):
        raise SpecError("$.ground_plane.offset_mm", spec.ground_plane.offset_mm, "the ground plane must lie below the clearance area")
    for number, _ in spec.history:
        if number > spec.revision:
            raise SpecError("$.history", number, f"history names revision {number}, above revision {spec.revision}")
    if spec.feed.pad_width_mm < w:
        raise SpecError("$.feed.pad_width_mm", spec.feed.pad_width_mm, f"must be >= trace_width_mm ({w:g})")
    if spec.arm.feed_short_spacing_mm is not None:
        from footgen.sizing import min_spacing_mm  # imports this module: only when needed

        least = min_spacing_mm(spec)
        if spec.arm.feed_short_spacing_mm + FAB_SLACK_MM < least:
            raise SpecError(
                "$.arm.feed_short_spacing_mm", spec.arm.feed_short_spacing_mm,
                f"the feed and short legs, their pads and vias need the fab clearance between them; at least {least:.3f}",
            )


@dataclass(frozen=True)
class FabFinding:
    """A fab-rule error visible in the spec alone (before any sizing): the rule checker's rule
    name and the spec field, its value and the value that passes."""

    rule: str
    error: SpecError

    def line(self) -> str:
        return f"error: {self.rule}: {self.error}"


def fab_findings(spec: Spec) -> list[FabFinding]:
    """Copper widths, gaps and vias against the fab profile: the rule checks that need no sizing
    (``validate`` reports them; the build's rule check finds them again on the layout)."""
    fab = spec.fab
    raw_short = spec.raw.get("short", {}) if isinstance(spec.raw, dict) else {}
    out: list[FabFinding] = []

    def below(rule: str, path: str, value: float, limit: float, what: str) -> None:
        if value + FAB_SLACK_MM < limit:
            out.append(FabFinding(rule, SpecError(path, value, f"below the fab minimum {what} of profile {fab.name!r}; at least {limit:g}")))

    raw_feed = spec.raw.get("feed", {}) if isinstance(spec.raw, dict) else {}
    widths = {  # a width left to its default (the trace width) is reported once, as the trace's
        "$.trace_width_mm": (spec.trace_width_mm, True),
        "$.short.stub_width_mm": (spec.short.stub_width_mm, "stub_width_mm" in raw_short),
        "$.feed.pad_width_mm": (spec.feed.pad_width_mm, "pad_width_mm" in raw_feed),
        "$.feed.pad_length_mm": (spec.feed.pad_length_mm, True),
    }
    for path, (value, given) in widths.items():
        if given:
            below("trace_width", path, value, fab.min_trace_mm, "copper width")
    below("ground_edge_distance", "$.feed.port_gap_mm", spec.feed.port_gap_mm, fab.min_clearance_mm, "copper clearance")
    if spec.short.via_count:
        below("via_drill", "$.short.via_drill_mm", spec.short.via_drill_mm, fab.min_drill_mm, "drill")
        ring_path = "$.short.via_annular_ring_mm" if "via_annular_ring_mm" in raw_short else "$.fab.min_annular_ring_mm"
        below("annular_ring", ring_path, spec.short.via_annular_ring_mm, fab.min_annular_ring_mm, "annular ring")
    return out


def _check_vias(spec: Spec) -> None:
    short, cl, fab = spec.short, spec.clearance, spec.fab
    if not short.via_count:
        return
    most = MAX_VIA_DRILL_PER_STUB_WIDTH * short.stub_width_mm
    if short.via_drill_mm > most + FAB_SLACK_MM:
        raise SpecError(
            "$.short.via_drill_mm", short.via_drill_mm,
            f"too wide for the {short.stub_width_mm:g} mm short stub; at most {most:g} (or widen short.stub_width_mm)",
        )
    if short.via_diameter_mm > cl.width_mm:
        raise SpecError("$.short.via_drill_mm", short.via_drill_mm, f"the via ({short.via_diameter_mm:g} mm with its ring) does not fit the {cl.width_mm:g} mm clearance area width")
    pitch = max(short.via_diameter_mm, short.via_drill_mm + fab.min_hole_to_hole_mm)
    room = MAX_VIA_COLUMN_PER_GROUND_LENGTH * spec.ground_plane.length_mm - fab.min_clearance_mm
    fits = max(int(room // pitch), 0)
    if short.via_count > fits:
        raise SpecError(
            "$.short.via_count", short.via_count,
            f"{short.via_count} vias at a {pitch:.2f} mm pitch do not fit half the {spec.ground_plane.length_mm:g} mm ground plane length; at most {fits}",
        )


def _check_meander(spec: Spec) -> None:
    style, cl, w, c = spec.style, spec.clearance, spec.trace_width_mm, spec.fab.min_clearance_mm
    if style.meander_height_mm is not None and spec.arm.height_mm is not None and style.meander_height_mm >= spec.arm.height_mm:
        raise SpecError(
            "$.style.meander_height_mm",
            style.meander_height_mm,
            f"must be below the arm height ({spec.arm.height_mm:g} mm) so the meander stays clear of the ground",
        )
    # the arm runs at most c + w/2 below the far side; a turn's bottom stays c + w/2 above the ground edge
    deepest = cl.depth_mm - 2 * c - w
    if style.meander_height_mm is not None and style.meander_height_mm > deepest + FAB_SLACK_MM:
        raise SpecError(
            "$.style.meander_height_mm", style.meander_height_mm,
            f"does not fit the {cl.depth_mm:g} mm deep clearance area with this trace and fab clearance; at most {max(deepest, 0):.2f}",
        )
    highest = cl.depth_mm - c - w / 2
    if style.min_height_mm is not None and style.min_height_mm >= highest:
        raise SpecError("$.style.min_height_mm", style.min_height_mm, f"must be below the highest arm position ({highest:.2f} mm in this clearance area)")
    narrowest = w + c
    if style.meander_pitch_mm is not None and style.meander_pitch_mm + FAB_SLACK_MM < narrowest:
        raise SpecError("$.style.meander_pitch_mm", style.meander_pitch_mm, f"neighbouring legs would break the fab clearance; at least {narrowest:g} (trace width plus copper clearance)")


def _check_meander_start(spec: Spec) -> None:
    """The first leg of a meander placed by ``meander_start_mm`` stands one minimum pitch past
    the feed leg (checked here when the feed tap is given; the sizing keeps to it otherwise)."""
    style, w, c = spec.style, spec.trace_width_mm, spec.fab.min_clearance_mm
    start = style.meander_start_mm
    if start is None:
        return
    from footgen.geometry.layout import min_meander_pitch_mm  # layout imports this module

    least_past_feed = min_meander_pitch_mm(spec)
    tap = spec.arm.feed_short_spacing_mm
    if tap is not None and start + FAB_SLACK_MM < tap + least_past_feed:
        raise SpecError(
            "$.style.meander_start_mm", start,
            f"the first leg must stand at least {least_past_feed:g} mm past the feed leg ({tap:g} mm from the short): at least {tap + least_past_feed:g}",
        )
    if spec.arm.length_mm is not None and start >= spec.arm.length_mm:
        raise SpecError("$.style.meander_start_mm", start, f"must be shorter than the arm ({spec.arm.length_mm:g} mm) or the meander never starts")
    if style.meander_legs is not None and style.meander_pitch_mm is not None:
        from footgen.geometry.layout import short_inset_mm, SIDE_MARGIN_MM

        reach = spec.clearance.width_mm - short_inset_mm(spec) - c - SIDE_MARGIN_MM - w / 2
        last_leg = start + (style.meander_legs - 1) * style.meander_pitch_mm
        if last_leg > reach + FAB_SLACK_MM:
            most = int((reach - start) // style.meander_pitch_mm) + 1 if reach >= start else 0
            raise SpecError(
                "$.style.meander_legs", style.meander_legs,
                f"the last leg would stand {last_leg:.2f} mm from the short, beyond the {reach:.2f} mm the clearance area allows; at most {max(most, 0)} legs at this pitch and start",
            )


def _path_point(k: int) -> str:
    return f"$.style.path_mm[{k}]"


def _check_path(spec: Spec) -> None:
    """An explicit centreline: its shape (geometry.path.path_problem), its legs no closer than
    the trace width plus the fab clearance, and its copper inside the clearance area."""
    path = spec.style.path_mm
    if path is None:
        return
    from footgen.geometry.layout import SIDE_MARGIN_MM, max_arm_height_mm, min_path_pitch_mm, short_inset_mm
    from footgen.geometry.path import closest_segments, path_problem

    problem = path_problem(path)
    if problem is not None:
        k, fix = problem
        raise SpecError(_path_point(k), list(path[k]), fix)
    w, ws, c = spec.trace_width_mm, spec.short.stub_width_mm, spec.fab.min_clearance_mm
    pitch = min_path_pitch_mm(spec)
    pair = closest_segments(path)
    if pair is not None and pair[2] + FAB_SLACK_MM < pitch:
        i, j, d = pair
        what = "overlaps" if d <= FAB_SLACK_MM else f"comes {d:.3f} mm (centre to centre) from"
        raise SpecError(
            _path_point(j), list(path[j]),
            f"the segment ending here {what} the segment ending at point {i} (self-overlap or legs too close); keep at least {pitch:g} mm (trace width plus the fab clearance)",
        )
    for k in range(2, len(path)):
        seg_d = _segment_distance(((0.0, 0.0), (0.0, path[0][1])), (path[k - 1], path[k]))
        if seg_d + FAB_SLACK_MM < (w + ws) / 2 + c:
            raise SpecError(_path_point(k), list(path[k]), f"the path comes {seg_d:.3f} mm (centre to centre) from the short leg; keep at least {(w + ws) / 2 + c:g}")
    top = max_arm_height_mm(spec)
    lowest = w / 2 + c
    inset = short_inset_mm(spec)
    x_lo = -inset + c + SIDE_MARGIN_MM + w / 2
    x_hi = spec.clearance.width_mm - inset - c - SIDE_MARGIN_MM - w / 2
    for k, (x, y) in enumerate(path):
        if y > top + FAB_SLACK_MM:
            raise SpecError(_path_point(k), [x, y], f"the copper leaves the clearance area (depth {spec.clearance.depth_mm:g} mm, board edge and fab clearance included); y at most {top:.3f}")
        if y < lowest - FAB_SLACK_MM:
            raise SpecError(_path_point(k), [x, y], f"the copper comes closer to the ground edge than the fab clearance; y at least {lowest:.3f}")
        if not x_lo - FAB_SLACK_MM <= x <= x_hi + FAB_SLACK_MM:
            raise SpecError(_path_point(k), [x, y], f"the copper leaves the clearance area ({spec.clearance.width_mm:g} mm wide, the short {inset:.3f} mm from its start); x from {x_lo:.3f} to {x_hi:.3f}")


def _segment_distance(a: tuple[tuple[float, float], tuple[float, float]], b: tuple[tuple[float, float], tuple[float, float]]) -> float:
    from shapely.geometry import LineString

    return float(LineString(a).distance(LineString(b)))


#: The second band must lie at least this factor above the main band (centres): the arms of a
#: dual-band IFA are told apart by length, and bands closer than this want one wider arm or a
#: matching network (common practice, no source).
MIN_SECOND_BAND_RATIO = 1.6


def _check_second_arm(spec: Spec) -> None:
    second = spec.second_arm
    if second is None:
        return
    ratio = second.target.center_hz / spec.target.center_hz
    if ratio < MIN_SECOND_BAND_RATIO:
        raise SpecError(
            "$.second_arm.target", second.target.label,
            f"the second band must lie at least {MIN_SECOND_BAND_RATIO:g} times above the main band "
            f"({spec.target.center_hz / 1e6:.1f} MHz, so above {MIN_SECOND_BAND_RATIO * spec.target.center_hz / 1e6:.0f} MHz); "
            "put the lower band in target",
        )
    from footgen.geometry.dualband import arm_gap_min_mm  # imports this module: only when needed

    gap = arm_gap_min_mm(spec)
    w, cl, main_h = spec.trace_width_mm, spec.clearance, spec.arm.height_mm
    if second.height_mm is not None and main_h is not None and abs(second.height_mm - main_h) + FAB_SLACK_MM < gap + w:
        raise SpecError(
            "$.second_arm.height_mm", second.height_mm,
            f"the arms' copper must stay {gap:g} mm apart (copper clearance and trace width); "
            f"at most {main_h - gap - w:.3f} under or at least {main_h + gap + w:.3f} above the main arm ({main_h:g} mm)",
        )
    if second.height_mm is not None and second.height_mm + w / 2 > cl.depth_mm:
        raise SpecError("$.second_arm.height_mm", second.height_mm,
                        f"arm copper would leave the clearance area (depth {cl.depth_mm:g} mm); at most {cl.depth_mm - w / 2:g}")
    if second.meander_height_mm is not None and second.kind != "meandered":
        raise SpecError("$.second_arm.meander_height_mm", second.meander_height_mm, 'applies to kind "meandered" only; remove it or set kind')


#: The cross-field checks, run in this order by :func:`_cross_checks`.
#: The enclosure wall enters the models quasi-statically (footgen.physics.board_edge), which
#: holds while the wall is close to the copper on the scale of the wavelength: its distance at
#: most this fraction of the free-space wavelength at the band's top (common practice, no source).
MAX_ENCLOSURE_DISTANCE_PER_WAVELENGTH = 0.1


def _check_enclosure(spec: Spec) -> None:
    if spec.enclosure is None:
        return
    farthest = MAX_ENCLOSURE_DISTANCE_PER_WAVELENGTH * C0_M_PER_S / spec.target.high_hz * 1e3
    if spec.enclosure.distance_mm > farthest:
        raise SpecError("$.enclosure.distance_mm", spec.enclosure.distance_mm,
                        f"the wall model holds up to a tenth of the wavelength at the band's top; at most "
                        f"{math.floor(farthest * 10) / 10:g}, or leave out enclosure (a wall that far hardly moves the resonance)")


CROSS_CHECKS: dict[str, Callable[[Spec], None]] = {
    "path": _check_path,
    "arm_and_ground": _check_arm_and_ground,
    "enclosure": _check_enclosure,
    "vias": _check_vias,
    "meander": _check_meander,
    "meander_start": _check_meander_start,
    "second_arm": _check_second_arm,
}
