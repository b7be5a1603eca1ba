"""Far field, power budget, efficiency, directivity and gain from thin-wire MoM currents.

Pure SI, no I/O.  Inputs are the segment currents of :meth:`footgen.physics.mom.MomSolver.segment_currents`
(linear current along each straight segment).

* Far field in free space, time convention ``exp(j w t)`` (Balanis, "Antenna Theory", 4th ed.
  2016, sec. 6.8 and 12.3: radiation vector ``N`` and ``E = -j w mu0 exp(-jkr)/(4 pi r) N_perp``;
  from memory): ``N(r_hat) = sum_seg int I(s) u exp(j k r_hat . r(s)) ds`` by Gauss-Legendre points
  per segment, and the radiation intensity ``U = eta0 k^2 |N_perp|^2 / (32 pi^2)`` (W/sr).
  The laminate is modelled as the solver models it: it changes the near (quasi-static) field and
  so the currents, but the radiation itself is free space (no slab in the far-field kernel).
* Radiated power: ``U`` integrated over the sphere, Gauss-Legendre in ``cos(theta)`` and the
  trapezoid rule in ``phi`` (exact for the band-limited pattern of a source of radius ``R`` once
  the order exceeds ``k R`` by a margin).
* Conductor loss: ``1/2 int Rs |I|^2 / p dl`` over lossy segments (``p`` the copper perimeter,
  ``Rs = sqrt(w mu0 / (2 sigma))``), the real part of the solver's own surface-impedance term.
* Dielectric loss: the solver puts the laminate into the scalar potential as the static image
  series of a slab with complex permittivity ``eps_r (1 - j tan_delta)``; the power that term
  absorbs, ``1/2 I^H Re(Z_slab) I``, is the dielectric loss.  To first order in ``tan_delta`` it is
  ``w tan_delta`` times twice the time-averaged electric energy the copper's charges store in the
  laminate (quasi-static field of the slab), i.e. the usual ``P = w eps'' int |E|^2 dV / 2``
  estimate restricted to the static field under and around the copper (common practice, no
  source).  The field of the radiated wave inside the laminate is not counted.
* Radiation efficiency ``P_rad / P_accepted``; total efficiency ``(1 - |S11|^2)`` times that;
  directivity ``4 pi U / P_rad``; gain ``4 pi U / P_accepted``; realised gain
  ``4 pi U / P_incident = (1 - |S11|^2) * gain``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from footgen.constants import C0_M_PER_S, ETA0_OHM, MU0_H_PER_M

if TYPE_CHECKING:
    from footgen.physics.mom import MomSolver

# Gauss-Legendre points per segment for the radiation vector (segments are <= lambda / 20, so the
# phase across one is < 0.32 rad and three points are exact to ~1e-7)
POINTS_PER_SEGMENT = 3
# sphere quadrature: Gauss-Legendre order in cos(theta) = k * (source radius) + this margin
SPHERE_ORDER_MARGIN = 10
MIN_SPHERE_ORDER = 12
# directions evaluated per block (bounds the phase-matrix memory)
DIRECTION_BLOCK = 512
# grid step (degrees) of the local search for the peak intensity
PEAK_REFINE_STEP_DEG = 2.0
# principal-cut and 3-D pattern grid step (degrees)
PATTERN_STEP_DEG = 2.0
# energy balance accepted = radiated + conductor + dielectric, relative (MoM quadrature error)
ENERGY_BALANCE_REL_TOL = 0.01


@dataclass(frozen=True)
class SegmentCurrents:
    """Straight segments with linear current (SI): the current runs from ``i_start_a`` at
    ``starts_m`` to ``i_end_a`` at ``ends_m``, positive from start to end; ``loss_perimeter_m``
    > 0 marks copper with skin-effect loss."""

    starts_m: np.ndarray
    ends_m: np.ndarray
    i_start_a: np.ndarray
    i_end_a: np.ndarray
    loss_perimeter_m: np.ndarray

    @property
    def lengths_m(self) -> np.ndarray:
        return np.linalg.norm(self.ends_m - self.starts_m, axis=1)


@dataclass(frozen=True)
class PowerBudget:
    """Power (W) into the port and where it goes, plus the figures derived from it."""

    freq_hz: float
    accepted_w: float
    radiated_w: float
    conductor_loss_w: float
    dielectric_loss_w: float
    s11: complex

    @property
    def radiation_efficiency(self) -> float:
        return self.radiated_w / self.accepted_w

    @property
    def mismatch_factor(self) -> float:
        return 1.0 - abs(self.s11) ** 2

    @property
    def total_efficiency(self) -> float:
        return self.mismatch_factor * self.radiation_efficiency

    @property
    def balance_error(self) -> float:
        """``(radiated + losses) / accepted - 1``: the quadrature error of the power budget."""
        return (self.radiated_w + self.conductor_loss_w + self.dielectric_loss_w) / self.accepted_w - 1.0


def direction_vectors(theta_rad: np.ndarray, phi_rad: np.ndarray) -> np.ndarray:
    """Unit vectors ``r_hat`` for matching arrays of angles -> (..., 3)."""
    st = np.sin(theta_rad)
    return np.stack([st * np.cos(phi_rad), st * np.sin(phi_rad), np.cos(theta_rad) + 0.0 * phi_rad], axis=-1)


def radiation_intensity_w_per_sr(seg: SegmentCurrents, freq_hz: float, r_hat: np.ndarray) -> np.ndarray:
    """Radiation intensity ``U`` (W/sr) in the directions ``r_hat`` (D, 3)."""
    e_theta, e_phi = far_field_components(seg, freq_hz, r_hat)
    return (np.abs(e_theta) ** 2 + np.abs(e_phi) ** 2) / (2.0 * ETA0_OHM)


def far_field_components(seg: SegmentCurrents, freq_hz: float, r_hat: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``r * E_theta`` and ``r * E_phi`` (V) without the ``exp(-jkr)`` factor, directions (D, 3)."""
    k = 2.0 * math.pi * freq_hz / C0_M_PER_S
    x, w = np.polynomial.legendre.leggauss(POINTS_PER_SEGMENT)
    s, w = 0.5 * (x + 1.0), 0.5 * w
    d = seg.ends_m - seg.starts_m  # (N, 3) = length * unit
    pts = (seg.starts_m[:, None, :] + s[None, :, None] * d[:, None, :]).reshape(-1, 3)
    amp = (seg.i_start_a[:, None] * (1.0 - s)[None, :] + seg.i_end_a[:, None] * s[None, :]) * w[None, :]
    amp = amp.reshape(-1)
    d_rep = np.repeat(d, POINTS_PER_SEGMENT, axis=0)
    r_hat = np.asarray(r_hat, float).reshape(-1, 3)
    n_vec = np.empty((r_hat.shape[0], 3), complex)
    moments = amp[:, None] * d_rep  # (P, 3)
    for b in range(0, r_hat.shape[0], DIRECTION_BLOCK):
        phase = np.exp(1j * k * (r_hat[b:b + DIRECTION_BLOCK] @ pts.T))
        n_vec[b:b + DIRECTION_BLOCK] = phase @ moments
    # theta and phi unit vectors of each direction
    rho = np.hypot(r_hat[:, 0], r_hat[:, 1])
    on_axis = rho < 1e-12
    cos_p = np.where(on_axis, 1.0, r_hat[:, 0] / np.where(on_axis, 1.0, rho))
    sin_p = np.where(on_axis, 0.0, r_hat[:, 1] / np.where(on_axis, 1.0, rho))
    cos_t = r_hat[:, 2]
    theta_hat = np.stack([cos_t * cos_p, cos_t * sin_p, -rho], axis=1)
    phi_hat = np.stack([-sin_p, cos_p, np.zeros_like(cos_p)], axis=1)
    scale = -1j * 2.0 * math.pi * freq_hz * MU0_H_PER_M / (4.0 * math.pi)
    e_theta = scale * np.einsum("dc,dc->d", n_vec, theta_hat)
    e_phi = scale * np.einsum("dc,dc->d", n_vec, phi_hat)
    return e_theta, e_phi


