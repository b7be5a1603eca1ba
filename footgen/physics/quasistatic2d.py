"""2-D quasi-static solver for coplanar lines: capacitance per metre by finite volumes (SI units).

Cross-section: zero-thickness conductors on the plane ``y = 0`` (intervals of ``x``, possibly
semi-infinite), an optional dielectric slab ``-h < y < 0`` of infinite lateral extent or ending at
``x = slab_x_max_m`` (a board edge), an optional second dielectric layer above the conductors
(``Layer``: an enclosure wall at a distance over the copper, ending where the slab ends), air
everywhere else.  The Laplace equation ``div(eps grad V) = 0`` is discretised by the
five-point finite-volume scheme on a tensor grid graded geometrically away from every conductor
edge and dielectric face, out to a box ``BOX_FACTOR`` times the structure's size whose walls are
held at 0 V (the far-field truncation error falls like size/box).  The capacitance comes from
the field energy, ``C = sum_edges G (dV)^2`` with the strip at 1 V, and is extrapolated to zero
cell size (Richardson, two grids, first-order error from the edge singularities).

``C_air`` (all air, solved on the same grid so that discretisation errors cancel) and ``C``
(with the slab) give ``eps_eff = C / C_air`` and
``Z0 = 1 / (c sqrt(C C_air))`` (quasi-TEM; e.g. Collin, "Foundations for Microwave
Engineering", 2nd ed. 1992, sec. 3.10 (from memory)).

Measured accuracy (tests/test_quasistatic2d.py): capacitances in air within 0.4 % of the exact
conformal mappings (the grading leaves a residual the two-grid extrapolation does not remove);
eps_eff moves by under 0.2 % on a much finer grid; about a second per cross-section on one
core.

Numbers in, numbers out: each public function is pure and memoised on its float arguments.
Estimates never replace measurement; radio products must meet local radio regulations and
RF-exposure limits.
"""

from __future__ import annotations

import functools
import itertools
import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy import sparse
from scipy.sparse import linalg as sparse_linalg

from footgen.constants import C0_M_PER_S, EPS0_F_PER_M
from footgen.errors import SolverError

#: Cells across the smallest feature (strip, gap or slab) next to its edges, on the finer of
#: the two Richardson grids.
FINE_CELLS_PER_FEATURE = 24
#: Geometric growth of the cell size away from edges and faces (ratio of neighbouring cells).
GROWTH_RATIO = 1.18
#: Half-size of the computational box in units of the structure's size (largest feature).
BOX_FACTOR = 2.0e4
#: Memoised cross-sections per function.
CACHE_SIZE = 4096


@dataclass(frozen=True)
class Layer:
    """Dielectric layer above the conductor plane: ``distance_m < y < distance_m + thickness_m``."""

    eps_r: float
    distance_m: float
    thickness_m: float


@dataclass(frozen=True)
class Grid:
    """Tensor grid: node coordinates along ``x`` and ``y`` (m)."""

    x_m: NDArray[np.float64]
    y_m: NDArray[np.float64]


def graded_nodes(features_m: tuple[float, ...], fine_m: float, extent_m: float) -> NDArray:
    """Sorted node coordinates on ``[-extent, extent]`` that contain every feature point, with
    cell size ``fine_m`` at the features growing by about ``GROWTH_RATIO`` per cell away from
    them (local size ``fine + (ratio - 1) * distance``).

    Built by inverting the cell-count function ``N(x) = int dx / size(x)`` interval by
    interval, each interval getting a whole number of cells.
    """
    if not fine_m > 0.0 or not extent_m > max(abs(f) for f in features_m):
        raise SolverError(
            f"fine_m = {fine_m!r}, extent_m = {extent_m!r}: need fine_m > 0 and every feature "
            "inside [-extent_m, extent_m]"
        )
    feats = np.unique(np.array(features_m, dtype=float))
    anchors = np.concatenate([[-extent_m], feats, [extent_m]])
    anchors = np.unique(anchors)
    slope = GROWTH_RATIO - 1.0
    nodes = [anchors[0]]
    for lo, hi in zip(anchors[:-1], anchors[1:]):
        # dense sample, geometric in the distance from each end
        span = hi - lo
        offsets = np.geomspace(fine_m * 1e-3, span, 400)
        inside = offsets[offsets < span]
        sample = np.unique(np.concatenate([[lo, hi], lo + inside, hi - inside]))
        dist = np.min(np.abs(sample[:, None] - feats[None, :]), axis=1)
        size = fine_m + slope * dist
        inv = 1.0 / size
        count = np.concatenate([[0.0], np.cumsum(0.5 * (inv[1:] + inv[:-1]) * np.diff(sample))])
        cells = max(1, int(math.ceil(count[-1])))
        targets = np.linspace(0.0, count[-1], cells + 1)[1:]
        inner = np.interp(targets, count, sample)
        inner[-1] = hi
        nodes.extend(inner.tolist())
    return np.array(nodes)


