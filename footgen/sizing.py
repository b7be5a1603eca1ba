"""Sizing: choose the arm length, height and feed-to-short spacing for the spec's band.

The height defaults to the highest the clearance allows (an IFA's bandwidth grows with its
height).  The arm length is solved so that the response model's resonance sits at the band
centre, and the feed-to-short spacing so that the resistance at resonance is 50 ohm; the two
are iterated because each moves the other a little.  Any of the three given in the spec's
``arm`` section is kept as given.  The response model comes from :data:`MODELS` by name.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import lru_cache
from typing import Callable

import numpy as np

from footgen import sizing_cache
from footgen.board_limits import design_limits
from footgen.errors import InfeasibleSpecError, SolverError
from footgen.geometry.layout import Sizing, generate_copper, max_arm_height_mm, min_arm_length_mm, min_meander_pitch_mm
from footgen.model import printed_ifa
from footgen.physics.ifa import PrintedIfa
from footgen.constants import C0_M_PER_S
from footgen.spec import Spec

# The response models (scipy, the MoM solver) are imported where they are called: a spec that
# gives its geometry explicitly is built without loading them.


def _brentq(fn: Callable[[float], float], lo: float, hi: float) -> float:
    from scipy.optimize import brentq

    return brentq(fn, lo, hi, rtol=ROOT_RTOL)

#: Reference impedance the feed tap is matched to (ohm).
MATCH_OHM = 50.0
#: Alternations of the length and spacing solves.
MAX_ITERATIONS = 6
#: Convergence of the alternation (mm).
CONVERGED_MM = 1e-4
#: Relative tolerance of the root finders (dimensionless).
ROOT_RTOL = 1e-7
#: Initial feed-to-short spacing as a fraction of the arm height (common practice, no source).
INITIAL_SPACING_PER_HEIGHT = 0.5
#: Length search window, as fractions of the quarter-wave first estimate (dimensionless).
SHORTEST_ARM_FRACTION = 0.4
LONGEST_ARM_FACTOR = 2.5
#: The feed tap is searched within this fraction of the arm from the short (common practice,
#: no source: a tap further out means a far-off match that no printed IFA is built with).
MAX_SPACING_PER_ARM = 0.25
SPACING_STEP_MM = 0.25
#: Widest clearance tried when looking for the smallest box that would work (mm).
WIDEST_BOX_MM = 300.0


@dataclass(frozen=True)
class ResponseModel:
    """A response model: resonance (Hz) and input impedance (ohm) of a PrintedIfa."""

    label: str
    resonance_hz: Callable[[PrintedIfa], float]
    #: zin_ohm(freq_hz, ifa, progress=None); progress(done, total) is optional
    zin_ohm: Callable[..., np.ndarray]
    #: name of a cheaper model (same physics, coarser discretisation) the synthesis searches
    #: with before its final pass with this one; None: search with this model
    search_model: str | None = None
    #: size_check(ifa, f_max_hz) refuses a copper the model could not solve (too many
    #: unknowns) before any sizing work; None: every copper can be solved
    size_check: Callable[[PrintedIfa, float], None] | None = None


def _mom_zin(freq_hz: np.ndarray, ifa: PrintedIfa, progress: Callable[[int, int], None] | None = None,
             mesh: dict[str, float] | None = None) -> np.ndarray:
    """MoM Zin on a wire model meshed for a frequency set by the geometry alone
    (MOM_MESH_PER_ESTIMATE times its quarter-wave estimate), not by the sweep: single-frequency
    synthesis solves, narrow and wide sweeps of one copper then see the same discretisation
    (a sweep reaching beyond MOM_MESH_STRETCH times that frequency is meshed for its top).
    Dense sweeps are solved on fewer points and interpolated
    (:func:`footgen.physics.predict.zin_resampled`).
    ``mesh``: :class:`footgen.physics.wires.MeshControl` settings other than the defaults."""
    from footgen.physics.predict import resampled_points, zin_resampled

    f = np.atleast_1d(np.asarray(freq_hz, float))
    # dense (prediction) sweeps solve in mixed precision; the synthesis' own solves stay in double
    dense = resampled_points(f) is not None
    solver = mom_solver(ifa, float(f.max()), mesh, mixed_precision=dense)
    if f.size < MOM_INTERPOLATE_FROM:
        return solver.sweep_direct(f, progress=progress)
    return zin_resampled(lambda grid: solver.sweep_interpolated(grid, progress=progress), f)


def mom_solver(ifa: PrintedIfa, f_max_hz: float, mesh: dict[str, float] | None = None, *, mixed_precision: bool = False):
    """The MoM solver :func:`_mom_zin` uses for ``ifa`` up to ``f_max_hz`` (same wire mesh), so the
    far field (:mod:`footgen.radiation`) sees the currents of the predicted S11."""
    from footgen.physics.mom import MomSolver
    from footgen.physics.wires import MeshControl, ifa_wire_model

    sizing_cache.sync_board_edge()  # board-edge 2-D solves of earlier runs: load once per process
    mesh_hz = _mom_mesh_hz(ifa, f_max_hz)  # (the quarter-wave estimate needs them too)
    solver = MomSolver(ifa_wire_model(ifa, mesh_hz, control=MeshControl(f_max_hz=mesh_hz, **(mesh or {}))), mixed_precision=mixed_precision)
    sizing_cache.sync_board_edge()  # keep any new ones for later runs
    return solver


def _mom_mesh_hz(ifa: PrintedIfa, f_max_hz: float) -> float:
    """Frequency the MoM wire model of ``ifa`` is meshed for when solved up to ``f_max_hz``."""
    from footgen.physics.tline_ifa import quarter_wave_estimate_hz

    mesh_hz = MOM_MESH_PER_ESTIMATE * quarter_wave_estimate_hz(ifa)
    return f_max_hz if f_max_hz > MOM_MESH_STRETCH * mesh_hz else mesh_hz  # far above: mesh for the sweep


def _mom_size_check(ifa: PrintedIfa, f_max_hz: float, mesh: dict[str, float] | None = None) -> None:
    """Refuse at once a copper whose MoM wire model (as :func:`mom_solver` meshes it) is too big."""
    from footgen.physics.wires import MeshControl, check_ifa_model_size

    mesh_hz = _mom_mesh_hz(ifa, f_max_hz)
    check_ifa_model_size(ifa, mesh_hz, MeshControl(f_max_hz=mesh_hz, **(mesh or {})))


def _mom_resonance_hz(ifa: PrintedIfa, mesh: dict[str, float] | None = None) -> float:
    """MoM resonance (min |S11| against 50 ohm) searched around the transmission-line model's
    estimate: a coarse interpolated sweep, then a fine one around its minimum."""
    from footgen.physics import predict
    from footgen.physics.tline_ifa import resonance_tline_ifa_hz

    guess = resonance_tline_ifa_hz(ifa)
    coarse = np.linspace(MOM_SEARCH_LOW * guess, MOM_SEARCH_HIGH * guess, MOM_SEARCH_POINTS)
    s11 = predict.s11_from_zin(_mom_zin(coarse, ifa, mesh=mesh), MATCH_OHM)
    i = int(np.argmin(np.abs(s11)))
    fine = np.linspace(coarse[max(i - 1, 0)], coarse[min(i + 1, coarse.size - 1)], MOM_SEARCH_POINTS)
    return predict.min_s11_frequency_hz(fine, predict.s11_from_zin(_mom_zin(fine, ifa, mesh=mesh), MATCH_OHM))


#: The synthesis search's wire mesh (``mom-search``): the ground grid at lambda / 10 with its first
#: row one trace width below the edge, rows doubling.  On the development cases of tests/fullwave
#: it lands 0.45-0.84 % above the default mesh in f at min |S11| (measured); the synthesis finishes
#: with a pass on the default mesh, so the built copper is matched on the model predict uses.
SEARCH_MESH = {"grid_pitch_per_wavelength": 10.0, "edge_row_trace_widths": 1.0, "grid_growth": 2.0}


def _tline_resonance_hz(ifa: PrintedIfa) -> float:
    from footgen.physics.tline_ifa import resonance_tline_ifa_hz

    return resonance_tline_ifa_hz(ifa)


def _tline_zin(freq_hz: np.ndarray, ifa: PrintedIfa, progress: Callable[[int, int], None] | None = None) -> np.ndarray:
    from footgen.physics.tline_ifa import zin_tline_ifa

    return zin_tline_ifa(freq_hz, ifa)


MODELS: dict[str, ResponseModel] = {
    "tline": ResponseModel(
        "transmission-line model (footgen.physics.tline_ifa)",
        _tline_resonance_hz,
        _tline_zin,
    ),
    "mom": ResponseModel(
        "thin-wire method of moments (footgen.physics.mom) over the ground grid and laminate",
        _mom_resonance_hz,
        _mom_zin,
        search_model="mom-search",
        size_check=_mom_size_check,
    ),
    "mom-search": ResponseModel(
        "thin-wire method of moments (footgen.physics.mom), coarser ground grid (synthesis search)",
        lambda ifa: _mom_resonance_hz(ifa, mesh=SEARCH_MESH),
        lambda f, ifa, progress=None: _mom_zin(f, ifa, progress, mesh=SEARCH_MESH),
        size_check=lambda ifa, f_max_hz: _mom_size_check(ifa, f_max_hz, SEARCH_MESH),
    ),
}
#: The fast model that gives every other model its starting point.
START_MODEL = "tline"
DEFAULT_MODEL = "mom"
#: The MoM wire model is meshed for this multiple of the copper's quarter-wave estimate (or the
#: sweep's top frequency, if higher); sweeps of this many points or more are interpolated.
MOM_MESH_PER_ESTIMATE = 1.4
#: Frequencies up to this multiple of the mesh frequency keep that mesh (segments stay
#: shorter than lambda/20 there: wires.py meshes at lambda/40).
MOM_MESH_STRETCH = 2.0
MOM_INTERPOLATE_FROM = 4
#: MoM resonance search window around the transmission-line estimate (fractions of it).
MOM_SEARCH_LOW = 0.5
MOM_SEARCH_HIGH = 1.6
MOM_SEARCH_POINTS = 41


def quarter_wave_first_estimate_mm(spec: Spec, height_mm: float) -> float:
    """Arm length (mm) from a quarter wave at the quasi-static eps_eff of a strip beside the
    ground edge (footgen.physics.lines): the short leg plus the arm make up lambda_eff/4.

    That eps_eff lies between 1 and (eps_r + 1)/2 and accounts for the laminate's finite
    thickness and the arm's height; it is a first estimate, refined by the response model.
    """
    from footgen.physics.lines import eps_eff_strip_beside_ground_edge

    w = spec.trace_width_mm * 1e-3
    gap = max(height_mm - spec.trace_width_mm / 2, spec.trace_width_mm / 2) * 1e-3
    eps_eff = float(eps_eff_strip_beside_ground_edge(w, gap, spec.laminate.eps_r, spec.laminate.thickness_mm * 1e-3))
    quarter_mm = C0_M_PER_S / (4.0 * spec.target.center_hz * math.sqrt(eps_eff)) * 1e3
    return quarter_mm - height_mm


def min_spacing_mm(spec: Spec) -> float:
    """Smallest feed-to-short spacing that keeps the fab clearance between the two legs, and
    between the feed pad and the ground pad and the feed copper and the via holes the clearance
    a board's rule check measures there (the fab's or a default board's, the larger)."""
    c = spec.fab.min_clearance_mm
    board = design_limits(spec.fab)
    w, ws = spec.trace_width_mm, spec.short.stub_width_mm
    return max(
        (w + ws) / 2 + c,
        (spec.feed.pad_width_mm + spec.short.pad_span_mm) / 2 + board.min_clearance_mm,
        spec.feed.pad_width_mm / 2 + spec.short.via_drill_mm / 2 + board.min_hole_clearance_mm,
    )


