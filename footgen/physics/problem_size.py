"""Problem-size and wall-clock guards for the method-of-moments solver.

The solver fills dense matrices of N x N entries for N unknowns (segments): memory grows as N^2
and time as N^2 to N^3.  :func:`check_model_size` estimates both from the wire model before any
matrix exists and refuses a model over budget, saying whether the ground grid or the antenna
makes it big.  :func:`solve_deadline` bounds the wall-clock time of a whole sizing: every wire
model built after the deadline is refused.  Numbers only, no I/O.
"""

from __future__ import annotations

import contextlib
import math
import contextvars
import time
from typing import TYPE_CHECKING, Iterator

from footgen.errors import SolverError

if TYPE_CHECKING:  # the solver module (scipy) loads only where a model is solved
    from footgen.physics.mom import WireModel

#: Bytes per unknown squared that the solver holds at its peak: 216-245 measured with
#: tracemalloc on one solve of the 433 MHz template and the 2.4 GHz soil-probe example (N 460-500),
#: raised for the interpolated sweep's extra anchor matrices.
BYTES_PER_UNKNOWN_SQUARED = 320
#: Memory one solve may take (bytes).
MAX_SOLVE_BYTES = 2**30
#: Most unknowns (segments) a wire model may have (about 1830; the template and example boards
#: need at most 580, measured).
MAX_UNKNOWNS = math.isqrt(MAX_SOLVE_BYTES // BYTES_PER_UNKNOWN_SQUARED)
#: Wall-clock budget of one sizing (s); the templates size in 6-25 s on one core.
DEFAULT_SIZING_SECONDS = 300.0

_deadline: contextvars.ContextVar[tuple[float, float] | None] = contextvars.ContextVar("footgen_solve_deadline", default=None)


class ModelTooLargeError(SolverError):
    """The wire model exceeds :data:`MAX_UNKNOWNS`; ``cause`` is "ground" or "antenna"."""

    def __init__(self, unknowns: int, ground_unknowns: int, limit: int) -> None:
        self.unknowns = unknowns
        self.limit = limit
        self.cause = "ground" if ground_unknowns * 2 >= unknowns else "antenna"
        self.memory_gib = memory_estimate_bytes(unknowns) / 2**30
        super().__init__(f"wire model of {unknowns} unknowns ({self.cause} {ground_unknowns}) exceeds {limit}")


class SolveTimeoutError(SolverError):
    """The sizing ran past its wall-clock budget."""

    def __init__(self, seconds: float) -> None:
        self.seconds = seconds
        super().__init__(f"sizing ran past its {seconds:g} s budget")


def memory_estimate_bytes(unknowns: int) -> int:
    """Peak memory the solver needs for ``unknowns`` unknowns (bytes)."""
    return BYTES_PER_UNKNOWN_SQUARED * unknowns * unknowns


def check_model_size(model: WireModel, antenna_wires: int, limit: int = MAX_UNKNOWNS) -> None:
    """Refuse ``model`` (before any matrix is filled) if it has more than ``limit`` unknowns,
    or if the current :func:`solve_deadline` has passed.  The first ``antenna_wires`` wires are
    the antenna's; the rest the ground grid's."""
    check_deadline()
    unknowns = model.n_segments
    if unknowns > limit:
        ground = sum(w.n_segments for w in model.wires[antenna_wires:])
        raise ModelTooLargeError(unknowns, ground, limit)


def check_deadline() -> None:
    current = _deadline.get()
    if current is not None and time.monotonic() > current[0]:
        raise SolveTimeoutError(current[1])


@contextlib.contextmanager
def solve_deadline(seconds: float) -> Iterator[None]:
    """Every wire model built within this block after ``seconds`` have passed is refused (the
    outermost block's deadline counts)."""
    if _deadline.get() is not None:
        yield
        return
    token = _deadline.set((time.monotonic() + seconds, seconds))
    try:
        yield
    finally:
        _deadline.reset(token)
