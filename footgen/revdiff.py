"""Revision diff: what changed between two specs, two builds or two footgen ``.kicad_mod`` files.

The result is a table of numbers old -> new (the sized dimensions and every spec field that
changed), the arm length and copper area change, and an overlay drawing of both coppers
(deterministic SVG and PNG).  Footprint files are read with a small s-expression reader of
our own: the copper of pad 1 (footgen's custom antenna pad) is the union of its primitives.
"""

from __future__ import annotations

import json
import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import shapely
from shapely.geometry import Polygon, box
from shapely.geometry.base import BaseGeometry

from footgen import sizing
from footgen.errors import FootgenError, SpecError
from footgen.numfmt import fixed
from footgen.geometry.layout import Layout, build_layout
from footgen.spec import Spec, load_spec

#: Numbers closer than this are "unchanged" (mm, mm^2 or the field's unit; 1 nm is the grid).
UNCHANGED_ABS = 1e-6
PNG_DPI = 150
OLD_COLOR = "#4a5568"
NEW_COLOR = "#d9822b"
#: Sized dimensions compared for two layouts: (key in Layout.dims, label, unit).
DIM_ROWS: tuple[tuple[str, str, str], ...] = (
    ("arm_length_mm", "arm length", "mm"),
    ("arm_height_mm", "arm height", "mm"),
    ("feed_short_spacing_mm", "feed tap", "mm"),
    ("trace_width_mm", "trace width", "mm"),
    ("meander_turns", "meander turns", ""),
    ("clearance_width_mm", "clearance width", "mm"),
    ("clearance_depth_mm", "clearance depth", "mm"),
    ("copper_area_mm2", "copper area", "mm^2"),
)

#: A dual-band antenna's second arm (compared when either layout has one; 0 for none).
SECOND_ARM_ROWS: tuple[tuple[str, str, str], ...] = (
    ("second_arm_length_mm", "second arm length", "mm"),
    ("second_arm_height_mm", "second arm height", "mm"),
)

#: Dimensions that are counts (shown without decimals).
COUNT_DIMS = frozenset({"meander_turns"})


class FootprintReadError(FootgenError):
    """A ``.kicad_mod`` file cannot be read as a footgen antenna footprint."""


@dataclass(frozen=True)
class Row:
    """One compared quantity."""

    name: str
    old: object
    new: object
    unit: str = ""

    @property
    def changed(self) -> bool:
        if isinstance(self.old, (int, float)) and isinstance(self.new, (int, float)) and not isinstance(self.old, bool):
            return abs(float(self.new) - float(self.old)) > UNCHANGED_ABS
        return self.old != self.new

    @property
    def delta(self) -> float | None:
        if isinstance(self.old, (int, float)) and isinstance(self.new, (int, float)) and not isinstance(self.old, bool):
            return float(self.new) - float(self.old)
        return None


@dataclass(frozen=True)
class RevisionDiff:
    old_label: str
    new_label: str
    rows: tuple[Row, ...]  # sized numbers / footprint numbers
    spec_changes: tuple[Row, ...]  # spec fields that differ (JSON paths)
    old_copper: BaseGeometry = field(repr=False)
    new_copper: BaseGeometry = field(repr=False)

    def row(self, name: str) -> Row:
        return next(r for r in self.rows if r.name == name)

    @property
    def arm_change_mm(self) -> float | None:
        names = {r.name for r in self.rows}
        return self.row("arm length").delta if "arm length" in names else None

    @property
    def copper_area_change_mm2(self) -> float:
        return float(self.new_copper.area - self.old_copper.area)

    @property
    def bbox_change_mm(self) -> tuple[float, float]:
        """Change of the copper's bounding-box width and height (mm)."""
        (ow, oh), (nw, nh) = _extent(self.old_copper), _extent(self.new_copper)
        return nw - ow, nh - oh

    @property
    def changed(self) -> bool:
        return any(r.changed for r in self.rows) or any(r.changed for r in self.spec_changes)


def _extent(geom: BaseGeometry) -> tuple[float, float]:
    x0, y0, x1, y1 = geom.bounds
    return x1 - x0, y1 - y0


# --------------------------------------------------------------------------------- specs


