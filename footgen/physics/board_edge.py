"""Laminate that ends at the board edge beyond the antenna: an equivalent laterally infinite slab.

A printed IFA sits at a board edge: the laminate under the clearance ends a little beyond the arm
(``PrintedIfa.board_edge_y_m``), so part of the arm's fringing field runs in air where a laterally
infinite slab would hold dielectric.  The thin-wire solver's slab
(:class:`footgen.physics.mom.Slab`) is laterally infinite, and so are the line models.  We keep
those and hand them an *equivalent* permittivity instead: for each horizontal arm piece, the
``eps_r'`` whose infinite slab gives the arm's quasi-static cross-section (strip beside the ground
edge, :mod:`footgen.physics.quasistatic2d`) the same capacitance as the real slab ending at the
board edge.  The arm's value is the length-weighted mean over its horizontal pieces (vertical
meander pieces and the legs follow the arm).  This is effective-medium scaling in the sense of
quasi-TEM line theory (equal capacitance per length, e.g. Collin, "Foundations for Microwave
Engineering", 2nd ed. 1992, sec. 3.10, from memory), applied per cross-section.

What it leaves out: the board's other edges (the laminate is taken to reach far beyond the
ground's sides and back), and the ground plane's own loading sees the equivalent slab too.
Measured against openEMS (tests/fullwave, development case dev_straight_16 with the laminate
ending 2 mm and 15 mm beyond the copper): openEMS moved the resonance by 1.74 %, this model
by 1.69 %.

Numbers in, numbers out (SI); memoised on rounded arguments (the memo can be handed between
processes by the caller: :func:`solved_cross_sections`, :func:`add_solved`).  Estimates never replace
measurement; radio products must meet local radio regulations and RF-exposure limits.
"""

from __future__ import annotations

import dataclasses

from footgen.errors import SolverError
from footgen.physics.ifa import Laminate, PrintedIfa
from footgen.physics.quasistatic2d import strip_beside_ground_edge_board_capacitance_f_per_m

#: Arguments are rounded to this (m) before the memoised solve: the layout snaps copper to 1 nm,
#: and cross-sections closer than this give the same equivalent permittivity to < 1e-6.
ROUND_M = 1e-8
#: Fixed-point steps of the equivalent-permittivity search (each step is one 2-D solve; the
#: capacitance is nearly linear in eps_r - 1, two steps leave < 1e-4 relative error, measured).
EQUIVALENT_EPS_STEPS = 2
#: Horizontal arm pieces are those whose end heights differ by less than this (m).
HORIZONTAL_TOL_M = 1e-9
#: Pieces whose copper comes closer than this to the ground edge are left out of the mean (m).
MIN_GAP_M = 1e-6


#: Solved cross-sections: (width, gap, eps_r, thickness, board gap) -> equivalent eps_r.  The
#: caller may carry these between processes (:func:`solved_cross_sections`, :func:`add_solved`):
#: each costs about a second of 2-D solves and depends only on these arguments and the code.
_SOLVED: dict[tuple[float, float, float, float, float], float] = {}


def solved_cross_sections() -> dict[tuple[float, float, float, float, float], float]:
    """A copy of the equivalent permittivities solved (or added) so far in this process."""
    return dict(_SOLVED)


def add_solved(entries: dict[tuple[float, float, float, float, float], float]) -> None:
    """Take equivalent permittivities solved earlier by this same code (keys as in
    :func:`solved_cross_sections`)."""
    for key, eps in entries.items():
        _SOLVED.setdefault(tuple(float(v) for v in key), float(eps))


def _equivalent_eps_r(width_m: float, gap_m: float, eps_r: float, thickness_m: float, board_gap_m: float) -> float:
    key = (width_m, gap_m, eps_r, thickness_m, board_gap_m)
    if key not in _SOLVED:
        _SOLVED[key] = _solve_equivalent_eps_r(*key)
    return _SOLVED[key]


def _solve_equivalent_eps_r(width_m: float, gap_m: float, eps_r: float, thickness_m: float, board_gap_m: float) -> float:
    cap = strip_beside_ground_edge_board_capacitance_f_per_m
    c_air = cap(width_m, gap_m, 1.0, thickness_m, None)
    target = cap(width_m, gap_m, eps_r, thickness_m, board_gap_m) / c_air - 1.0
    eps = eps_r
    for _ in range(EQUIVALENT_EPS_STEPS):
        # capacitance ~ linear in (eps - 1): scale (eps - 1) by the ratio still missing
        eps = 1.0 + (eps - 1.0) * target / (cap(width_m, gap_m, eps, thickness_m, None) / c_air - 1.0)
    return eps


def equivalent_eps_r_strip_at_board_edge(
    width_m: float, height_m: float, eps_r: float, thickness_m: float, board_gap_m: float
) -> float:
    """Permittivity of a laterally infinite slab that gives a strip of width ``width_m`` whose
    centreline is ``height_m`` above a coplanar ground edge the same quasi-static capacitance as a
    slab (``eps_r``, ``thickness_m``) ending ``board_gap_m`` beyond the strip's far edge."""
    gap = height_m - 0.5 * width_m
    if not (width_m > 0.0 and gap > 0.0 and thickness_m > 0.0 and eps_r >= 1.0):
        raise SolverError(
            f"strip width {width_m!r} m at height {height_m!r} m on eps_r {eps_r!r}, thickness "
            f"{thickness_m!r} m: need a positive width, the strip clear of the ground edge, eps_r >= 1")
    if not board_gap_m >= 0.0:
        raise SolverError(f"board_gap_m = {board_gap_m!r}: the arm copper reaches past the board edge; "
                          "keep it inside the board")
    if eps_r == 1.0:
        return 1.0
    return _equivalent_eps_r(_rounded(width_m), _rounded(gap), float(eps_r), _rounded(thickness_m), _rounded(board_gap_m))


def _rounded(length_m: float) -> float:
    return round(length_m / ROUND_M) * ROUND_M


def equivalent_laminate(ifa: PrintedIfa) -> Laminate:
    """The laminate the laterally infinite models should use for ``ifa``: ``ifa.laminate`` itself
    when the board edge is not given, else one with the length-weighted equivalent ``eps_r`` of
    the arms' horizontal pieces (loss tangent and thicknesses unchanged)."""
    lam = ifa.laminate
    if ifa.board_edge_y_m is None:
        return lam
    pieces: dict[float, float] = {}
    pieces_m = list(zip(ifa.arm_path_m, ifa.arm_path_m[1:]))
    if ifa.second_arm_path_m:  # a dual-band IFA's second arm sits beside the same edge
        pieces_m += list(zip(ifa.second_arm_path_m, ifa.second_arm_path_m[1:]))
    for (x0, y0), (x1, y1) in pieces_m:
        # a piece whose copper reaches the ground edge (a wide trace low in a meander) has no
        # strip-beside-edge cross-section: it is left out of the mean
        if abs(y1 - y0) < HORIZONTAL_TOL_M and y0 - 0.5 * ifa.trace_width_m > MIN_GAP_M:
            pieces[y0] = pieces.get(y0, 0.0) + abs(x1 - x0)
    total = sum(pieces.values())
    if not total > 0.0:
        return lam  # no piece to scale by: keep the laminate as it is
    eps = sum(
        length * equivalent_eps_r_strip_at_board_edge(
            ifa.trace_width_m, y, lam.eps_r, lam.thickness_m, ifa.board_edge_y_m - y - 0.5 * ifa.trace_width_m)
        for y, length in pieces.items()
    ) / total
    return dataclasses.replace(lam, eps_r=eps)
