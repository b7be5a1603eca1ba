"""openEMS (FDTD) full-wave reference solves of the printed IFA cases in ``cases.json``.

Run with the project venv (or Debian's /usr/bin/python3, which has the openEMS modules):

    .venv/bin/python tests/fullwave/openems_ifa.py --case dev_straight_16 --mesh coarse
    .venv/bin/python tests/fullwave/openems_ifa.py --all --out tests/fullwave/results

Model (all copper is zero-thickness PEC on the laminate's top face, z = 0):
- ground rectangle ``x_min..x_max`` by ``-length..0``;
- short leg (its own width) from y = 0 up to the arm's top edge, feed leg (trace width) from
  y = port_gap up to the arm's top edge; each arm centreline segment widened to the trace width
  and lengthened by half a width at interior vertices (corners filled); the arm's first segment
  reaches back over the short leg's outer edge; the copper ends at the open end's centreline point;
- laminate slab (eps_r, loss tangent as conductivity at the design frequency) from z = -thickness
  to 0 under the ground and the clearance, ending ``board_margin_mm`` beyond the antenna copper;
- optional ``cover`` (an enclosure wall): a lossless dielectric slab (``eps_r``) from
  z = ``distance_mm`` to ``distance_mm + thickness_mm`` above the copper side, laterally the laminate's
  rectangle;
- a 50-ohm lumped port across the gap between the ground edge (y = 0) and the feed leg's bottom,
  excitation along y (in the board plane);
- PML_8 on all six faces behind an air margin scaled with the wavelength; a graded rectilinear
  mesh (fine cells at copper edges, target neighbour ratio GRADING_RATIO -- short gaps between
  copper edges can leave up to about 1.4, the achieved maximum is recorded in each result --,
  >= 4 cells through the laminate); end criterion END_CRITERION (energy decay).
Outputs one JSON per case: the case inputs, S11(f), Zin(f), derived resonance figures, metadata.
"""

from __future__ import annotations

import argparse
import ctypes
import datetime as _dt
import json
import math
import os
import re
import shutil
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent.parent))

from ifa_cases import (  # noqa: E402
    RESULTS_DIR,
    arm_y_above_x_m,
    band_windows_hz,
    case_by_name,
    case_to_ifa,
    load_cases,
    sweep_band_hz,
)

from footgen.constants import C0_M_PER_S, EPS0_F_PER_M  # noqa: E402
from footgen.physics.ifa import PrintedIfa  # noqa: E402

# --- solver settings (named so the results can record them) -------------------------------
PORT_RESISTANCE_OHM = 50.0
END_CRITERION = 1e-5  # energy decay to -50 dB
MAX_TIME_STEPS = 400_000
GRADING_RATIO = 1.3
SPLIT_RATIO = 1.6  # see graded_lines
# target cell at copper edges = narrowest trace width / N, per mesh level; cells grow inward at
# the grading ratio, so a trace gets 4 (coarse) or 5 (fine) cells across its width
CELLS_PER_WIDTH = {"coarse": 4, "fine": 6}
MIN_LAMINATE_CELLS = 4
# far ground-plane edges (away from the antenna) get this many times the fine edge cell
FAR_EDGE_CELL_FACTOR = 4.0
# dielectric (board) edges get this many times the fine edge cell
BOARD_EDGE_CELL_FACTOR = 2.0
# largest cell: wavelength at the highest excited frequency divided by this, in air and
# (scaled by sqrt(eps_r)) inside the board area; common practice, no source
CELLS_PER_WAVELENGTH = 20
# air between the board and the PML, as a fraction of the design wavelength (0.4 lambda is the
# 50 mm at 2.4 GHz measured sufficient in /work/shared/notes/openems-0.0.35.md)
AIR_MARGIN_WAVELENGTHS = 0.4
PML_CELLS = 8
# Gaussian excitation half-bandwidth as a fraction of the design frequency
EXCITATION_FC_FRACTION = 0.5
# a case with its own sweep (dual-band): Gaussian over the sweep, this much wider, fc < f0
EXCITATION_SWEEP_MARGIN = 1.2
EXCITATION_MAX_FC_FRACTION = 0.9
N_FREQ_POINTS = 601
NUM_THREADS = 1
# annealed copper (IEC 60028 standard, from memory), for the radiation runs' conducting sheets
COPPER_CONDUCTIVITY_S_PER_M = 5.8e7
SIM_ROOT = Path("/tmp/footgen_openems")


