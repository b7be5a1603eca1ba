"""Put a generated antenna footprint on a board, or replace an existing one (no GUI).

The footprint origin is the feed point on the ground edge, so "placing" means putting the
origin on a point of the board's ground edge with a rotation.  Replacing keeps what the board
already decided for the old instance: position, rotation, side, lock, reference, schematic
link and the net of every pad (by pad number).  New instances get pad 1 on the RF net and all
pads 2 on the GND net, by name (made if the board lacks them).

``pcbnew`` is imported inside the functions that need it, so the board-free helpers (project
library table, stackup reading) work without KiCad.  Headless use (and the tests)::

    python3 -m footgen.plugin.placement BOARD.kicad_pcb SPEC.json [--sites | --site N | --at X Y]
        [--rotation DEG] [--focus X Y] [--reference AE1] [--rf-net RF_ANT] [--gnd-net GND]
        [--force] [--allow-violations]
    python3 -m footgen.plugin.placement --describe BOARD.kicad_pcb

The zones are not refilled (press B in KiCad, or ``footgen.plugin.board.fill_zones`` in a
fresh process: KiCad 9 cannot load the same board twice in one process).
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import re
import shutil
import sys
from dataclasses import asdict, dataclass, field
from pathlib import Path

from . import cli_runner

#: Library nickname and folder (inside the project) that receive the generated footprints.
PROJECT_LIBRARY = cli_runner.DEFAULT_LIBRARY
#: Folder (inside the project) holding the specs and footgen's build outputs.
WORK_DIR_NAME = "footgen"
DEFAULT_RF_NET = "RF_ANT"
DEFAULT_GND_NET = "GND"
DEFAULT_REFERENCE = "AE1"
FEED_PAD = "1"
#: footgen's record of the files it wrote into a folder (see footgen/outputs.py).
MANIFEST_NAME = "footgen-manifest.json"
#: Largest deviation of a polygon from a pad's true outline in :func:`describe` (mm).
OUTLINE_MAX_ERROR_MM = 0.001


class PlacementError(RuntimeError):
    """The footprint could not be loaded, found or placed."""


class RuleCheckFailed(PlacementError):
    """footgen's rule check found errors, so nothing was placed; ``build`` says which."""

    def __init__(self, message: str, build: cli_runner.BuildResult) -> None:
        super().__init__(message)
        self.build = build


@dataclass(frozen=True)
class Placement:
    """Where and how a footprint instance sits on the board (KiCad mm, y down)."""

    position_mm: tuple[float, float]
    rotation_deg: float
    reference: str
    flipped: bool = False
    locked: bool = False
    pad_nets: dict[str, str] = field(default_factory=dict)  # pad number -> net name


@dataclass(frozen=True)
class Outcome:
    """Result of :func:`regenerate`: the build, the placement used and whether it replaced."""

    build: cli_runner.BuildResult
    placement: Placement
    replaced: bool
    library_added: bool
    footprint_file: Path


# --- project library (no pcbnew) -------------------------------------------------------------

_LIB_NAME_RE = re.compile(r'\(lib\s+\(name\s+"?([^")\s]+)"?\)')


def library_table_names(text: str) -> list[str]:
    """Nicknames of the libraries in an fp-lib-table text."""
    return _LIB_NAME_RE.findall(text)


def ensure_project_library(project_dir: Path, nickname: str = PROJECT_LIBRARY) -> bool:
    """Add ``<project>/<nickname>.pretty`` to the project fp-lib-table if no library of that
    nickname is there yet (creating the table if needed).  True if the table was changed."""
    table = Path(project_dir) / "fp-lib-table"
    entry = f'  (lib (name "{nickname}")(type "KiCad")(uri "${{KIPRJMOD}}/{nickname}.pretty")(options "")(descr "footgen antenna footprints"))\n'
    if table.exists():
        text = table.read_text("utf-8")
        if nickname in library_table_names(text):
            return False
        end = text.rstrip().rfind(")")
        if not text.lstrip().startswith("(fp_lib_table") or end < 0:
            raise PlacementError(f"{table}: not a KiCad footprint library table; fix or delete it")
        text = text[:end].rstrip() + "\n" + entry + ")\n"
    else:
        text = "(fp_lib_table\n  (version 7)\n" + entry + ")\n"
    tmp = table.with_name(".fp-lib-table.tmp")
    tmp.write_text(text, "utf-8")
    os.replace(tmp, table)
    return True


