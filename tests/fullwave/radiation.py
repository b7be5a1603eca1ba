"""openEMS near-to-far-field transform for the radiation references (used by ``openems_ifa.py``).

A near-field box in the air around the board records E and H in the frequency domain; openEMS's
NF2FF transform gives the far field on a full sphere (board frame: board in the x-y plane, z its
normal, as in ``openems_ifa.py``).  We integrate the radiation intensity over the sphere ourselves
(trapezoid in theta and phi), so radiated power, directivity and gain use one quadrature.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from footgen.constants import C0_M_PER_S, MU0_H_PER_M

# the near-field box sits this fraction of the air margin outside the board's bounding box
NF2FF_BOX_AIR_FRACTION = 0.5
# far-field sphere step (degrees)
SPHERE_STEP_DEG = 5.0


def add_nf2ff_box(fdtd: Any, board_box_m: tuple[float, ...], air_margin_m: float,
                  freqs_hz: list[float]) -> Any:
    """Add a frequency-domain near-field recording box around the board; returns the box."""
    x0, y0, z0, x1, y1, z1 = board_box_m
    d = NF2FF_BOX_AIR_FRACTION * air_margin_m
    return fdtd.CreateNF2FFBox("nf2ff", [x0 - d, y0 - d, z0 - d], [x1 + d, y1 + d, z1 + d],
                               frequency=list(freqs_hz))


def far_field_summary(box: Any, sim_path: str, freqs_hz: np.ndarray, p_acc_w: np.ndarray,
                      s11: np.ndarray) -> dict[str, Any]:
    """Radiated power, efficiency, directivity, gain and the principal cuts at each frequency."""
    theta = np.arange(0.0, 180.0 + 1e-9, SPHERE_STEP_DEG)
    phi = np.arange(0.0, 360.0, SPHERE_STEP_DEG)
    res = box.CalcNF2FF(sim_path, list(freqs_hz), theta, phi, radius=1.0, center=[0, 0, 0])
    z0 = MU0_H_PER_M * C0_M_PER_S
    th = np.deg2rad(theta)
    dth = np.deg2rad(SPHERE_STEP_DEG)
    w_th = np.full(th.size, dth)
    w_th[[0, -1]] *= 0.5
    out: list[dict[str, Any]] = []
    for k, f in enumerate(freqs_hz):
        e_t = np.asarray(res.E_theta[k])
        e_p = np.asarray(res.E_phi[k])
        u = (np.abs(e_t) ** 2 + np.abs(e_p) ** 2) / (2.0 * z0)  # W/sr at r = 1 m
        p_rad = float(np.sum(u * (np.sin(th) * w_th)[:, None]) * np.deg2rad(SPHERE_STEP_DEG))
        gain = 4.0 * np.pi * u / p_acc_w[k]
        i90 = int(np.argmin(np.abs(theta - 90.0)))
        i_phi90 = int(np.argmin(np.abs(phi - 90.0)))

        def cut_xz(phi_index: int) -> list[float]:
            # theta from 0 to 180 at phi, then back over phi + 180: angle 0..355 in the plane
            opp = (phi_index + phi.size // 2) % phi.size
            g = np.concatenate((gain[:, phi_index], gain[-2:0:-1, opp]))
            return np.round(10 * np.log10(g), 4).tolist()

        out.append({
            "freq_hz": float(f),
            "s11_re": float(np.real(s11[k])), "s11_im": float(np.imag(s11[k])),
            "p_acc_w": float(p_acc_w[k]),
            "p_rad_w": p_rad,
            "p_rad_openems_w": float(np.asarray(res.Prad)[k]),
            "radiation_efficiency": p_rad / float(p_acc_w[k]),
            "directivity_max": float(4.0 * np.pi * u.max() / p_rad),
            "directivity_max_openems": float(np.asarray(res.Dmax)[k]),
            "gain_max_dbi": float(10 * np.log10(gain.max())),
            "cut_angle_deg": np.arange(0.0, 360.0, SPHERE_STEP_DEG).tolist(),
            "cut_phi0_gain_dbi": cut_xz(0),
            "cut_phi90_gain_dbi": cut_xz(i_phi90),
            "cut_theta90_gain_dbi": np.round(10 * np.log10(gain[i90, :]), 4).tolist(),
        })
    return {
        "method": "openEMS NF2FF (frequency-domain near-field box), sphere integrated here",
        "frame": "board in x-y, z normal to the board (copper side +z); cuts: phi=0 is the x-z "
                 "plane and phi=90 the y-z plane (angle = theta on the phi side, 360-theta on "
                 "the opposite side), theta=90 is the board plane (angle = phi)",
        "sphere_step_deg": SPHERE_STEP_DEG,
        "gain_definition": "IEEE gain 4 pi U / P_accepted (no mismatch)",
        "frequencies": out,
    }
