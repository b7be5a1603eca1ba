"""The spec's ``tolerances`` section and the parameters a yield run draws.

Each spread is a :class:`Parameter`: a name, its unit (per cent of the nominal value or mm), its
half-width and distribution, and the spec field it comes from.  What a deviation *does* is looked
up by name in :data:`PERTURBATIONS` (a change of the physics model, :class:`PrintedIfa`) or is a
change of a matching part's value; so adding a spread is one entry there and one in the schema.

Draws are seeded per sample: sample ``i`` of seed ``s`` always takes the uniform numbers of
``numpy.random.default_rng([s, i])``, one per entry of :data:`DRAW_ORDER` whether the entry is
active or not, so the same seed gives the same boards whichever process draws them and whatever
spreads are switched off.  The defaults are common practice, no source.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from footgen.physics.ifa import GroundPlane, PrintedIfa

MM = 1e-3
#: Defaults (common practice, no source): half-widths in per cent or mm, and the distribution.
DEFAULT_EPS_R_PERCENT = 5.0
DEFAULT_THICKNESS_PERCENT = 10.0
DEFAULT_COPPER_PERCENT = 20.0
DEFAULT_ETCH_MM = 0.025
DEFAULT_GROUND_MM = 0.2
DEFAULT_ENCLOSURE_EPS_R_PERCENT = 10.0
DEFAULT_ENCLOSURE_THICKNESS_PERCENT = 10.0
DEFAULT_ENCLOSURE_DISTANCE_MM = 0.3
DEFAULT_DISTRIBUTION = "normal"
DEFAULT_PART_SERIES = "E24"
DEFAULT_PART_DISTRIBUTION = "uniform"
#: Tolerance class of each E-series, per cent (IEC 60063, from memory).
SERIES_TOLERANCE_PERCENT = {"E6": 20.0, "E12": 10.0, "E24": 5.0, "E48": 2.0, "E96": 1.0}
#: A normal spread's half-width is this many standard deviations; draws are cut there.
NORMAL_SIGMAS = 3.0
#: Matching networks have at most this many parts (pi: shunt, series, shunt).
MAX_PARTS = 3


# ------------------------------------------------------------------------------- perturbations


def _scaled_laminate(ifa: PrintedIfa, name: str, percent: float) -> PrintedIfa:
    lam = ifa.laminate
    return dataclasses.replace(ifa, laminate=dataclasses.replace(lam, **{name: getattr(lam, name) * (1 + percent / 100)}))


def _etch(ifa: PrintedIfa, mm: float) -> PrintedIfa:
    """Copper wider by ``mm`` (every trace and the short stub), the feed's port gap narrower."""
    d = mm * MM
    return dataclasses.replace(ifa, trace_width_m=ifa.trace_width_m + d, short_width_m=ifa.short_width_m + d,
                               port_gap_m=ifa.port_gap_m - d)


def _ground_width(ifa: PrintedIfa, mm: float) -> PrintedIfa:
    g, d = ifa.ground, mm * MM
    return dataclasses.replace(ifa, ground=GroundPlane(g.x_min_m - d / 2, g.x_max_m + d / 2, g.length_m))


def _ground_length(ifa: PrintedIfa, mm: float) -> PrintedIfa:
    g = ifa.ground
    return dataclasses.replace(ifa, ground=GroundPlane(g.x_min_m, g.x_max_m, g.length_m + mm * MM))


def _cover(ifa: PrintedIfa, name: str, value: Callable[[float], float]) -> PrintedIfa:
    """The enclosure wall (``PrintedIfa.cover``) with one field changed; unchanged without one."""
    cover = getattr(ifa, "cover", None)
    if cover is None:
        return ifa
    return dataclasses.replace(ifa, cover=dataclasses.replace(cover, **{name: value(getattr(cover, name))}))


def _arm_length(ifa: PrintedIfa, mm: float) -> PrintedIfa:
    """The arm's last segment longer by ``mm`` (design centring)."""
    path = list(ifa.arm_path_m)
    (x0, y0), (x1, y1) = path[-2], path[-1]
    run = math.hypot(x1 - x0, y1 - y0)
    path[-1] = (x1 + (x1 - x0) / run * mm * MM, y1 + (y1 - y0) / run * mm * MM)
    return dataclasses.replace(ifa, arm_path_m=tuple(path))


def _feed_tap(ifa: PrintedIfa, mm: float) -> PrintedIfa:
    """The feed leg ``mm`` further from the short (design centring)."""
    side = 1.0 if ifa.feed_x_m >= ifa.short_x_m else -1.0
    return dataclasses.replace(ifa, feed_x_m=ifa.feed_x_m + side * mm * MM)