class _Evaluator:
    """Builds the geometry for a trial sizing and asks the response model about it."""

    def __init__(self, spec: Spec, model: ResponseModel, pitch_mm: float | None = None) -> None:
        self.spec = spec
        self.model = model
        self.pitch_mm = pitch_mm

    def ifa(self, length: float, height: float, spacing: float) -> PrintedIfa:
        sizing = Sizing(length, height, spacing, "trial", meander_pitch_mm=self.pitch_mm)
        return printed_ifa(self.spec, generate_copper(self.spec, sizing))

    def fits(self, length: float, height: float, spacing: float) -> bool:
        try:
            self.ifa(length, height, spacing)
        except InfeasibleSpecError:
            return False
        return True

    def resonance(self, length: float, height: float, spacing: float) -> float:
        return self.model.resonance_hz(self.ifa(length, height, spacing))

    def resistance_at_resonance(self, length: float, height: float, spacing: float) -> float:
        ifa = self.ifa(length, height, spacing)
        f = self.model.resonance_hz(ifa)
        return float(np.real(self.model.zin_ohm(np.array([f]), ifa))[0])


def _least_length(spec: Spec, height: float, spacing: float) -> float:
    """Shortest arm worth trying: past the feed by one meander pitch, and through every leg of a
    meander with a fixed number of legs."""
    return max(spacing + min_meander_pitch_mm(spec), min_arm_length_mm(spec, height, spacing))


