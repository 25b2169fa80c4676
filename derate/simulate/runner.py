"""Runners: where simulation jobs execute.  A ``Runner`` takes jobs and gives back JobResults.

``LocalRunner`` (the default) runs them on persistent worker processes on this machine
(worker.py).  Any other runner (a cluster, a queue) only has to accept the same frozen jobs and
return the same plain result data: the cache, the measurement and the reports do not change.
"""

from __future__ import annotations

import os
from typing import Any, Callable, Protocol, Sequence, runtime_checkable

from .job import JobResult, SimulationJob
from .worker import WorkerPool


@runtime_checkable
class Runner(Protocol):
    """Runs simulation jobs; results in submission order, each also passed to ``on_done`` as it ends."""

    def run(self, jobs: Sequence[tuple[Any, SimulationJob]],
            on_done: Callable[[JobResult], None] | None = None,
            on_progress: Callable[[Any, float], None] | None = None) -> list[JobResult]:
        """``on_progress(key, fraction)`` as a job's simulated time advances (a runner may not report it)."""

    def version(self) -> str:
        """The simulator's version text, as a worker reports it."""

    def close(self) -> None:
        ...


class LocalRunner:
    """Jobs on up to ``jobs`` worker processes of this machine (default: one per core).

    ``pool`` shares an existing WorkerPool (the caller keeps and closes it).
    """

    def __init__(self, jobs: int | None = None, backend: str = "shared", pool: WorkerPool | None = None):
        self._own = pool is None
        self.pool = pool or WorkerPool(jobs or os.cpu_count() or 1, backend=backend)
        self.backend = pool.backend if pool is not None else backend

    def run(self, jobs: Sequence[tuple[Any, SimulationJob]],
            on_done: Callable[[JobResult], None] | None = None,
            on_progress: Callable[[Any, float], None] | None = None) -> list[JobResult]:
        return self.pool.run([(key, job, job.timeout_s) for key, job in jobs], on_done, on_progress)

    def version(self) -> str:
        return self.pool.version()

    def close(self) -> None:
        if self._own:
            self.pool.close()

    def __enter__(self) -> "LocalRunner":
        return self

    def __exit__(self, *exc) -> None:
        self.close()
