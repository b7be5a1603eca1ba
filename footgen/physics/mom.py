"""Thin-wire method-of-moments solver (mixed-potential EFIE, triangle basis, Galerkin testing).

Formulation (Harrington, "Field Computation by Moment Methods", 1968, ch. 4; Gibson, "The Method
of Moments in Electromagnetics", 2nd ed. 2014, ch. 3 and 5):

* Straight segments, one current unknown per triangle ("rooftop") basis function spanning two
  segments that share a node.  At a node where ``k >= 3`` segments meet, ``k - 1`` basis
  functions pair a reference segment with each other segment, so every basis function carries
  a continuous current through the node and Kirchhoff's current law holds exactly.
* Reduced thin-wire kernel ``G = exp(-jkR) / (4 pi R)``, ``R = sqrt(|r - r'|^2 + a^2)``.
* ``Z_mn = j w mu0 <f_m, G f_n> + 1/(j w eps0) <div f_m, G div f_n>`` with Galerkin testing.
* Self and touching segment pairs: the static part ``1/R`` of the inner integral is integrated in
  closed form (linear weights), the remainder ``(exp(-jkR) - 1)/R`` and the outer integral by
  Gauss-Legendre quadrature on a cosine-graded mesh.  Close pairs use a product Gauss rule, far
  pairs the segment-midpoint rule (its first-order error cancels within each triangle).
* Assembly: the far (midpoint-rule) part as congruences ``M G M^T`` of the segment-midpoint
  kernel with two-entry-per-row half-to-basis maps, the close pairs as a sparse correction
  (accurate minus midpoint) mapped to basis level by sparse products; double precision.  Fills
  keep the static far part ``1/R`` once per geometry in double precision and fill only the
  bounded dynamic part ``(exp(-jkR) - 1)/R`` per frequency in single precision
  (a single-precision ``exp(-jkR)/R`` would not do: the Phi term is ~1/(kl)^2 larger than A).
* Slab image potential: tabulated once per model on a grid uniform in ``asinh(R / z_1)`` and
  interpolated linearly (relative error < SLAB_TABLE_REL_TOL against the direct image sum).
* Solve: LAPACK LU via numpy, which releases the GIL, so sweeps run solves in worker threads
  while the main thread fills the next matrices (scipy 1.17's complex-symmetric ``solve`` holds
  the GIL and was no faster per solve at 960 unknowns on this machine, measured).
* Delta-gap source: applied field ``V / l`` on one segment; ``Zin = V / I(segment centre)``,
  which equals ``V^2 / (v^T Z^-1 v)`` (variational).
* Laminate: copper on the top face of a dielectric slab (free-standing, air on both sides).  The
  vector potential keeps the free-space kernel (non-magnetic slab); the quasi-static part of the
  scalar-potential kernel ``1/(4 pi eps0 R)`` is replaced by the static potential of a point charge
  on the slab surface (image series, :func:`slab_static_image_weights`), the dynamic remainder
  ``(exp(-jkR) - 1)/R`` stays free space.  Loss tangent enters through a complex permittivity.
  So only the near (capacitive) field sees the laminate and radiation stays free space.  The slab
  is taken as laterally infinite; its surface-wave and dynamic corrections are ignored (thin slab,
  ``t / lambda ~ 0.01``).
* Conductor loss: surface impedance ``(1 + j) Rs / perimeter`` per unit length of trace (Balanis,
  "Antenna Theory", 4th ed., sec. 2.14, high-frequency resistance of a conductor, from memory).
* Frequency sweeps: impedance-matrix interpolation after removing the phase ``exp(-jk D_mn)``
  of the distance between basis centres (Newman, "Matrix interpolation for frequency sweeps",
  IEEE Trans. Antennas Propag. 36(12), 1988, from memory), quadratic in ``k`` between anchors.
"""

from __future__ import annotations

import math
import threading
from collections.abc import Callable
from concurrent.futures import Future, ThreadPoolExecutor
from contextlib import contextmanager
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np
import scipy.sparse as sp
from scipy.linalg import lapack
from scipy.linalg.blas import zaxpy

from footgen.constants import C0_M_PER_S, EPS0_F_PER_M, ETA0_OHM, MU0_H_PER_M
from footgen.errors import SolverError

NODE_MERGE_TOL_M = 1e-9
MIN_SEGMENT_TO_RADIUS = 2.0
# close pairs: centre distance < factor * mean length (not an integer: on uniform meshes pair
# distances sit at integer multiples, where rounding would flip the tier)
NEAR_PAIR_FACTOR = 3.5
OUTER_POINTS_SINGULAR = 12
INNER_POINTS_SINGULAR = 6
POINTS_NEAR = 4
SLAB_IMAGE_REL_TOL = 1e-6
SLAB_MAX_IMAGES = 400
# image-potential table points: (u_max / n)^2 / 8 ~ 3e-6 relative for u_max ~ 10 (R / z_1 ~ 1e4)
SLAB_TABLE_POINTS = 2048
SLAB_TABLE_REL_TOL = 1e-5
INTERP_PHASE_STEP_RAD = 1.0  # anchor spacing: (k_{i+1} - k_i) * max basis distance
# matrices assembled per batch of an interpolated sweep: with two batches solving and one being
# filled, 2 keeps ~6 matrices alive (16 held ~48 at no gain in speed: the solves run one matrix
# at a time either way)
SOLVE_CHUNK = 2
SWEEP_SOLVE_WORKERS = 2  # solver threads in sweeps (the machine target has 2 cores); 0: inline
# Mixed-precision solve: complex64 LU, then one refinement step with the residual in complex128
# (Wilkinson's iterative refinement; Golub & Van Loan, "Matrix Computations", 4th ed. sec. 3.5.3,
# from memory).  Used from this many unknowns (below it the double LU is as cheap).  With the
# residual r = v - Z x and Z complex-symmetric (Galerkin), v^T Z^-1 v - v^T x = x_true^T r, so
# |x^T r| / |v^T x| estimates the relative error of Zin to first order; a solve whose estimate
# exceeds MIXED_ZIN_RTOL, or whose relative residual exceeds MIXED_RESIDUAL_RTOL, is redone in
# double precision.  Measured on the benchmark models (245-960 unknowns): estimate and true Zin
# error agree, 1e-12 to 3e-8 after the refinement step (1e-6 to 2e-4 without it).
MIXED_PRECISION_MIN_UNKNOWNS = 300
MIXED_ZIN_RTOL = 1e-6
MIXED_RESIDUAL_RTOL = 1e-5
# BLAS threads while solving: the matrices (a few hundred unknowns) are too small for more, and
# callers may have loaded numpy with any setting (the sweeps' worker threads use the cores).
BLAS_THREADS = 1
COPPER_CONDUCTIVITY_S_PER_M = 5.8e7
# the dynamic far part of every fill in single precision (the static part and all close pairs
# stay double)
FAR_REAL = np.float32
FAR_COMPLEX = np.complex64