def sphere_quadrature(order: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Directions (M, 3), weights (M,) (summing to 4 pi), and theta/phi grids for a product rule:
    Gauss-Legendre of ``order`` points in ``cos(theta)``, ``2 order`` equal steps in ``phi``."""
    mu, w_mu = np.polynomial.legendre.leggauss(order)
    n_phi = 2 * order
    phi = 2.0 * math.pi * np.arange(n_phi) / n_phi
    theta = np.arccos(mu)
    th, ph = np.meshgrid(theta, phi, indexing="ij")
    weights = np.repeat(w_mu, n_phi) * (2.0 * math.pi / n_phi)
    return direction_vectors(th, ph).reshape(-1, 3), weights, np.stack([th.reshape(-1), ph.reshape(-1)], axis=1)


def sphere_order(seg: SegmentCurrents, freq_hz: float) -> int:
    """Quadrature order for the source's electrical radius about the origin."""
    k = 2.0 * math.pi * freq_hz / C0_M_PER_S
    radius = float(np.max(np.linalg.norm(np.concatenate([seg.starts_m, seg.ends_m]), axis=1)))
    return max(MIN_SPHERE_ORDER, int(math.ceil(k * radius)) + SPHERE_ORDER_MARGIN)


def radiated_power_w(seg: SegmentCurrents, freq_hz: float) -> float:
    """Radiated power (W): the radiation intensity integrated over the sphere."""
    r_hat, weights, _ = sphere_quadrature(sphere_order(seg, freq_hz))
    return float(weights @ radiation_intensity_w_per_sr(seg, freq_hz, r_hat))


def peak_intensity(seg: SegmentCurrents, freq_hz: float) -> tuple[float, float, float]:
    """``(U_max (W/sr), theta (rad), phi (rad))``: the largest radiation intensity, found on the
    radiated-power quadrature points and refined on a PEAK_REFINE_STEP_DEG grid spanning two
    quadrature spacings around the best of them (the pattern of a source of electrical radius
    ``kR`` varies on angular scales of about ``1 / (kR + 1)``, wider than that span)."""
    order = sphere_order(seg, freq_hz)
    r_hat, _, angles = sphere_quadrature(order)
    u = radiation_intensity_w_per_sr(seg, freq_hz, r_hat)
    th0, ph0 = angles[int(np.argmax(u))]
    half = math.pi / order
    offsets = np.arange(-half, half + 1e-12, math.radians(PEAK_REFINE_STEP_DEG))
    th = np.clip(th0 + offsets, 0.0, math.pi)
    th_g, ph_g = np.meshgrid(th, ph0 + offsets, indexing="ij")
    u_fine = radiation_intensity_w_per_sr(seg, freq_hz, direction_vectors(th_g, ph_g).reshape(-1, 3))
    i = int(np.argmax(u_fine))
    if u_fine[i] >= u.max():
        return float(u_fine[i]), float(th_g.reshape(-1)[i]), float(ph_g.reshape(-1)[i] % (2.0 * math.pi))
    return float(u.max()), float(th0), float(ph0)


def conductor_loss_w(seg: SegmentCurrents, surface_resistance_ohm: float) -> float:
    """``1/2 int Rs |I|^2 / p dl`` over the lossy segments (linear current, exact integral)."""
    lossy = seg.loss_perimeter_m > 0.0
    a, b = seg.i_start_a[lossy], seg.i_end_a[lossy]
    sq_mean = (np.abs(a) ** 2 + np.abs(b) ** 2 + np.real(a * np.conj(b))) / 3.0
    return float(0.5 * surface_resistance_ohm * np.sum(seg.lengths_m[lossy] / seg.loss_perimeter_m[lossy] * sq_mean))


def hermitian_power_w(matrix: np.ndarray | None, basis_currents: np.ndarray) -> float:
    """``1/2 I^H Re(Z) I`` for a complex-symmetric matrix part ``Z`` (0 when None)."""
    if matrix is None:
        return 0.0
    i = np.asarray(basis_currents)
    return float(0.5 * np.real(np.conj(i) @ (matrix.real @ i)))


def power_budget(seg: SegmentCurrents, freq_hz: float, input_current_a: complex, source_v: float,
                 surface_resistance_ohm: float, dielectric_loss_w: float, z0_ohm: float) -> PowerBudget:
    """Power budget of one solution driven by ``source_v`` volts with ``input_current_a`` at the port."""
    zin = source_v / input_current_a
    return PowerBudget(
        freq_hz=freq_hz,
        accepted_w=0.5 * source_v * float(np.real(input_current_a)),
        radiated_w=radiated_power_w(seg, freq_hz),
        conductor_loss_w=conductor_loss_w(seg, surface_resistance_ohm),
        dielectric_loss_w=dielectric_loss_w,
        s11=complex((zin - z0_ohm) / (zin + z0_ohm)),
    )


@dataclass(frozen=True)
class Pattern:
    """Gain on a theta/phi grid (degrees) with its power budget; gains as power ratios."""

    theta_deg: np.ndarray  # (T,)
    phi_deg: np.ndarray  # (P,)
    intensity_w_per_sr: np.ndarray  # (T, P)
    budget: PowerBudget

    @property
    def directivity(self) -> np.ndarray:
        return 4.0 * math.pi * self.intensity_w_per_sr / self.budget.radiated_w

    @property
    def gain(self) -> np.ndarray:
        return 4.0 * math.pi * self.intensity_w_per_sr / self.budget.accepted_w

    @property
    def realised_gain(self) -> np.ndarray:
        return self.gain * self.budget.mismatch_factor

    @property
    def peak_directivity(self) -> float:
        return float(self.directivity.max())

    @property
    def peak_realised_gain(self) -> float:
        return float(self.realised_gain.max())


def pattern_grid(seg: SegmentCurrents, budget: PowerBudget, step_deg: float = PATTERN_STEP_DEG) -> Pattern:
    """Radiation intensity on a full theta (0..180) x phi (0..360 - step) grid."""
    theta = np.arange(0.0, 180.0 + 1e-9, step_deg)
    phi = np.arange(0.0, 360.0 - 1e-9, step_deg)
    th, ph = np.meshgrid(np.deg2rad(theta), np.deg2rad(phi), indexing="ij")
    u = radiation_intensity_w_per_sr(seg, budget.freq_hz, direction_vectors(th, ph).reshape(-1, 3))
    return Pattern(theta, phi, u.reshape(th.shape), budget)


def db10(x: np.ndarray | float) -> np.ndarray:
    """``10 log10`` of a power ratio (floored at 1e-30)."""
    return 10.0 * np.log10(np.maximum(np.asarray(x, float), 1e-30))


__all__ = [
    "ENERGY_BALANCE_REL_TOL",
    "Pattern",
    "PowerBudget",
    "SegmentCurrents",
    "conductor_loss_w",
    "db10",
    "far_field_components",
    "hermitian_power_w",
    "pattern_grid",
    "peak_intensity",
    "power_budget",
    "radiated_power_w",
    "radiation_intensity_w_per_sr",
    "solve_radiation",
    "sphere_quadrature",
]


def solve_radiation(solver: "MomSolver", freq_hz: float, z0_ohm: float) -> tuple[SegmentCurrents, PowerBudget]:
    """Solve ``solver`` at one frequency (1 V at the source) and return the currents and budget."""
    currents = solver.currents(freq_hz)
    starts, ends, i_a, i_b, perim = solver.segment_currents(currents)
    seg = SegmentCurrents(starts, ends, i_a, i_b, perim)
    diel = hermitian_power_w(solver.laminate_impedance_matrix(freq_hz), currents)
    budget = power_budget(seg, freq_hz, solver.input_current_a(currents), 1.0,
                          solver.surface_resistance_ohm(freq_hz), diel, z0_ohm)
    return seg, budget