def _manifest_hash(folder: Path, relpath: str) -> str | None:
    """SHA-256 that footgen recorded for ``relpath`` in ``folder``'s footgen-manifest.json."""
    path = Path(folder) / MANIFEST_NAME
    try:
        return json.loads(path.read_text("utf-8")).get("files", {}).get(relpath)
    except (OSError, json.JSONDecodeError, AttributeError):
        return None


def install_footprint(built: Path, project_dir: Path, *, previous: bytes | None, force: bool = False, nickname: str = PROJECT_LIBRARY) -> Path:
    """Copy a built ``.kicad_mod`` into the project library.  An installed file that is
    neither ``previous`` (what footgen built last time) nor what a ``footgen build -o
    <project>`` recorded in the project's manifest was edited by hand: refused unless ``force``."""
    target = Path(project_dir) / f"{nickname}.pretty" / Path(built).name
    if target.exists() and not force:
        current = target.read_bytes()
        known = {hashlib.sha256(Path(built).read_bytes()).hexdigest(), _manifest_hash(Path(project_dir), f"{nickname}.pretty/{target.name}")}
        if previous is not None:
            known.add(hashlib.sha256(previous).hexdigest())
        if hashlib.sha256(current).hexdigest() not in known:
            raise PlacementError(f"{target} was edited by hand since footgen wrote it; keep your edits elsewhere or use force")
    target.parent.mkdir(parents=True, exist_ok=True)
    tmp = target.with_name(f".{target.name}.tmp")
    shutil.copyfile(built, tmp)
    os.replace(tmp, target)
    return target


# --- stackup (no pcbnew: KiCad 9's Python cannot read the stackup, the board file can) ------

_TOKEN_RE = re.compile(r'\(|\)|"(?:[^"\\]|\\.)*"|[^\s()]+')


def _sexpr(text: str) -> list:
    """Parse one KiCad s-expression into nested lists of strings."""
    stack: list[list] = [[]]
    for tok in _TOKEN_RE.findall(text):
        if tok == "(":
            stack.append([])
        elif tok == ")":
            done = stack.pop()
            stack[-1].append(done)
        else:
            stack[-1].append(tok[1:-1] if tok.startswith('"') else tok)
    return stack[0][0] if stack[0] else []


def _children(node: list, key: str) -> list[list]:
    return [c for c in node[1:] if isinstance(c, list) and c and c[0] == key]


def _setup_block(board_text: str) -> str | None:
    start = board_text.find("(setup")
    if start < 0:
        return None
    depth = 0
    for i in range(start, len(board_text)):
        ch = board_text[i]
        if ch == "(":
            depth += 1
        elif ch == ")":
            depth -= 1
            if depth == 0:
                return board_text[start : i + 1]
    return None


