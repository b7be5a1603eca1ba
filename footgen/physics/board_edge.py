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

An enclosure wall over the copper (``PrintedIfa.cover``, a lossless plastic layer at a distance
above the copper, ending at the board edge like the laminate) enters the same way: the arm's
cross-section gets the wall as a second dielectric layer in the 2-D solver, and the equivalent
slab is the one whose capacitance matches the laminate and the wall together
(:func:`equivalent_eps_r_strip_covered`).  The wall's effect is taken as a ratio of two solves on
one grid (with the wall and with the wall's permittivity set to 1), so a wall of eps_r 1 gives
the uncovered slab exactly.  Since the wall is lossless, the equivalent slab's loss tangent is
scaled so that the laminate's share of the quasi-static loss stays what it is without the wall.
Measured against openEMS (tests/fullwave, three boards with a wall and their twins without):
the resonance shift within 5.1 % of openEMS's (-4.52 vs -4.50 %, -1.54 vs -1.47 %, -2.60 vs
-2.75 %).  Left out: a wall on the other side of the board, curved or ribbed walls, wall loss.

Numbers in, numbers out (SI); memoised on rounded arguments (the memo can be handed between
processes by the caller: :func:`solved_cross_sections`, :func:`add_solved`).  Estimates never replace
measurement; radio products must meet local radio regulations and RF-exposure limits.
"""

from __future__ import annotations

import dataclasses
import math

from footgen.errors import SolverError
from footgen.physics.ifa import Cover, Laminate, PrintedIfa
from footgen.physics.quasistatic2d import (
    Layer,
    strip_beside_ground_edge_board_capacitance_f_per_m,
)

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
    target = cap(width_m, gap_m, eps_r, thickness_m, board_gap_m) / cap(width_m, gap_m, 1.0, thickness_m, None) - 1.0
    return _infinite_slab_eps_r(width_m, gap_m, thickness_m, target, eps_r)


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


def _horizontal_pieces(ifa: PrintedIfa) -> dict[float, float]:
    """Centreline height -> length of the arms' horizontal pieces clear of the ground edge (a
    dual-band IFA's second arm sits beside the same edge)."""
    pieces: dict[float, float] = {}
    segments = list(zip(ifa.arm_path_m, ifa.arm_path_m[1:]))
    if ifa.second_arm_path_m:
        segments += list(zip(ifa.second_arm_path_m, ifa.second_arm_path_m[1:]))
    for (x0, y0), (x1, y1) in segments:
        # a piece whose copper reaches the ground edge (a wide trace low in a meander) has no
        # strip-beside-edge cross-section: it is left out of the mean
        if abs(y1 - y0) < HORIZONTAL_TOL_M and y0 - 0.5 * ifa.trace_width_m > MIN_GAP_M:
            pieces[y0] = pieces.get(y0, 0.0) + abs(x1 - x0)
    return pieces


def equivalent_laminate(ifa: PrintedIfa) -> Laminate:
    """The laminate the laterally infinite models should use for ``ifa``: ``ifa.laminate`` itself
    when neither the board edge nor a cover is given, else one with the length-weighted
    equivalent ``eps_r`` of the arm's horizontal pieces (thicknesses unchanged; the loss tangent
    unchanged without a cover, scaled as :func:`equivalent_eps_r_strip_covered` says with one)."""
    if ifa.cover is not None:
        return _covered_equivalent_laminate(ifa, ifa.cover)
    lam = ifa.laminate
    if ifa.board_edge_y_m is None:
        return lam
    pieces = _horizontal_pieces(ifa)
    total = sum(pieces.values())
    if not total > 0.0:
        return lam  # no piece to scale by: keep the laminate as it is
    eps = sum(
        length * equivalent_eps_r_strip_at_board_edge(
            ifa.trace_width_m, y, lam.eps_r, lam.thickness_m, ifa.board_edge_y_m - y - 0.5 * ifa.trace_width_m)
        for y, length in pieces.items()
    ) / total
    return dataclasses.replace(lam, eps_r=eps)


# ---------------------------------------------------------------------------------------------
# enclosure wall over the copper (PrintedIfa.cover)

#: Solved covered cross-sections: (width, gap, eps_r, thickness, board gap or None, cover eps_r,
#: cover distance, cover thickness) -> (equivalent eps_r, loss-tangent factor).
_SOLVED_COVERED: dict[tuple, tuple[float, float]] = {}


def solved_covered_cross_sections() -> dict[tuple, tuple[float, float]]:
    """A copy of the covered cross-sections solved (or added) so far in this process."""
    return dict(_SOLVED_COVERED)


def add_solved_covered(entries: dict[tuple, tuple[float, float]]) -> None:
    """Take covered cross-sections solved earlier by this same code (keys as in
    :func:`solved_covered_cross_sections`)."""
    for key, value in entries.items():
        _SOLVED_COVERED.setdefault(tuple(None if v is None else float(v) for v in key),
                                   (float(value[0]), float(value[1])))


def _check_cover(cover: Cover) -> None:
    if not (math.isfinite(cover.eps_r) and cover.eps_r >= 1.0):
        raise SolverError(f"enclosure wall eps_r = {cover.eps_r!r}: relative permittivity must be finite and >= 1")
    for name, value in (("enclosure wall thickness_m", cover.thickness_m), ("enclosure wall distance_m", cover.distance_m)):
        if not (math.isfinite(value) and value > 0.0):
            raise SolverError(f"{name} = {value!r}: must be finite and > 0")