def _conductance_matrix(grid: Grid, eps_cells: NDArray) -> tuple[sparse.csr_matrix, tuple]:
    """Symmetric finite-volume matrix ``sum_edges G_e (V_a - V_b)^2`` of the grid (relative
    permittivity per cell) and the edge list ``(a, b, G)``."""
    x, y = grid.x_m, grid.y_m
    nx, ny = x.size, y.size
    dx, dy = np.diff(x), np.diff(y)
    index = np.arange(nx * ny).reshape(nx, ny)
    # pad cell permittivity with zeros outside the grid
    eps_pad = np.zeros((nx + 1, ny + 1))
    eps_pad[1:-1, 1:-1] = eps_cells
    dy_pad = np.concatenate([[0.0], dy, [0.0]])
    dx_pad = np.concatenate([[0.0], dx, [0.0]])
    # edges along x between node (i, j) and (i+1, j): cells (i, j-1) and (i, j)
    flux_x = 0.5 * (eps_pad[1:-1, :-1] * dy_pad[None, :-1] + eps_pad[1:-1, 1:] * dy_pad[None, 1:])
    g_x = flux_x / dx[:, None]
    # edges along y between node (i, j) and (i, j+1): cells (i-1, j) and (i, j)
    flux_y = 0.5 * (eps_pad[:-1, 1:-1] * dx_pad[:-1, None] + eps_pad[1:, 1:-1] * dx_pad[1:, None])
    g_y = flux_y / dy[None, :]
    a = np.concatenate([index[:-1, :].ravel(), index[:, :-1].ravel()])
    b = np.concatenate([index[1:, :].ravel(), index[:, 1:].ravel()])
    g = np.concatenate([g_x.ravel(), g_y.ravel()])
    n = nx * ny
    off = sparse.coo_matrix((-g, (a, b)), shape=(n, n))
    diag = np.bincount(a, weights=g, minlength=n) + np.bincount(b, weights=g, minlength=n)
    matrix = (off + off.T + sparse.diags(diag)).tocsr()
    return matrix, (a, b, g)


def _energy_capacitance(
    grid: Grid,
    eps_cells: NDArray,
    conductors: tuple[tuple[float, float, float], ...],
) -> float:
    """``sum G (dV)^2`` (relative units: multiply by eps0 for F/m) with the conductors on
    ``y = 0`` at their potentials and the box walls at 0 V."""
    x, y = grid.x_m, grid.y_m
    nx, ny = x.size, y.size
    fixed = np.zeros((nx, ny), dtype=bool)
    value = np.zeros((nx, ny))
    fixed[0, :] = fixed[-1, :] = fixed[:, 0] = fixed[:, -1] = True
    row = int(np.argmin(np.abs(y)))
    if y[row] != 0.0:
        raise SolverError("grid: the conductor plane y = 0 is not a grid line")
    for lo, hi, volts in conductors:
        on = (x >= lo) & (x <= hi)
        fixed[on, row] = True
        value[on, row] = volts
    matrix, (a, b, g) = _conductance_matrix(grid, eps_cells)
    free = ~fixed.ravel()
    v = value.ravel().copy()
    rhs = -matrix[free][:, ~free] @ v[~free]
    v[free] = sparse_linalg.spsolve(matrix[free][:, free].tocsc(), rhs)
    return float(np.sum(g * (v[a] - v[b]) ** 2))