def _longest_fitting(ev: _Evaluator, shortest: float, height: float, spacing: float) -> float:
    longest = shortest
    step = max(shortest, 1.0)
    while ev.fits(longest + step, height, spacing) and longest + step < 10 * WIDEST_BOX_MM:
        longest += step
        step *= 2
    lo, hi = longest, longest + step
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if ev.fits(mid, height, spacing) else (lo, mid)
        if hi - lo < 1e-6:
            break
    return lo


def _solve_length(ev: _Evaluator, height: float, spacing: float, f0: float) -> float:
    spec = ev.spec
    shortest = max(_least_length(spec, height, spacing), SHORTEST_ARM_FRACTION * quarter_wave_first_estimate_mm(spec, height))
    if not ev.fits(shortest, height, spacing):
        raise _box_too_small(ev, height, spacing, f0, None)
    longest = _longest_fitting(ev, shortest, height, spacing)

    def mismatch(length: float) -> float:
        return ev.resonance(length, height, spacing) / f0 - 1.0

    longest = min(longest, LONGEST_ARM_FACTOR * quarter_wave_first_estimate_mm(spec, height))

    if mismatch(longest) > 0:
        raise _box_too_small(ev, height, spacing, f0, longest)
    if mismatch(shortest) < 0 and min_arm_length_mm(spec, height, spacing) >= shortest:
        # the meander's fixed legs set the shortest arm: the start model (13-25 % low on
        # meanders) cannot tell whether it is too long; the refinement's model decides
        return shortest
    if mismatch(shortest) < 0:
        raise InfeasibleSpecError(
            "$.arm.height_mm" if spec.arm.height_mm is not None else "$.clearance.depth_mm",
            round(height, 3),
            f"even the shortest arm ({shortest:.2f} mm) resonates below {f0 / 1e6:.1f} MHz at this height; lower the arm",
        )
    return _brentq(mismatch, shortest, longest)


