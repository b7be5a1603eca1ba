"""Solve a footgen thin-wire model with nec2++ (PyPI ``PyNEC``): the outside reference for the
MoM tests and benchmark.  Same wires, same segmentation, same source segment; free space, lossless.

Test/benchmark dependency only; footgen itself never imports PyNEC.
"""

from __future__ import annotations

import numpy as np
import PyNEC

from footgen.physics.ifa import GroundPlane, Laminate, PrintedIfa
from footgen.physics.mom import WireModel

HZ_PER_MHZ = 1e6
MM = 1e-3


def comparison_ifa() -> PrintedIfa:
    """Invented free-space wire IFA over a 40 mm x 40 mm ground, shared by the nec2++ tests and
    benchmarks/solver_vs_nec2.py (demo geometry, not a vendor design)."""
    return PrintedIfa(
        arm_path_m=((-14 * MM, 3 * MM), (18 * MM, 3 * MM)),
        feed_x_m=-12 * MM,
        short_x_m=-14 * MM,
        trace_width_m=0.4 * MM,
        short_width_m=0.4 * MM,
        port_gap_m=0.8 * MM,
        ground=GroundPlane(x_min_m=-20 * MM, x_max_m=20 * MM, length_m=40 * MM),
        laminate=Laminate(eps_r=1.0, thickness_m=1.6 * MM),
    )


def _context(model: WireModel) -> PyNEC.nec_context:
    if model.slab is not None:
        raise ValueError("nec2++ reference runs free-space models only (slab = None)")
    ctx = PyNEC.nec_context()
    geo = ctx.get_geometry()
    for tag, wire in enumerate(model.wires, start=1):
        geo.wire(tag, wire.n_segments, *wire.start_m, *wire.end_m, wire.radius_m, 1.0, 1.0)
    ctx.geometry_complete(0)
    ctx.gn_card(-1, 0, 0, 0, 0, 0, 0, 0)  # free space
    ctx.ex_card(0, model.source_wire + 1, model.source_segment + 1, 0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0)
    return ctx


def nec2_zin_ohm(model: WireModel, freqs_hz: np.ndarray) -> np.ndarray:
    """nec2++ input impedance at the model's source for each frequency (one XQ per frequency)."""
    ctx = _context(model)
    out = np.empty(len(freqs_hz), complex)
    for i, f in enumerate(np.asarray(freqs_hz, float)):
        ctx.fr_card(0, 1, f / HZ_PER_MHZ, 0.0)
        ctx.xq_card(0)
        out[i] = ctx.get_input_parameters(i).get_impedance()[0]
    return out


def nec2_zin_uniform_ohm(model: WireModel, f_start_hz: float, f_step_hz: float, n_freqs: int) -> np.ndarray:
    """nec2++ input impedance over a uniform sweep given by one FR card."""
    ctx = _context(model)
    ctx.fr_card(0, n_freqs, f_start_hz / HZ_PER_MHZ, f_step_hz / HZ_PER_MHZ)
    ctx.xq_card(0)
    return np.array([ctx.get_input_parameters(i).get_impedance()[0] for i in range(n_freqs)])


def nec2_power_gain_dbi(model: WireModel, freq_hz: float, theta_deg: np.ndarray, phi_deg: np.ndarray) -> np.ndarray:
    """nec2++ power gain (dBi, relative to the input power) on the grid ``theta_deg`` x ``phi_deg``
    (uniform steps, free space, one RP card) -> (theta, phi)."""
    ctx = _context(model)
    ctx.fr_card(0, 1, freq_hz / HZ_PER_MHZ, 0.0)
    theta = np.asarray(theta_deg, float)
    phi = np.asarray(phi_deg, float)
    d_theta = float(theta[1] - theta[0]) if theta.size > 1 else 0.0
    d_phi = float(phi[1] - phi[0]) if phi.size > 1 else 0.0
    # normal mode, power gain (XNDA = 0000), no averaging
    ctx.rp_card(0, theta.size, phi.size, 0, 0, 0, 0, float(theta[0]), float(phi[0]), d_theta, d_phi, 0.0, 0.0)
    pattern = ctx.get_radiation_pattern(0)
    gain = np.asarray(pattern.get_gain(), float)
    return gain.reshape(theta.size, phi.size) if gain.size == theta.size * phi.size else gain