def _solve(
    edges_m: tuple[float, ...],
    conductors: tuple[tuple[float, float, float], ...],
    eps_r: float,
    thickness_m: float | None,
    cells_per_feature: int,
    slab_x_max_m: float | None = None,
    cover: Layer | None = None,
) -> float:
    """Capacitance (F/m) on one grid: ``cells_per_feature`` cells across the smallest strip,
    gap or slab next to the edges, box ``BOX_FACTOR`` times the largest size; the slab (and the
    ``cover`` layer above the conductors, if given) ends at ``x = slab_x_max_m`` if given (that
    edge is a grid feature)."""
    finite = list(edges_m) + ([slab_x_max_m] if slab_x_max_m is not None else [])
    sizes = np.diff(np.unique(finite)) if len(finite) > 1 else np.array([])
    slab_face = thickness_m is not None and math.isfinite(thickness_m)
    features = list(sizes) + ([thickness_m] if slab_face else [])
    y_features = [0.0, -thickness_m] if slab_face else [0.0]
    if cover is not None:
        features += [cover.distance_m, cover.thickness_m]
        y_features += [cover.distance_m, cover.distance_m + cover.thickness_m]
    smallest = min(features)
    largest = max(features + [max(abs(e) for e in finite + y_features)])
    fine = smallest / cells_per_feature
    extent = BOX_FACTOR * largest
    x = graded_nodes(tuple(finite), fine, extent)
    y = graded_nodes(tuple(y_features), fine, extent)
    grid = Grid(x, y)
    eps_cells = np.ones((x.size - 1, y.size - 1))
    xc = 0.5 * (x[1:] + x[:-1])
    yc = 0.5 * (y[1:] + y[:-1])
    inside_board = (xc < slab_x_max_m) if slab_x_max_m is not None else np.ones(xc.size, dtype=bool)
    if thickness_m is not None:
        in_slab = np.broadcast_to(((yc < 0.0) & (yc > -thickness_m))[None, :], eps_cells.shape)
        if slab_x_max_m is not None:
            in_slab = in_slab & inside_board[:, None]
        eps_cells[in_slab] = eps_r
    if cover is not None:
        in_cover = inside_board[:, None] & (
            (yc > cover.distance_m) & (yc < cover.distance_m + cover.thickness_m))[None, :]
        eps_cells[in_cover] = cover.eps_r
    return EPS0_F_PER_M * _energy_capacitance(grid, eps_cells, conductors)