def _box_too_small(ev: _Evaluator, height: float, spacing: float, f0: float, longest: float | None) -> InfeasibleSpecError:
    """The refusal for a clearance too small, naming the smallest width that works: a search in
    1 mm steps (the ground plane widened with the clearance where it would be narrower), never
    its limit.  A clearance area wider than the ground plane is said as such."""
    spec = ev.spec
    gp, cl = spec.ground_plane, spec.clearance
    if longest is None:
        blocker = _why_nothing_fits(ev, _least_length(spec, height, spacing), height, spacing)
        if blocker is not None and blocker.path != "$.clearance.width_mm":
            if gp.width_mm < cl.width_mm:
                return InfeasibleSpecError(
                    "$.ground_plane.width_mm", gp.width_mm,
                    f"the clearance area ({cl.width_mm:g} mm) is wider than the ground plane; {blocker.fix}",
                )
            return blocker
    width = _smallest_working_width(ev, height, spacing, f0)
    hint = "" if spec.style.kind == "meandered" else " or use style meandered"
    if longest is None:
        why = "no arm long enough to pass the feed fits"
    else:
        why = f"the longest arm that fits ({longest:.2f} mm) resonates at {ev.resonance(longest, height, spacing) / 1e6:.1f} MHz"
    if width is None:
        advice = f"no clearance area up to {WIDEST_BOX_MM:.0f} mm wide works at this depth: deepen it{hint}"
    else:
        ground = f" with a ground plane at least as wide" if width > gp.width_mm else ""
        advice = f"a clearance area about {width:.0f} mm wide{ground} would work{hint}"
    return InfeasibleSpecError("$.clearance.width_mm", cl.width_mm, f"too small for {f0 / 1e6:.1f} MHz: {why}; {advice}")


def _why_nothing_fits(ev: _Evaluator, length: float, height: float, spacing: float) -> InfeasibleSpecError | None:
    try:
        ev.ifa(length, height, spacing)
    except InfeasibleSpecError as exc:
        return exc
    return None


def _smallest_working_width(ev: _Evaluator, height: float, spacing: float, f0: float) -> float | None:
    """Smallest clearance width (whole mm above the spec's) whose longest fitting arm resonates
    at or below ``f0``; the ground plane grows with the clearance where it would be narrower."""
    spec = ev.spec
    width = spec.clearance.width_mm
    while width < WIDEST_BOX_MM:
        width = min(math.floor(width) + 1.0, WIDEST_BOX_MM)
        ground = replace(spec.ground_plane, width_mm=max(spec.ground_plane.width_mm, width))
        wider = _Evaluator(replace(spec, clearance=replace(spec.clearance, width_mm=width), ground_plane=ground), ev.model)
        try:
            top = _longest_fitting(wider, _least_length(wider.spec, height, spacing), height, spacing)
            if wider.resonance(top, height, spacing) <= f0:
                return width
        except (InfeasibleSpecError, SolverError):
            continue
    return None


