"""Exception classes.  Every user-facing error renders as one line (``str(err)``).

The CLI catches :class:`FootgenError` and prints ``footgen: error: <message>`` with a non-zero
exit.  Anything else is a bug in footgen: the CLI prints one line asking for a report and exits
with :data:`EXIT_INTERNAL`, never with a rule-violation or bad-input code.
"""

from __future__ import annotations

#: Exit code of an unexpected internal error (a bug in footgen, not the user's input).
EXIT_INTERNAL = 5
#: Longest error line the CLI prints (characters); longer messages are cut with "...".
MAX_MESSAGE_CHARS = 600


class FootgenError(Exception):
    """Base of all errors caused by the user's input or environment (not by a bug)."""

    exit_code = 2


class SpecError(FootgenError):
    """A spec field is missing, malformed or out of range.

    ``path`` is the JSON path of the field (``$.laminate.eps_r``), ``value`` the offending
    value and ``fix`` what is allowed or what to do instead.
    """

    def __init__(self, path: str, value: object, fix: str) -> None:
        self.path = path
        self.value = value
        self.fix = fix
        super().__init__(f"{path} = {_short(value)}: {fix}")


class InfeasibleSpecError(SpecError):
    """The spec is well formed but physically or geometrically impossible."""


class RuleViolationError(FootgenError):
    """The layout breaks one or more fab rules (raised by the build, not by the checker)."""

    exit_code = 1


class OverwriteRefusedError(FootgenError):
    """An output file was edited by hand since footgen wrote it."""

    exit_code = 3


class MeasurementError(FootgenError):
    """A measurement file (Touchstone) cannot be read or holds no usable S11."""


class KiCadError(FootgenError):
    """KiCad 9 (kicad-cli or its pcbnew Python module) is missing or failed."""

    exit_code = 4


class ProblemTooLargeError(SpecError):
    """The numerical model of a spec would exceed the solver's size or memory budget."""


class TimeLimitError(FootgenError):
    """Sizing ran past its wall-clock budget."""


class SolverError(FootgenError):
    """A numerical model was asked for something outside its validity range."""


def _short(value: object, limit: int = 60) -> str:
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def one_line(text: str, limit: int = MAX_MESSAGE_CHARS) -> str:
    """``text`` as one printable line of at most ``limit`` characters: line breaks and other
    control characters become spaces, runs of spaces collapse, a long text ends in "..."."""
    flat = "".join(" " if (ord(ch) < 32 or ord(ch) == 127) else ch for ch in str(text))
    flat = " ".join(flat.split())
    return flat if len(flat) <= limit else flat[: limit - 3] + "..."