def equivalent_eps_r_strip_covered(
    width_m: float, height_m: float, eps_r: float, thickness_m: float, board_gap_m: float | None,
    cover: Cover,
) -> tuple[float, float]:
    """``(eps_r', loss factor)`` of the laterally infinite slab, without a wall, that gives the
    strip (width ``width_m``, centreline ``height_m`` above the coplanar ground edge) the same
    quasi-static capacitance as the slab (``eps_r``, ``thickness_m``) ending ``board_gap_m``
    beyond the strip (``None``: no board edge) under the wall ``cover``, which ends where the
    slab does.

    The wall multiplies the capacitance by ``C(wall) / C(wall at eps_r 1)``, both on one grid;
    that factor is applied to the board-edge capacitance of :func:`equivalent_eps_r_strip_at_board_edge`.
    The loss factor scales the laminate's loss tangent so that the imaginary part of the
    capacitance (quasi-static, ``C`` linear in each layer's permittivity) is the laminate's
    alone: its share of ``C - C_air`` under the wall over its share in the equivalent slab,
    relative to the same ratio without the wall (which the uncovered model takes as 1).
    """
    gap = height_m - 0.5 * width_m
    if not (width_m > 0.0 and gap > 0.0 and thickness_m > 0.0 and eps_r >= 1.0):
        raise SolverError(
            f"strip width {width_m!r} m at height {height_m!r} m on eps_r {eps_r!r}, thickness "
            f"{thickness_m!r} m: need a positive width, the strip clear of the ground edge, eps_r >= 1")
    if board_gap_m is not None and not board_gap_m >= 0.0:
        raise SolverError(f"board_gap_m = {board_gap_m!r}: the arm copper reaches past the board edge; "
                          "keep it inside the board")
    _check_cover(cover)
    key = (_rounded(width_m), _rounded(gap), float(eps_r), _rounded(thickness_m),
           None if board_gap_m is None else _rounded(board_gap_m),
           float(cover.eps_r), _rounded(cover.distance_m), _rounded(cover.thickness_m))
    if key not in _SOLVED_COVERED:
        _SOLVED_COVERED[key] = _solve_covered(*key)
    return _SOLVED_COVERED[key]


def _infinite_slab_eps_r(width_m: float, gap_m: float, thickness_m: float, target: float, start: float) -> float:
    """eps_r of the laterally infinite slab whose ``C / C_air - 1`` is ``target`` (fixed point)."""
    cap = strip_beside_ground_edge_board_capacitance_f_per_m
    c_air = cap(width_m, gap_m, 1.0, thickness_m, None)
    eps = start
    for _ in range(EQUIVALENT_EPS_STEPS):
        # capacitance ~ linear in (eps - 1): scale (eps - 1) by the ratio still missing
        eps = 1.0 + (eps - 1.0) * target / (cap(width_m, gap_m, eps, thickness_m, None) / c_air - 1.0)
    return eps


def _solve_covered(width_m: float, gap_m: float, eps_r: float, thickness_m: float, board_gap_m: float | None,
                   cover_eps_r: float, cover_distance_m: float, cover_thickness_m: float) -> tuple[float, float]:
    cap = strip_beside_ground_edge_board_capacitance_f_per_m
    c_air = cap(width_m, gap_m, 1.0, thickness_m, None)
    target_bare = cap(width_m, gap_m, eps_r, thickness_m, board_gap_m) / c_air - 1.0
    eps_bare = (eps_r if board_gap_m is None
                else _infinite_slab_eps_r(width_m, gap_m, thickness_m, target_bare, eps_r))
    if cover_eps_r == 1.0:
        return eps_bare, 1.0
    wall = Layer(cover_eps_r, cover_distance_m, cover_thickness_m)
    air_wall = Layer(1.0, cover_distance_m, cover_thickness_m)
    c_lam_wall = cap(width_m, gap_m, eps_r, thickness_m, board_gap_m, wall)
    c_lam_air = cap(width_m, gap_m, eps_r, thickness_m, board_gap_m, air_wall)
    c_wall = cap(width_m, gap_m, 1.0, thickness_m, board_gap_m, wall)
    c_none = cap(width_m, gap_m, 1.0, thickness_m, board_gap_m, air_wall)
    target = (1.0 + target_bare) * c_lam_wall / c_lam_air - 1.0
    eps = _infinite_slab_eps_r(width_m, gap_m, thickness_m, target, eps_bare)
    if eps_r == 1.0:
        return eps, 1.0
    share_ratio = (c_lam_wall - c_wall) / (c_lam_air - c_none)

    def slab_loss(t: float, e: float) -> float:  # Im C / C_air of an equivalent slab, per tan delta
        return t * e / (e - 1.0)

    return eps, share_ratio * slab_loss(target_bare, eps_bare) / slab_loss(target, eps)


def _covered_equivalent_laminate(ifa: PrintedIfa, cover: Cover) -> Laminate:
    lam = ifa.laminate
    pieces = _horizontal_pieces(ifa)
    total = sum(pieces.values())
    if not total > 0.0:
        raise SolverError("the arm has no horizontal piece clear of the ground edge: "
                          "the enclosure wall cannot be mapped to an equivalent laminate")
    eps = 0.0
    loss = 0.0
    for y, length in pieces.items():
        board_gap = None if ifa.board_edge_y_m is None else ifa.board_edge_y_m - y - 0.5 * ifa.trace_width_m
        eps_piece, loss_piece = equivalent_eps_r_strip_covered(
            ifa.trace_width_m, y, lam.eps_r, lam.thickness_m, board_gap, cover)
        eps += length * eps_piece
        loss += length * loss_piece
    return dataclasses.replace(lam, eps_r=eps / total, loss_tangent=lam.loss_tangent * loss / total)
