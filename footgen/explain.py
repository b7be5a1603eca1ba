"""Errors from geometry and physics, said in the spec's terms.

The geometry works in mm with its own names and the physics in SI (``arm_path_m``,
``board_gap_m``); a user knows only the spec.  :func:`explained` turns an error raised while a
spec is sized, laid out or solved into a :class:`~footgen.errors.SpecError` that names the spec
field to change, its value and what to do, in one bounded line.  The table maps a name found in
the internal message to that field; an error it does not know names the fields that shape the
copper.
"""

from __future__ import annotations

import contextlib
import math
import os
from typing import Iterator

from footgen.errors import FootgenError, SolverError, SpecError, TimeLimitError
from footgen.physics.problem_size import DEFAULT_SIZING_SECONDS, ModelTooLargeError, SolveTimeoutError

#: Environment variable that sets the sizing's wall-clock budget in seconds.
TIME_LIMIT_ENV = "FOOTGEN_TIME_LIMIT_S"
#: Largest budget it may set (s): a day.
MAX_SIZING_SECONDS = 86400.0

#: internal name found in a message -> (spec field, what to change)
TRANSLATIONS: dict[str, tuple[str, str]] = {
    "enclosure wall": ("$.enclosure", "the enclosure wall cannot be modelled; give its eps_r (1 to 15), thickness_mm and distance_mm above 0"),
    "board_gap_m": ("$.clearance.edge_distance_mm", "the board edge beyond the clearance area cannot be modelled; give the distance as built (0 or more mm)"),
    "port_gap_m": ("$.feed.port_gap_mm", "the gap around the feed pad cannot be modelled; give a gap of at least the fab copper clearance"),
    "feed_x_m": ("$.arm.feed_short_spacing_mm", "the feed tap does not land on the arm; give a smaller feed tap or leave it to the sizing"),
    "node merge tolerance": ("$.trace_width_mm", "some copper pieces are shorter than the solver resolves; use a wider clearance area, fewer meander turns or a narrower trace"),
    "above the ground edge": ("$.arm.height_mm", "the arm copper would touch the ground edge; raise the arm or use a narrower trace"),
    "quarter-wave resonance": ("$.arm", "the model finds no resonance for this arm; leave length_mm and feed_short_spacing_mm to the sizing or give values near a quarter wavelength"),
    "arm_path_m": ("$.clearance.width_mm", "the arm's path cannot be modelled in this clearance area; widen it, or change the arm length or meander"),
    "eps_r": ("$.laminate.eps_r", "the laminate cannot be modelled; give its relative permittivity (1 to 15)"),
    "thickness": ("$.laminate.thickness_mm", "the laminate cannot be modelled; give its thickness in mm"),
    "polygon with holes": ("$.style", "the copper closes a loop (meander turns touching); use a larger meander pitch or a narrower trace"),
    "LinearRing": ("$.style", "the copper outline does not close; change the meander or the arm dimensions"),
    "control character": ("$.description", "must be one line of printable characters: no line breaks, tabs or other control characters"),
    "path shorter": ("$.arm.length_mm", "the arm does not fit its path; shorten the arm or widen the clearance area"),
}
#: Field named when the internal message matches no entry of :data:`TRANSLATIONS`.
FALLBACK = ("$.clearance", "the antenna cannot be modelled with these dimensions; change the clearance area, trace width or arm fields")
#: Exceptions from geometry and numerics that :func:`explained` translates (others are bugs).
TRANSLATED: tuple[type[BaseException], ...] = (SolverError, ValueError, ArithmeticError)


def _geos_errors() -> tuple[type[BaseException], ...]:
    try:
        from shapely.errors import GEOSException
    except ImportError:  # pragma: no cover - shapely < 2
        return ()
    return (GEOSException,)


def spec_value(raw: object, path: str) -> object:
    """The value at a ``$.a.b`` path of the spec as given, or "as sized" where it is not given."""
    node = raw
    for key in path.lstrip("$").strip(".").split("."):
        if not key:
            continue
        if not isinstance(node, dict) or key not in node:
            return "as sized"
        node = node[key]
    return node


def _too_large(exc: ModelTooLargeError, raw: object) -> SpecError:
    size = f"the solver model would need {exc.unknowns} unknowns (about {exc.memory_gib:.1f} GiB); the limit is {exc.limit}"
    if exc.cause == "ground":
        ground = raw.get("ground_plane", {}) if isinstance(raw, dict) else {}
        field = "length_mm" if _number(ground.get("length_mm")) > _number(ground.get("width_mm")) else "width_mm"
        path = f"$.ground_plane.{field}"
        fix = f"{size}: model a smaller ground plane (the part within about a wavelength of the antenna matters most)"
    else:
        meandered = isinstance(raw, dict) and isinstance(raw.get("style"), dict) and raw["style"].get("kind") == "meandered"
        path = "$.style" if meandered else "$.trace_width_mm"
        fix = f"{size}: the antenna has too many small features; use a larger meander pitch or a wider trace"
    return SpecError(path, spec_value(raw, path), fix)


def _number(value: object) -> float:
    return float(value) if isinstance(value, (int, float)) and not isinstance(value, bool) else 0.0


def translate(exc: BaseException, raw: object) -> FootgenError:
    """The spec-level error for an internal one (see :data:`TRANSLATIONS`)."""
    if isinstance(exc, ModelTooLargeError):
        return _too_large(exc, raw)
    if isinstance(exc, SolveTimeoutError):
        return TimeLimitError(
            f"sizing ran past its {exc.seconds:g} s budget; give some of arm.length_mm, arm.height_mm, "
            f"arm.feed_short_spacing_mm, model a smaller ground plane, or raise {TIME_LIMIT_ENV}"
        )
    message = str(exc)
    path, fix = next((entry for key, entry in TRANSLATIONS.items() if key in message), FALLBACK)
    return SpecError(path, spec_value(raw, path), fix)


def time_limit_s() -> float:
    """The sizing's wall-clock budget: FOOTGEN_TIME_LIMIT_S if set (seconds), else the default."""
    text = os.environ.get(TIME_LIMIT_ENV, "").strip()
    if not text:
        return DEFAULT_SIZING_SECONDS
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not (0 < value <= MAX_SIZING_SECONDS):
        raise FootgenError(f"{TIME_LIMIT_ENV} = {text[:20]!r}: give a number of seconds above 0 and at most {MAX_SIZING_SECONDS:g}")
    return value


@contextlib.contextmanager
def explained(raw: object) -> Iterator[None]:
    """Run a block that sizes, lays out or solves the spec ``raw``; internal errors from it leave
    as :class:`SpecError` in the spec's terms.  User errors (:class:`FootgenError` other than
    :class:`SolverError`) pass unchanged."""
    try:
        yield
    except SolverError as exc:
        raise translate(exc, raw) from None
    except FootgenError:
        raise
    except TRANSLATED + _geos_errors() as exc:
        raise translate(exc, raw) from None