@dataclass(frozen=True)
class Slab:
    """Dielectric slab under the copper: the wires lie in ``z = 0``, the slab fills ``-t < z < 0``."""

    eps_r: float
    thickness_m: float
    loss_tangent: float = 0.0

    @property
    def eps_complex(self) -> complex:
        return complex(self.eps_r) * (1.0 - 1j * self.loss_tangent)


@dataclass(frozen=True)
class Wire:
    """Straight wire from ``start_m`` to ``end_m`` (3-vectors, m) cut into equal segments."""

    start_m: tuple[float, float, float]
    end_m: tuple[float, float, float]
    n_segments: int
    radius_m: float
    loss_perimeter_m: float = 0.0  # 0: lossless; else copper perimeter for the skin-effect loss


@dataclass(frozen=True)
class WireModel:
    """Wires plus the source: a delta gap on segment ``source_segment`` of wire ``source_wire``.

    The source drives current along the wire direction (start to end).
    """

    wires: tuple[Wire, ...]
    source_wire: int
    source_segment: int
    slab: Slab | None = None
    conductivity_s_per_m: float = COPPER_CONDUCTIVITY_S_PER_M

    @property
    def n_segments(self) -> int:
        return sum(w.n_segments for w in self.wires)


@lru_cache(maxsize=None)
def gauss_legendre_unit(n_points: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on [0, 1] (weights sum to 1)."""
    x, w = np.polynomial.legendre.leggauss(n_points)
    return _frozen(0.5 * (x + 1.0)), _frozen(0.5 * w)


@lru_cache(maxsize=None)
def cosine_graded_unit(n_points: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre rule on [0, 1] mapped by ``s = (1 - cos(pi u)) / 2`` (nodes crowd both ends)."""
    u, w = gauss_legendre_unit(n_points)
    return _frozen(0.5 * (1.0 - np.cos(np.pi * u))), _frozen(w * 0.5 * np.pi * np.sin(np.pi * u))


def _frozen(a: np.ndarray) -> np.ndarray:
    """Read-only array (cached quadrature rules are shared)."""
    a.setflags(write=False)
    return a


def slab_static_image_weights(eps_r: complex, thickness_m: float) -> tuple[complex, np.ndarray, np.ndarray]:
    """Image series for the static potential of a unit charge on the face of a dielectric slab.

    Potential on the face (air on both sides of a slab of thickness ``t``), derived from the
    dielectric-interface reflection factor ``K = (eps - 1)/(eps + 1)`` (Jackson, "Classical
    Electrodynamics", 3rd ed., sec. 4.4) by summing the multiple reflections:
    ``4 pi eps0 phi(R) = (1 - K) [1/R + sum_n (K^(2n) + K^(2n-1)) / sqrt(R^2 + (2 n t)^2)]``.
    Returns ``(K, weights, image_depths_m)`` with ``weights = (1 - K)(K^(2n) + K^(2n-1))``.
    """
    k_refl = (eps_r - 1.0) / (eps_r + 1.0)
    if abs(k_refl) < 1e-15:
        return complex(k_refl), np.zeros(0, complex), np.zeros(0)
    n_max = int(min(SLAB_MAX_IMAGES, max(1, math.ceil(math.log(SLAB_IMAGE_REL_TOL) / math.log(abs(k_refl)) / 2 + 1))))
    n = np.arange(1, n_max + 1)
    weights = (1.0 - k_refl) * (k_refl ** (2 * n) + k_refl ** (2 * n - 1))
    return complex(k_refl), weights.astype(complex), 2.0 * n * thickness_m


def slab_image_potential(r_m: np.ndarray, weights: np.ndarray, depths_m: np.ndarray) -> np.ndarray:
    """Image part of the slab's static potential, ``sum_n w_n / (4 pi sqrt(R^2 + z_n^2))`` (complex
    weights from :func:`slab_static_image_weights`, summed in real arithmetic)."""
    r2 = np.asarray(r_m, float) ** 2
    re, im = np.zeros(r2.shape), np.zeros(r2.shape)
    tmp = np.empty(r2.shape)
    for w_n, z_n in zip(weights, depths_m):
        np.add(r2, z_n * z_n, out=tmp)
        np.sqrt(tmp, out=tmp)
        np.reciprocal(tmp, out=tmp)
        re += w_n.real * tmp
        im += w_n.imag * tmp
    return (re + 1j * im) * (1.0 / (4.0 * math.pi))


class SlabImageTable:
    """:func:`slab_image_potential` tabulated on a grid uniform in ``u = asinh(R / z_1)`` (``z_1``
    the first image depth) and interpolated linearly: smooth in ``u`` at every scale, relative
    error ~ ``(du)^2 / 8`` (below SLAB_TABLE_REL_TOL)."""

    def __init__(self, weights: np.ndarray, depths_m: np.ndarray, r_max_m: float) -> None:
        self.z1 = float(depths_m[0]) if depths_m.shape[0] else 1.0
        u_max = math.asinh(r_max_m / self.z1) * (1.0 + 1e-9) + 1e-12
        self.du = u_max / (SLAB_TABLE_POINTS - 1)
        u = np.arange(SLAB_TABLE_POINTS + 1) * self.du  # one spare node: index + 1 stays in range
        self.f = slab_image_potential(self.z1 * np.sinh(u), weights, depths_m)
        self.slope = np.diff(self.f)

    def __call__(self, r_m: np.ndarray) -> np.ndarray:
        x = np.arcsinh(np.asarray(r_m, float) / self.z1)
        x *= 1.0 / self.du
        idx = x.astype(np.intp)
        if idx.size and idx.max() >= SLAB_TABLE_POINTS:
            raise SolverError("slab image table queried beyond its range; build it for the largest distance")
        x -= idx
        out = self.slope[idx]
        out *= x
        out += self.f[idx]
        return out


@dataclass
class _Mesh:
    starts: np.ndarray
    ends: np.ndarray
    lengths: np.ndarray
    units: np.ndarray
    centres: np.ndarray
    radii: np.ndarray
    perimeters: np.ndarray
    seg_nodes: np.ndarray  # (N, 2) node index of start / end
    node_xyz: np.ndarray
    half_basis: np.ndarray  # (H,) basis index of each half
    half_seg: np.ndarray
    half_loc: np.ndarray  # 0: half at segment start node, 1: at end node
    half_sig: np.ndarray  # +1 when the basis current flows along the segment direction
    basis_node: np.ndarray  # (B,) node of each basis
    source_seg: int
    extra: dict = field(default_factory=dict)

    @property
    def n_basis(self) -> int:
        return int(self.basis_node.shape[0])


def _segment_wires(model: WireModel) -> _Mesh:
    """Cut the wires into segments, find nodes and build the triangle basis (with junctions)."""
    if not model.wires:
        raise SolverError("wire model has no wires; give at least one wire")
    counts = np.array([w.n_segments for w in model.wires], np.intp)
    if np.any(counts < 1):
        raise SolverError(f"wire n_segments = {int(counts.min())}: must be >= 1")
    p0 = np.array([w.start_m for w in model.wires], float)
    p1 = np.array([w.end_m for w in model.wires], float)
    first_seg = (np.cumsum(counts) - counts).tolist()
    wire_of = np.repeat(np.arange(counts.shape[0]), counts)
    local = np.arange(wire_of.shape[0]) - np.repeat(first_seg, counts)
    step = (p1 - p0) / counts[:, None]
    starts_a = p0[wire_of] + local[:, None] * step[wire_of]
    ends_a = np.where((local + 1 == counts[wire_of])[:, None], p1[wire_of], p0[wire_of] + (local + 1)[:, None] * step[wire_of])
    radii_a = np.array([w.radius_m for w in model.wires], float)[wire_of]
    perims = np.array([w.loss_perimeter_m for w in model.wires], float)[wire_of]
    lengths = np.linalg.norm(ends_a - starts_a, axis=1)
    if np.any(lengths <= 0.0):
        raise SolverError("wire model has a zero-length wire; remove it")
    ratio = lengths / radii_a
    if np.any(ratio < MIN_SEGMENT_TO_RADIUS):
        bad = int(np.argmin(ratio))
        raise SolverError(
            f"segment {bad} length/radius = {ratio[bad]:.2f}: thin-wire kernel needs >= "
            f"{MIN_SEGMENT_TO_RADIUS}; use fewer segments or a thinner wire"
        )
    if not (0 <= model.source_wire < len(model.wires)) or not (
        0 <= model.source_segment < model.wires[model.source_wire].n_segments
    ):
        raise SolverError(
            f"source (wire {model.source_wire}, segment {model.source_segment}) is not in the model"
        )
    n_seg = starts_a.shape[0]
    all_pts = np.concatenate([starts_a, ends_a])
    keys = np.round(all_pts / NODE_MERGE_TOL_M).astype(np.int64)
    _, first_idx, inverse = np.unique(keys, axis=0, return_index=True, return_inverse=True)
    inverse = inverse.reshape(-1)
    node_xyz = all_pts[first_idx]
    seg_nodes = np.stack([inverse[:n_seg], inverse[n_seg:]], axis=1)
    if np.any(seg_nodes[:, 0] == seg_nodes[:, 1]):
        raise SolverError("a segment is shorter than the node merge tolerance; refine the wire model")
    # incidence ordered by node: (node, segment, local end)
    inc_node = seg_nodes.T.reshape(-1)
    inc_seg = np.concatenate([np.arange(n_seg), np.arange(n_seg)])
    inc_loc = np.concatenate([np.zeros(n_seg, int), np.ones(n_seg, int)])
    order = np.lexsort((inc_seg, inc_node))
    inc_node, inc_seg, inc_loc = inc_node[order], inc_seg[order], inc_loc[order]
    node_start = np.searchsorted(inc_node, np.arange(node_xyz.shape[0]))
    ref_pos = node_start[inc_node]  # position of the node's reference (first) entry
    is_other = np.arange(inc_node.shape[0]) != ref_pos
    other_pos = np.nonzero(is_other)[0]
    ref_of_other = ref_pos[other_pos]
    n_basis = other_pos.shape[0]
    # half 0: reference segment, current flowing into the node; half 1: other segment, flowing out
    half_seg = np.stack([inc_seg[ref_of_other], inc_seg[other_pos]], axis=1)
    half_loc = np.stack([inc_loc[ref_of_other], inc_loc[other_pos]], axis=1)
    sig_in = np.where(half_loc[:, 0] == 1, 1, -1)
    sig_out = np.where(half_loc[:, 1] == 0, 1, -1)
    half_sig = np.stack([sig_in, sig_out], axis=1)
    basis_node = inc_node[other_pos]
    if n_basis == 0:
        raise SolverError("wire model has no connected segment pair; each wire needs >= 2 segments")
    units = (ends_a - starts_a) / lengths[:, None]
    src = first_seg[model.source_wire] + model.source_segment
    return _Mesh(
        starts=starts_a,
        ends=ends_a,
        lengths=lengths,
        units=units,
        centres=0.5 * (starts_a + ends_a),
        radii=radii_a,
        perimeters=perims,
        seg_nodes=seg_nodes,
        node_xyz=node_xyz,
        half_basis=np.repeat(np.arange(n_basis), 2),
        half_seg=half_seg.reshape(-1),
        half_loc=half_loc.reshape(-1),
        half_sig=half_sig.reshape(-1),
        basis_node=basis_node,
        source_seg=src,
    )


def _pair_radius_sq(mesh: _Mesh, p: np.ndarray, q: np.ndarray) -> np.ndarray:
    """Symmetric reduced-kernel radius squared of a segment pair: mean of the two squares."""
    return 0.5 * (mesh.radii[p] ** 2 + mesh.radii[q] ** 2)


def _line_points(mesh: _Mesh, seg: np.ndarray, s: np.ndarray) -> np.ndarray:
    """Points at unit parameters ``s`` (Q,) on segments ``seg`` (P,) -> (P, Q, 3)."""
    return mesh.starts[seg][:, None, :] + (s[None, :, None] * mesh.lengths[seg][:, None, None]) * mesh.units[seg][:, None, :]


def _node_fns(s: np.ndarray) -> np.ndarray:
    """Linear node functions ``(1 - s, s)`` -> (..., 2)."""
    return np.stack([1.0 - s, s], axis=-1)


class _PairIntegrals:
    """Accurate 2x2 node-function integrals for close segment pairs, split into parts that depend on
    ``k`` only through ``exp(-jkR) - 1`` (cached geometry) and static parts."""

    def __init__(self, mesh: _Mesh, p: np.ndarray, q: np.ndarray, singular: bool) -> None:
        self.p, self.q = p, q
        lp, lq = mesh.lengths[p], mesh.lengths[q]
        a2 = _pair_radius_sq(mesh, p, q)
        if singular:
            s_o, w_o = cosine_graded_unit(OUTER_POINTS_SINGULAR)
            t_i, w_i = gauss_legendre_unit(INNER_POINTS_SINGULAR)
        else:
            s_o, w_o = gauss_legendre_unit(POINTS_NEAR)
            t_i, w_i = s_o, w_o
        r_obs = _line_points(mesh, p, s_o)  # (P, O, 3)
        r_src = _line_points(mesh, q, t_i)  # (P, I, 3)
        diff = r_obs[:, :, None, :] - r_src[:, None, :, :]
        self.r_pts = np.sqrt(np.einsum("poid,poid->poi", diff, diff) + a2[:, None, None])  # (P,O,I)
        phi_o = _node_fns(s_o)  # (O, 2)
        phi_i = _node_fns(t_i)  # (I, 2)
        # outer weights x node function x l_p ; inner weights x node function x l_q
        self.w_out = (lp[:, None, None] * (w_o[:, None] * phi_o)[None, :, :])  # (P, O, 2)
        self.w_in = (lq[:, None, None] * (w_i[:, None] * phi_i)[None, :, :])  # (P, I, 2)
        # sum_o sum_i w_out[o, a] kern[o, i] w_in[i, b] = l_p l_q (kern.reshape(P, O*I) @ kron)[ab]
        c_out = w_o[:, None] * phi_o
        c_in = w_i[:, None] * phi_i
        self._kron = np.einsum("oa,ib->oiab", c_out, c_in).reshape(c_out.shape[0] * c_in.shape[0], 4)
        self._lplq = lp * lq
        self.singular = singular
        self.self_mask = p == q
        if singular:
            # closed-form inner integral of (node function)/R over the source segment
            rel = r_obs - mesh.starts[q][:, None, :]
            t0 = np.einsum("pod,pd->po", rel, mesh.units[q])
            rho2 = np.maximum(np.einsum("pod,pod->po", rel, rel) - t0**2, 0.0)
            d = np.sqrt(rho2 + a2[:, None])
            lq_b = lq[:, None]
            i0 = np.arcsinh((lq_b - t0) / d) + np.arcsinh(t0 / d)
            i1 = np.sqrt((lq_b - t0) ** 2 + d**2) - np.sqrt(t0**2 + d**2) + t0 * i0
            j1 = i1 / lq_b
            j_static = np.stack([i0 - j1, j1], axis=-1)  # (P, O, 2)
            static = np.einsum("poa,pob->pab", self.w_out, j_static) / (4.0 * math.pi)
            static[self.self_mask] = 0.5 * (static[self.self_mask] + static[self.self_mask].transpose(0, 2, 1))
            self.static = static
        else:
            self.static = self._product(1.0 / self.r_pts) / (4.0 * math.pi)

    def full(self, k_rad_per_m: float) -> np.ndarray:
        """``int int phi_a phi_b exp(-jkR)/(4 pi R)`` -> (P, 2, 2)."""
        if self.singular:
            kern = (np.exp(-1j * k_rad_per_m * self.r_pts) - 1.0) / self.r_pts
            return self.static + self._product(kern) / (4.0 * math.pi)
        kern = np.exp(-1j * k_rad_per_m * self.r_pts) / self.r_pts
        return self._product(kern) / (4.0 * math.pi)

    def _product(self, kern: np.ndarray) -> np.ndarray:
        """``sum_o sum_i w_out[o, a] kern[o, i] w_in[i, b]`` per pair -> (P, 2, 2), symmetric for self pairs."""
        flat = kern.reshape(kern.shape[0], kern.shape[1] * kern.shape[2])
        kron = self._kron if np.isrealobj(flat) else self._kron.astype(flat.dtype)
        out = (flat @ kron).reshape(-1, 2, 2) * self._lplq[:, None, None]
        if self.self_mask.any():
            out[self.self_mask] = 0.5 * (out[self.self_mask] + out[self.self_mask].transpose(0, 2, 1))
        return out

    def smooth_kernel(self, fn: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
        """Integral of a smooth kernel ``fn(R)`` with the product rule -> (P, 2, 2)."""
        return self._product(fn(self.r_pts))


class MomSolver:
    """Thin-wire MPIE solver for one :class:`WireModel` (geometry work done once).

    ``mixed_precision``: solve by :func:`solve_refined` with a complex64 LU (Zin within
    MIXED_ZIN_RTOL); off, every solve is a complex128 LU (the synthesis keeps this, so that its
    results do not depend on the faster solve)."""

    def __init__(self, model: WireModel, *, mixed_precision: bool = False) -> None:
        self.model = model
        self.mixed_precision = mixed_precision
        mesh = _segment_wires(model)
        self.mesh = mesh
        n_seg = mesh.lengths.shape[0]
        n_basis = mesh.n_basis
        if model.slab is not None and np.any(np.abs(np.concatenate([mesh.starts[:, 2], mesh.ends[:, 2]])) > NODE_MERGE_TOL_M):
            raise SolverError("laminate model needs all wires in the plane z = 0 (top face of the slab)")
        hb, hs, hl, hg = mesh.half_basis, mesh.half_seg, mesh.half_loc, mesh.half_sig
        # Assembly: the far (midpoint-rule) part is a congruence of the segment-midpoint kernel G
        # with two-entry-per-row maps (A: sum_d F_d G F_d^T, F_d = sig u_d l / 2; Phi: Q G Q^T,
        # Q = sig * divergence sign); the close pairs' accurate 2 x 2 integrals enter as a sparse
        # correction (accurate minus midpoint) mapped to basis level by sparse products.
        seg_h = hs.reshape(-1, 2).astype(np.intp)
        end_h = (2 * hs + hl).reshape(-1, 2).astype(np.intp)  # node-function index: 2 seg + end
        sig_h = hg.reshape(-1, 2).astype(float)
        charge_h = sig_h * half_divergence_sign(mesh, np.arange(hs.shape[0])).reshape(-1, 2)
        dims = [d for d in range(3) if np.any(mesh.units[seg_h, d] != 0.0)]
        self._far_a = [(seg_h, sig_h * mesh.units[seg_h, d] * (0.5 * mesh.lengths[seg_h])) for d in dims]
        self._far_phi = (seg_h, charge_h)
        rows = np.repeat(np.arange(n_basis), 2)
        self._corr_a = []
        for d in dims:
            e = sp.csr_matrix(((sig_h * mesh.units[seg_h, d]).reshape(-1), (rows, end_h.reshape(-1))), shape=(n_basis, 2 * n_seg))
            self._corr_a.append((e, e.T.tocsr()))
        d_map = sp.csr_matrix(((charge_h / mesh.lengths[seg_h]).reshape(-1), (rows, seg_h.reshape(-1))), shape=(n_basis, n_seg))
        self._corr_phi = (d_map, d_map.T.tocsr())
        cen = mesh.centres
        sq = np.einsum("nd,nd->n", cen, cen)
        dist2 = np.maximum(sq[:, None] + sq[None, :] - 2.0 * cen @ cen.T, 0.0)
        a2 = 0.5 * (mesh.radii[:, None] ** 2 + mesh.radii[None, :] ** 2)
        self._r_mid = np.sqrt(dist2 + a2)
        self._inv_4pi_r_mid = 1.0 / (4.0 * math.pi * self._r_mid)
        # close candidates (every touching pair is one: centres <= mean length apart); touching
        # pairs (a shared node) and self pairs (first, in segment order) form the singular tier
        mean_len = 0.5 * (mesh.lengths[:, None] + mesh.lengths[None, :])
        cand_p, cand_q = np.nonzero(np.triu(dist2 < (NEAR_PAIR_FACTOR * mean_len) ** 2, 1))
        nodes_p, nodes_q = mesh.seg_nodes[cand_p], mesh.seg_nodes[cand_q]
        touching = ((nodes_p[:, :, None] == nodes_q[:, None, :]).any(axis=(1, 2)))
        diag = np.arange(n_seg)
        sing_p = np.concatenate([diag, cand_p[touching]])
        sing_q = np.concatenate([diag, cand_q[touching]])
        near_p, near_q = cand_p[~touching], cand_q[~touching]
        self._sing = _PairIntegrals(mesh, sing_p, sing_q, singular=True)
        self._near = _PairIntegrals(mesh, near_p, near_q, singular=False)
        self._build_correction_patterns(n_seg)
        # source vector: applied field V/l on the source segment, V = 1
        on_src = hs == mesh.source_seg
        self._v = np.zeros(n_basis)
        np.add.at(self._v, hb[on_src], hg[on_src] * 0.5)
        # conductor loss on the self pairs' node-function entries (l/3 diagonal, l/6 off it)
        lossy = mesh.perimeters > 0.0
        scale = np.where(lossy, mesh.lengths / np.where(lossy, mesh.perimeters, 1.0), 0.0)
        self._loss_self = scale[:, None, None] * np.array([[1.0 / 3.0, 1.0 / 6.0], [1.0 / 6.0, 1.0 / 3.0]])[None]
        self._has_loss = bool(lossy.any())
        self._slab = self._slab_parts() if model.slab is not None else None
        self._basis_parts: dict[str, object] = {}

    # -- assembly helpers -------------------------------------------------------------------
    def _build_correction_patterns(self, n_seg: int) -> None:
        """Sparse patterns (fixed per geometry) of the close-pair corrections: node-function level
        for A (both orders of every pair), segment level for Phi."""
        a_rows, a_cols, p_rows, p_cols = [], [], [], []
        ab = np.array([[0, 0], [0, 1], [1, 0], [1, 1]])
        for pairs in (self._sing, self._near):
            p, q = pairs.p.astype(np.intp), pairs.q.astype(np.intp)
            off = p != q
            r = (2 * p[:, None] + ab[None, :, 0]).reshape(-1)
            c = (2 * q[:, None] + ab[None, :, 1]).reshape(-1)
            off4 = np.repeat(off, 4)
            a_rows += [r, c[off4]]
            a_cols += [c, r[off4]]
            p_rows += [p, q[off]]
            p_cols += [q, p[off]]
        self._pat_a = self._csr_pattern(np.concatenate(a_rows), np.concatenate(a_cols), 2 * n_seg)
        self._pat_phi = self._csr_pattern(np.concatenate(p_rows), np.concatenate(p_cols), n_seg)

    @staticmethod
    def _csr_pattern(rows: np.ndarray, cols: np.ndarray, n: int) -> tuple:
        """CSR structure of unique ``(rows, cols)`` and the permutation from entry order to CSR order."""
        m = sp.csr_matrix((np.arange(1, rows.shape[0] + 1, dtype=float), (rows, cols)), shape=(n, n))
        return m.indices, m.indptr, m.data.astype(np.intp) - 1, n

    def _correction_values(self, g_mid: np.ndarray | float, pair_values: tuple[np.ndarray, np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
        """Close-pair corrections (accurate minus midpoint rule) in the order of the patterns:
        A values (per pair 2 x 2, both orders) and Phi values (per pair, both orders).  ``g_mid`` is
        the midpoint kernel matrix, or a wavenumber (the free-space kernel at the pairs only)."""
        a_vals, p_vals = [], []
        for pairs, m in zip((self._sing, self._near), pair_values):
            p, q = pairs.p, pairs.q
            if isinstance(g_mid, np.ndarray):
                g_pq = g_mid[p, q]
            else:
                r = self._r_mid[p, q]
                g_pq = np.exp(-1j * g_mid * r) / (4.0 * math.pi * r)
            mid = g_pq * (self.mesh.lengths[p] * self.mesh.lengths[q])
            corr_a = m - 0.25 * mid[:, None, None]
            corr_p = m.sum(axis=(1, 2)) - mid
            off = p != q
            a_vals += [corr_a.reshape(-1), corr_a[off].reshape(-1)]
            p_vals += [corr_p, corr_p[off]]
        return np.concatenate(a_vals), np.concatenate(p_vals)

    def _sparse_basis(self, pattern: tuple, values: np.ndarray, maps: list[tuple]) -> sp.coo_matrix:
        """``sum_maps M C M^T`` for the correction ``C`` given by ``pattern`` and ``values``."""
        indices, indptr, perm, n = pattern
        c = sp.csr_matrix((values[perm], indices, indptr), shape=(n, n))
        out = None
        for m, m_t in maps:
            term = m @ c @ m_t
            out = term if out is None else out + term
        return out.tocoo()

    @staticmethod
    def _congruence(idx: np.ndarray, w: np.ndarray, k: np.ndarray) -> np.ndarray:
        """``M K M^T`` for a map ``M`` with two entries per row (``M[b, idx[b, i]] = w[b, i]``) and a
        symmetric ``K``: row gathers, then column gathers (no transposed copies)."""
        return MomSolver._congruences(idx, [w], k)[0]

    @staticmethod
    def _congruences(idx: np.ndarray, weights: list[np.ndarray], k: np.ndarray) -> list[np.ndarray]:
        """``M_c K M_c^T`` for maps sharing the indices ``idx`` (the row gathers are shared)."""
        rows = [k[idx[:, 0]], k[idx[:, 1]]]
        out = []
        for w in weights:
            x = rows[0] * w[:, 0, None]
            x += rows[1] * w[:, 1, None]
            z = np.take(x, idx[:, 0], axis=1)
            z *= w[None, :, 0]
            tmp = np.take(x, idx[:, 1], axis=1)
            tmp *= w[None, :, 1]
            z += tmp
            out.append(z)
        return out

    def _assemble(self, g: np.ndarray, scale_a: complex, scale_phi: complex, corr_a: np.ndarray,
                  corr_p: np.ndarray) -> np.ndarray:
        """Basis-level ``scale_a sum_d F_d g F_d^T + scale_phi Q g Q^T`` plus the mapped sparse
        corrections (already scaled); a zero scale skips its part."""
        idx = self._far_phi[0]
        far_a, far_phi = ([w for _, w in self._far_a], self._far_phi[1])
        if g.dtype == FAR_COMPLEX:  # single-precision dynamic pass: weights in single precision too
            far_a, far_phi = [w.astype(FAR_REAL) for w in far_a], far_phi.astype(FAR_REAL)
        weights = (far_a if scale_a else []) + ([far_phi] if scale_phi else [])
        parts = self._congruences(idx, weights, g)
        n_a = len(self._far_a) if scale_a else 0
        for i, part in enumerate(parts):
            part *= scale_a if i < n_a else scale_phi
        z = parts[0]  # summed in the precision of g
        for part in parts[1:]:
            z += part
        z = z.astype(complex, copy=False)
        for pattern, values, maps in ((self._pat_a, corr_a, self._corr_a), (self._pat_phi, corr_p, [self._corr_phi])):
            if values.shape[0] and maps and np.any(values != 0.0):
                c = self._sparse_basis(pattern, values, maps)
                z[c.row, c.col] += c.data
        return z

    def _midpoint_kernel(self, k_rad_per_m: float) -> np.ndarray:
        """``exp(-jkR)/(4 pi R)`` between segment midpoints (reduced-kernel distance)."""
        kr = self._r_mid * k_rad_per_m
        g = np.empty(kr.shape, complex)
        np.cos(kr, out=g.real)
        np.sin(kr, out=g.imag)
        np.negative(g.imag, out=g.imag)
        g *= self._inv_4pi_r_mid
        return g

    def _slab_parts(self) -> tuple[np.ndarray, np.ndarray]:
        """Frequency-independent slab part of the scalar potential: midpoint kernel (segment level)
        and close-pair Phi corrections (pattern order)."""
        slab = self.model.slab
        k_refl, weights, depths = slab_static_image_weights(slab.eps_complex, slab.thickness_m)
        r_max = max([float(self._r_mid.max())] + [float(pairs.r_pts.max()) for pairs in (self._sing, self._near) if pairs.r_pts.size])
        images = SlabImageTable(weights, depths, r_max)
        kern_mid = images(self._r_mid) - k_refl * self._inv_4pi_r_mid
        pair_values = tuple(pairs.smooth_kernel(images) - k_refl * pairs.static for pairs in (self._sing, self._near))
        _, corr_p = self._correction_values(kern_mid, pair_values)
        return kern_mid, corr_p

    @property
    def _slab_phi(self) -> np.ndarray | None:
        """Basis-level slab part of the scalar-potential matrix (for interpolated sweeps)."""
        if self._slab is None:
            return None
        if "slab" not in self._basis_parts:
            kern_mid, corr_p = self._slab
            z = self._congruence(*self._far_phi, kern_mid)
            c = self._sparse_basis(self._pat_phi, corr_p, [self._corr_phi])
            z[c.row, c.col] += c.data
            self._basis_parts["slab"] = z
        return self._basis_parts["slab"]

    def _loss_values(self) -> np.ndarray:
        """Node-level loss mass entries in the A-pattern order (self pairs lead the singular tier)."""
        vals = np.zeros(self._pat_a[2].shape[0])
        vals[: 4 * self.mesh.lengths.shape[0]] = self._loss_self.reshape(-1)
        return vals

    @property
    def _loss_pattern(self) -> tuple[np.ndarray, np.ndarray]:
        """Sparse basis-level pattern ``(flat indices, values)`` of the conductor-loss matrix."""
        if "loss" not in self._basis_parts:
            n_b = self.mesh.n_basis
            if not self._has_loss:
                self._basis_parts["loss"] = (np.zeros(0, np.intp), np.zeros(0))
            else:
                c = self._sparse_basis(self._pat_a, self._loss_values(), self._corr_a)
                flat = c.row.astype(np.intp) * n_b + c.col
                keep = c.data != 0.0
                self._basis_parts["loss"] = (flat[keep], c.data[keep])
        return self._basis_parts["loss"]

    def surface_resistance_ohm(self, freq_hz: float) -> float:
        """Skin-effect surface resistance ``sqrt(w mu0 / (2 sigma))`` (Balanis 4th ed. sec. 2.14)."""
        return math.sqrt(2.0 * math.pi * freq_hz * MU0_H_PER_M / (2.0 * self.model.conductivity_s_per_m))

    # -- matrices ---------------------------------------------------------------------------
    def potential_matrices(self, freq_hz: float) -> tuple[np.ndarray, np.ndarray]:
        """Basis-level vector- and scalar-potential matrices ``A``, ``Phi`` (free-space kernel)."""
        k = 2.0 * math.pi * freq_hz / C0_M_PER_S
        g = self._midpoint_kernel(k)
        corr_a, corr_p = self._correction_values(g, (self._sing.full(k), self._near.full(k)))
        *a_parts, phi_mat = self._congruences(self._far_phi[0], [w for _, w in self._far_a] + [self._far_phi[1]], g)
        a_mat = a_parts[0]
        for part in a_parts[1:]:
            a_mat += part
        for z, pattern, values, maps in ((a_mat, self._pat_a, corr_a, self._corr_a),
                                         (phi_mat, self._pat_phi, corr_p, [self._corr_phi])):
            if values.shape[0]:
                c = self._sparse_basis(pattern, values, maps)
                z[c.row, c.col] += c.data
        return a_mat, phi_mat

    def impedance_matrix(self, freq_hz: float) -> np.ndarray:
        """Full Galerkin impedance matrix (ohm) at one frequency:
        ``Z = j w mu0 A + (Phi + Phi_slab)/(j w eps0) + Z_loss``."""
        omega = 2.0 * math.pi * freq_hz
        k = omega / C0_M_PER_S
        corr_a, corr_p = self._correction_values(k, (self._sing.full(k), self._near.full(k)))
        jwmu, inv_jweps = 1j * omega * MU0_H_PER_M, 1.0 / (1j * omega * EPS0_F_PER_M)
        corr_a *= jwmu
        corr_p *= inv_jweps
        if self._has_loss:
            corr_a[: self._loss_self.size] += (1.0 + 1j) * self.surface_resistance_ohm(freq_hz) * self._loss_self.reshape(-1)
        # the static far part 1/(4 pi R) once per geometry in double precision (real), per
        # frequency only the bounded dynamic part (exp(-jkR) - 1)/(4 pi R) in single precision (the
        # scalar-potential term is ~1/(kl)^2 larger than the vector potential, so a
        # single-precision exp(-jkR)/R would not be accurate enough).  Even a single fill costs
        # about what one double-precision complex fill does (two real passes plus one in single
        # precision), and every further frequency of the geometry is cheaper (measured).
        a_static, phi_static = self._static_far
        z = self._assemble(self._far_dynamic_kernel(k), jwmu, inv_jweps, corr_a, corr_p)
        static = a_static * (omega * MU0_H_PER_M)  # both scales are imaginary: add to Im(Z)
        static -= phi_static * (1.0 / (omega * EPS0_F_PER_M))
        z.imag += static
        if self._slab is not None:
            z += self._slab_phi * inv_jweps
        return z

    @property
    def _static_far(self) -> tuple[np.ndarray, np.ndarray]:
        """Basis-level midpoint-rule ``A`` and ``Phi`` of the static kernel ``1/(4 pi R)``."""
        if "static" not in self._basis_parts:
            empty_a, empty_p = np.zeros(self._pat_a[2].shape[0]), np.zeros(self._pat_phi[2].shape[0])
            self._basis_parts["static"] = (self._assemble(self._inv_4pi_r_mid, 1.0, 0.0, empty_a, empty_p).real.copy(),
                                           self._assemble(self._inv_4pi_r_mid, 0.0, 1.0, empty_a, empty_p).real.copy())
        return self._basis_parts["static"]

    def _far_dynamic_kernel(self, k_rad_per_m: float) -> np.ndarray:
        """``(exp(-jkR) - 1)/(4 pi R)`` between segment midpoints in single precision, written as
        ``(-2 sin^2(kR/2) - j sin(kR)) / (4 pi R)`` so that it keeps its relative accuracy."""
        if "r32" not in self._basis_parts:
            self._basis_parts["r32"] = (self._r_mid.astype(FAR_REAL), self._inv_4pi_r_mid.astype(FAR_REAL))
        r32, inv32 = self._basis_parts["r32"]
        half = r32 * FAR_REAL(0.5 * k_rad_per_m)
        g = np.empty(half.shape, FAR_COMPLEX)
        s_half = np.sin(half)
        np.multiply(s_half, s_half, out=g.real)
        g.real *= FAR_REAL(-2.0)
        half *= FAR_REAL(2.0)
        np.sin(half, out=g.imag)
        np.negative(g.imag, out=g.imag)
        g *= inv32
        return g

    def zin_ohm(self, freq_hz: float) -> complex:
        """Input impedance at the delta-gap source (full fill and LAPACK solve)."""
        return complex(1.0 / (self._v @ self.currents(freq_hz)))

    def currents(self, freq_hz: float) -> np.ndarray:
        """Basis-function current amplitudes (A) for 1 V at the source."""
        with blas_threads_limited():
            return self._solve(self.impedance_matrix(freq_hz))

    # -- accessors for post-processing (far field, loss budget) ------------------------------
    def segment_currents(self, basis_currents: np.ndarray) -> tuple[np.ndarray, ...]:
        """Segment geometry and current for basis amplitudes ``basis_currents`` (A):
        ``(starts_m, ends_m, i_start_a, i_end_a, loss_perimeter_m)``; the current on each segment
        runs linearly from ``i_start_a`` at its start node to ``i_end_a`` at its end node, positive
        along the segment (start to end); perimeter 0 marks a lossless segment."""
        m = self.mesh
        ends = np.zeros(2 * m.lengths.shape[0], complex)
        np.add.at(ends, 2 * m.half_seg + m.half_loc, m.half_sig * np.asarray(basis_currents)[m.half_basis])
        return m.starts, m.ends, ends[0::2], ends[1::2], m.perimeters

    def input_current_a(self, basis_currents: np.ndarray) -> complex:
        """Current through the delta-gap source (A) for basis amplitudes driven by 1 V."""
        return complex(self._v @ np.asarray(basis_currents))

    def laminate_impedance_matrix(self, freq_hz: float) -> np.ndarray | None:
        """The laminate's part of ``Z``, ``Phi_slab / (j w eps0)`` (ohm), or None without a laminate;
        with a loss tangent its Hermitian part is the power the laminate absorbs."""
        if self._slab_phi is None:
            return None
        return self._slab_phi * (1.0 / (1j * 2.0 * math.pi * freq_hz * EPS0_F_PER_M))

    def _solve(self, z: np.ndarray) -> np.ndarray:
        """Currents for the impedance matrix ``z`` (may be overwritten) and the source vector."""
        v = self._v.astype(complex)
        return solve_refined(z, v) if self.mixed_precision else np.linalg.solve(z, v)

    @property
    def basis_distance_m(self) -> np.ndarray:
        """Distances between the nodes of all basis pairs (phase centres for interpolation)."""
        if "basis_dist" not in self.mesh.extra:
            xyz = self.mesh.node_xyz[self.mesh.basis_node]
            sq = np.einsum("nd,nd->n", xyz, xyz)
            self.mesh.extra["basis_dist"] = np.sqrt(np.maximum(sq[:, None] + sq[None, :] - 2.0 * xyz @ xyz.T, 0.0))
        return self.mesh.extra["basis_dist"]

    @property
    def n_unknowns(self) -> int:
        return self.mesh.n_basis

    # -- sweeps -----------------------------------------------------------------------------
    def sweep_direct(self, freqs_hz: np.ndarray, progress: Callable[[int, int], None] | None = None,
                     workers: int = SWEEP_SOLVE_WORKERS) -> np.ndarray:
        """Zin at every frequency by a full fill and solve; ``workers`` threads run the LAPACK
        solves while the next matrices are filled (0: everything in the calling thread)."""
        freqs = np.asarray(freqs_hz, float)
        out = np.empty(freqs.shape[0], complex)
        pending: list[tuple[int, Future]] = []
        with blas_threads_limited(), _pool(workers) as pool:
            for i, f in enumerate(freqs):
                pending.append((i, pool.submit(self._solve, self.impedance_matrix(float(f)))))
                while len(pending) > workers or (pending and i == freqs.shape[0] - 1):
                    j, fut = pending.pop(0)
                    out[j] = 1.0 / (self._v @ fut.result())
                    if progress is not None:
                        progress(j + 1, freqs.shape[0])
        return out

    def anchor_frequencies(self, f_lo_hz: float, f_hi_hz: float) -> np.ndarray:
        """Anchors for matrix interpolation: ``dk * D_max <= INTERP_PHASE_STEP_RAD``, odd count >= 3."""
        d_max = float(self.basis_distance_m.max()) + float(self.mesh.lengths.max())
        dk = 2.0 * math.pi * (f_hi_hz - f_lo_hz) / C0_M_PER_S
        n = max(3, int(math.ceil(dk * d_max / INTERP_PHASE_STEP_RAD)) + 1)
        n += (n + 1) % 2
        return np.linspace(f_lo_hz, f_hi_hz, n)

    def sweep_interpolated(
        self,
        freqs_hz: np.ndarray,
        progress: Callable[[int, int], None] | None = None,
        anchors_hz: np.ndarray | None = None,
        workers: int = SWEEP_SOLVE_WORKERS,
    ) -> np.ndarray:
        """Zin over a sweep by impedance-matrix interpolation (Newman 1988): ``A`` and ``Phi`` are
        filled at anchor frequencies, their phase ``exp(-jk D_mn)`` removed, interpolated
        quadratically in ``k`` over the three nearest anchors and the phase restored; one LAPACK
        solve per frequency (batched).  Static slab and conductor-loss terms are exact at every
        frequency."""
        freqs = np.asarray(freqs_hz, float)
        if freqs.ndim != 1 or freqs.shape[0] == 0:
            raise SolverError("freqs_hz must be a non-empty 1-D array")
        if anchors_hz is None:
            anchors_hz = self.anchor_frequencies(float(freqs.min()), float(freqs.max()))
        anchors = np.sort(np.asarray(anchors_hz, float))
        if anchors.shape[0] < 3:
            raise SolverError("matrix interpolation needs >= 3 anchor frequencies")
        k_anchor = 2.0 * math.pi * anchors / C0_M_PER_S
        dist = self.basis_distance_m
        stack_a, stack_p = [], []
        for f, k in zip(anchors, k_anchor):
            a_mat, phi_mat = self.potential_matrices(float(f))
            ph = np.exp(1j * k * dist)
            a_mat *= ph
            phi_mat *= ph
            stack_a.append(a_mat)
            stack_p.append(phi_mat)
            del a_mat, phi_mat, ph
        n_b = dist.shape[0]
        k_all = 2.0 * math.pi * freqs / C0_M_PER_S
        group = np.clip(np.searchsorted(k_anchor, k_all) - 1, 0, anchors.shape[0] - 3)
        coeffs: dict[int, list[np.ndarray]] = {}

        def laurent(c: int) -> list[np.ndarray]:
            """Matrices C_n with Z_dyn = E o sum_n k^n C_n, n = -1..3, for anchor group ``c``."""
            if c not in coeffs:
                kk = k_anchor[c : c + 3]
                power = np.zeros((3, 3))  # power[i] = (alpha, beta, gamma) of Lagrange weight i
                for i in range(3):
                    others = [kk[j] for j in range(3) if j != i]
                    scale = 1.0 / ((kk[i] - others[0]) * (kk[i] - others[1]))
                    power[i] = scale * np.array([others[0] * others[1], -(others[0] + others[1]), 1.0])
                coeffs.clear()
                a_pw = [sum(power[i, n] * stack_a[c + i] for i in range(3)) for n in range(3)]
                p_pw = [sum(power[i, n] * stack_p[c + i] for i in range(3)) for n in range(3)]
                fac = -1j * ETA0_OHM
                # in place (five matrices, no temporaries): fac p0, fac p1, fac (p2 - a0), -fac a1, -fac a2
                p_pw[0] *= fac
                p_pw[1] *= fac
                p_pw[2] -= a_pw[0]
                p_pw[2] *= fac
                a_pw[1] *= -fac
                a_pw[2] *= -fac
                coeffs[c] = [p_pw[0], p_pw[1], p_pw[2], a_pw[1], a_pw[2]]
                del a_pw, p_pw
            return coeffs[c]

        if np.unique(group).shape[0] == 1:  # one anchor group: its coefficients replace the anchors
            laurent(int(group[0]))
            stack_a.clear()
            stack_p.clear()

        dk = np.diff(k_all)
        uniform = freqs.shape[0] > 2 and np.allclose(dk, dk[0], rtol=1e-9, atol=0.0)
        step = np.exp(-1j * dk[0] * dist).reshape(-1) if uniform else None
        phase = np.exp(-1j * k_all[0] * dist).reshape(-1)
        slab = self._slab_phi.reshape(-1) if self._slab_phi is not None else None
        loss_idx, loss_val = self._loss_pattern
        out = np.empty(freqs.shape[0], complex)
        v = self._v.astype(complex)

        def solve_batch(z_batch: np.ndarray) -> np.ndarray:
            return np.array([1.0 / (v @ self._solve(z)) for z in z_batch])

        # the main thread assembles chunk after chunk (phase recurrence is sequential) while worker
        # threads run the LAPACK solves (numpy releases the GIL there): both cores stay busy
        pending: list[tuple[int, int, Future]] = []
        with blas_threads_limited(), _pool(workers) as pool:
            for start in range(0, freqs.shape[0], SOLVE_CHUNK):
                stop = min(start + SOLVE_CHUNK, freqs.shape[0])
                z_batch = np.empty((stop - start, n_b, n_b), complex)
                for j, i in enumerate(range(start, stop)):
                    x = float(k_all[i])
                    if i > 0:
                        if uniform:
                            phase *= step
                        else:
                            phase = np.exp(-1j * x * dist).reshape(-1)
                    c_m1, c_0, c_1, c_2, c_3 = (m.reshape(-1) for m in laurent(int(group[i])))
                    zj = z_batch[j].reshape(-1)
                    np.multiply(c_3, x, out=zj)
                    zaxpy(c_2, zj, a=1.0)
                    zj *= x
                    zaxpy(c_1, zj, a=1.0)
                    zj *= x
                    zaxpy(c_0, zj, a=1.0)
                    zaxpy(c_m1, zj, a=1.0 / x)
                    zj *= phase
                    if slab is not None:
                        zaxpy(slab, zj, a=-1j * ETA0_OHM / x)
                    if loss_idx.shape[0]:
                        zj[loss_idx] += (1.0 + 1j) * self.surface_resistance_ohm(float(freqs[i])) * loss_val
                pending.append((start, stop, pool.submit(solve_batch, z_batch)))
                while len(pending) > workers or (pending and stop == freqs.shape[0]):
                    first, last, fut = pending.pop(0)
                    out[first:last] = fut.result()
                    if progress is not None:
                        progress(last, freqs.shape[0])
        return out


def solve_refined(z: np.ndarray, v: np.ndarray) -> np.ndarray:
    """``Z^-1 v`` for a complex-symmetric ``z`` (may be overwritten).  From
    MIXED_PRECISION_MIN_UNKNOWNS unknowns: LU in complex64, one refinement step
    ``x += LU^-1 (v - Z x)`` with the residual in complex128, kept if the error estimates stay
    within MIXED_ZIN_RTOL and MIXED_RESIDUAL_RTOL (else a double-precision solve)."""
    if z.shape[0] >= MIXED_PRECISION_MIN_UNKNOWNS:
        lu, piv, info = lapack.cgetrf(z.astype(np.complex64), overwrite_a=True)
        if info == 0:
            x = lapack.cgetrs(lu, piv, v.astype(np.complex64))[0].astype(complex)
            x += lapack.cgetrs(lu, piv, (v - z @ x).astype(np.complex64))[0]
            r = v - z @ x
            if (abs(x @ r) <= MIXED_ZIN_RTOL * abs(v @ x)
                    and float(np.linalg.norm(r)) <= MIXED_RESIDUAL_RTOL * float(np.linalg.norm(v))):
                return x
    return np.linalg.solve(z, v)


class _InlinePool:
    """Runs submitted calls at once in the calling thread (a sweep with no worker threads)."""

    def __enter__(self) -> "_InlinePool":
        return self

    def __exit__(self, *exc: object) -> None:
        return None

    def submit(self, fn: Callable, *args: object) -> Future:
        fut: Future = Future()
        fut.set_result(fn(*args))
        return fut


def _pool(workers: int) -> ThreadPoolExecutor | _InlinePool:
    if workers < 0:
        raise SolverError(f"workers = {workers!r}: give 0 (no worker thread) or more")
    return ThreadPoolExecutor(max_workers=workers) if workers else _InlinePool()


@lru_cache(maxsize=1)
def _blas_controller():
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


_blas_limit: dict = {"depth": 0, "limiter": None, "lock": threading.Lock()}


@contextmanager
def blas_threads_limited():
    """Context in which the BLAS libraries numpy and scipy loaded use BLAS_THREADS threads
    (threadpoolctl), whatever OPENBLAS_NUM_THREADS the caller's process started with.  Nested and
    concurrent uses (solves in several threads) share one limit, lifted when the last one ends."""
    state = _blas_limit
    with state["lock"]:
        if state["depth"] == 0:
            state["limiter"] = _blas_controller().limit(limits=BLAS_THREADS, user_api="blas")
        state["depth"] += 1
    try:
        yield
    finally:
        with state["lock"]:
            state["depth"] -= 1
            if state["depth"] == 0:
                state["limiter"].restore_original_limits()
                state["limiter"] = None


def half_divergence_sign(mesh: _Mesh, halves: np.ndarray) -> np.ndarray:
    """Sign of the divergence of a half triangle: +1 at the segment end node, -1 at the start."""
    return np.where(mesh.half_loc[halves] == 1, 1.0, -1.0)


SWEEP_METHODS: dict[str, Callable[..., np.ndarray]] = {
    "direct": MomSolver.sweep_direct,
    "interpolated": MomSolver.sweep_interpolated,
}


def zin_sweep_ohm(
    model: WireModel,
    freqs_hz: np.ndarray,
    method: str = "interpolated",
    progress: Callable[[int, int], None] | None = None,
) -> np.ndarray:
    """Input impedance of ``model`` over ``freqs_hz`` with the named sweep method."""
    if method not in SWEEP_METHODS:
        raise SolverError(f"sweep method = {method!r}: use one of {sorted(SWEEP_METHODS)}")
    return SWEEP_METHODS[method](MomSolver(model), freqs_hz, progress=progress)


__all__ = [
    "MomSolver",
    "Slab",
    "Wire",
    "WireModel",
    "slab_static_image_weights",
    "zin_sweep_ohm",
]