#: Name -> perturbation of the physics model by a deviation in the parameter's unit.
PERTURBATIONS: dict[str, Callable[[PrintedIfa, float], PrintedIfa]] = {
    "laminate_eps_r": lambda ifa, d: _scaled_laminate(ifa, "eps_r", d),
    "laminate_thickness": lambda ifa, d: _scaled_laminate(ifa, "thickness_m", d),
    "copper_thickness": lambda ifa, d: _scaled_laminate(ifa, "copper_thickness_m", d),
    "etch": _etch,
    "ground_width": _ground_width,
    "ground_length": _ground_length,
    "enclosure_eps_r": lambda ifa, d: _cover(ifa, "eps_r", lambda v: v * (1 + d / 100)),
    "enclosure_thickness": lambda ifa, d: _cover(ifa, "thickness_m", lambda v: v * (1 + d / 100)),
    "enclosure_distance": lambda ifa, d: _cover(ifa, "distance_m", lambda v: v + d * MM),
    "arm_length": _arm_length,
    "feed_tap": _feed_tap,
}
#: The random entries in the order their uniform numbers are taken from a sample's stream.
DRAW_ORDER = ("laminate_eps_r", "laminate_thickness", "copper_thickness", "etch", "ground_width", "ground_length",
              "enclosure_eps_r", "enclosure_thickness", "enclosure_distance") + tuple(f"part_{i + 1}" for i in range(MAX_PARTS))
#: Spec entry (under ``tolerances``) -> (parameters it spreads, unit, default half-width, label).
SPEC_ENTRIES: dict[str, tuple[tuple[str, ...], str, float, str]] = {
    "laminate_eps_r": (("laminate_eps_r",), "%", DEFAULT_EPS_R_PERCENT, "laminate eps_r"),
    "laminate_thickness": (("laminate_thickness",), "%", DEFAULT_THICKNESS_PERCENT, "laminate thickness"),
    "copper_thickness": (("copper_thickness",), "%", DEFAULT_COPPER_PERCENT, "copper thickness"),
    "etch": (("etch",), "mm", DEFAULT_ETCH_MM, "etch (trace width)"),
    "ground_plane_size": (("ground_width", "ground_length"), "mm", DEFAULT_GROUND_MM, "ground plane"),
    "enclosure_eps_r": (("enclosure_eps_r",), "%", DEFAULT_ENCLOSURE_EPS_R_PERCENT, "enclosure eps_r"),
    "enclosure_thickness": (("enclosure_thickness",), "%", DEFAULT_ENCLOSURE_THICKNESS_PERCENT, "enclosure thickness"),
    "enclosure_distance": (("enclosure_distance",), "mm", DEFAULT_ENCLOSURE_DISTANCE_MM, "enclosure distance"),
}
ENCLOSURE_ENTRIES = ("enclosure_eps_r", "enclosure_thickness", "enclosure_distance")
_SUFFIX = {"%": "plus_minus_percent", "mm": "plus_minus_mm"}


@dataclass(frozen=True)
class Parameter:
    """One spread: ``key`` (a :data:`PERTURBATIONS` name or ``part_N``), a label for people, its
    unit ("%" of the nominal or "mm"), half-width, distribution and the spec field it comes from."""

    key: str
    label: str
    unit: str
    half_width: float
    distribution: str
    field: str

    @property
    def on_parts(self) -> bool:
        """A matching part's value (applied to the antenna's Zin), not the copper."""
        return self.key.startswith("part_")


def parameters(raw_spec: dict, part_labels: tuple[str, ...] = (), has_enclosure: bool | None = None) -> tuple[Parameter, ...]:
    """The spreads of a spec (``raw_spec``: the spec as loaded, schema-checked), defaults filled
    in; those with a zero half-width left out.  ``part_labels``: one label per matching part
    fitted on the nominal design (they share ``tolerances.matching_parts``).  The enclosure's
    spreads act only when the spec has an ``enclosure`` section (``has_enclosure`` overrides)."""
    section = raw_spec.get("tolerances", {})
    enclosure = ("enclosure" in raw_spec) if has_enclosure is None else has_enclosure
    out: list[Parameter] = []
    for entry, (keys, unit, default, label) in SPEC_ENTRIES.items():
        if entry in ENCLOSURE_ENTRIES and not enclosure:
            continue
        given = section.get(entry, {})
        half = float(given.get(_SUFFIX[unit], default))
        dist = given.get("distribution", DEFAULT_DISTRIBUTION)
        for key in keys:
            text = label if len(keys) == 1 else f"{label} {key.split('_')[-1]}"
            out.append(Parameter(key, text, unit, half, dist, f"$.tolerances.{entry}.{_SUFFIX[unit]}"))
    parts = section.get("matching_parts", {})
    half = SERIES_TOLERANCE_PERCENT[parts.get("series", DEFAULT_PART_SERIES)]
    for i, label in enumerate(part_labels[:MAX_PARTS]):
        out.append(Parameter(f"part_{i + 1}", f"matching part {i + 1} ({label})", "%", half,
                             parts.get("distribution", DEFAULT_PART_DISTRIBUTION), "$.tolerances.matching_parts.series"))
    return tuple(p for p in out if p.half_width > 0.0)