def flatten(data: object, prefix: str = "$") -> dict[str, object]:
    """JSON leaves by path (``$.arm.length_mm``, ``$.history[0].note``)."""
    if isinstance(data, dict):
        out: dict[str, object] = {}
        for key, value in data.items():
            out.update(flatten(value, f"{prefix}.{key}"))
        return out
    if isinstance(data, list):
        out = {}
        for i, value in enumerate(data):
            out.update(flatten(value, f"{prefix}[{i}]"))
        return out
    return {prefix: data}


def spec_changes(old: dict, new: dict) -> tuple[Row, ...]:
    """Spec fields (JSON leaves) that differ; a missing field shows as None."""
    a, b = flatten(old), flatten(new)
    rows = [Row(path, a.get(path), b.get(path)) for path in sorted(set(a) | set(b))]
    return tuple(r for r in rows if r.changed)


def diff_layouts(old: Layout, new: Layout, old_label: str, new_label: str, changes: tuple[Row, ...] = ()) -> RevisionDiff:
    kind = {key: int if key in COUNT_DIMS else float for key, _, _ in DIM_ROWS}
    rows = [Row(label, kind[key](old.dims[key]), kind[key](new.dims[key]), unit) for key, label, unit in DIM_ROWS]
    rows += [Row(label, float(old.dims.get(key, 0.0)), float(new.dims.get(key, 0.0)), unit)
             for key, label, unit in SECOND_ARM_ROWS if key in old.dims or key in new.dims]
    rows += _extent_rows(old.antenna, new.antenna)
    return RevisionDiff(old_label, new_label, tuple(rows), changes, old.antenna, new.antenna)


def _extent_rows(old: BaseGeometry, new: BaseGeometry) -> list[Row]:
    (ow, oh), (nw, nh) = _extent(old), _extent(new)
    return [Row("copper bounding-box width", ow, nw, "mm"), Row("copper bounding-box height", oh, nh, "mm")]


def diff_specs(old: Spec, new: Spec, model: str = sizing.DEFAULT_MODEL) -> RevisionDiff:
    """Size and lay out both specs with ``model`` and compare."""
    layouts = [build_layout(s, sizing.size(s, model=model)) for s in (old, new)]
    return diff_layouts(*layouts, _spec_label(old), _spec_label(new), spec_changes(old.raw, new.raw))


def diff_builds(old, new) -> RevisionDiff:
    """Compare two :class:`footgen.build.BuildResult`."""
    return diff_layouts(old.layout, new.layout, _spec_label(old.spec), _spec_label(new.spec), spec_changes(old.spec.raw, new.spec.raw))


def _spec_label(spec: Spec) -> str:
    return f"{spec.name} rev {spec.revision}"


# --------------------------------------------------------------------------------- .kicad_mod

_TOKEN = re.compile(r'\s*(?:(\()|(\))|"((?:[^"\\]|\\.)*)"|([^\s()"]+))')


def parse_sexpr(text: str) -> list:
    """A KiCad s-expression as nested lists of strings (quoted strings unquoted)."""
    stack: list[list] = [[]]
    pos = 0
    text = text.rstrip()
    while pos < len(text):
        m = _TOKEN.match(text, pos)
        if m is None:
            raise FootprintReadError(f"s-expression: unexpected character at offset {pos}; not a KiCad file")
        pos = m.end()
        if m.group(1):
            stack.append([])
        elif m.group(2):
            if len(stack) < 2:
                raise FootprintReadError(f"s-expression: unbalanced ')' at offset {pos}; the file is damaged")
            done = stack.pop()
            stack[-1].append(done)
        elif m.group(3) is not None:
            stack[-1].append(m.group(3).replace('\\"', '"'))
        else:
            stack[-1].append(m.group(4))
    if len(stack) != 1 or len(stack[0]) != 1:
        raise FootprintReadError("s-expression: unbalanced '(' or several top-level forms; the file is truncated or damaged")
    return stack[0][0]


def _children(node: list, head: str) -> list[list]:
    return [c for c in node[1:] if isinstance(c, list) and c and c[0] == head]


def _child(node: list, head: str) -> list | None:
    found = _children(node, head)
    return found[0] if found else None