def _solve_spacing(ev: _Evaluator, length: float, height: float, f0: float, notes: list[str]) -> float:
    spec = ev.spec
    lo = min_spacing_mm(spec)
    hi = lo
    top = min(length - min_meander_pitch_mm(spec), MAX_SPACING_PER_ARM * length)
    while hi + SPACING_STEP_MM < top and ev.fits(length, height, hi + SPACING_STEP_MM):
        hi += SPACING_STEP_MM
    if hi <= lo:
        return lo

    def mismatch(spacing: float) -> float:
        return ev.resistance_at_resonance(length, height, spacing) - MATCH_OHM

    m_lo, m_hi = mismatch(lo), mismatch(hi)
    if m_lo * m_hi <= 0:
        return _brentq(mismatch, lo, hi)
    best = lo if abs(m_lo) < abs(m_hi) else hi
    r = ev.resistance_at_resonance(length, height, best)
    notes.append(f"no feed tap gives 50 ohm at resonance here; best {best:.3f} mm gives {r:.1f} ohm (consider a matching network)")
    return best


@lru_cache(maxsize=64)
def size(spec: Spec, model: str = DEFAULT_MODEL) -> Sizing:
    """Sizing for ``spec`` with the named response model: the start model's sizing, refined
    with ``model`` (if it is another one) so that the feed sees 50 ohm at the band centre.

    A sizing finished earlier for the same spec, model and footgen code comes from
    :mod:`footgen.sizing_cache` (an explicit geometry is taken as given without it)."""
    if spec.second_arm is not None:
        return _size_dual_cached(spec, model)
    if spec.arm.length_mm is not None and spec.arm.feed_short_spacing_mm is not None:
        return _size_with(spec, START_MODEL)
    key = sizing_cache.spec_key(spec)
    cached = sizing_cache.load(key, model)
    if cached is not None:
        return cached
    sizing_cache.sync_board_edge()  # the start model sees the board edge too
    start = _size_with(spec, START_MODEL)
    size_check = MODELS[model].size_check
    if size_check is not None:  # a model too big to solve is refused before the search, not after
        size_check(printed_ifa(spec, generate_copper(spec, start)), spec.target.center_hz * (1.0 + PREDICTION_HALF_SPAN))
    result = start if model == START_MODEL else refine(spec, start, model)
    sizing_cache.store(key, model, result)
    return result


def _size_dual_cached(spec: Spec, model: str) -> Sizing:
    """A dual-band spec's sizing (:mod:`footgen.sizing_dual`), through the sizing cache; every
    length, height and the tap given: taken as given."""
    from footgen.geometry.dualband import default_heights_mm
    from footgen.sizing_dual import size_dual

    second = spec.second_arm
    if None not in (spec.arm.length_mm, spec.arm.feed_short_spacing_mm, second.length_mm):
        h1, h2 = default_heights_mm(spec, max_arm_height_mm(spec))
        return Sizing(spec.arm.length_mm, h1, spec.arm.feed_short_spacing_mm, "as given",
                      ("both arm lengths and the feed tap given in the spec: kept as given",),
                      second_arm_length_mm=second.length_mm, second_arm_height_mm=h2)
    key = sizing_cache.spec_key(spec)
    cached = sizing_cache.load(key, model)
    if cached is not None:
        return cached
    result = size_dual(spec, model)
    sizing_cache.store(key, model, result)
    return result


