"""``footgen sites``: where a clearance area fits on a board (the placement core's door).

Both KiCad front doors write what they read from the board as JSON (outline, ground pours,
obstacles, focus; see footgen.geometry.siting.view_from_dict) and call this command, so the
geometry lives in one place and KiCad's own Python needs no shapely.
"""

from __future__ import annotations

import json
from pathlib import Path

import click

from footgen.errors import FootgenError


class BoardViewError(FootgenError):
    """The board description handed to ``footgen sites`` cannot be read."""


def _load_view(path: Path):
    from footgen.geometry.siting import view_from_dict

    try:
        data = json.loads(Path(path).read_text("utf-8"))
        return view_from_dict(data)
    except (OSError, ValueError, KeyError, TypeError) as exc:
        raise BoardViewError(f"{path}: not a board description ({type(exc).__name__}: {exc}); write it with the footgen KiCad plugin") from None


@click.command("sites")
@click.argument("view", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--width-mm", type=float, required=True, help="Clearance area width along the edge (spec clearance.width_mm).")
@click.option("--depth-mm", type=float, required=True, help="Clearance area depth (spec clearance.depth_mm).")
@click.option("--edge-distance-mm", type=float, default=0.0, show_default=True, help="Least distance from the area to the board edge.")
@click.option("--site", "site_json", default=None, help="A site (JSON from an earlier run): print its feed point and problems.")
@click.option("--at", "at_mm", nargs=2, type=float, default=None, help="Check a feed point instead (board mm); needs --rotation.")
@click.option("--rotation", "rotation_deg", type=float, default=None, help="KiCad rotation of the footprint for --at (degrees).")
@click.option("--box-lo-mm", type=float, default=None, help="Built footprint's clearance area start along its x (mm, < 0).")
def sites_cmd(view: Path, width_mm: float, depth_mm: float, edge_distance_mm: float, site_json: str | None, at_mm, rotation_deg: float | None, box_lo_mm: float | None) -> None:
    """Print (JSON) the places along the board outline where the clearance area fits, nearest
    the focus first, or check one place with --site or --at."""
    from footgen.geometry import siting

    if width_mm <= 0 or depth_mm <= 0:
        raise BoardViewError(f"--width-mm {width_mm:g} / --depth-mm {depth_mm:g}: give positive sizes in mm")
    board = _load_view(view)
    if site_json is None and not at_mm:
        found = siting.propose_sites(board, width_mm=width_mm, depth_mm=depth_mm, edge_distance_mm=edge_distance_mm)
        click.echo(json.dumps({"sites": [s.to_dict() for s in found]}))
        return
    if box_lo_mm is None:
        raise BoardViewError("--box-lo-mm missing: give where the built footprint's clearance area starts (mm)")
    if site_json is not None:
        try:
            site = siting.Site.from_dict(json.loads(site_json))
        except (ValueError, KeyError, TypeError) as exc:
            raise BoardViewError(f"--site: not a site from footgen sites ({exc})") from None
        feed = siting.feed_point(site, box_lo_mm=box_lo_mm, width_mm=width_mm)
        rotation_deg = site.rotation_deg
    else:
        if rotation_deg is None:
            raise BoardViewError("--rotation missing: give the footprint's KiCad rotation for --at (degrees)")
        feed = (float(at_mm[0]), float(at_mm[1]))
    problems = siting.check_placement(board, feed_mm=feed, rotation_deg=rotation_deg, box_lo_mm=box_lo_mm, width_mm=width_mm, depth_mm=depth_mm)
    click.echo(json.dumps({"feed_mm": list(feed), "rotation_deg": rotation_deg, "problems": problems}))