def read_pad_copper(path: Path, number: str = "1") -> Polygon:
    """Copper of pad ``number`` in a ``.kicad_mod`` (mm, y up as in footgen's layout): the union
    of its custom primitives (``gr_poly``) and its anchor rectangle, placed at the pad position.

    KiCad stores y down and pad angles counter-clockwise on screen, i.e. clockwise in y-down
    numbers; both are undone here.
    """
    path = Path(path)
    try:
        text = path.read_text("utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise FootprintReadError(f"{path}: cannot be read ({exc.__class__.__name__}); give a .kicad_mod written by footgen") from None
    try:
        tree = parse_sexpr(text)
    except FootprintReadError as exc:
        raise FootprintReadError(f"{path}: {exc}") from None
    if not (isinstance(tree, list) and tree and tree[0] in ("footprint", "module")):
        raise FootprintReadError(f"{path}: not a KiCad footprint (no footprint form); give a .kicad_mod file")
    pads = [p for p in _children(tree, "pad") if len(p) > 1 and p[1] == number]
    if not pads:
        raise FootprintReadError(f"{path}: has no pad {number!r}; give a footprint written by footgen")
    pad = pads[0]
    at = _child(pad, "at")
    size = _child(pad, "size")
    if at is None or size is None:
        raise FootprintReadError(f"{path}: pad {number!r} lacks its position or size; the file is damaged")
    try:
        px, py = float(at[1]), float(at[2])
        angle = float(at[3]) if len(at) > 3 else 0.0
        w, h = float(size[1]), float(size[2])
        parts: list[BaseGeometry] = [box(-w / 2, -h / 2, w / 2, h / 2)]
        primitives = _child(pad, "primitives")
        for poly in _children(primitives, "gr_poly") if primitives else []:
            pts = _child(poly, "pts")
            coords = [(float(xy[1]), float(xy[2])) for xy in (_children(pts, "xy") if pts else [])]
            if len(coords) >= 3:
                parts.append(Polygon(coords).buffer(0))
    except (ValueError, IndexError):
        raise FootprintReadError(f"{path}: pad {number!r} holds a non-numeric coordinate; the file is damaged") from None
    local = shapely.union_all(parts)
    # Pad frame (y down) -> footprint frame (y down): rotate by -angle in y-down numbers, shift.
    placed = shapely.transform(local, lambda xy: _place(xy, px, py, angle))
    # y down -> y up
    result = shapely.transform(placed, lambda xy: xy * [1.0, -1.0])
    result = shapely.normalize(shapely.geometry.polygon.orient(result, 1.0)) if isinstance(result, Polygon) else result
    if not isinstance(result, Polygon):
        raise FootprintReadError(f"{path}: the copper of pad {number!r} falls apart into several pieces; not a footgen antenna pad")
    return result


def _place(xy, px: float, py: float, angle_deg: float):
    import numpy as np

    a = math.radians(angle_deg)
    c, s = math.cos(a), math.sin(a)
    # KiCad: positive angle turns counter-clockwise on screen, which in y-down numbers is
    # (x, y) -> (x c + y s, -x s + y c).
    x, y = xy[:, 0], xy[:, 1]
    return np.column_stack([x * c + y * s + px, -x * s + y * c + py])


def diff_footprints(old_path: Path, new_path: Path) -> RevisionDiff:
    """Compare pad 1's copper of two footgen ``.kicad_mod`` files (area, bounding box)."""
    old, new = read_pad_copper(old_path), read_pad_copper(new_path)
    rows = [Row("copper area", old.area, new.area, "mm^2")] + _extent_rows(old, new)
    return RevisionDiff(Path(old_path).name, Path(new_path).name, tuple(rows), (), old, new)


def _diff_spec_files(old: Path, new: Path, model: str) -> RevisionDiff:
    return diff_specs(load_spec(old), load_spec(new), model=model)


def _diff_footprint_files(old: Path, new: Path, model: str) -> RevisionDiff:
    return diff_footprints(old, new)


#: What each kind of input file is compared by (both files must be of one kind).
DIFFERS: dict[str, Callable[[Path, Path, str], RevisionDiff]] = {
    ".json": _diff_spec_files,
    ".kicad_mod": _diff_footprint_files,
}


def diff_files(old: Path, new: Path, model: str = sizing.DEFAULT_MODEL) -> RevisionDiff:
    """Compare two spec files (``.json``) or two footgen footprints (``.kicad_mod``)."""
    kinds = {Path(old).suffix.lower(), Path(new).suffix.lower()}
    if len(kinds) != 1 or not kinds <= set(DIFFERS):
        raise SpecError("OLD/NEW", f"{Path(old).name}, {Path(new).name}", "give two spec files (.json) or two footprints (.kicad_mod)")
    return DIFFERS[kinds.pop()](Path(old), Path(new), model)


# --------------------------------------------------------------------------------- output


def _fmt_delta(row: Row, delta: float) -> str:
    counts = isinstance(row.old, int) and isinstance(row.new, int)
    return fixed(delta, 0 if counts else 4, sign=True)


def _fmt(value: object) -> str:
    if value is None:
        return "(none)"
    if isinstance(value, float):
        return fixed(value, 4)
    if isinstance(value, str):
        return value
    return json.dumps(value)


def diff_markdown(diff: RevisionDiff) -> str:
    """The diff as Markdown tables."""
    lines = [f"## Changes {diff.old_label} -> {diff.new_label}", ""]
    if not diff.changed:
        lines += ["No change.", ""]
    lines += ["| quantity | old | new | change |", "| --- | --- | --- | --- |"]
    for r in diff.rows:
        d = r.delta
        change = f"{_fmt_delta(r, d)} {r.unit}".rstrip() if d is not None and r.changed else "-"
        lines.append(f"| {r.name} | {_fmt(r.old)} {r.unit} | {_fmt(r.new)} {r.unit} | {change} |".replace("  |", " |"))
    if diff.spec_changes:
        lines += ["", "| spec field | old | new |", "| --- | --- | --- |"]
        lines += [f"| `{r.name}` | {_fmt(r.old)} | {_fmt(r.new)} |" for r in diff.spec_changes]
    lines.append("")
    return "\n".join(lines)


def diff_lines(diff: RevisionDiff) -> list[str]:
    """Plain text lines for a terminal."""
    out = [f"{diff.old_label} -> {diff.new_label}" + ("" if diff.changed else ": no change")]
    for r in diff.rows:
        d = r.delta
        mark = f" ({_fmt_delta(r, d)} {r.unit})".replace(" )", ")") if d is not None and r.changed else ""
        out.append(f"  {r.name}: {_fmt(r.old)} -> {_fmt(r.new)} {r.unit}{mark}".rstrip())
    out += [f"  {r.name}: {_fmt(r.old)} -> {_fmt(r.new)}" for r in diff.spec_changes]
    return out


def overlay_svg_png(diff: RevisionDiff) -> tuple[bytes, bytes]:
    """Overlay of both coppers (old outlined grey, new filled copper), feed point at the origin."""
    from matplotlib.figure import Figure

    from footgen.plots import figure_bytes, patches

    fig = Figure(figsize=(8.0, 4.5))
    ax = fig.add_subplot(1, 1, 1)
    patches(ax, diff.old_copper, facecolor="none", edgecolor=OLD_COLOR, lw=1.0, ls="--", label=diff.old_label)
    patches(ax, diff.new_copper, facecolor=NEW_COLOR, edgecolor="black", lw=0.4, alpha=0.55, label=diff.new_label)
    x0, y0, x1, y1 = shapely.union_all([diff.old_copper, diff.new_copper]).bounds
    ax.set_xlim(x0 - 1.0, x1 + 1.0)
    ax.set_ylim(y0 - 1.0, y1 + 1.5)
    ax.set_aspect("equal")
    arm = diff.arm_change_mm
    text = f"copper area {fixed(diff.copper_area_change_mm2, 3, sign=True)} mm^2" + (f", arm {fixed(arm, 3, sign=True)} mm" if arm is not None else "")
    ax.set_title(f"{diff.old_label} (dashed) -> {diff.new_label} (filled)\n{text}", fontsize=9)
    ax.legend(loc="lower right", fontsize=7)
    ax.set_xlabel("x (mm), feed point at 0", fontsize=7)
    ax.set_ylabel("y (mm)", fontsize=7)
    ax.tick_params(labelsize=7)
    fig.tight_layout()
    return figure_bytes(fig)