def stackup_laminate(board_text: str) -> dict | None:
    """Laminate fields for a spec from a board file's stackup: ``thickness_mm`` = sum of the
    dielectric layers, ``eps_r`` and ``loss_tangent`` = thickness-weighted means of the
    dielectric layers that state them.  None if the board has no stackup with dielectrics."""
    block = _setup_block(board_text)
    if block is None:
        return None
    stackups = _children(_sexpr(block), "stackup")
    if not stackups:
        return None
    total = eps_sum = eps_thick = tan_sum = tan_thick = 0.0
    for layer in _children(stackups[0], "layer"):
        kinds = _children(layer, "type")
        if not kinds or kinds[0][1] not in ("core", "prepreg"):
            continue
        # a dielectric may hold sub-layers: (thickness ..)(epsilon_r ..) repeat per sub-layer
        thickness = [float(t[1]) for t in _children(layer, "thickness")]
        eps = [float(e[1]) for e in _children(layer, "epsilon_r")]
        tan = [float(t[1]) for t in _children(layer, "loss_tangent")]
        for i, t_mm in enumerate(thickness):
            total += t_mm
            if i < len(eps):
                eps_sum += eps[i] * t_mm
                eps_thick += t_mm
            if i < len(tan):
                tan_sum += tan[i] * t_mm
                tan_thick += t_mm
    if total <= 0.0:
        return None
    out = {"thickness_mm": round(total, 6)}
    if eps_thick > 0:
        out["eps_r"] = round(eps_sum / eps_thick, 4)
    if tan_thick > 0:
        out["loss_tangent"] = round(tan_sum / tan_thick, 5)
    return out


# --- the board's design rules against the footprint's fab limits (no pcbnew) ----------------

#: Board Setup value (mm) -> (the spec's fab limit it bounds, what KiCad calls it).
BOARD_RULES = {
    "copper_clearance_mm": ("min_clearance_mm", "copper clearance"),
    "hole_clearance_mm": ("min_clearance_mm", "copper to hole clearance"),
    "track_width_mm": ("min_trace_mm", "minimum track width"),
    "edge_clearance_mm": ("min_copper_to_edge_mm", "copper to edge clearance"),
    "min_drill_mm": ("min_drill_mm", "minimum through hole"),
    "hole_to_hole_mm": ("min_hole_to_hole_mm", "hole to hole clearance"),
    "annular_ring_mm": ("min_annular_ring_mm", "minimum annular width"),
}
#: Board and fab values closer than this are equal (mm): both are typed to 1 um.
RULE_TOL_MM = 1e-4


def rules_warnings(board_rules: dict, fab: dict) -> list[str]:
    """One line for every Board Setup rule stricter than the fab limit the footprint was built
    to (``fab``: the resolved limits a build reports in its check JSON)."""
    out = []
    for key, (field_name, label) in BOARD_RULES.items():
        board_mm, fab_mm = board_rules.get(key), fab.get(field_name)
        if board_mm is None or fab_mm is None or board_mm <= fab_mm + RULE_TOL_MM:
            continue
        out.append(f"the board's {label} is {board_mm:g} mm, the footprint was built to fab.{field_name} {fab_mm:g} mm: "
                   "KiCad's DRC may flag it; build with the board's rules as fab limits")
    return out


def fab_from_board(spec: dict, board_rules: dict) -> dict:
    """A copy of ``spec`` whose fab limits are the board's rules (the strictest rule for each
    limit several rules bound); rules the board leaves at 0 change nothing."""
    limits: dict[str, float] = {}
    for key, (field_name, _label) in BOARD_RULES.items():
        value = board_rules.get(key) or 0.0
        if value > 0.0:
            limits[field_name] = max(value, limits.get(field_name, 0.0))
    out = json.loads(json.dumps(spec))
    out.setdefault("fab", {"profile": "standard"}).update(limits)
    return out


# --- board work (pcbnew) ---------------------------------------------------------------------

def _to_mm(value: int) -> float:
    import pcbnew

    return round(pcbnew.ToMM(value), 6) + 0.0


def find_instances(board, name: str, library: str = PROJECT_LIBRARY) -> list:
    """Footprints on the board made from ``library:name``."""
    out = []
    for fp in board.GetFootprints():
        fpid = fp.GetFPID()
        if str(fpid.GetLibItemName()) == name and str(fpid.GetLibNickname()) == library:
            out.append(fp)
    return out


def find_reference(board, reference: str):
    for fp in board.GetFootprints():
        if fp.GetReference() == reference:
            return fp
    return None


