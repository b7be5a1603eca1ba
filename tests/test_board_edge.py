"""The laminate ending at the board edge: 2-D finite-slab capacitance and the equivalent slab.

Outside truth for the effect in 3-D is openEMS (tests/test_fullwave_reference.py,
test_board_edge_shift_matches_openems); here the 2-D pieces are checked for the properties any
correct solution has, and the equivalent permittivity for doing what it claims.
"""

from __future__ import annotations

import dataclasses

import pytest

from footgen.errors import SolverError
from footgen.physics.board_edge import equivalent_eps_r_strip_at_board_edge, equivalent_laminate
from footgen.physics.ifa import GroundPlane, Laminate, PrintedIfa
from footgen.physics.quasistatic2d import strip_beside_ground_edge_board_capacitance_f_per_m as cap

W, GAP, T, ER = 0.8e-3, 4.6e-3, 1.6e-3, 4.4
#: The equivalent slab must give the finite-slab capacitance to this (two fixed-point steps).
EQUIVALENT_REL_TOL = 1e-3


def test_finite_slab_lies_between_air_and_the_infinite_slab_and_grows_with_the_board() -> None:
    """Less dielectric, less capacitance: C_air < C(board gap) increasing in the gap < C_infinite."""
    c_air = cap(W, GAP, 1.0, T, None)
    c_inf = cap(W, GAP, ER, T, None)
    gaps = (0.0, 0.5e-3, 2e-3, 8e-3, 30e-3)
    c = [cap(W, GAP, ER, T, g) for g in gaps]
    assert c_air < c[0]
    assert all(a < b for a, b in zip(c, c[1:]))
    assert c[-1] < c_inf
    # far board edge: within 1 % of the infinite slab (the field decays over a few heights)
    assert c[-1] == pytest.approx(c_inf, rel=0.01)
    # a board edge at the strip still leaves the dielectric under the strip and the ground gap
    assert (c[0] - c_air) > 0.5 * (c_inf - c_air)


def test_air_slab_is_air_wherever_it_ends() -> None:
    assert cap(W, GAP, 1.0, T, 1e-3) == pytest.approx(cap(W, GAP, 1.0, T, None), rel=1e-12)


@pytest.mark.parametrize("board_gap_m", [0.3e-3, 2e-3, 6e-3])
def test_equivalent_eps_reproduces_the_finite_slab_capacitance(board_gap_m: float) -> None:
    eps = equivalent_eps_r_strip_at_board_edge(W, GAP + 0.5 * W, ER, T, board_gap_m)
    assert 1.0 < eps < ER
    assert cap(W, GAP, eps, T, None) == pytest.approx(cap(W, GAP, ER, T, board_gap_m), rel=EQUIVALENT_REL_TOL)


def test_equivalent_eps_rises_towards_eps_r_as_the_edge_recedes() -> None:
    eps = [equivalent_eps_r_strip_at_board_edge(W, GAP + 0.5 * W, ER, T, g) for g in (0.5e-3, 2e-3, 8e-3)]
    assert eps[0] < eps[1] < eps[2] < ER


def _ifa(path, board_edge_y_m):
    return PrintedIfa(
        arm_path_m=path, feed_x_m=-10e-3, short_x_m=-14e-3, trace_width_m=W, short_width_m=W,
        port_gap_m=0.6e-3, ground=GroundPlane(-20e-3, 20e-3, 40e-3),
        laminate=Laminate(ER, T, 0.02), board_edge_y_m=board_edge_y_m)


def test_equivalent_laminate_of_an_arm() -> None:
    straight = ((-14e-3, 5e-3), (4e-3, 5e-3))
    lam = equivalent_laminate(_ifa(straight, 5e-3 + 0.5 * W + 2e-3))
    assert lam.eps_r == pytest.approx(equivalent_eps_r_strip_at_board_edge(W, 5e-3, ER, T, 2e-3), rel=1e-12)
    assert dataclasses.replace(lam, eps_r=ER) == _ifa(straight, None).laminate
    assert equivalent_laminate(_ifa(straight, None)) == Laminate(ER, T, 0.02)  # no edge: unchanged
    # a meander: length-weighted over its two heights, between the two heights' values
    meander = ((-14e-3, 5e-3), (-8e-3, 5e-3), (-8e-3, 3e-3), (-4e-3, 3e-3), (-4e-3, 5e-3), (0.0, 5e-3))
    edge = 5e-3 + 0.5 * W + 1e-3
    e_top = equivalent_eps_r_strip_at_board_edge(W, 5e-3, ER, T, 1e-3)
    e_low = equivalent_eps_r_strip_at_board_edge(W, 3e-3, ER, T, 3e-3)
    assert equivalent_laminate(_ifa(meander, edge)).eps_r == pytest.approx((10 * e_top + 4 * e_low) / 14, rel=1e-12)


def test_arm_past_the_board_edge_is_refused() -> None:
    with pytest.raises(SolverError, match="board_gap_m"):
        equivalent_laminate(_ifa(((-14e-3, 5e-3), (4e-3, 5e-3)), 5e-3))


def test_pieces_touching_the_ground_edge_are_left_out() -> None:
    """A wide trace low in a meander has no strip-beside-edge cross-section: the mean skips it,
    and an arm with no such piece keeps its laminate."""
    wide = dataclasses.replace(_ifa(((-14e-3, 0.3e-3), (4e-3, 0.3e-3)), 3e-3), trace_width_m=1e-3, short_width_m=1e-3)
    assert equivalent_laminate(wide) == wide.laminate
    meander = ((-14e-3, 5e-3), (-8e-3, 5e-3), (-8e-3, 0.3e-3), (-4e-3, 0.3e-3), (-4e-3, 5e-3), (0.0, 5e-3))
    edge = 5e-3 + 0.5 * W + 1e-3
    assert equivalent_laminate(_ifa(meander, edge)).eps_r == pytest.approx(
        equivalent_eps_r_strip_at_board_edge(W, 5e-3, ER, T, 1e-3), rel=1e-12)
