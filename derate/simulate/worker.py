"""Persistent ngspice worker processes with a hard wall-clock timeout per job.

Each worker is a separate process (ngspice keeps global state: one instance per process, no
threads) started in an empty temporary working directory with ``HOME`` pointing at an empty
directory, so no ``.spiceinit`` is ever read.  Its stdout/stderr go to a log file, not the user's
terminal.  When a job runs past its timeout the worker is killed (SIGKILL: it survives any ngspice
stall) and a fresh one takes its place; the job becomes a failed result, other jobs go on.
"""

from __future__ import annotations

import os
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import time
from multiprocessing.connection import Connection, wait
from pathlib import Path
from typing import Any, Callable, Iterable

from .job import JobResult

DEFAULT_MEMORY_LIMIT_BYTES = 8 * 1024 ** 3


class Worker:
    """One ngspice worker process; restartable."""

    def __init__(self, memory_limit: int | None = DEFAULT_MEMORY_LIMIT_BYTES, backend: str = "shared"):
        self.memory_limit = memory_limit
        self.backend = backend
        self.proc: subprocess.Popen | None = None
        self.conn: Connection | None = None
        self.workdir: str | None = None
        self.version: str | None = None
        self.job_key: Any = None
        self.deadline = 0.0
        self.started = 0.0

    def start(self) -> None:
        """Start a fresh interpreter running derate.simulate.child in an empty folder."""
        self.workdir = tempfile.mkdtemp(prefix="derate-ngspice-")
        home = os.path.join(self.workdir, "home")
        os.mkdir(home)
        parent_sock, child_sock = socket.socketpair()
        package_parent = str(Path(__file__).resolve().parents[2])
        env = dict(os.environ, HOME=home, PYTHONPATH=os.pathsep.join(
            [package_parent] + [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p]))
        env.pop("SPICE_SCRIPTS", None)
        log = open(os.path.join(self.workdir, "ngspice.log"), "wb")
        try:
            self.proc = subprocess.Popen(
                [sys.executable, "-m", "derate.simulate.child", str(child_sock.fileno()),
                 str(self.memory_limit or 0), str(os.getpid()), self.backend],
                cwd=self.workdir, env=env, pass_fds=(child_sock.fileno(),), stdin=subprocess.DEVNULL,
                stdout=log, stderr=log, start_new_session=True)
        finally:
            log.close()
            child_sock.close()
        self.conn = Connection(parent_sock.detach())
        self.version = None

    def alive(self) -> bool:
        return self.proc is not None and self.proc.poll() is None

    def wait_ready(self, timeout: float = 60.0) -> str:
        assert self.conn is not None
        if self.version is not None:
            return self.version
        if not self.conn.poll(timeout):
            self.kill()
            raise RuntimeError("ngspice worker did not start in time")
        try:
            msg = self.conn.recv()
        except EOFError:
            log = self.log_tail()
            self.kill()
            raise RuntimeError(f"ngspice worker exited while starting{': ' + log if log else ''}") from None
        if not msg.get("ready"):
            self.kill()
            raise RuntimeError(msg.get("error", "ngspice worker failed to start"))
        self.version = msg["version"]
        return self.version

    def send(self, key: Any, job: Any, timeout: float) -> None:
        assert self.conn is not None
        self.job_key = key
        self.started = time.monotonic()
        self.deadline = self.started + timeout
        self.progress = 0.0
        self.progress_at = self.started
        self.conn.send(job.to_wire() if hasattr(job, "to_wire") else job)

    def log_tail(self, n: int = 2000) -> str:
        if not self.workdir:
            return ""
        try:
            with open(os.path.join(self.workdir, "ngspice.log"), "rb") as fh:
                fh.seek(0, os.SEEK_END)
                size = fh.tell()
                fh.seek(max(0, size - n))
                return fh.read().decode("utf-8", "replace").strip()
        except OSError:
            return ""

    def kill(self) -> None:
        if self.alive():
            try:
                os.killpg(self.proc.pid, signal.SIGKILL)
            except (ProcessLookupError, PermissionError):
                self.proc.kill()
        if self.proc is not None:
            try:
                self.proc.wait(5)
            except subprocess.TimeoutExpired:
                pass
        if self.conn is not None:
            self.conn.close()
        if self.workdir:
            shutil.rmtree(self.workdir, ignore_errors=True)
        self.proc = self.conn = None
        self.workdir = None
        self.version = None

    def stop(self) -> None:
        if self.conn is not None and self.alive():
            try:
                self.conn.send(None)
                self.proc.wait(2)
            except (OSError, subprocess.TimeoutExpired):
                pass
        self.kill()