def _size_with(spec: Spec, model: str) -> Sizing:
    """Sizing by root finding on the model's resonance and resistance at resonance."""
    rm = MODELS[model]
    ev = _Evaluator(spec, rm)
    notes: list[str] = []
    w = spec.trace_width_mm
    height = spec.arm.height_mm if spec.arm.height_mm is not None else max_arm_height_mm(spec)
    lowest = w / 2 + spec.fab.min_clearance_mm
    if height < lowest:
        need = spec.clearance.depth_mm + lowest - height
        raise InfeasibleSpecError("$.clearance.depth_mm", spec.clearance.depth_mm, f"too shallow for this trace and fab; at least {need:.3f} mm")
    spacing = spec.arm.feed_short_spacing_mm
    if spacing is None:
        spacing = max(min_spacing_mm(spec), INITIAL_SPACING_PER_HEIGHT * height)
    length = spec.arm.length_mm
    f0 = spec.target.center_hz
    if length is not None and spec.arm.feed_short_spacing_mm is not None:
        notes.append("arm length, height and feed-short spacing all given in the spec: kept as given")
        return Sizing(length, height, spacing, "as given", tuple(notes))
    if length is None:
        length = max(quarter_wave_first_estimate_mm(spec, height), spacing + min_meander_pitch_mm(spec))
    for _ in range(MAX_ITERATIONS):
        notes = []  # keep only the last pass's remarks
        before = (length, spacing)
        if spec.arm.length_mm is None:
            length = _solve_length(ev, height, spacing, f0)
        if spec.arm.feed_short_spacing_mm is None:
            spacing = _solve_spacing(ev, length, height, f0, notes)
        if max(abs(length - before[0]), abs(spacing - before[1])) < CONVERGED_MM:
            break
    if spec.arm.length_mm is not None:
        f_res = ev.resonance(length, height, spacing)
        notes.append(f"arm length kept as given: the model puts the resonance at {f_res / 1e6:.1f} MHz")
    notes.append(f"sized with the {rm.label} at {f0 / 1e6:.2f} MHz")
    return Sizing(length, height, spacing, rm.label, tuple(dict.fromkeys(notes)))


# ---------------------------------------------------------------------------------------------
# refinement with an accurate (slower) model: Gauss-Newton on the reflection coefficient at f0

#: Stop when |S11| at the band centre is below this (dimensionless; -40 dB).
REFINE_GAMMA_TOL = 0.01
#: Gauss-Newton iterations at most, and backtracking halvings per iteration.
REFINE_ITERATIONS = 12
REFINE_BACKTRACKS = 6
#: Finite-difference steps for the Jacobian (mm).
REFINE_STEP_LENGTH_MM = 0.2
REFINE_STEP_SPACING_MM = 0.1
#: Largest change per iteration, as a fraction of the current value (keeps steps local).
REFINE_MAX_STEP_FRACTION = 0.3
#: Prediction sweeps span the band centre +- this fraction; synthesis meshes for the top of it.
PREDICTION_HALF_SPAN = 0.2
#: The secant steps' sweep around the band centre (fractions of it) and its points; a
#: resonance outside it reads as the sweep edge, which still moves the length the right way.
QUICK_SWEEP_LOW = 0.6
QUICK_SWEEP_HIGH = 1.5
QUICK_SWEEP_POINTS = 46
#: Coarse start grid: arm lengths as factors of the start model's, and feed-short spacings
#: from the smallest allowed up to this multiple of it (geometric), this many points.
REFINE_GRID_LENGTH_FACTORS = (0.85, 0.93, 1.0, 1.07, 1.15)
REFINE_GRID_SPACING_SPAN = 6.0
REFINE_GRID_SPACING_POINTS = 5
#: Refinement passes at most (a fitted meander is refitted between passes), the length the
#: refit makes room for (factor on the current arm), and how near the length limit counts as at it (mm).
REFINE_PASSES = 8
REFIT_LENGTH_FACTOR = 1.15
REFINE_LIMIT_SLACK_MM = 0.5
#: A match worse than this at the band centre is reported (|S11| = -10 dB).
REFINE_REPORT_GAMMA = 0.316


def _resonant_length(ev: _Evaluator, length: float, height: float, spacing: float, f0: float, shortest: float, longest: float) -> float:
    """Two secant steps on the arm length with the model's resonance (min |S11|): puts the
    refinement's start on the right mode even where the start model is far off (meanders)."""

    from footgen.physics import predict

    def resonance(trial: float) -> float:
        # one interpolated sweep around the current estimate (cheaper than the model's own search)
        ifa = ev.ifa(trial, height, spacing)
        freqs = np.linspace(QUICK_SWEEP_LOW * f0, QUICK_SWEEP_HIGH * f0, QUICK_SWEEP_POINTS)
        s11 = predict.s11_from_zin(ev.model.zin_ohm(freqs, ifa), MATCH_OHM)
        return predict.min_s11_frequency_hz(freqs, s11)

    def bound(value: float) -> float:
        return min(max(value, shortest), longest)

    l0, f_a = length, resonance(length)
    l1 = bound(l0 * f_a / f0)  # resonance ~ 1 / length
    if abs(l1 - l0) < CONVERGED_MM:
        return l0
    f_b = resonance(l1)
    if f_b == f_a:
        return l1
    return bound(l1 + (f0 - f_b) * (l1 - l0) / (f_b - f_a))