def capture(footprint) -> Placement:
    """The placement of an existing instance."""
    pos = footprint.GetPosition()
    return Placement(
        position_mm=(_to_mm(pos.x), _to_mm(pos.y)),
        rotation_deg=round(footprint.GetOrientationDegrees(), 6) + 0.0,
        reference=footprint.GetReference(),
        flipped=bool(footprint.IsFlipped()),
        locked=bool(footprint.IsLocked()),
        pad_nets={p.GetNumber(): p.GetNetname() for p in footprint.Pads() if p.GetNetname()},
    )


def ensure_nets(board, rf_net: str = DEFAULT_RF_NET, gnd_net: str = DEFAULT_GND_NET) -> dict:
    """{"rf": net, "gnd": net} by name, adding missing nets to the board."""
    return {"rf": ensure_net(board, rf_net), "gnd": ensure_net(board, gnd_net)}


def ensure_net(board, name: str):
    import pcbnew

    net = board.FindNet(name)
    if net is None:
        net = pcbnew.NETINFO_ITEM(board, name)
        board.Add(net)
    return net


def load_footprint(pretty_dir: Path, name: str, nickname: str = PROJECT_LIBRARY):
    """Load ``name`` from a ``.pretty`` folder, with its FPID set to ``nickname:name``."""
    import pcbnew

    footprint = pcbnew.FootprintLoad(str(pretty_dir), name)
    if footprint is None:
        raise PlacementError(f"KiCad could not load footprint {name!r} from {pretty_dir}")
    footprint.SetFPID(pcbnew.LIB_ID(nickname, name))
    return footprint


def apply_placement(board, footprint, placement: Placement, *, rf_net: str = DEFAULT_RF_NET, gnd_net: str = DEFAULT_GND_NET) -> None:
    """Put ``footprint`` (not yet on the board) where ``placement`` says and wire its pads:
    each pad takes the net ``placement.pad_nets`` names for its number, else pad 1 ``rf_net``
    and pads 2 ``gnd_net`` (role nets are added to the board only when a pad needs them)."""
    import pcbnew

    from .board import assign_nets

    x_mm, y_mm = placement.position_mm
    footprint.SetPosition(pcbnew.VECTOR2I(pcbnew.FromMM(x_mm), pcbnew.FromMM(y_mm)))
    if placement.flipped:  # flip first: flipping mirrors the orientation
        footprint.Flip(footprint.GetPosition(), pcbnew.FLIP_DIRECTION_TOP_BOTTOM)
    footprint.SetOrientationDegrees(float(placement.rotation_deg))
    footprint.SetReference(placement.reference)
    board.Add(footprint)
    if any(pad.GetNumber() not in placement.pad_nets for pad in footprint.Pads()):
        assign_nets(footprint, ensure_nets(board, rf_net, gnd_net))
    for pad in footprint.Pads():
        kept = placement.pad_nets.get(pad.GetNumber())
        if kept:
            pad.SetNet(ensure_net(board, kept))
    footprint.SetLocked(placement.locked)


def place_new(board, pretty_dir: Path, name: str, placement: Placement, *, rf_net: str = DEFAULT_RF_NET, gnd_net: str = DEFAULT_GND_NET):
    """Add a new instance of ``name`` at ``placement``; pad 1 on ``rf_net``, pads 2 on ``gnd_net``."""
    footprint = load_footprint(pretty_dir, name)
    apply_placement(board, footprint, placement, rf_net=rf_net, gnd_net=gnd_net)
    return footprint


def replace(board, old, pretty_dir: Path, name: str, *, rf_net: str = DEFAULT_RF_NET, gnd_net: str = DEFAULT_GND_NET):
    """Swap ``old`` for a fresh load of ``name``, keeping placement, reference, nets and the
    schematic link; returns the new footprint."""
    kept = capture(old)
    footprint = load_footprint(pretty_dir, name)
    footprint.SetPath(old.GetPath())
    for getter, setter in (("GetSheetname", "SetSheetname"), ("GetSheetfile", "SetSheetfile")):
        if hasattr(old, getter) and hasattr(footprint, setter):
            getattr(footprint, setter)(getattr(old, getter)())
    _remove(board, old)
    apply_placement(board, footprint, kept, rf_net=rf_net, gnd_net=gnd_net)
    return footprint