def log(message: str) -> None:
    """Progress line on stderr with a UTC time stamp."""
    stamp = _dt.datetime.now(_dt.timezone.utc).strftime("%H:%M:%S")
    print(f"[{stamp}] {message}", file=sys.stderr, flush=True)


# --- mesh ----------------------------------------------------------------------------------
def _size_at(x: np.ndarray, points: list[tuple[float, float]],
             intervals: list[tuple[float, float, float]], max_cell: float) -> np.ndarray:
    """Local target cell size: grows by SIZE_SLOPE per unit distance from each source.

    Equidistributing cells under a size field with slope k gives neighbour ratios exp(k), so
    k = 0.9 ln(GRADING_RATIO) keeps the grading inside the limit with some room.
    """
    size = np.full_like(x, max_cell, dtype=float)
    slope = 0.9 * math.log(GRADING_RATIO)
    for pos, cell in points:
        size = np.minimum(size, cell + slope * np.abs(x - pos))
    for lo, hi, cell in intervals:
        dist = np.maximum(0.0, np.maximum(lo - x, x - hi))
        size = np.minimum(size, cell + slope * dist)
    return size


def graded_lines(points: list[tuple[float, float]], intervals: list[tuple[float, float, float]],
                 lo: float, hi: float, max_cell: float) -> np.ndarray:
    """Mesh lines on [lo, hi] through every point position, cell sizes following the sizing field.

    ``points``: (position, cell size there); ``intervals``: (lo, hi, max cell inside).  Lines are
    placed by equidistributing the integral of 1/size between fixed lines, then any cell larger
    than SPLIT_RATIO times a neighbour (short gaps between fixed lines) is halved until none is.
    Halving a cell less than twice its neighbour's size only moves the mismatch, so ratios up to
    SPLIT_RATIO may remain; ``max_ratio`` reports the result.
    """
    fixed = sorted({p for p, _ in points if lo < p < hi} | {lo, hi})
    min_cell = min([c for _, c in points] + [max_cell])
    merged = [fixed[0]]
    for pos in fixed[1:]:
        if pos - merged[-1] < 0.3 * min_cell:
            continue
        merged.append(pos)
    if merged[-1] != hi:
        merged[-1] = hi
    lines = [merged[0]]
    for a, b in zip(merged, merged[1:]):
        xs = np.linspace(a, b, 801)
        inv = 1.0 / _size_at(xs, points, intervals, max_cell)
        cum = np.concatenate(([0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(xs))))
        n_cells = max(1, math.ceil(cum[-1] - 1e-9))
        targets = cum[-1] * np.arange(1, n_cells) / n_cells
        lines.extend(np.interp(targets, cum, xs).tolist())
        lines.append(b)
    out = np.array(lines)
    for _ in range(200):
        d = np.diff(out)
        too_big = np.zeros(d.size, dtype=bool)
        too_big[1:] |= d[1:] > SPLIT_RATIO * d[:-1]
        too_big[:-1] |= d[:-1] > SPLIT_RATIO * d[1:]
        if not too_big.any():
            break
        mids = 0.5 * (out[:-1] + out[1:])[too_big]
        out = np.sort(np.concatenate((out, mids)))
    return out


def max_ratio(lines: np.ndarray) -> float:
    """Largest neighbour-to-neighbour cell size ratio."""
    d = np.diff(lines)
    return float(np.max(np.maximum(d[1:] / d[:-1], d[:-1] / d[1:]))) if d.size > 1 else 1.0


