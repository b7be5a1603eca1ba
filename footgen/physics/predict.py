"""Prediction API used by the CLI and synthesis: Zin, S11, resonance and -10 dB band of a printed IFA.

Zin comes from the thin-wire MoM solver (:mod:`footgen.physics.mom`) on the wire model of
:mod:`footgen.physics.wires` (antenna traces, ground wire grid, FR-4 slab under the copper).
Estimates never replace measurement; radio products must meet local radio regulations and
RF-exposure limits.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from footgen.errors import SolverError
from footgen.physics.ifa import PrintedIfa
from footgen.physics.mom import MomSolver
from footgen.physics.wires import MeshControl, ifa_wire_model

Z0_DEFAULT_OHM = 50.0
RETURN_LOSS_LIMIT_DB = -10.0
RESONANCE_COARSE_POINTS = 61
RESONANCE_FINE_POINTS = 41
MIN_INTERPOLATED_POINTS = 4  # fewer frequencies: full solves are cheaper than anchors
#: Dense sweeps are solved at this many evenly spaced frequencies per RESAMPLE_SPAN of relative
#: span (top over bottom frequency minus one) and Zin is interpolated in between by a cubic
#: spline (real and imaginary parts).  On the bundled examples' +-20 % prediction sweeps, 41
#: solved points against 201 solved points: |S11| within 0.001 dB (measured; checked in
#: tests/test_predict.py).  Used only where it solves at most half the points asked for.
RESAMPLE_POINTS = 41
RESAMPLE_SPAN = 0.5


def _sweep(solver: MomSolver, freqs_hz: np.ndarray, progress: Callable[[int, int], None] | None) -> np.ndarray:
    if freqs_hz.shape[0] < MIN_INTERPOLATED_POINTS:
        return solver.sweep_direct(freqs_hz, progress=progress)
    return solver.sweep_interpolated(freqs_hz, progress=progress)


def resampled_points(freqs_hz: np.ndarray) -> int | None:
    """Number of frequencies :func:`zin_resampled` solves for this sweep, or None when it solves
    every one (short sweeps)."""
    freqs = np.asarray(freqs_hz, float)
    lo, hi = float(freqs.min()), float(freqs.max())
    n = max(RESAMPLE_POINTS, math.ceil(RESAMPLE_POINTS * (hi / lo - 1.0) / RESAMPLE_SPAN)) if lo > 0.0 else freqs.shape[0]
    return n if 2 * n <= freqs.shape[0] else None


def zin_resampled(solve: Callable[[np.ndarray], np.ndarray], freqs_hz: np.ndarray, z0_ohm: float = Z0_DEFAULT_OHM) -> np.ndarray:
    """``solve(freqs_hz)`` for a dense sweep: solved at :func:`resampled_points` evenly spaced
    frequencies over its range, cubic spline in between (``solve`` itself for short sweeps).

    A narrow resonance (fewer than ``NARROW_BAND_INTERVALS`` solved intervals across the part of
    the response within ``NARROW_BAND_LEVEL_DB`` of its minimum) gets further solved points there
    (:func:`narrow_band_points`, one more ``solve`` call), so the spline follows the flanks and the
    -10 dB edges of narrow bands as well as it follows wide ones."""
    freqs = np.asarray(freqs_hz, float)
    n = resampled_points(freqs)
    if n is None:
        return np.asarray(solve(freqs), complex)
    from scipy.interpolate import CubicSpline

    grid = np.linspace(float(freqs.min()), float(freqs.max()), n)
    z_grid = np.asarray(solve(grid), complex)
    extra = narrow_band_points(grid, z_grid, freqs, z0_ohm)
    if extra.shape[0]:
        grid = np.concatenate([grid, extra])
        z_grid = np.concatenate([z_grid, np.asarray(solve(extra), complex)])
        order = np.argsort(grid)
        grid, z_grid = grid[order], z_grid[order]
    return CubicSpline(grid, z_grid)(freqs)


#: A resonance is narrow when its -10 dB band (or, without one, the part of |S11| within
#: NARROW_BAND_LEVEL_DB of its minimum) spans fewer than NARROW_BAND_MIN_INTERVALS solved
#: intervals; it then gets NARROW_BAND_INTERVALS solved intervals across it and points at that
#: spacing one coarse interval either side.  On the 433 MHz template (-10 dB band 1.6 % wide,
#: under two intervals) the 41-point spline alone sat up to 0.6 dB from direct solves on the
#: flanks (measured); with these points see DEVELOPERS.md and tests/test_predict.py.
NARROW_BAND_LEVEL_DB = 3.0
NARROW_BAND_MIN_INTERVALS = 4
NARROW_BAND_INTERVALS = 8


def narrow_band_points(grid_hz: np.ndarray, z_grid: np.ndarray, freqs_hz: np.ndarray, z0_ohm: float = Z0_DEFAULT_OHM) -> np.ndarray:
    """Frequencies (Hz, none of them in ``grid_hz``) to solve besides the even ``grid_hz`` so that a
    narrow resonance is resolved (see :data:`NARROW_BAND_INTERVALS`); empty when it already is."""
    from scipy.interpolate import CubicSpline

    freqs = np.asarray(freqs_hz, float)
    step = float(grid_hz[1] - grid_hz[0])
    mag_db = 20.0 * np.log10(np.maximum(np.abs(s11_from_zin(CubicSpline(grid_hz, z_grid)(freqs), z0_ohm)), 1e-12))
    i = int(np.argmin(mag_db))
    inside = mag_db <= max(RETURN_LOSS_LIMIT_DB, mag_db[i] + NARROW_BAND_LEVEL_DB)
    lo = hi = i
    while lo > 0 and inside[lo - 1]:
        lo -= 1
    while hi < freqs.shape[0] - 1 and inside[hi + 1]:
        hi += 1
    width = float(freqs[hi] - freqs[lo])
    if width >= NARROW_BAND_MIN_INTERVALS * step:
        return np.zeros(0)
    fine = max(width, step) / NARROW_BAND_INTERVALS
    f_lo = max(float(grid_hz[0]), float(freqs[lo]) - step)
    f_hi = min(float(grid_hz[-1]), float(freqs[hi]) + step)
    count = int(math.ceil((f_hi - f_lo) / fine - 1e-9))
    points = np.linspace(f_lo, f_hi, count + 1)
    keep = np.min(np.abs(points[:, None] - grid_hz[None, :]), axis=1) > 0.25 * fine
    return points[keep]


def _check_freqs(freqs_hz: np.ndarray) -> np.ndarray:
    freqs = np.atleast_1d(np.asarray(freqs_hz, float))
    if freqs.ndim != 1 or freqs.shape[0] == 0 or not np.all(np.isfinite(freqs)) or np.any(freqs <= 0.0):
        raise SolverError(f"freqs_hz = {freqs_hz!r}: give a 1-D array of positive frequencies in Hz")
    return freqs


def zin_ohm(ifa: PrintedIfa, freqs_hz: np.ndarray, progress: Callable[[int, int], None] | None = None) -> np.ndarray:
    """Complex input impedance (ohm) of ``ifa`` at ``freqs_hz``; ``progress(done, total)`` optional.

    The wire model is segmented for the highest frequency; sweeps of >= 4 points use
    impedance-matrix interpolation between anchor frequencies; dense sweeps are solved on
    fewer points and interpolated (:func:`zin_resampled`), with mixed-precision solves
    (:func:`footgen.physics.mom.solve_refined`).
    """
    freqs = _check_freqs(freqs_hz)
    dense = resampled_points(freqs) is not None
    solver = MomSolver(ifa_wire_model(ifa, float(freqs.max())), mixed_precision=dense)
    return zin_resampled(lambda f: _sweep(solver, f, progress), freqs)


def s11_from_zin(zin: np.ndarray, z0_ohm: float = Z0_DEFAULT_OHM) -> np.ndarray:
    """Reflection coefficient ``(Z - Z0)/(Z + Z0)`` against a real reference impedance."""
    if not (z0_ohm > 0.0):
        raise SolverError(f"z0_ohm = {z0_ohm!r}: must be a positive resistance")
    z = np.asarray(zin, complex)
    return (z - z0_ohm) / (z + z0_ohm)


def _parabola_vertex(x: np.ndarray, y: np.ndarray, i: int) -> float:
    """Vertex of the parabola through the points ``i - 1, i, i + 1`` (``x[i]`` at the ends)."""
    if i <= 0 or i >= x.shape[0] - 1:
        return float(x[i])
    x0, x1, x2 = x[i - 1 : i + 2]
    y0, y1, y2 = y[i - 1 : i + 2]
    denom = (x0 - x1) * (x0 - x2) * (x1 - x2)
    a = (x2 * (y1 - y0) + x1 * (y0 - y2) + x0 * (y2 - y1)) / denom
    b = (x2**2 * (y0 - y1) + x1**2 * (y2 - y0) + x0**2 * (y1 - y2)) / denom
    if a <= 0.0:
        return float(x[i])
    return float(np.clip(-b / (2.0 * a), x0, x2))


def min_s11_frequency_hz(freqs_hz: np.ndarray, s11: np.ndarray) -> float:
    """Frequency of minimum ``|S11|`` on a sampled sweep (parabolic refinement in dB)."""
    freqs = np.asarray(freqs_hz, float)
    mag_db = 20.0 * np.log10(np.maximum(np.abs(s11), 1e-12))
    return _parabola_vertex(freqs, mag_db, int(np.argmin(mag_db)))


def im_zin_zero_crossings_hz(freqs_hz: np.ndarray, zin: np.ndarray) -> np.ndarray:
    """All frequencies where ``Im(Zin)`` changes sign (linear interpolation between samples)."""
    freqs = np.asarray(freqs_hz, float)
    x = np.imag(np.asarray(zin, complex))
    idx = np.nonzero(np.signbit(x[:-1]) != np.signbit(x[1:]))[0]
    return freqs[idx] - x[idx] * (freqs[idx + 1] - freqs[idx]) / (x[idx + 1] - x[idx])


def resonance_hz(ifa: PrintedIfa, f_lo_hz: float, f_hi_hz: float, z0_ohm: float = Z0_DEFAULT_OHM,
                 progress: Callable[[int, int], None] | None = None, control: MeshControl | None = None) -> float:
    """Resonance used by footgen: the frequency of minimum ``|S11|`` (``z0_ohm`` reference) in
    ``[f_lo_hz, f_hi_hz]``; a coarse interpolated sweep, then a fine one around the minimum.
    ``control``: the wire model's mesh (default: :class:`MeshControl` for ``f_hi_hz``).

    :func:`resonance_im_zero_hz` gives the alternative definition (``Im(Zin) = 0``).
    """
    if not (0.0 < f_lo_hz < f_hi_hz):
        raise SolverError(f"band = ({f_lo_hz!r}, {f_hi_hz!r}) Hz: need 0 < f_lo_hz < f_hi_hz")
    solver = MomSolver(ifa_wire_model(ifa, f_hi_hz, control=control))
    coarse = np.linspace(f_lo_hz, f_hi_hz, RESONANCE_COARSE_POINTS)
    s11 = s11_from_zin(_sweep(solver, coarse, progress), z0_ohm)
    i = int(np.argmin(np.abs(s11)))
    lo, hi = coarse[max(i - 1, 0)], coarse[min(i + 1, coarse.shape[0] - 1)]
    fine = np.linspace(lo, hi, RESONANCE_FINE_POINTS)
    return min_s11_frequency_hz(fine, s11_from_zin(_sweep(solver, fine, None), z0_ohm))


def resonance_im_zero_hz(ifa: PrintedIfa, f_lo_hz: float, f_hi_hz: float, z0_ohm: float = Z0_DEFAULT_OHM) -> float | None:
    """The ``Im(Zin) = 0`` crossing nearest to the min-``|S11|`` frequency, or None if none in band."""
    solver = MomSolver(ifa_wire_model(ifa, f_hi_hz))
    freqs = np.linspace(f_lo_hz, f_hi_hz, RESONANCE_COARSE_POINTS * 2 + 1)
    zin = _sweep(solver, freqs, None)
    crossings = im_zin_zero_crossings_hz(freqs, zin)
    if crossings.shape[0] == 0:
        return None
    f_min = min_s11_frequency_hz(freqs, s11_from_zin(zin, z0_ohm))
    return float(crossings[np.argmin(np.abs(crossings - f_min))])


def bandwidth_10db(freqs: np.ndarray, s11: np.ndarray) -> tuple[float, float] | None:
    """Contiguous band around the ``|S11|`` minimum where ``|S11| <= -10 dB`` (edges linearly
    interpolated in dB; a band reaching the sweep end is cut there).  None if never below -10 dB."""
    f = np.asarray(freqs, float)
    mag_db = 20.0 * np.log10(np.maximum(np.abs(np.asarray(s11)), 1e-12))
    i = int(np.argmin(mag_db))
    if mag_db[i] > RETURN_LOSS_LIMIT_DB:
        return None
    lo = i
    while lo > 0 and mag_db[lo - 1] <= RETURN_LOSS_LIMIT_DB:
        lo -= 1
    hi = i
    while hi < f.shape[0] - 1 and mag_db[hi + 1] <= RETURN_LOSS_LIMIT_DB:
        hi += 1

    def edge(j_in: int, j_out: int) -> float:
        y_in, y_out = mag_db[j_in], mag_db[j_out]
        return float(f[j_in] + (RETURN_LOSS_LIMIT_DB - y_in) * (f[j_out] - f[j_in]) / (y_out - y_in))

    f_lo = edge(lo, lo - 1) if lo > 0 else float(f[0])
    f_hi = edge(hi, hi + 1) if hi < f.shape[0] - 1 else float(f[-1])
    return f_lo, f_hi
