"""Full-wave reference cases: load ``cases.json`` (mm) and build the SI ``PrintedIfa`` model.

Used by the openEMS driver ``openems_ifa.py`` and by ``tests/test_fullwave_reference.py``.
No openEMS import here, so the tests can load cases without the solver.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

from footgen.physics.ifa import Cover, GroundPlane, Laminate, PrintedIfa

HERE = Path(__file__).resolve().parent
CASES_PATH = HERE / "cases.json"
RESULTS_DIR = HERE / "results"
MM_TO_M = 1e-3
MHZ_TO_HZ = 1e6

# Sweep band around the design frequency, as fractions of it (chosen wide so every case's
# resonance lands inside the sweep; common practice, no source).
BAND_LO_FRACTION = 0.70
BAND_HI_FRACTION = 1.30


def load_cases(path: Path = CASES_PATH) -> list[dict[str, Any]]:
    """All cases in ``cases.json`` (a list of dicts, geometry in mm)."""
    with open(path, encoding="utf-8") as handle:
        data = json.load(handle)
    return list(data["cases"])


def case_by_name(name: str, path: Path = CASES_PATH) -> dict[str, Any]:
    """The case called ``name``; KeyError naming the known cases otherwise."""
    for case in load_cases(path):
        if case["name"] == name:
            return case
    known = ", ".join(c["name"] for c in load_cases(path))
    raise KeyError(f"case {name!r} not in {path.name}; known: {known}")


def case_to_ifa(case: dict[str, Any]) -> PrintedIfa:
    """Convert one case (mm) to the SI ``PrintedIfa`` dataclass."""
    ground = case["ground"]
    laminate = case["laminate"]
    return PrintedIfa(
        arm_path_m=tuple((x * MM_TO_M, y * MM_TO_M) for x, y in case["arm_path_mm"]),
        feed_x_m=case["feed_x_mm"] * MM_TO_M,
        short_x_m=case["short_x_mm"] * MM_TO_M,
        trace_width_m=case["trace_width_mm"] * MM_TO_M,
        short_width_m=case["short_width_mm"] * MM_TO_M,
        port_gap_m=case["port_gap_mm"] * MM_TO_M,
        ground=GroundPlane(
            x_min_m=ground["x_min_mm"] * MM_TO_M,
            x_max_m=ground["x_max_mm"] * MM_TO_M,
            length_m=ground["length_mm"] * MM_TO_M,
        ),
        laminate=Laminate(
            eps_r=laminate["eps_r"],
            thickness_m=laminate["thickness_mm"] * MM_TO_M,
            loss_tangent=laminate["loss_tangent"],
            copper_thickness_m=laminate["copper_thickness_mm"] * MM_TO_M,
        ),
        # the openEMS board ends board_margin_mm beyond the arm copper's top edge
        board_edge_y_m=(max(y for _, y in case["arm_path_mm"] + case.get("second_arm_path_mm", []))
                        + 0.5 * case["trace_width_mm"] + case["board_margin_mm"]) * MM_TO_M,
        second_arm_path_m=(tuple((x * MM_TO_M, y * MM_TO_M) for x, y in case["second_arm_path_mm"])
                           if case.get("second_arm_path_mm") else None),
        cover=None if "cover" not in case else Cover(
            eps_r=case["cover"]["eps_r"],
            thickness_m=case["cover"]["thickness_mm"] * MM_TO_M,
            distance_m=case["cover"]["distance_mm"] * MM_TO_M,
        ),
    )


def sweep_band_hz(case: dict[str, Any]) -> tuple[float, float]:
    """(f_lo, f_hi) of the stored sweep for a case: ``sweep_mhz`` when the case gives one (a
    dual-band case sweeps both bands), else 0.7-1.3 times the design frequency."""
    if "sweep_mhz" in case:
        lo, hi = case["sweep_mhz"]
        return lo * MHZ_TO_HZ, hi * MHZ_TO_HZ
    f_design_hz = case["f_design_mhz"] * MHZ_TO_HZ
    return BAND_LO_FRACTION * f_design_hz, BAND_HI_FRACTION * f_design_hz


def arm_y_above_x_m(ifa: PrintedIfa, x_m: float) -> float:
    """Centreline y of the horizontal arm segment that passes above ``x_m``.

    Raises ValueError when no horizontal arm segment spans ``x_m`` (the leg would not meet the arm).
    """
    path = ifa.arm_path_m
    for (x0, y0), (x1, y1) in zip(path, path[1:]):
        if y0 == y1 and min(x0, x1) <= x_m <= max(x0, x1):
            return y0
    raise ValueError(f"no horizontal arm segment passes above x = {x_m * 1e3:.3f} mm")


def result_path(name: str, results_dir: Path = RESULTS_DIR) -> Path:
    """Where the stored openEMS result of case ``name`` lives."""
    return results_dir / f"{name}.json"


def band_windows_hz(case: dict[str, Any]) -> list[tuple[float, float]]:
    """The frequency windows a dual-band case's resonances are searched in (``bands_mhz``), or
    the whole sweep for a single-band case."""
    if "bands_mhz" in case:
        return [(lo * MHZ_TO_HZ, hi * MHZ_TO_HZ) for lo, hi in case["bands_mhz"]]
    return [sweep_band_hz(case)]