def _remove(board, item) -> None:
    """Take ``item`` off the board.  In the editor, KiCad's undo list keeps the removed item,
    so it is only detached; headless, SWIG's ``Remove`` would hand it to Python, which frees it
    while the board still refers to it (the next ``board.Zones()`` crashes): KiCad deletes it."""
    import pcbnew

    if pcbnew.IsActionRunning():
        board.Remove(item)
    else:
        board.Delete(item)


def apply_site(spec: dict, site: dict) -> dict:
    """A copy of ``spec`` built for ``site``: its arm direction, the edge distance it found, the
    ground pour's width and length at the site, and no footgen-side rotation (KiCad rotates)."""
    out = json.loads(json.dumps(spec))
    clearance = out.setdefault("clearance", {})
    clearance["arm_direction"] = site["arm_direction"]
    clearance["edge_distance_mm"] = site["edge_distance_mm"]
    ground = out.setdefault("ground_plane", {})
    for key in ("width_mm", "length_mm"):
        if site.get(f"ground_{key}"):
            ground[key] = site[f"ground_{key}"]
    if "output" in out:
        out["output"].pop("rotation_deg", None)
    return out


def _locate(board, footprint, spec: dict, *, site: dict | None, placement: Placement, rf_net: str, gnd_net: str, cmd) -> Placement:
    """Ask the placement core where ``footprint`` goes (``site``) or whether ``placement`` is
    free; raise :class:`PlacementError` with the core's reasons when the clearance area does
    not fit there."""
    from . import board_view

    view = board_view.board_view(board, gnd_net, rf_net=rf_net)
    args = board_view.size_args(spec) + ["--box-lo-mm", repr(board_view.clearance_box_lo(footprint))]
    if site is not None:
        args += ["--site", json.dumps(site)]
    else:
        args += ["--at", *map(repr, placement.position_mm), "--rotation", repr(float(placement.rotation_deg))]
    answer = board_view.ask_core(view, args, cmd)
    if answer["problems"]:
        x, y = answer["feed_mm"]
        raise PlacementError(f"not placed at ({x:g}, {y:g}) mm: " + "; ".join(answer["problems"]))
    return Placement(tuple(answer["feed_mm"]), float(answer["rotation_deg"]), placement.reference, placement.flipped, placement.locked, dict(placement.pad_nets))


def default_placement(board, name: str, reference: str | None = None) -> tuple[Placement, bool]:
    """Where the dialog proposes to put ``name``: the existing instance (True: it will be
    replaced in place), else the board's grid origin if set, else the centre of the board
    outline, with rotation 0."""
    existing = find_reference(board, reference) if reference else None
    if existing is None:
        found = find_instances(board, name)
        existing = found[0] if found else None
    if existing is not None:
        return capture(existing), True
    origin = board.GetDesignSettings().GetGridOrigin()
    if origin.x == 0 and origin.y == 0:
        origin = board.GetBoardEdgesBoundingBox().GetCenter()
    return Placement((_to_mm(origin.x), _to_mm(origin.y)), 0.0, reference or next_reference(board)), False


def next_reference(board, prefix: str = "AE") -> str:
    """The first free ``AE<n>`` reference on the board."""
    used = {fp.GetReference() for fp in board.GetFootprints()}
    n = 1
    while f"{prefix}{n}" in used:
        n += 1
    return f"{prefix}{n}"


def project_dir_of(board) -> Path:
    name = board.GetFileName()
    if not name:
        raise PlacementError("save the board first: the footprint library goes into its project folder")
    return Path(name).resolve().parent


