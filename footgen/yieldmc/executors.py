"""Where a yield run's tasks execute: local processes (all cores, nothing to start) or an existing
Dask distributed cluster (``--scheduler ADDRESS`` or ``$FOOTGEN_SCHEDULER``).

Both take the same pure tasks (module-level functions of picklable arguments) and give their
results back in submission order, so a run's numbers never depend on which worker ran what.
"""

from __future__ import annotations

import os
from typing import Any, Callable, Sequence

from footgen.errors import FootgenError

#: Environment variable naming the Dask scheduler when --scheduler is not given.
SCHEDULER_ENV = "FOOTGEN_SCHEDULER"
#: Seconds to wait for a Dask scheduler to answer.
CONNECT_TIMEOUT_S = 20


class SchedulerError(FootgenError):
    """The Dask scheduler cannot be reached, or Dask is not installed."""

    exit_code = 2


Progress = Callable[[int, int], None]


def _collect(futures: list, done_iter, result_of, progress: Progress | None) -> list:
    index = {id(f): i for i, f in enumerate(futures)}
    out: list[Any] = [None] * len(futures)
    count = 0
    for fut in done_iter:
        out[index[id(fut)]] = result_of(fut)
        count += 1
        if progress is not None:
            progress(count, len(futures))
    return out


class LocalRunner:
    """A pool of worker processes on this machine (``workers`` of them; default all cores).
    Processes are started with ``spawn``: each imports footgen afresh, no forked threads."""

    label = "local"

    def __init__(self, workers: int | None = None) -> None:
        self.workers = max(1, workers or os.cpu_count() or 1)
        self._pool = None

    def __enter__(self) -> "LocalRunner":
        return self

    def __exit__(self, *exc) -> None:
        if self._pool is not None:
            self._pool.shutdown(cancel_futures=True)

    def describe(self) -> str:
        return f"{self.workers} local process(es)"

    def map(self, fn: Callable, args: Sequence[tuple], progress: Progress | None = None) -> list:
        if self.workers == 1 or len(args) <= 1:
            out = []
            for k, a in enumerate(args):
                out.append(fn(*a))
                if progress is not None:
                    progress(k + 1, len(args))
            return out
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor, as_completed

        if self._pool is None:
            self._pool = ProcessPoolExecutor(self.workers, mp_context=multiprocessing.get_context("spawn"))
        futures = [self._pool.submit(fn, *a) for a in args]
        return _collect(futures, as_completed(futures), lambda f: f.result(), progress)


class DaskRunner:
    """Tasks sent to the Dask distributed scheduler at ``address`` (its workers need footgen
    installed, the same version)."""

    label = "dask"

    def __init__(self, address: str) -> None:
        try:
            from distributed import Client
        except ImportError:
            raise SchedulerError("--scheduler needs Dask: pip install 'footgen[cluster]' (dask[distributed])") from None
        try:
            self._client = Client(address, timeout=CONNECT_TIMEOUT_S, set_as_default=False)
        except (OSError, TimeoutError) as exc:
            raise SchedulerError(f"--scheduler {address}: no Dask scheduler answers there ({exc.__class__.__name__}); "
                                 "start one with `dask scheduler` or give its address") from None
        self.address = address

    def __enter__(self) -> "DaskRunner":
        return self

    def __exit__(self, *exc) -> None:
        self._client.close()

    def describe(self) -> str:
        workers = len(self._client.scheduler_info().get("workers", {}))
        return f"Dask cluster at {self.address} ({workers} worker(s))"

    def map(self, fn: Callable, args: Sequence[tuple], progress: Progress | None = None) -> list:
        from distributed import as_completed

        futures = [self._client.submit(fn, *a, pure=False) for a in args]
        return _collect(futures, as_completed(futures, loop=self._client.loop), lambda f: f.result(), progress)


def runner(scheduler: str | None = None, workers: int | None = None):
    """The runner for ``scheduler`` (or ``$FOOTGEN_SCHEDULER``): Dask when an address is given,
    else local processes."""
    address = scheduler or os.environ.get(SCHEDULER_ENV) or None
    return DaskRunner(address) if address else LocalRunner(workers)