def refine(spec: Spec, start: Sizing, model: str) -> Sizing:
    """Adjust the free ones of (arm length, feed-short spacing) so that ``model`` gives
    ``Zin(f0) = 50 ohm``: damped Gauss-Newton on ``Gamma = (Z - 50)/(Z + 50)`` at the band centre,
    with finite-difference Jacobians and the fab and clearance limits as bounds.  The height
    stays as the start sizing chose it.

    A fitted meander keeps one pitch during a pass (so the copper changes continuously with the
    arm length); when a pass ends against the clearance, the meander is fitted again for a
    longer arm and another pass runs.

    A model with a ``search_model`` runs those passes with the cheaper one first, then again
    (from that answer, without the start grid) with itself."""
    rm = MODELS[model]
    f0 = spec.target.center_hz
    h = start.height_mm
    pitch = generate_copper(spec, start).meander_pitch_mm if spec.style.fit else None
    x = {"length": start.arm_length_mm, "spacing": start.feed_short_spacing_mm}
    stages = [MODELS[rm.search_model], rm] if rm.search_model else [rm]
    for stage, stage_model in enumerate(stages):
        x, g, pitch, pass_pitch = _refine_passes(spec, stage_model, h, x, pitch, first=stage == 0)
    if spec.style.fit:
        fresh = generate_copper(spec, Sizing(x["length"], h, x["spacing"], "check")).meander_pitch_mm
        settled = (pitch is not None and pass_pitch is not None and fresh is not None
                   and abs(pitch - pass_pitch) < CONVERGED_MM and abs(fresh - pitch) < CONVERGED_MM)
        if not settled:
            # The refits did not settle (the fitted turn count flips between neighbours): one
            # last pass in which every trial's copper is what a spec with that arm length builds.
            x, g, _ = _refine_pass(spec, rm, h, x, None, first=False)
            pitch = None
    s11_db = 20 * math.log10(max(g, 1e-6))
    notes = [f"refined with the {rm.label}: |S11| = {s11_db:.1f} dB at {f0 / 1e6:.2f} MHz (start: {start.method})"]
    if g > REFINE_REPORT_GAMMA:
        notes.append("the band centre is not matched to -10 dB within the clearance and fab limits: consider a matching network or a larger clearance")
    return Sizing(x["length"], h, x["spacing"], rm.label, tuple(notes), meander_pitch_mm=pitch)


def _refine_passes(
    spec: Spec, rm: ResponseModel, h: float, x: dict[str, float], pitch: float | None, *, first: bool
) -> tuple[dict[str, float], float, float | None, float | None]:
    """Refinement passes with one model: (values, |Gamma|, pitch to build, pitch of the last pass)."""
    for attempt in range(REFINE_PASSES):  # REFINE_PASSES >= 1: g and pass_pitch are always set
        pass_pitch = pitch
        x, g, at_limit = _refine_pass(spec, rm, h, x, pitch, first=first and attempt == 0)
        if not spec.style.fit:
            break
        # Refit the meander for the arm this pass ended with (for a longer one if the pass was
        # stopped by the clearance); done when the fit agrees with the pitch the pass used, so
        # that a spec giving this arm length explicitly builds the very same copper.
        grow = REFIT_LENGTH_FACTOR if at_limit and g >= REFINE_GAMMA_TOL else 1.0
        try:
            new_pitch = generate_copper(spec, Sizing(x["length"] * grow, h, x["spacing"], "refit")).meander_pitch_mm
        except InfeasibleSpecError:
            break
        if new_pitch is None or (pitch is not None and abs(new_pitch - pitch) < CONVERGED_MM):
            pitch = new_pitch
            break
        pitch = new_pitch
    return x, g, pitch, pass_pitch


#: Threads evaluating independent trials of the refinement (start grid, Jacobian columns): the
#: model set-up runs in Python, the fills and LAPACK solves release the GIL.
SEARCH_WORKERS = 2


def _evaluate_all(fn: Callable[[dict[str, float]], np.ndarray], trials: list[dict[str, float]]) -> list[np.ndarray]:
    """``[fn(t) for t in trials]``, independent trials spread over SEARCH_WORKERS threads."""
    if len(trials) < 2:
        return [fn(t) for t in trials]
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(max_workers=SEARCH_WORKERS) as pool:
        return list(pool.map(fn, trials))


