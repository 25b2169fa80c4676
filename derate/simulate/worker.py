"""Persistent ngspice worker processes with a hard wall-clock timeout per job.

Each worker is a separate process (ngspice keeps global state: one instance per process, no
threads) started in an empty temporary working directory with ``HOME`` pointing at an empty
directory, so no ``.spiceinit`` is ever read.  Its stdout/stderr go to a log file, not the user's
terminal.  When a job runs past its timeout the worker is killed (SIGKILL: it survives any ngspice
stall) and a fresh one takes its place; the job becomes a failed result, other jobs go on.
"""

from __future__ import annotations

import os
import re
import shutil
import signal
import socket
import stat
import subprocess
import sys
import tempfile
import time
from multiprocessing.connection import Connection, wait
from pathlib import Path
from typing import Any, Callable, Iterable

from .environment import minimal_environment
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
        self.workdir = tempfile.mkdtemp(prefix=f"{TEMP_PREFIX}{os.getpid()}-")
        home = os.path.join(self.workdir, "home")
        os.mkdir(home)
        parent_sock, child_sock = socket.socketpair()
        package_parent = str(Path(__file__).resolve().parents[2])
        env = minimal_environment(home, PYTHONPATH=os.pathsep.join(
            [package_parent] + [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p]))
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
        stall = getattr(job, "stall_s", None) or (job.get("stall_s") if isinstance(job, dict) else None)
        self.stall_s = float(stall) if stall else None
        self.tstop_s = getattr(job, "tstop_s", None) or (job.get("tstop_s") if isinstance(job, dict) else None)
        self.conn.send(job.to_wire() if hasattr(job, "to_wire") else job)

    def stall_deadline(self) -> float:
        return self.progress_at + self.stall_s if self.stall_s else float("inf")

    def stopped_message(self, now: float) -> tuple[str, bool]:
        """Why a job is being stopped: stalled (no progress) or over its budget (slow); and which."""
        stalled = bool(self.stall_s) and now >= self.stall_deadline() and now < self.deadline
        return stop_message(now - self.started, self.progress, self.deadline - self.started, self.tstop_s,
                            self.stall_s, stalled)

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


TEMP_PREFIX = "derate-ngspice-"  # + the owning process's id: a folder whose owner is gone is swept
_SWEPT = False


def sweep_stale_folders(folder: str | None = None) -> int:
    """Remove worker folders left by derate processes that no longer exist (killed with -9, or a
    machine that lost power); only this user's, only those whose owner's process id is not running.
    Return how many were removed."""
    base = Path(folder or tempfile.gettempdir())
    removed = 0
    try:
        entries = list(base.iterdir())
    except OSError:
        return 0
    for entry in entries:
        m = re.match(re.escape(TEMP_PREFIX) + r"(\d+)-", entry.name)
        if not m or int(m.group(1)) == os.getpid():
            continue
        try:
            st = entry.lstat()
            if not stat.S_ISDIR(st.st_mode) or (hasattr(os, "getuid") and st.st_uid != os.getuid()):
                continue
            os.kill(int(m.group(1)), 0)
        except ProcessLookupError:
            shutil.rmtree(entry, ignore_errors=True)
            removed += 1
        except (OSError, OverflowError):
            continue  # alive (or not ours to ask about): left alone
    return removed


MEMORY_SIGNS = ("out of memory", "can't allocate", "cannot allocate", "memory allocation", "malloc",
                "std::bad_alloc", "memoryerror")