# --- geometry -------------------------------------------------------------------------------
def copper_boxes_m(ifa: PrintedIfa) -> list[tuple[float, float, float, float]]:
    """Antenna copper as axis-parallel rectangles (x0, y0, x1, y1), ground excluded."""
    w = ifa.trace_width_m
    half = 0.5 * w
    path = ifa.arm_path_m
    arm_y_short = path[0][1]
    arm_y_feed = arm_y_above_x_m(ifa, ifa.feed_x_m)
    if ifa.second_arm_path_m:  # the feed leg runs on up to a second arm above the main one
        arm_y_feed = max(arm_y_feed, ifa.second_arm_path_m[0][1])
    boxes = [
        (ifa.short_x_m - 0.5 * ifa.short_width_m, 0.0,
         ifa.short_x_m + 0.5 * ifa.short_width_m, arm_y_short + half),
        (ifa.feed_x_m - half, ifa.port_gap_m, ifa.feed_x_m + half, arm_y_feed + half),
    ]
    n_seg = len(path) - 1
    for k, ((x0, y0), (x1, y1)) in enumerate(zip(path, path[1:])):
        if x0 != x1 and y0 != y1:
            raise ValueError(f"arm segment {k} is not axis-parallel: {(x0, y0)} -> {(x1, y1)}")
        start_ext = max(half, 0.5 * ifa.short_width_m) if k == 0 else half
        end_ext = 0.0 if k == n_seg - 1 else half
        if x0 != x1:
            sgn = 1.0 if x1 > x0 else -1.0
            xa, xb = x0 - sgn * start_ext, x1 + sgn * end_ext
            boxes.append((min(xa, xb), y0 - half, max(xa, xb), y0 + half))
        else:
            sgn = 1.0 if y1 > y0 else -1.0
            ya, yb = y0 - sgn * start_ext, y1 + sgn * end_ext
            boxes.append((x0 - half, min(ya, yb), x0 + half, max(ya, yb)))
    return boxes + _path_boxes_m(ifa.second_arm_path_m or (), w)


def _path_boxes_m(path: tuple[tuple[float, float], ...], w: float) -> list[tuple[float, float, float, float]]:
    """A second arm's centreline widened to ``w`` (it starts on the feed leg; corners filled,
    the copper ends at the last point)."""
    half = 0.5 * w
    boxes = []
    n_seg = len(path) - 1
    for k, ((x0, y0), (x1, y1)) in enumerate(zip(path, path[1:])):
        if x0 != x1 and y0 != y1:
            raise ValueError(f"second arm segment {k} is not axis-parallel: {(x0, y0)} -> {(x1, y1)}")
        end_ext = 0.0 if k == n_seg - 1 else half
        lo_x, hi_x = sorted((x0, x1))
        lo_y, hi_y = sorted((y0, y1))
        if x0 != x1:
            ext_lo, ext_hi = (half, end_ext) if x1 > x0 else (end_ext, half)
            boxes.append((lo_x - ext_lo, y0 - half, hi_x + ext_hi, y0 + half))
        else:
            ext_lo, ext_hi = (half, end_ext) if y1 > y0 else (end_ext, half)
            boxes.append((x0 - half, lo_y - ext_lo, x0 + half, hi_y + ext_hi))
    return boxes


def excitation_hz(case: dict[str, Any]) -> tuple[float, float]:
    """Gaussian excitation (f0, fc): around the design frequency, or over a case's own
    ``sweep_mhz`` (a dual-band case) with EXCITATION_SWEEP_MARGIN to spare at each end."""
    if "sweep_mhz" in case:
        lo, hi = sweep_band_hz(case)
        f0 = 0.5 * (lo + hi)
        return f0, min(EXCITATION_SWEEP_MARGIN * 0.5 * (hi - lo), EXCITATION_MAX_FC_FRACTION * f0)
    f_design = case["f_design_mhz"] * 1e6
    return f_design, EXCITATION_FC_FRACTION * f_design


def board_extent_m(ifa: PrintedIfa, margin_m: float) -> tuple[float, float, float, float]:
    """Laminate rectangle (x0, y0, x1, y1): ground plus the clearance up to the antenna + margin."""
    boxes = copper_boxes_m(ifa)
    g = ifa.ground
    x0 = min([g.x_min_m] + [b[0] - margin_m for b in boxes])
    x1 = max([g.x_max_m] + [b[2] + margin_m for b in boxes])
    y1 = max(b[3] for b in boxes) + margin_m
    return x0, -g.length_m, x1, y1


