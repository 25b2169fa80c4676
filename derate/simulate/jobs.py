"""Jobs a worker can run on its ngspice engine (executed inside the worker process)."""

from __future__ import annotations

from typing import Any


def handle(engine, job: dict[str, Any]) -> dict[str, Any]:
    """Dispatch one job dict to its handler; return a picklable result dict with ``ok``."""
    kind = job.get("type")
    if kind == "inspect":
        return inspect(engine, job)
    if kind == "simulate":
        from .runner import simulate_in_worker
        return simulate_in_worker(engine, job)
    if kind == "sleep":  # used by tests of the timeout machinery only
        import time
        time.sleep(float(job.get("seconds", 1)))
        return {"ok": True}
    return {"ok": False, "error": f"unknown job type {kind!r}"}


def inspect(engine, job: dict[str, Any]) -> dict[str, Any]:
    """Load a deck without running it and return the output of ngspice commands (listing, show)."""
    messages = engine.load(job["deck"])
    problems = engine.problems(messages)
    if problems:
        return {"ok": False, "error": "; ".join(problems), "messages": messages}
    outputs = {cmd: engine.command(cmd) for cmd in job.get("commands", [])}
    return {"ok": True, "outputs": outputs, "messages": messages, "version": engine.version}
