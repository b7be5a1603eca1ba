"""A measurement of a built board next to the model of its copper: the resonances, and the
calibration that carries the model over to the measurement (:mod:`footgen.calibration`).

The model side is ``predict --uncalibrated`` (:mod:`footgen.prediction`, the one model path);
the measured side the deepest |S11| minimum near it (:mod:`footgen.rf.touchstone`).
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from footgen import sizing
from footgen.calibration import Calibration, measurement_date
from footgen.errors import MeasurementError, SolverError
from footgen.geometry.layout import Sizing
from footgen.prediction import Resonance, copper_ifa, model_zin_ohm, predict_spec, resonance, resonance_sweep_hz, sized
from footgen.rf import touchstone
from footgen.rf.touchstone import Measurement
from footgen.spec import Spec

Dip = Resonance
#: Measured dips within this fraction of the model's expected frequency compete on depth.
DIP_WINDOW = 0.2


def measured_dip(measurement: Measurement, expected_hz: float) -> Dip:
    """The deepest measured |S11| dip within DIP_WINDOW of ``expected_hz`` (any dip if none is
    that near), else the sweep's minimum if it lies inside the sweep."""
    f, s = measurement.freq_hz, measurement.s11
    found = touchstone.resonances_hz(f, s)
    if found:
        # the deepest dip near the expected one: noise on a flank makes shallow local minima
        near = [x for x in found if abs(x / expected_hz - 1.0) <= DIP_WINDOW] or found
        f_dip = min(near, key=lambda x: abs(touchstone.s11_at(f, s, x)))
    else:
        f_dip, _ = touchstone.min_s11_db(f, s)
        if not (f[0] < f_dip < f[-1]):
            raise MeasurementError(
                f"{measurement.source}: no resonance (|S11| minimum) inside the sweep ({f[0] / 1e6:.1f} .. {f[-1] / 1e6:.1f} MHz); "
                f"measure a sweep that brackets the resonance (the model expects {expected_hz / 1e6:.1f} MHz)"
            )
    gamma = touchstone.s11_at(f, s, f_dip)
    return Dip(float(f_dip), float(touchstone.s11_db(np.array([gamma]))[0]), touchstone.zin_at(f, s, f_dip, measurement.z0_ohm))


def measurement_sha256(measurement: Measurement) -> str:
    """SHA-256 of the measurement file's bytes."""
    return hashlib.sha256(Path(measurement.source).read_bytes()).hexdigest()


@dataclass(frozen=True)
class Comparison:
    """A measurement of the board built from ``spec`` next to the bare model of that copper."""

    sizing: Sizing
    model_dip: Dip
    measured_dip: Dip
    calibration: Calibration


def calibrate(spec: Spec, measurement: Measurement, *, model: str = sizing.DEFAULT_MODEL,
              measured_date: str | None = None) -> Comparison:
    """Compare the measurement of the board built from ``spec`` with the bare model's prediction
    of that copper (``predict --uncalibrated``) and derive the calibration.  The date is
    ``measured_date`` or the one the file names (never the clock)."""
    date = measurement_date(Path(measurement.source).read_text("utf-8", errors="replace"), measured_date, measurement.source)
    old = sized(spec, model)
    ifa = copper_ifa(spec, old)
    freq = resonance_sweep_hz(spec.target.center_hz)
    zin = model_zin_ohm(ifa, freq, model)
    before = resonance(freq, zin)
    if before.at_edge:  # copper far off the band centre (given by hand): the whole prediction sweep
        bare = predict_spec(spec, model=model, calibrate=False, numbers=old)
        freq, zin = bare.bare_freq_hz, bare.bare_zin_ohm
        before = resonance(freq, zin)
    if before.at_edge:
        raise SolverError(f"the model puts revision {spec.revision}'s resonance outside its sweep "
                          f"({freq[0] / 1e6:.1f} .. {freq[-1] / 1e6:.1f} MHz); retune by hand")
    meas = measured_dip(measurement, before.freq_hz)
    if meas.r_ohm <= 0 or before.r_ohm <= 0:
        raise MeasurementError(f"{measurement.source}: resistance at the resonance is not positive ({meas.r_ohm:.3g} ohm); check the VNA calibration")
    k_r = meas.r_ohm / before.r_ohm
    scaled = resonance(freq, k_r * zin.real + 1j * zin.imag)
    cal = Calibration(meas.freq_hz / scaled.freq_hz, k_r, Path(measurement.source).name, measurement_sha256(measurement),
                      spec.digest, spec.revision, date, meas.freq_hz / 1e6)
    return Comparison(old, before, meas, cal)


def calibrated_dip(freq_hz: np.ndarray, zin_bare_ohm: np.ndarray, cal: Calibration) -> Dip:
    """The calibrated model's resonance from bare samples: Z_cal(k_f f) = k_r R(f) + j X(f)."""
    d = resonance(freq_hz, cal.resistance_factor * zin_bare_ohm.real + 1j * zin_bare_ohm.imag)
    return Dip(d.freq_hz * cal.freq_factor, d.s11_db, d.zin_ohm, d.at_edge)


