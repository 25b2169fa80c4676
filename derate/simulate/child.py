"""Entry point of a worker process: ``python -m derate.simulate.child FD MEMORY_LIMIT PARENT_PID BACKEND``.

Started by derate.simulate.worker in an empty folder with HOME pointing at an empty folder, so
ngspice reads no ``.spiceinit``; stdout and stderr already go to a log file.
"""

from __future__ import annotations

import os
import sys
import time
import traceback
from multiprocessing.connection import Connection


def _die_with_parent(parent_pid: int) -> None:
    """Ask the kernel to kill this process when derate's process ends (Linux), so a stalled ngspice
    never outlives a killed run; if the parent is already gone, end now."""
    if sys.platform.startswith("linux"):
        try:
            import ctypes
            import signal
            libc = ctypes.CDLL(None, use_errno=True)
            pr_set_pdeathsig = 1
            libc.prctl(pr_set_pdeathsig, signal.SIGKILL, 0, 0, 0)
        except (OSError, AttributeError):
            pass
    if parent_pid and os.getppid() != parent_pid:
        os._exit(0)


def main(argv: list[str]) -> int:
    conn = Connection(int(argv[0]))
    memory_limit = int(argv[1]) if len(argv) > 1 else 0
    _die_with_parent(int(argv[2]) if len(argv) > 2 else 0)
    backend_name = argv[3] if len(argv) > 3 else "shared"
    if memory_limit:
        try:
            import resource
            resource.setrlimit(resource.RLIMIT_AS, (memory_limit, memory_limit))
        except (ImportError, ValueError, OSError):
            pass
    try:
        from .backend import make_backend
        backend = make_backend(backend_name)
    except Exception as exc:  # library missing or broken
        conn.send({"ready": False, "error": f"cannot start ngspice: {exc}"})
        return 1
    from . import execute  # imported before the first job, not during it
    conn.send({"ready": True, "version": backend.version})
    while True:
        try:
            job = conn.recv()
        except (EOFError, OSError):
            return 0
        if job is None:
            return 0
        t0 = time.perf_counter()
        last = [0.0, -1.0]  # time of the last report, fraction reported

        def progress(fraction: float) -> None:
            # at most about four reports a second, and only when the fraction moved
            now = time.monotonic()
            if now - last[0] >= 0.25 and fraction != last[1]:
                last[0], last[1] = now, fraction
                conn.send({"progress": fraction})
        try:
            result = execute.handle(backend, job, progress)
        except MemoryError:  # the address-space limit: say so, with what to change
            from .worker import memory_message
            result = {"ok": False, "error": memory_message(memory_limit) if memory_limit else "out of memory",
                      "memory": True}
        except Exception as exc:
            result = {"ok": False, "error": f"{type(exc).__name__}: {exc}",
                      "traceback": traceback.format_exc()}
        result["seconds"] = time.perf_counter() - t0
        try:  # peak memory so far of this worker, and of the ngspice programs it ran (streaming)
            import resource
            result["worker_peak_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
            children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
            result["ngspice_peak_mb"] = children if result.get("simulator") == "stream" else None
        except (ImportError, OSError):
            pass
        # after some errors ngspice says it "cannot recover and awaits to be detached": the
        # library is unusable from then on, so this process ends and the pool starts a new one
        try:
            alive = backend.reset()
        except Exception:
            alive = False
        if not alive:
            result["restart"] = True
        conn.send(result)
        if not alive:
            return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
