"""Regenerate the invented demo sweep `demo-2g4-enclosure.s1p` (NOT a measurement).

It is footgen's own MoM prediction of examples/soil-probe-2g4.json as built, recomputed as if
the board sat in a made-up plastic enclosure: the laminate's eps_r raised from 4.4 to 4.95, the
resistance lowered 7 % and +j2 ohm added, with a little seeded noise.  Demo data only: it
exercises `footgen retune`; it checks nothing.

    python examples/measured/make_demo.py
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np

from footgen.build import run
from footgen.geometry.layout import generate_copper
from footgen.model import printed_ifa
from footgen.physics import predict
from footgen.sizing import MODELS
from footgen.physics.ifa import Laminate
from footgen.rf.touchstone import write_s1p
from footgen.spec import load_spec

HERE = Path(__file__).resolve().parent
SPEC = HERE.parent / "soil-probe-2g4.json"
DEMO_DATE = "2026-11-20"
ENCLOSURE_EPS_R = 4.95
R_FACTOR = 0.93
X_OFFSET_OHM = 2.0
NOISE = 0.002
SEED = 20261201


def main() -> None:
    spec = load_spec(SPEC)
    built = run(spec)
    ifa = printed_ifa(spec, generate_copper(spec, built.sizing))
    lam = ifa.laminate
    shifted = dataclasses.replace(ifa, laminate=Laminate(ENCLOSURE_EPS_R, lam.thickness_m, lam.loss_tangent, lam.copper_thickness_m))
    freqs = np.linspace(2.0e9, 2.8e9, 401)
    z = MODELS["mom"].zin_ohm(freqs, shifted)
    z = R_FACTOR * z.real + 1j * (z.imag + X_OFFSET_OHM)
    s11 = predict.s11_from_zin(z)
    rng = np.random.default_rng(SEED)
    s11 = s11 + NOISE * (rng.standard_normal(s11.shape) + 1j * rng.standard_normal(s11.shape))
    comment = (
        "INVENTED DEMO DATA, not a measurement: footgen's MoM prediction of\n"
        f"examples/soil-probe-2g4.json with eps_r {ENCLOSURE_EPS_R}, R x {R_FACTOR}, +j{X_OFFSET_OHM:g} ohm\n"
        f"and {NOISE} noise (a made-up plastic enclosure); see make_demo.py\n"
        f"measured {DEMO_DATE} (an invented date)"
    )
    write_s1p(HERE / "demo-2g4-enclosure.s1p", freqs, s11, comment, freq_unit="MHz")


if __name__ == "__main__":
    main()