def capacitance_coplanar_f_per_m(
    edges_m: tuple[float, ...],
    conductors: tuple[tuple[float, float, float], ...],
    eps_r: float,
    thickness_m: float | None,
    slab_x_max_m: float | None = None,
    cover: Layer | None = None,
) -> float:
    """Capacitance per metre (F/m) of coplanar conductors on ``y = 0``, Richardson-extrapolated
    from grids with ``FINE_CELLS_PER_FEATURE / 2`` and ``FINE_CELLS_PER_FEATURE`` cells across
    the smallest feature.

    ``conductors``: ``(x_lo, x_hi, volts)`` (``x_lo`` may be ``-inf``, ``x_hi`` ``inf``);
    ``edges_m``: the finite conductor edges (grid features); ``thickness_m = None``: no slab,
    ``inf``: the dielectric fills the half-space ``y < 0``.
    With one conductor at 1 V and the rest at 0 V this is its capacitance to them.
    ``slab_x_max_m``: the slab ends there (a board edge; ``None``: laterally infinite).
    ``cover``: a dielectric layer above the conductors, ending where the slab ends.
    """
    coarse = _solve(edges_m, conductors, eps_r, thickness_m, FINE_CELLS_PER_FEATURE // 2, slab_x_max_m, cover)
    fine = _solve(edges_m, conductors, eps_r, thickness_m, FINE_CELLS_PER_FEATURE, slab_x_max_m, cover)
    return 2.0 * fine - coarse


def _check(width_m: float, gap_m: float, eps_r: float, thickness_m: float) -> None:
    for name, value in (("width_m", width_m), ("gap_m", gap_m)):
        if not (math.isfinite(value) and value > 0.0):
            raise SolverError(f"{name} = {value!r}: must be finite and > 0")
    if not thickness_m > 0.0:
        raise SolverError(f"thickness_m = {thickness_m!r}: must be > 0 (inf: half-space)")
    if not (math.isfinite(eps_r) and eps_r >= 1.0):
        raise SolverError(f"eps_r = {eps_r!r}: relative permittivity must be finite and >= 1")


def _line_constants(c_f_per_m: float, c_air_f_per_m: float) -> tuple[float, float]:
    """``(Z0 ohm, eps_eff)`` from the capacitances with and without the dielectric."""
    return 1.0 / (C0_M_PER_S * math.sqrt(c_f_per_m * c_air_f_per_m)), c_f_per_m / c_air_f_per_m


@functools.lru_cache(maxsize=CACHE_SIZE)
def strip_beside_ground_edge_capacitance_f_per_m(
    width_m: float, gap_m: float, eps_r: float, thickness_m: float | None
) -> float:
    """Capacitance (F/m) of a strip ``[g, g + w]`` beside a ground half-plane ``x <= 0``, both
    on one face of a slab of thickness ``thickness_m`` (``None``: all air), air elsewhere."""
    return capacitance_coplanar_f_per_m(
        (0.0, gap_m, gap_m + width_m),
        ((-math.inf, 0.0, 0.0), (gap_m, gap_m + width_m, 1.0)),
        eps_r,
        thickness_m,
    )


@functools.lru_cache(maxsize=CACHE_SIZE)
def strip_beside_ground_edge_board_capacitance_f_per_m(
    width_m: float, gap_m: float, eps_r: float, thickness_m: float, board_gap_m: float | None,
    cover: Layer | None = None,
) -> float:
    """Capacitance (F/m) of the strip ``[g, g + w]`` beside a ground half-plane ``x <= 0`` on a
    slab that ends ``board_gap_m`` beyond the strip's far edge (``None``: laterally infinite),
    with the dielectric layer ``cover`` above the copper if given (slab and cover end together;
    ``eps_r`` 1: no slab's dielectric)."""
    edge = None if board_gap_m is None else gap_m + width_m + board_gap_m
    return capacitance_coplanar_f_per_m(
        (0.0, gap_m, gap_m + width_m),
        ((-math.inf, 0.0, 0.0), (gap_m, gap_m + width_m, 1.0)),
        eps_r,
        thickness_m,
        edge,
        cover,
    )


def strip_beside_ground_edge_fd(
    width_m: float, gap_m: float, eps_r: float, thickness_m: float
) -> tuple[float, float]:
    """``(Z0 ohm, eps_eff)`` of the strip beside a coplanar ground edge on a finite slab, air on
    both sides, by the finite-volume solver (two cached solves)."""
    _check(width_m, gap_m, eps_r, thickness_m)
    w, g, er, h = float(width_m), float(gap_m), float(eps_r), float(thickness_m)
    c = strip_beside_ground_edge_capacitance_f_per_m(w, g, er, h)
    c_air = strip_beside_ground_edge_capacitance_f_per_m(w, g, 1.0, h)  # same grid
    return _line_constants(c, c_air)


def eps_eff_strip_beside_ground_edge_fd(
    width_m: float, gap_m: float, eps_r: float, thickness_m: float
) -> float:
    """Quasi-static eps_eff of the strip beside a coplanar ground edge (finite-volume solver)."""
    return strip_beside_ground_edge_fd(width_m, gap_m, eps_r, thickness_m)[1]


def z0_strip_beside_ground_edge_fd(
    width_m: float, gap_m: float, eps_r: float, thickness_m: float
) -> float:
    """Quasi-static Z0 (ohm) of the strip beside a coplanar ground edge (finite-volume solver)."""
    return strip_beside_ground_edge_fd(width_m, gap_m, eps_r, thickness_m)[0]


@functools.lru_cache(maxsize=CACHE_SIZE)
def cpw_capacitance_f_per_m(
    width_m: float, gap_m: float, eps_r: float, thickness_m: float | None
) -> float:
    """Capacitance (F/m) of a CPW centre strip ``|x| <= w/2`` to ground half-planes
    ``|x| >= w/2 + s`` on one face of a slab (``None``: all air), air elsewhere."""
    half, outer = 0.5 * width_m, 0.5 * width_m + gap_m
    return capacitance_coplanar_f_per_m(
        (-outer, -half, half, outer),
        ((-math.inf, -outer, 0.0), (-half, half, 1.0), (outer, math.inf, 0.0)),
        eps_r,
        thickness_m,
    )


def cpw_air_backed_fd(
    width_m: float, gap_m: float, eps_r: float, thickness_m: float
) -> tuple[float, float]:
    """``(Z0 ohm, eps_eff)`` of a CPW on a slab with air below (finite-volume solver)."""
    _check(width_m, gap_m, eps_r, thickness_m)
    w, s, er, h = float(width_m), float(gap_m), float(eps_r), float(thickness_m)
    c = cpw_capacitance_f_per_m(w, s, er, h)
    c_air = cpw_capacitance_f_per_m(w, s, 1.0, h)  # same grid
    return _line_constants(c, c_air)


# --------------------------------------------------------------------------------------------
# fit of the closed-form correction (footgen.physics.lines.strip_beside_ground_edge_fitted)
# --------------------------------------------------------------------------------------------

#: The practical range the correction is fitted over (m, m, m, relative permittivity).
FIT_WIDTHS_M = (0.2e-3, 0.5e-3, 1e-3, 2e-3)
FIT_GAPS_M = (0.5e-3, 1e-3, 2e-3, 4e-3, 8e-3, 14e-3, 20e-3)
FIT_THICKNESSES_M = (0.4e-3, 0.8e-3, 1.6e-3)
FIT_EPS_R = (2.0, 4.4, 10.0)
#: Total degree of the correction polynomial.
FIT_DEGREE = 3


@dataclass(frozen=True)
class FitSample:
    """One cross-section of the fit: inputs, solver eps_eff and partial-capacitance eps_eff."""

    width_m: float
    gap_m: float
    thickness_m: float
    eps_r: float
    eps_eff_fd: float
    eps_eff_closed: float


def strip_edge_fit_samples(
    widths_m: tuple[float, ...] = FIT_WIDTHS_M,
    gaps_m: tuple[float, ...] = FIT_GAPS_M,
    thicknesses_m: tuple[float, ...] = FIT_THICKNESSES_M,
    eps_rs: tuple[float, ...] = FIT_EPS_R,
    progress: Callable[[int, int], None] | None = None,
) -> list[FitSample]:
    """Solver and closed-form eps_eff on the product grid (about a second per point);
    ``progress(done, total)`` after each point."""
    from footgen.physics import lines  # local: lines is the consumer of the fit

    grid = list(itertools.product(widths_m, gaps_m, thicknesses_m, eps_rs))
    samples = []
    for done, (w, g, h, er) in enumerate(grid, start=1):
        samples.append(
            FitSample(
                w, g, h, er,
                eps_eff_strip_beside_ground_edge_fd(w, g, er, h),
                float(lines.eps_eff_strip_beside_ground_edge(w, g, er, h)),
            )
        )
        if progress is not None:
            progress(done, len(grid))
    return samples


def correction_exponents(degree: int = FIT_DEGREE) -> tuple[tuple[int, int, int], ...]:
    """Exponents ``(i, j, k)`` of the monomials ``ln(g/h)^i ln(w/h)^j (1/eps_r)^k`` of total
    degree ``<= degree``, in a fixed order."""
    return tuple(
        (i, j, k)
        for i in range(degree + 1)
        for j in range(degree + 1 - i)
        for k in range(degree + 1 - i - j)
    )


def fit_strip_edge_correction(
    samples: list[FitSample], degree: int = FIT_DEGREE
) -> tuple[tuple[tuple[int, int, int], ...], tuple[float, ...], float]:
    """Least-squares fit of ``logit(q_fd) - logit(q_closed)`` (``q = 2 (eps_eff - 1)/(eps_r - 1)``,
    the filling factor) by a polynomial in ``ln(g/h)``, ``ln(w/h)``, ``1/eps_r``.

    Returns ``(exponents, coefficients, max relative eps_eff error over the samples)``.
    """
    exps = correction_exponents(degree)
    w = np.array([s.width_m for s in samples])
    g = np.array([s.gap_m for s in samples])
    h = np.array([s.thickness_m for s in samples])
    er = np.array([s.eps_r for s in samples])
    e_fd = np.array([s.eps_eff_fd for s in samples])
    e_cl = np.array([s.eps_eff_closed for s in samples])
    q_fd, q_cl = 2.0 * (e_fd - 1.0) / (er - 1.0), 2.0 * (e_cl - 1.0) / (er - 1.0)
    target = np.log(q_fd / (1.0 - q_fd)) - np.log(q_cl / (1.0 - q_cl))
    a, b, c = np.log(g / h), np.log(w / h), 1.0 / er
    design = np.column_stack([a**i * b**j * c**k for i, j, k in exps])
    coef, *_ = np.linalg.lstsq(design, target, rcond=None)
    logit = np.log(q_cl / (1.0 - q_cl)) + design @ coef
    e_fit = 1.0 + 0.5 * (er - 1.0) / (1.0 + np.exp(-logit))
    return exps, tuple(float(x) for x in coef), float(np.max(np.abs(e_fit / e_fd - 1.0)))