def cover_extent_m(case: dict[str, Any]) -> tuple[float, float, float] | None:
    """(eps_r, z_bottom, z_top) of the case's enclosure wall above the copper, or None."""
    cover = case.get("cover")
    if cover is None:
        return None
    gap = cover["distance_mm"] * 1e-3
    return float(cover["eps_r"]), gap, gap + cover["thickness_mm"] * 1e-3


def build_mesh(ifa: PrintedIfa, case: dict[str, Any], level: str) -> dict[str, np.ndarray]:
    """Graded x, y, z mesh lines (m) for one case at mesh ``level``."""
    f_design = case["f_design_mhz"] * 1e6
    f_max = sum(excitation_hz(case))
    lam_min = C0_M_PER_S / f_max
    eps_r = ifa.laminate.eps_r
    t = ifa.laminate.thickness_m
    fine = min(ifa.trace_width_m, ifa.short_width_m) / CELLS_PER_WIDTH[level]
    air_max = lam_min / CELLS_PER_WAVELENGTH
    board_max = lam_min / (CELLS_PER_WAVELENGTH * math.sqrt(eps_r))
    air = AIR_MARGIN_WAVELENGTHS * C0_M_PER_S / f_design
    margin = case["board_margin_mm"] * 1e-3
    bx0, by0, bx1, by1 = board_extent_m(ifa, margin)
    g = ifa.ground
    boxes = copper_boxes_m(ifa)
    far = FAR_EDGE_CELL_FACTOR * fine
    edge = BOARD_EDGE_CELL_FACTOR * fine

    xp = [(g.x_min_m, far), (g.x_max_m, far), (bx0, edge), (bx1, edge)]
    yp = [(-g.length_m, far), (0.0, fine), (ifa.port_gap_m, fine), (by1, edge)]
    for x0, y0, x1, y1 in boxes:
        xp += [(x0, fine), (x1, fine)]
        yp += [(y0, fine), (y1, fine)]
    pad = air + PML_CELLS * air_max
    mesh_x = graded_lines(xp, [(bx0, bx1, board_max)], bx0 - pad, bx1 + pad, air_max)
    mesh_y = graded_lines(yp, [(by0, by1, board_max)], by0 - pad, by1 + pad, air_max)
    lam_cell = min(t / MIN_LAMINATE_CELLS, board_max)
    zp = [(0.0, fine), (-t, min(edge, lam_cell))]
    z_intervals = [(-t, 0.0, lam_cell)]
    z_top = 0.0
    cover = cover_extent_m(case)
    if cover is not None:
        eps_c, z_lo, z_hi = cover
        cover_max = lam_min / (CELLS_PER_WAVELENGTH * math.sqrt(eps_c))
        cover_cell = min((z_hi - z_lo) / MIN_LAMINATE_CELLS, cover_max)
        zp += [(z_lo, min(edge, cover_cell)), (z_hi, min(edge, cover_cell))]
        z_intervals.append((z_lo, z_hi, cover_cell))
        z_top = z_hi
    mesh_z = graded_lines(zp, z_intervals, -t - pad, z_top + pad, air_max)
    return {"x": mesh_x, "y": mesh_y, "z": mesh_z, "fine_m": np.array(fine),
            "air_margin_m": np.array(air)}


# --- openEMS run ----------------------------------------------------------------------------
def openems_package_version() -> str:
    """Debian package version of openEMS (``dpkg-query -W openems``)."""
    try:
        out = subprocess.run(["dpkg-query", "-W", "-f=${Version}", "openems"],
                             capture_output=True, text=True, check=True)
        return out.stdout.strip()
    except (OSError, subprocess.CalledProcessError):
        return "unknown"