def regenerate(
    board,
    spec_path: Path,
    *,
    placement: Placement | None = None,
    reference: str | None = None,
    rf_net: str = DEFAULT_RF_NET,
    gnd_net: str = DEFAULT_GND_NET,
    force: bool = False,
    allow_violations: bool = False,
    cmd: list[str] | None = None,
    project_dir: Path | None = None,
    site: dict | None = None,
    check_place: bool = True,
) -> Outcome:
    """Build ``spec_path`` with the footgen command into ``<project>/footgen/``, install the
    footprint into ``<project>/footgen_antennas.pretty`` (adding it to the project fp-lib-table
    if missing) and put it on the board: every instance of that footprint (or the one called
    ``reference``) is replaced in place; with none, a new one goes to ``placement``.

    ``site`` (one of ``footgen sites``' answers, see :mod:`.board_view`) places a new instance
    there instead; the spec file must already be built for it (:func:`apply_site`).  A new
    instance is refused (with the reason) where its clearance area leaves the board, overlaps
    other copper or footprints or has no ground pour behind it, unless ``check_place`` is off.

    Raises :class:`PlacementError` when the rule check fails and ``allow_violations`` is off
    (nothing on the board changes then), or when there is nothing to replace and no placement.
    """
    project = Path(project_dir) if project_dir else project_dir_of(board)
    spec = cli_runner.read_spec(spec_path)
    name = str(spec["name"])
    targets = _targets(board, name, reference)
    if site is not None and placement is None:
        placement = Placement((0.0, 0.0), 0.0, reference or next_reference(board))
    if not targets and placement is None:
        raise PlacementError(f"no footprint {PROJECT_LIBRARY}:{name} on the board to replace; give a position")
    work = project / WORK_DIR_NAME
    staged = work / f"{spec.get('library', PROJECT_LIBRARY)}.pretty" / f"{name}.kicad_mod"
    previous = staged.read_bytes() if staged.exists() else None
    result = cli_runner.build(spec_path, work, cmd, force=force, allow_violations=allow_violations)
    if not result.footprint_path.exists() or (not result.ok and not allow_violations):
        raise RuleCheckFailed(result.summary() + "\nNo footprint placed; fix the spec or allow violations.", result)
    installed = install_footprint(result.footprint_path, project, previous=previous, force=force)
    added = ensure_project_library(project)
    pretty = installed.parent
    if targets:
        placed = [replace(board, old, pretty, name, rf_net=rf_net, gnd_net=gnd_net) for old in targets]
        return Outcome(result, capture(placed[0]), True, added, installed)
    if reference:
        placement = Placement(placement.position_mm, placement.rotation_deg, reference, placement.flipped, placement.locked, dict(placement.pad_nets))
    footprint = load_footprint(pretty, name)
    if check_place or site is not None:
        placement = _locate(board, footprint, spec, site=site, placement=placement, rf_net=rf_net, gnd_net=gnd_net, cmd=cmd)
    apply_placement(board, footprint, placement, rf_net=rf_net, gnd_net=gnd_net)
    return Outcome(result, capture(footprint), False, added, installed)


def _targets(board, name: str, reference: str | None) -> list:
    """The instances to replace: the one called ``reference`` (which must be a footgen
    footprint), else every instance of ``name``."""
    if not reference:
        return find_instances(board, name)
    found = find_reference(board, reference)
    if found is None:
        return []
    if str(found.GetFPID().GetLibNickname()) != PROJECT_LIBRARY:
        raise PlacementError(f"{reference} is {found.GetFPIDAsString()}, not a footgen antenna: choose another reference")
    return [found]