def _refine_pass(
    spec: Spec, rm: ResponseModel, h: float, x0: dict[str, float], pitch: float | None, *, first: bool
) -> tuple[dict[str, float], float, bool]:
    """One Gauss-Newton pass at a fixed meander pitch: (values, |Gamma|, ended at the length limit)."""
    ev = _Evaluator(spec, rm, pitch)
    f0 = np.array([spec.target.center_hz])
    free = [name for name, given in (("length", spec.arm.length_mm), ("spacing", spec.arm.feed_short_spacing_mm)) if given is None]
    x = dict(x0)
    lo = {"length": _least_length(spec, h, x["spacing"]), "spacing": min_spacing_mm(spec)}
    hi = {"length": _longest_fitting(ev, lo["length"], h, x["spacing"]), "spacing": MAX_SPACING_PER_ARM * x["length"]}
    steps = {"length": REFINE_STEP_LENGTH_MM, "spacing": REFINE_STEP_SPACING_MM}
    def gamma(values: dict[str, float]) -> np.ndarray:
        """Reflection coefficient at f0 as (re, im); a trial that does not fit reads as a total
        reflection, so the search steps back from it."""
        try:
            ifa = ev.ifa(values["length"], h, values["spacing"])
        except InfeasibleSpecError:
            return np.array([1.0, 0.0])
        z = complex(rm.zin_ohm(f0, ifa)[0])
        g = (z - MATCH_OHM) / (z + MATCH_OHM)
        return np.array([g.real, g.imag])

    def clamp(values: dict[str, float]) -> dict[str, float]:
        return {k: min(max(v, lo[k]), hi[k]) if k in free else v for k, v in values.items()}

    if first and "length" in free:
        x["length"] = _resonant_length(ev, x["length"], h, x["spacing"], float(f0[0]), lo["length"], hi["length"])
    x = clamp(x)
    r = gamma(x)
    # The match valley of an IFA is narrow and curved in (length, spacing): start Gauss-Newton
    # from the best point of a coarse grid around the current answer.
    grids = {
        "length": [x["length"] * f for f in REFINE_GRID_LENGTH_FACTORS],
        "spacing": list(np.geomspace(lo["spacing"], max(lo["spacing"], min(hi["spacing"], REFINE_GRID_SPACING_SPAN * lo["spacing"])), REFINE_GRID_SPACING_POINTS)),
    }
    axes = [grids[name] if name in free and first else [x[name]] for name in ("length", "spacing")]
    trials = [clamp({"length": length, "spacing": spacing}) for length in axes[0] for spacing in axes[1]]
    for trial, r_trial in zip(trials, _evaluate_all(gamma, trials)):
        if np.hypot(*r_trial) < np.hypot(*r):
            x, r = trial, r_trial
    for _ in range(REFINE_ITERATIONS):
        if np.hypot(*r) < REFINE_GAMMA_TOL:
            break
        jac = np.empty((2, len(free)))
        forward = [{**x, name: x[name] + steps[name]} for name in free]
        inside = [trial[name] <= hi[name] for trial, name in zip(forward, free)]
        r_forward = iter(_evaluate_all(gamma, [t for t, ok in zip(forward, inside) if ok]))
        for j, name in enumerate(free):
            trial = forward[j]
            r_step = next(r_forward) if inside[j] else None
            if r_step is None or r_step[0] == 1.0:
                trial[name] = x[name] - steps[name]
                r_step = gamma(trial)
            jac[:, j] = (r_step - r) / (trial[name] - x[name])
        delta, *_ = np.linalg.lstsq(jac, -r, rcond=None)
        # Shrink the whole step (never one component: near the match valley the Jacobian is
        # close to singular and clipping a component would turn the step off the valley).
        scale = min([1.0] + [REFINE_MAX_STEP_FRACTION * x[name] / abs(delta[j]) for j, name in enumerate(free) if delta[j]])
        delta = delta * scale
        t = 1.0
        for _ in range(REFINE_BACKTRACKS):
            trial = clamp({k: x[k] + t * delta[free.index(k)] if k in free else x[k] for k in x})
            r_trial = gamma(trial)
            if np.hypot(*r_trial) < np.hypot(*r):
                x, r = trial, r_trial
                break
            t *= 0.5
        else:
            break  # no descent along the Gauss-Newton direction: the best within the bounds
    at_limit = "length" in free and (hi["length"] - x["length"] < REFINE_LIMIT_SLACK_MM or gamma({**x, "length": x["length"] + steps["length"]})[0] == 1.0)
    return x, float(np.hypot(*r)), at_limit