def _import_openems():
    # openEMS.ports (2019) uses np.float / np.int, removed in numpy 1.24
    if not hasattr(np, "float"):
        np.float = float  # type: ignore[attr-defined]
    if not hasattr(np, "int"):
        np.int = int  # type: ignore[attr-defined]
    from CSXCAD import ContinuousStructure
    from openEMS import openEMS
    return ContinuousStructure, openEMS


class _StdoutToFile:
    """Send fd 1 (openEMS's C++ output) to a file, line-buffered, echoed by ``tail`` to stderr."""

    def __init__(self, path: Path) -> None:
        self.path = path

    def __enter__(self) -> "_StdoutToFile":
        sys.stdout.flush()
        self.libc = ctypes.CDLL(None)
        self.libc.fflush(None)
        self.saved = os.dup(1)
        fd = os.open(self.path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o644)
        os.dup2(fd, 1)
        os.close(fd)
        c_stdout = ctypes.c_void_p.in_dll(self.libc, "stdout")
        self.libc.setvbuf(c_stdout, None, 1, 0)  # _IOLBF
        try:
            echo: Any = sys.stderr.fileno()
        except (AttributeError, OSError, ValueError):
            echo = subprocess.DEVNULL  # stderr captured without a file descriptor
        self.tail = subprocess.Popen(
            ["tail", "-n", "+1", "-f", f"--pid={os.getpid()}", str(self.path)],
            stdout=echo, stderr=subprocess.DEVNULL)
        return self

    def __exit__(self, *exc: object) -> None:
        self.libc.fflush(None)
        os.dup2(self.saved, 1)
        os.close(self.saved)
        time.sleep(1.5)
        self.tail.terminate()
        self.tail.wait()