def part_series(raw_spec: dict) -> str:
    """The E-series the matching parts are snapped to (their tolerance class)."""
    return raw_spec.get("tolerances", {}).get("matching_parts", {}).get("series", DEFAULT_PART_SERIES)


# ------------------------------------------------------------------------------------- draws


def _normal_from_uniform(u: np.ndarray) -> np.ndarray:
    """Standard normal values cut at +-NORMAL_SIGMAS, by the inverse CDF of uniform numbers."""
    from scipy.special import ndtr, ndtri

    lo = ndtr(-NORMAL_SIGMAS)
    return ndtri(lo + u * (1 - 2 * lo))


#: Distribution name -> unit-half-width deviation from uniform numbers in [0, 1).
DISTRIBUTIONS: dict[str, Callable[[np.ndarray], np.ndarray]] = {
    "uniform": lambda u: 2.0 * u - 1.0,
    "normal": lambda u: _normal_from_uniform(u) / NORMAL_SIGMAS,
}


def uniforms(seed: int, start: int, stop: int) -> np.ndarray:
    """Uniform numbers of samples ``start`` .. ``stop - 1``: one row per sample, one column per
    :data:`DRAW_ORDER` entry, each row from its own stream ``default_rng([seed, index])``."""
    rows = [np.random.default_rng([seed, i]).random(len(DRAW_ORDER)) for i in range(start, stop)]
    return np.array(rows).reshape(stop - start, len(DRAW_ORDER))


def deviations(params: tuple[Parameter, ...], seed: int, start: int, stop: int) -> np.ndarray:
    """Deviations (each parameter's unit) of samples ``start`` .. ``stop - 1``, shape (n, len(params))."""
    u = uniforms(seed, start, stop)
    out = np.empty((stop - start, len(params)))
    for j, p in enumerate(params):
        out[:, j] = p.half_width * DISTRIBUTIONS[p.distribution](u[:, DRAW_ORDER.index(p.key)])
    return out


def perturbed(ifa: PrintedIfa, params: tuple[Parameter, ...], values: np.ndarray | tuple[float, ...],
              design: dict[str, float] | None = None) -> PrintedIfa:
    """``ifa`` with the copper parameters' deviations ``values`` applied (parts are left to
    :func:`footgen.yieldmc.surrogate.with_parts`), after the design offsets (``arm_length``,
    ``feed_tap`` in mm), if any."""
    for key, value in (design or {}).items():
        if value:
            ifa = PERTURBATIONS[key](ifa, float(value))
    for p, value in zip(params, values):
        if not p.on_parts and value:
            ifa = PERTURBATIONS[p.key](ifa, float(value))
    return ifa


def _sizes_m(ifa: PrintedIfa) -> dict[str, float]:
    """The lengths and permittivities that must stay positive (and above 1 for eps_r)."""
    lam = ifa.laminate
    sizes = {"trace width": ifa.trace_width_m, "short stub width": ifa.short_width_m, "port gap": ifa.port_gap_m,
             "laminate thickness": lam.thickness_m, "copper thickness": lam.copper_thickness_m,
             "laminate eps_r - 1": lam.eps_r - 1.0, "ground width": ifa.ground.width_m, "ground length": ifa.ground.length_m,
             "arm-to-ground gap": ifa.height_m - ifa.trace_width_m / 2}
    cover = getattr(ifa, "cover", None)
    if cover is not None:
        sizes.update({"enclosure eps_r - 1": cover.eps_r - 1.0, "enclosure thickness": cover.thickness_m,
                      "enclosure distance": cover.distance_m})
    return sizes


def check_spreads(ifa: PrintedIfa, params: tuple[Parameter, ...]) -> None:
    """Refuse a spread whose extreme would leave no copper, gap, laminate or wall (one line
    naming the tolerance field)."""
    from footgen.errors import SpecError

    for p in params:
        if p.on_parts:
            continue
        for sign in (1.0, -1.0):
            for what, value in _sizes_m(perturbed(ifa, (p,), (sign * p.half_width,))).items():
                if not value > 0.0:
                    raise SpecError(p.field, p.half_width, f"at {sign * p.half_width:+g} {p.unit} the {what} would vanish; give a smaller spread")