def stop_message(elapsed: float, done: float, budget: float, tstop_s: float | None, stall_s: float | None,
                 stalled: bool) -> tuple[str, bool]:
    """The words for a stopped job, from the numbers alone (tests inject them: no wall clock): stalled (no
    simulated-time progress for ``stall_s``), or over its ``budget`` having simulated the fraction ``done``
    in ``elapsed`` seconds: slow (the whole run would fit in a hundred budgets) or crawling."""
    reached = f" ({_seconds(done * tstop_s)} of {_seconds(tstop_s)} simulated)" if tstop_s else ""
    if stalled:
        return (f"stalled: the simulated time has not advanced for {stall_s:.0f} s, at {done:.1%}".replace(
            "%", " %") + f"{reached} after {elapsed:.0f} s: ngspice is stuck (look for a floating node, a "
            "near-singular loop or a timestep collapse; --stall-timeout S waits longer)", True)
    if done <= 0:
        return (f"stopped at the {budget:.0f} s budget before the transient reported any progress (the operating "
                "point or the deck load did not finish; look for a floating node or a huge circuit)", False)
    needed = elapsed / done
    rate = f"{100 * done / elapsed * 60:.3g} % of the run per minute"
    text = (f"over the {budget:.0f} s budget at {100 * done:.1f} %{reached}, {rate}: the whole run would need "
            f"about {needed:,.0f} s")
    if needed > 100 * budget:  # hundreds of budgets: ngspice is crawling through tiny time steps
        text += ("; a rate this low usually means a circuit ngspice struggles with (a floating node, a "
                 "near-singular loop, a very small time step), not a big board")
    else:
        text += f"; it is slow, not stuck: raise --timeout (analysis.timeout_s) to about {1.3 * needed:,.0f}"
    return text, False


def crash_message(log: str, memory_limit: int | None, progress: float = 0.0) -> str:
    """Why a worker died, in words: the memory limit when the log says so, else a crash."""
    low = log.lower()
    if memory_limit and any(sign in low for sign in MEMORY_SIGNS):
        return memory_message(memory_limit, progress)
    return "ngspice crashed (worker process died)" + (f"; last output: {log[-500:]}" if log else "")


def memory_message(memory_limit: int, progress: float = 0.0) -> str:
    at = f" at {100 * progress:.0f} % of the run" if progress else ""
    return (f"ngspice ran out of memory{at}: the worker's limit is {memory_limit / 1024 ** 3:.3g} GiB and shared mode "
            "keeps every saved vector at every time point (8 bytes each); run with --simulator stream (memory "
            "flat in run length), or shorten the run or its maximum step")


def _seconds(x: float) -> str:
    from ..units import format_number
    return format_number(x, "s", 3)


class WorkerPool:
    """Runs jobs on up to ``size`` persistent workers, each job with its own timeout."""

    def __init__(self, size: int, memory_limit: int | None = DEFAULT_MEMORY_LIMIT_BYTES, backend: str = "shared"):
        global _SWEPT
        if not _SWEPT:  # once per process: what killed runs left behind
            _SWEPT = True
            sweep_stale_folders()
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
            next_deadline = min(min(w.deadline, w.stall_deadline()) for w in busy)
            ready = wait([w.conn for w in busy], timeout=max(0.0, next_deadline - now))
            now = time.monotonic()
            for w in list(busy):
                res: JobResult | None = None
                if w.conn in ready:
                    try:
                        data = w.conn.recv()
                        if "progress" in data and "ok" not in data:  # a report while the job runs
                            fraction = float(data["progress"])
                            if fraction > w.progress:  # only an advance counts against a stall
                                w.progress = fraction
                                w.progress_at = time.monotonic()
                            if on_progress:
                                on_progress(w.job_key, fraction)
                            continue
                        res = JobResult(w.job_key, bool(data.get("ok")), data, data.get("error", ""),
                                        data.get("seconds", now - w.started))
                        if data.get("restart"):
                            w.kill()
                    except (EOFError, OSError):
                        log = w.log_tail()
                        res = JobResult(w.job_key, False, error=crash_message(log, self.memory_limit, w.progress),
                                        seconds=now - w.started)
                        w.kill()
                elif now >= min(w.deadline, w.stall_deadline()):
                    text, stalled = w.stopped_message(now)
                    res = JobResult(w.job_key, False, {"stalled": stalled, "progress": w.progress}, error=text,
                                    seconds=now - w.started, timed_out=True)
                    w.kill()
                if res is not None:
                    busy.remove(w)
                    idle.append(w)
                    results[res.key] = res
                    if on_done:
                        on_done(res)
        return [results[k] for k in order]