def describe(board) -> list[dict]:
    """Every footprint's FPID, placement and pad-1 copper (board mm), as JSON-able data."""
    import pcbnew

    out = []
    for fp in board.GetFootprints():
        entry = asdict(capture(fp))
        entry["fpid"] = fp.GetFPIDAsString()
        feed = [p for p in fp.Pads() if p.GetNumber() == FEED_PAD]
        rings = []
        if feed:
            poly = pcbnew.SHAPE_POLY_SET()
            feed[0].TransformShapeToPolygon(poly, pcbnew.F_Cu, 0, pcbnew.FromMM(OUTLINE_MAX_ERROR_MM), pcbnew.ERROR_INSIDE)
            for i in range(poly.OutlineCount()):
                ring = poly.Outline(i)
                rings.append([[_to_mm(ring.CPoint(j).x), _to_mm(ring.CPoint(j).y)] for j in range(ring.PointCount())])
        entry["feed_copper_mm"] = rings
        out.append(entry)
    return out


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(prog="python3 -m footgen.plugin.placement", description="Place or regenerate a footgen antenna on a KiCad board (headless).")
    parser.add_argument("board", type=Path)
    parser.add_argument("spec", type=Path, nargs="?")
    parser.add_argument("--describe", action="store_true", help="Print the board's footprints as JSON and exit.")
    parser.add_argument("--at", nargs=2, type=float, metavar=("X_MM", "Y_MM"), help="Feed point for a new instance (board mm).")
    parser.add_argument("--rotation", type=float, default=0.0, help="Rotation of a new instance, degrees CCW.")
    parser.add_argument("--reference", help="Reference of the instance to replace or to create.")
    parser.add_argument("--rf-net", default=DEFAULT_RF_NET)
    parser.add_argument("--gnd-net", default=DEFAULT_GND_NET)
    parser.add_argument("--sites", action="store_true", help="Print the places along the outline where the spec's clearance area fits (JSON) and exit.")
    parser.add_argument("--site", type=int, metavar="N", help="Place a new instance at proposal N (0 = nearest the focus); the adapted spec goes to <project>/footgen/.")
    parser.add_argument("--site-json", help="Place a new instance at this site (one of --sites' answers, as JSON).")
    parser.add_argument("--focus", nargs=2, type=float, metavar=("X_MM", "Y_MM"), help="Sort proposals by distance from this point (default: board centre).")
    parser.add_argument("--force", action="store_true")
    parser.add_argument("--allow-violations", action="store_true")
    args = parser.parse_args(argv)
    import pcbnew

    board = pcbnew.LoadBoard(str(args.board))
    if args.describe:
        print(json.dumps(describe(board)))
        return 0
    if args.spec is None:
        parser.error("give SPEC.json (or --describe)")
    placement = Placement(tuple(args.at), args.rotation, args.reference or DEFAULT_REFERENCE) if args.at else None
    spec_path, site = args.spec, None
    try:
        if args.site_json:
            site = json.loads(args.site_json)
        elif args.sites or args.site is not None:
            from .board_view import propose

            spec = cli_runner.read_spec(spec_path)
            sites = propose(board, spec, args.gnd_net, rf_net=args.rf_net, focus_mm=args.focus)
            if args.sites:
                print(json.dumps(sites))
                return 0
            if not 0 <= args.site < len(sites):
                raise PlacementError(f"--site {args.site}: the board offers {len(sites)} site(s) for this clearance area (0..{len(sites) - 1})")
            site = sites[args.site]
            spec_path = cli_runner.write_spec(apply_site(spec, site), project_dir_of(board) / WORK_DIR_NAME / f"{spec['name']}.json")
        outcome = regenerate(
            board, spec_path, placement=placement, reference=args.reference, rf_net=args.rf_net, gnd_net=args.gnd_net,
            force=args.force, allow_violations=args.allow_violations, site=site,
        )
    except (PlacementError, cli_runner.FootgenNotFound, cli_runner.FootgenFailed) as exc:
        print(f"footgen plugin: error: {exc}", file=sys.stderr)
        return 1
    pcbnew.SaveBoard(str(args.board), board)
    summary = {"replaced": outcome.replaced, "library_added": outcome.library_added, "placement": asdict(outcome.placement), "check_ok": outcome.build.ok}
    print(json.dumps(summary))
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
