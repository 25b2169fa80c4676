"""A Runner on a Dask cluster (``dask.distributed``): one simulation job is one task.

The job travels as plain data (the deck text and the measuring settings, never a file path); on
the Dask worker it runs on a derate worker process of that machine, exactly as the local runner
runs it (ngspice keeps global state, so it never runs in a Dask worker's own threads), and the
same plain result data comes back.  The cache stays with the client: a cached scenario is never
sent.  With no scheduler address an embedded ``LocalCluster`` of worker processes is started.

Who may use a cluster is the person running derate: the runner and the scheduler address come
from the command line or the calling program, never from a project file.

The embedded cluster is reachable by derate alone: every server listens on the loopback address,
the scheduler and workers serve no HTTP routes (no dashboard, logs, call stacks or metrics), and
every connection uses TLS with a certificate made for this run (Dask's ``Security.temporary``),
which a client needs to be let in.  A remote scheduler is the operator's: README, "Running on a
Dask cluster", says how to reach one over TLS.
"""

from __future__ import annotations

import logging
import os
import threading
from typing import Any, Callable, Sequence

from ..errors import DataError
from .job import JobResult, SimulationJob

_POOL = None
_POOL_LOCK = threading.Lock()


def _local_pool(backend: str):
    """The derate worker pool of this (Dask worker) process: one ngspice worker, started once."""
    global _POOL
    from .worker import WorkerPool
    if _POOL is None:
        _POOL = WorkerPool(1, backend=backend)
    return _POOL


def run_task(wire: dict[str, Any], timeout_s: float, stall_s: float, backend: str) -> dict[str, Any]:
    """Run one job on this machine's derate worker (called inside a Dask worker process)."""
    with _POOL_LOCK:  # one ngspice at a time per Dask worker process
        pool = _local_pool(backend)
        (res,) = pool.run([("task", dict(wire, stall_s=stall_s), timeout_s)])
    return {"ok": res.ok, "data": res.data, "error": res.error, "seconds": res.seconds, "timed_out": res.timed_out}


def _scrub_environment() -> None:
    """Keep only the allowlisted environment in this (embedded) Dask worker process: the caller's tokens
    have no business in a process that runs simulations."""
    import tempfile

    from .environment import minimal_environment
    keep = minimal_environment(os.environ.get("HOME") or tempfile.gettempdir())
    for name in list(os.environ):
        if name not in keep and not name.startswith(("DASK_", "PYTHON")):
            del os.environ[name]


def _close_pool() -> None:
    """Stop this Dask worker process's derate worker (its ngspice process and folder go with it)."""
    global _POOL
    with _POOL_LOCK:
        if _POOL is not None:
            _POOL.close()
            _POOL = None


def _version_task(backend: str) -> str:
    with _POOL_LOCK:
        return _local_pool(backend).version()


def _embedded(workers: int):
    """A LocalCluster only derate can use: loopback, TLS with this run's certificate, no HTTP routes."""
    import dask
    from dask.distributed import Client, LocalCluster

    try:
        from distributed.security import Security
        security = Security.temporary()  # a self-signed certificate for this run; encryption required
    except ImportError:
        raise DataError("the embedded Dask cluster uses TLS, which needs the 'cryptography' package: "
                        "pip install cryptography (derate's 'dask' extra has it)") from None
    no_routes = {"distributed.scheduler.http.routes": [], "distributed.worker.http.routes": [],
                 "distributed.nanny.http.routes": []}
    with dask.config.set(no_routes):
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                               protocol="tls://", security=security, dashboard_address="127.0.0.1:0",
                               worker_dashboard_address="127.0.0.1:0", silence_logs=logging.ERROR,
                               scheduler_kwargs={"dashboard": False})
        client = Client(cluster, security=security)
        client.run(_scrub_environment)
        return cluster, client


class DaskRunner:
    """Jobs as tasks on a Dask cluster: ``scheduler`` (``tcp://host:port``) or an embedded LocalCluster
    of ``workers`` processes (default: one per core)."""

    def __init__(self, scheduler: str | None = None, workers: int | None = None, backend: str = "shared",
                 security: Any = None):
        try:
            from dask.distributed import Client
        except ImportError:
            raise DataError("the Dask runner needs dask.distributed: pip install 'dask[distributed]' cryptography "
                            "(derate's 'dask' extra has both)") from None
        self.backend = backend
        self.cluster = None
        try:
            if scheduler:
                self.client = Client(scheduler, timeout="10s", security=security)
            else:
                self.cluster, self.client = _embedded(workers or os.cpu_count() or 1)
        except OSError as exc:
            raise DataError(f"cannot reach the Dask scheduler {scheduler!r}: {exc}") from None

    def run(self, jobs: Sequence[tuple[Any, SimulationJob]],
            on_done: Callable[[JobResult], None] | None = None,
            on_progress: Callable[[Any, float], None] | None = None) -> list[JobResult]:
        from dask.distributed import as_completed

        futures = {}
        for key, job in jobs:
            fut = self.client.submit(run_task, job.to_wire(), job.timeout_s, job.stall_s, self.backend,
                                     pure=False, key=f"derate-{job.scenario}-{os.urandom(6).hex()}")
            futures[fut] = key
        results: dict[Any, JobResult] = {}
        for fut in as_completed(list(futures)):
            key = futures[fut]
            try:
                d = fut.result()
                res = JobResult(key, d["ok"], d["data"], d["error"], d["seconds"], d["timed_out"])
            except Exception as exc:  # the task itself failed (a worker lost, a transport error)
                res = JobResult(key, False, error=f"the Dask task failed: {type(exc).__name__}: {exc}")
            results[key] = res
            if on_done:
                on_done(res)
        return [results[k] for k, _ in jobs]

    def version(self) -> str:
        return self.client.submit(_version_task, self.backend, pure=False).result()

    def close(self) -> None:
        try:
            if self.cluster is not None:  # derate's own cluster: its workers' folders go now (a shared
                try:                      # cluster's pools serve other clients and stay)
                    self.client.run(_close_pool)
                except Exception:  # a worker already gone: the next run sweeps what it left
                    pass
            self.client.close()
        finally:
            if self.cluster is not None:
                self.cluster.close()

    def __enter__(self) -> "DaskRunner":
        return self

    def __exit__(self, *exc) -> None:
        self.close()