def solve_case(case: dict[str, Any], level: str, keep: bool = False,
               radiation_freqs_hz: list[float] | None = None, reuse_run: bool = False) -> dict[str, Any]:
    """Build and run the openEMS model of one case; return the result record (JSON-ready).

    With ``radiation_freqs_hz`` the copper is a conducting sheet (annealed copper conductivity,
    the laminate's copper thickness) instead of PEC, a near-field box records E and H at those
    frequencies, and the record gets a ``radiation`` entry from openEMS's near-to-far-field
    transform (see ``radiation.py``).
    """
    ContinuousStructure, OpenEms = _import_openems()
    ifa = case_to_ifa(case)
    name = case["name"]
    f_design = case["f_design_mhz"] * 1e6
    mesh = build_mesh(ifa, case, level)
    mx, my, mz = mesh["x"], mesh["y"], mesh["z"]
    n_cells = (mx.size - 1) * (my.size - 1) * (mz.size - 1)
    log(f"{name}/{level}: mesh {mx.size - 1} x {my.size - 1} x {mz.size - 1} = {n_cells} cells, "
        f"min cell {np.diff(mx).min() * 1e3:.4f} / {np.diff(my).min() * 1e3:.4f} / "
        f"{np.diff(mz).min() * 1e3:.4f} mm, max ratio "
        f"{max(max_ratio(mx), max_ratio(my), max_ratio(mz)):.3f}")

    fdtd = OpenEms(NrTS=MAX_TIME_STEPS, EndCriteria=END_CRITERION)
    f0_exc, fc_exc = excitation_hz(case)
    fdtd.SetGaussExcite(f0_exc, fc_exc)
    fdtd.SetBoundaryCond([f"PML_{PML_CELLS}"] * 6)
    csx = ContinuousStructure()
    fdtd.SetCSX(csx)
    grid = csx.GetGrid()
    grid.SetDeltaUnit(1.0)
    grid.SetLines("x", mx)
    grid.SetLines("y", my)
    grid.SetLines("z", mz)

    lam = ifa.laminate
    kappa = 2 * math.pi * f_design * EPS0_F_PER_M * lam.eps_r * lam.loss_tangent
    substrate = csx.AddMaterial("laminate", epsilon=lam.eps_r, kappa=kappa)
    bx0, by0, bx1, by1 = board_extent_m(ifa, case["board_margin_mm"] * 1e-3)
    substrate.AddBox([bx0, by0, -lam.thickness_m], [bx1, by1, 0.0], priority=0)
    cover = cover_extent_m(case)
    if cover is not None:
        eps_c, z_lo, z_hi = cover
        wall = csx.AddMaterial("cover", epsilon=eps_c)
        wall.AddBox([bx0, by0, z_lo], [bx1, by1, z_hi], priority=0)
    if radiation_freqs_hz:
        copper = csx.AddConductingSheet("copper", conductivity=COPPER_CONDUCTIVITY_S_PER_M,
                                        thickness=lam.copper_thickness_m)
    else:
        copper = csx.AddMetal("copper")
    g = ifa.ground
    copper.AddBox([g.x_min_m, -g.length_m, 0.0], [g.x_max_m, 0.0, 0.0], priority=10)
    for x0, y0, x1, y1 in copper_boxes_m(ifa):
        copper.AddBox([x0, y0, 0.0], [x1, y1, 0.0], priority=10)
    half = 0.5 * ifa.trace_width_m
    port = fdtd.AddLumpedPort(1, PORT_RESISTANCE_OHM,
                              [ifa.feed_x_m - half, 0.0, 0.0],
                              [ifa.feed_x_m + half, ifa.port_gap_m, 0.0], "y", 1.0, priority=20)

    nf2ff_box = None
    if radiation_freqs_hz:
        from radiation import add_nf2ff_box
        nf2ff_box = add_nf2ff_box(fdtd, (bx0, by0, -lam.thickness_m, bx1, by1, 0.0),
                                  float(mesh["air_margin_m"]), radiation_freqs_hz)

    sim_path = SIM_ROOT / f"{name}_{level}{'_rad' if radiation_freqs_hz else ''}"
    log_path = sim_path / "openems_stdout.log"
    if reuse_run and log_path.exists():  # post-process a kept, finished run of the same model
        log(f"{name}/{level}: reading the finished run in {sim_path}")
        wall_s = float(re.findall(r"Time for \d+ iterations with [0-9.]+ cells : ([0-9.]+) sec", log_path.read_text(errors="replace"))[-1])
    else:
        if sim_path.exists():
            shutil.rmtree(sim_path)
        sim_path.mkdir(parents=True)
        log(f"{name}/{level}: running openEMS ({NUM_THREADS} thread), log {log_path}")
        t0 = time.monotonic()
        cwd = os.getcwd()  # openEMS's Run changes the working directory to sim_path
        try:
            with _StdoutToFile(log_path):
                fdtd.Run(str(sim_path), cleanup=False, verbose=1, numThreads=NUM_THREADS)
        finally:
            os.chdir(cwd)
        wall_s = time.monotonic() - t0
    text = log_path.read_text(errors="replace")
    steps_match = re.findall(r"Time for (\d+) iterations", text)
    energy_match = re.findall(r"\(-\s*([0-9.]+)\s*dB\)", text)
    dt_match = re.findall(r"[Tt]imestep \(s\)\s*:\s*([0-9.eE+-]+)", text)
    n_steps = int(steps_match[-1]) if steps_match else None
    log(f"{name}/{level}: done in {wall_s:.0f} s, {n_steps} time steps")

    f_lo, f_hi = sweep_band_hz(case)
    freqs = np.linspace(f_lo, f_hi, N_FREQ_POINTS)
    port.CalcPort(str(sim_path), freqs)
    s11 = port.uf_ref / port.uf_inc
    zin = port.uf_tot / port.if_tot
    derived = derived_figures(freqs, s11, zin)
    if "bands_mhz" in case:  # dual-band: the figures of each band's own window
        derived["bands"] = []
        for lo, hi in band_windows_hz(case):
            window = (freqs >= lo) & (freqs <= hi)
            derived["bands"].append({"window_hz": [lo, hi], **derived_figures(freqs[window], s11[window], zin[window])})
    radiation = None
    if nf2ff_box is not None:
        from radiation import far_field_summary
        f_rad = np.array(radiation_freqs_hz, dtype=float)
        port.CalcPort(str(sim_path), f_rad)
        p_acc = np.asarray(port.P_acc, dtype=float)
        radiation = far_field_summary(nf2ff_box, str(sim_path), f_rad, p_acc,
                                      port.uf_ref / port.uf_inc)
        port.CalcPort(str(sim_path), freqs)
    log(f"{name}/{level}: f_res {derived['f_res_hz'] / 1e6:.1f} MHz, "
        f"S11 min {derived['s11_min_db']:.2f} dB, band {derived['band_10db_hz']}")
    if not keep:
        shutil.rmtree(sim_path)
    record = {
        "case": case,
        "source": f"openEMS (Debian package openems {openems_package_version()}), FDTD",
        "mesh_level": level,
        "settings": {
            "cells_per_width": CELLS_PER_WIDTH[level],
            "fine_cell_mm": float(mesh["fine_m"]) * 1e3,
            "grading_ratio_limit": GRADING_RATIO,
            "cells_per_wavelength": CELLS_PER_WAVELENGTH,
            "min_laminate_cells": MIN_LAMINATE_CELLS,
            "boundary": f"PML_{PML_CELLS} on all faces",
            "air_margin_mm": float(mesh["air_margin_m"]) * 1e3,
            "end_criterion": END_CRITERION,
            "max_time_steps": MAX_TIME_STEPS,
            "excitation": {"type": "gauss", "f0_hz": f0_exc, "fc_hz": fc_exc},
            "port": {"type": "lumped", "r_ohm": PORT_RESISTANCE_OHM, "direction": "y",
                     "place": "ground edge y=0 to feed leg bottom y=port_gap, feed trace width"},
            "laminate_kappa_s_per_m": kappa,
            "copper": "PEC sheets of zero thickness at z=0 (copper_thickness not modelled)",
            "open_end": "copper ends at the arm centreline's last point",
            "threads": NUM_THREADS,
            "cover": (None if cover is None else
                      f"lossless slab eps_r {cover[0]:g}, z {cover[1] * 1e3:g} to "
                      f"{cover[2] * 1e3:g} mm, laterally the laminate's rectangle"),
        },
        "metadata": {
            "openems_package_version": openems_package_version(),
            "mesh_lines": [int(mx.size), int(my.size), int(mz.size)],
            "cells": int(n_cells),
            "min_cell_mm": [float(np.diff(m).min() * 1e3) for m in (mx, my, mz)],
            "max_cell_mm": [float(np.diff(m).max() * 1e3) for m in (mx, my, mz)],
            "max_grading_ratio": [max_ratio(m) for m in (mx, my, mz)],
            "time_steps": n_steps,
            "timestep_s": float(dt_match[-1]) if dt_match else None,
            "final_energy_db": -float(energy_match[-1]) if energy_match else None,
            "wall_time_s": round(wall_s, 1),
            "date_utc": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        },
        "derived": derived,
        "freq_hz": freqs.tolist(),
        "s11_re": s11.real.tolist(),
        "s11_im": s11.imag.tolist(),
        "zin_re": zin.real.tolist(),
        "zin_im": zin.imag.tolist(),
    }
    if radiation is not None:
        record["settings"]["copper"] = (
            f"conducting sheets at z=0, conductivity {COPPER_CONDUCTIVITY_S_PER_M:g} S/m, "
            f"thickness {lam.copper_thickness_m * 1e3:g} mm")
        record["radiation"] = radiation
    return record