class WorkerPool:
    """Runs jobs on up to ``size`` persistent workers, each job with its own timeout."""

    def __init__(self, size: int, memory_limit: int | None = DEFAULT_MEMORY_LIMIT_BYTES, backend: str = "shared"):
        self.size = max(1, size)
        self.memory_limit = memory_limit
        self.backend = backend
        self.workers: list[Worker] = []

    def __enter__(self) -> "WorkerPool":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        for w in self.workers:
            w.stop()
        self.workers.clear()

    def start(self, n: int) -> "WorkerPool":
        """Start up to ``n`` workers now (without waiting for them), so they boot while the caller works."""
        self._ensure(n)
        return self

    def _ensure(self, n: int) -> None:
        while len(self.workers) < min(n, self.size):
            w = Worker(self.memory_limit, self.backend)
            w.start()
            self.workers.append(w)

    def version(self) -> str:
        self._ensure(1)
        return self.workers[0].wait_ready()

    def run(self, jobs: Iterable[tuple[Any, Any, float]],
            on_done: Callable[[JobResult], None] | None = None,
            on_progress: Callable[[Any, float], None] | None = None) -> list[JobResult]:
        """Run ``(key, job, timeout_s)`` triples; return results in submission order.

        A job is a record with ``to_wire()`` (``SimulationJob``, ``InspectJob``) or its plain data.
        """
        queue = list(jobs)
        order = [k for k, _, _ in queue]
        results: dict[Any, JobResult] = {}
        self._ensure(len(queue))
        idle = list(self.workers)
        busy: list[Worker] = []
        pending = list(reversed(queue))
        while pending or busy:
            while pending and idle:
                w = idle.pop()
                key, job, timeout = pending.pop()
                try:
                    if w.proc is None:
                        w.start()
                    w.wait_ready()
                except RuntimeError as exc:
                    res = JobResult(key, False, error=str(exc))
                    results[key] = res
                    if on_done:
                        on_done(res)
                    idle.append(w)
                    continue
                w.send(key, job, timeout)
                busy.append(w)
            if not busy:
                continue
            now = time.monotonic()
            next_deadline = min(w.deadline for w in busy)
            ready = wait([w.conn for w in busy], timeout=max(0.0, next_deadline - now))
            now = time.monotonic()
            for w in list(busy):
                res: JobResult | None = None
                if w.conn in ready:
                    try:
                        data = w.conn.recv()
                        if "progress" in data and "ok" not in data:  # a report while the job runs
                            w.progress = float(data["progress"])
                            w.progress_at = time.monotonic()
                            if on_progress:
                                on_progress(w.job_key, w.progress)
                            continue
                        res = JobResult(w.job_key, bool(data.get("ok")), data, data.get("error", ""),
                                        data.get("seconds", now - w.started))
                        if data.get("restart"):
                            w.kill()
                    except (EOFError, OSError):
                        log = w.log_tail()
                        res = JobResult(w.job_key, False, error="ngspice crashed (worker process died)"
                                        + (f"; last output: {log[-500:]}" if log else ""),
                                        seconds=now - w.started)
                        w.kill()
                elif now >= w.deadline:
                    res = JobResult(w.job_key, False, error=f"stopped after the {w.deadline - w.started:.0f} s "
                                    "timeout (ngspice stalled: look for floating nodes or a timestep collapse)",
                                    seconds=now - w.started, timed_out=True)
                    w.kill()
                if res is not None:
                    busy.remove(w)
                    idle.append(w)
                    results[res.key] = res
                    if on_done:
                        on_done(res)
        return [results[k] for k in order]
