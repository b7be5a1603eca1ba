"""Physical constants in SI units.

Source: BIPM, The International System of Units (SI Brochure), 9th edition 2019: the speed of
light in vacuum is exact by definition; mu_0 is the CODATA 2018 recommended value.
"""

from __future__ import annotations

import math

C0_M_PER_S = 299_792_458.0
MU0_H_PER_M = 1.25663706212e-6
EPS0_F_PER_M = 1.0 / (MU0_H_PER_M * C0_M_PER_S**2)
ETA0_OHM = MU0_H_PER_M * C0_M_PER_S  # ~376.73 ohm
PI = math.pi
