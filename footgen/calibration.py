"""Calibration: what a measurement taught about the model, stored in the spec revision.

``retune`` compares a prototype's sweep with the model of the copper it was measured on and
writes two factors into the next revision (section ``calibration`` of the spec):

    Z_cal(f) = k_r * R(f / k_f) + j X(f / k_f)

with R + jX the model's input impedance.  k_f moves the model's frequency axis (the enclosure,
the real laminate), k_r scales its resistance (losses, the real feed); k_f is chosen so that
the calibrated model of the measured copper puts its resonance on the measured one.  Every
command that shows a prediction (predict, match, report, build's report) applies the
calibration of the spec it is given; a calibration carries over to later revisions until a new
measurement replaces it.  No I/O here: the revision's JSON section in, numbers out.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from footgen.errors import MeasurementError

#: ISO calendar date, as the calibration records it (never the clock: output stays byte-stable).
DATE_PATTERN = re.compile(r"\b(\d{4})-(\d{2})-(\d{2})\b")
#: Decimal places of the factors written into the spec (1e-6 relative).
FACTOR_DECIMALS = 6

@dataclass(frozen=True)
class Calibration:
    """The calibration section of a revision (frequencies in MHz as the spec writes them)."""

    freq_factor: float
    resistance_factor: float
    measurement_file: str
    measurement_sha256: str
    measured_spec_sha256: str
    measured_revision: int
    date: str
    measured_resonance_mhz: float

    def to_json(self) -> dict:
        return {
            "freq_factor": round(self.freq_factor, FACTOR_DECIMALS),
            "resistance_factor": round(self.resistance_factor, FACTOR_DECIMALS),
            "measurement_file": self.measurement_file,
            "measurement_sha256": self.measurement_sha256,
            "measured_spec_sha256": self.measured_spec_sha256,
            "measured_revision": self.measured_revision,
            "date": self.date,
            "measured_resonance_mhz": round(self.measured_resonance_mhz, 3),
        }

    @classmethod
    def from_json(cls, data: dict) -> "Calibration":
        return cls(float(data["freq_factor"]), float(data["resistance_factor"]), str(data["measurement_file"]),
                   str(data["measurement_sha256"]), str(data["measured_spec_sha256"]), int(data["measured_revision"]),
                   str(data["date"]), float(data["measured_resonance_mhz"]))

    def line(self) -> str:
        """The one line every command prints when it applies this calibration."""
        return (f"calibrated by {self.measurement_file} ({self.date}, measured on revision {self.measured_revision}): "
                f"frequency x {self.freq_factor:.4f}, resistance x {self.resistance_factor:.4f}; "
                "--uncalibrated shows the bare model")


def of_spec(raw: dict) -> Calibration | None:
    """The calibration a spec revision carries, or None."""
    section = raw.get("calibration")
    return None if section is None else Calibration.from_json(section)


def measurement_date(text: str, given: str | None, source: str) -> str:
    """The measurement's date: ``given`` (command line) if any, else the first ISO date in the
    file's ``!`` comment lines.  Never the clock."""
    if given is not None:
        if not DATE_PATTERN.fullmatch(given):
            raise MeasurementError(f"--measured-date = {given!r}: give the date as YYYY-MM-DD")
        return given
    for line in text.splitlines():
        if line.lstrip().startswith("!"):
            found = DATE_PATTERN.search(line)
            if found:
                return found.group(0)
    raise MeasurementError(f"{source}: the file names no measurement date (YYYY-MM-DD in a ! comment); give --measured-date YYYY-MM-DD")