# --- post-processing ------------------------------------------------------------------------
def band_10db(freqs: np.ndarray, s11_db: np.ndarray, i_min: int) -> dict[str, Any] | None:
    """The contiguous -10 dB band around index ``i_min`` (edges interpolated in dB), or None."""
    if s11_db[i_min] >= -10.0:
        return None
    lo = i_min
    while lo > 0 and s11_db[lo - 1] < -10.0:
        lo -= 1
    hi = i_min
    while hi < freqs.size - 1 and s11_db[hi + 1] < -10.0:
        hi += 1

    def cross(i: int, j: int) -> float:
        return float(freqs[i] + (-10.0 - s11_db[i]) * (freqs[j] - freqs[i]) / (s11_db[j] - s11_db[i]))

    f_lo = cross(lo - 1, lo) if lo > 0 else float(freqs[0])
    f_hi = cross(hi, hi + 1) if hi < freqs.size - 1 else float(freqs[-1])
    return {"f_lo_hz": f_lo, "f_hi_hz": f_hi, "clipped": lo == 0 or hi == freqs.size - 1}


def derived_figures(freqs: np.ndarray, s11: np.ndarray, zin: np.ndarray) -> dict[str, Any]:
    """f at min |S11|, the Im(Zin) zero crossing nearest it, and the -10 dB band."""
    s11_db = 20 * np.log10(np.abs(s11))
    i_min = int(np.argmin(s11_db))
    f_res = float(freqs[i_min])
    im = zin.imag
    idx = np.nonzero(np.signbit(im[:-1]) != np.signbit(im[1:]))[0]
    crossings = [float(freqs[i] - im[i] * (freqs[i + 1] - freqs[i]) / (im[i + 1] - im[i]))
                 for i in idx]
    f_zero = min(crossings, key=lambda f: abs(f - f_res)) if crossings else None
    return {
        "f_res_hz": f_res,
        "f_res_definition": "frequency grid point of minimum |S11| (50 ohm)",
        "s11_min_db": float(s11_db[i_min]),
        "zin_at_f_res_ohm": [float(zin[i_min].real), float(zin[i_min].imag)],
        "f_im_zin_zero_hz": f_zero,
        "im_zin_zero_crossings_hz": crossings,
        "band_10db_hz": band_10db(freqs, s11_db, i_min),
    }


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    sel = parser.add_mutually_exclusive_group(required=True)
    sel.add_argument("--case", action="append", help="case name (repeatable)")
    sel.add_argument("--all", action="store_true", help="every case in cases.json")
    parser.add_argument("--out", type=Path, default=RESULTS_DIR, help="results directory")
    parser.add_argument("--mesh", choices=sorted(CELLS_PER_WIDTH), default="fine")
    parser.add_argument("--suffix", default="", help="appended to the result file name")
    parser.add_argument("--keep", action="store_true", help="keep the openEMS run directory")
    parser.add_argument("--reuse-run", action="store_true",
                        help="post-process a kept, finished run directory of the same case instead of solving")
    parser.add_argument("--mesh-only", action="store_true", help="print mesh sizes, no solve")
    parser.add_argument("--radiation-mhz", type=float, action="append",
                        help="near-to-far-field transform at this frequency (repeatable); "
                             "copper becomes a lossy conducting sheet")
    parser.add_argument("--end-criterion", type=float, default=END_CRITERION,
                        help="energy decay that ends the run (recorded in the result)")
    parser.add_argument("--loss-tangent", type=float, default=None,
                        help="diagnostic: replace the laminate's loss tangent (recorded in the case)")
    args = parser.parse_args(argv)
    globals()["END_CRITERION"] = args.end_criterion
    cases = load_cases() if args.all else [case_by_name(n) for n in args.case]
    if args.loss_tangent is not None:
        cases = [{**c, "laminate": {**c["laminate"], "loss_tangent": args.loss_tangent}} for c in cases]
    args.out = args.out.resolve()
    args.out.mkdir(parents=True, exist_ok=True)
    for case in cases:
        if args.mesh_only:
            m = build_mesh(case_to_ifa(case), case, args.mesh)
            cells = (m["x"].size - 1) * (m["y"].size - 1) * (m["z"].size - 1)
            log(f"{case['name']}/{args.mesh}: {m['x'].size - 1} x {m['y'].size - 1} x "
                f"{m['z'].size - 1} = {cells} cells; max ratio "
                f"{max(max_ratio(m[k]) for k in 'xyz'):.3f}")
            continue
        rad = [f * 1e6 for f in args.radiation_mhz] if args.radiation_mhz else None
        record = solve_case(case, args.mesh, keep=args.keep, radiation_freqs_hz=rad, reuse_run=args.reuse_run)
        path = args.out / f"{case['name']}{args.suffix}.json"
        with open(path, "w", encoding="utf-8") as handle:
            json.dump(record, handle, indent=1)
            handle.write("\n")
        log(f"wrote {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
