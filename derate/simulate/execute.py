"""Inside a worker: run one job on the simulator back end and measure every capacitor there.

The measuring happens next to the data: only Stress records and small plot envelopes travel back,
so a large board's full waveforms never reach the main process.
"""

from __future__ import annotations

import time
from typing import Any

import numpy as np

from .backend import Backend
from .job import InspectJob, SimulationJob
from .stream import Reducer, measure_reduced


def execute(backend: Backend, job: SimulationJob, progress=None) -> dict[str, Any]:
    """Load and run a job's deck, then measure every probed capacitor (runs in the worker process).

    Returns plain data: ``ok``, the Stress records as dicts, the plot envelopes as arrays, the
    simulator's warnings and timings; or ``ok: False`` with an error text.
    """
    t_load = time.perf_counter()
    load_msgs = backend.load(job.deck, job.dialect)
    load_s = time.perf_counter() - t_load
    problems = backend.problems(load_msgs)
    if problems:
        return {"ok": False, "error": "ngspice could not read the deck: " + "; ".join(problems[:5]),
                "warnings": backend.warnings(load_msgs)}
    t0 = time.perf_counter()
    run_msgs = backend.run(progress)
    sim_s = time.perf_counter() - t0
    messages = load_msgs + run_msgs
    plots = backend.plots()
    tran = next((p for p in plots if p.startswith("tran")), None)
    op = next((p for p in plots if p.startswith("op")), None)
    stop = job.tstop_s
    if any(sign in m.lower() for m in run_msgs for sign in ("can't allocate", "out of memory", "malloc")):
        raise MemoryError("ngspice could not allocate memory")
    if tran is None:
        problems = backend.problems(run_msgs) or ["no transient results"]
        return {"ok": False, "error": "; ".join(problems[:5]), "warnings": backend.warnings(messages)}
    t = backend.vector(tran, "time")
    if len(t) < 2 or t[-1] < stop * (1 - 1e-6):
        problems = backend.problems(run_msgs)
        reached = t[-1] if len(t) else 0.0
        return {"ok": False, "error": f"transient stopped at {reached:.6g} s of {stop:.6g} s"
                + (": " + "; ".join(problems[:5]) if problems else ""), "warnings": backend.warnings(messages)}
    names = backend.vector_names(tran)
    window = job.window.bounds(float(t[-1]))
    if window[1] - window[0] <= 0:
        return {"ok": False, "error": f"the measuring window {window} is empty for a run ending at {t[-1]:.6g} s"}
    # the same reduction as the streaming simulator, over the run held in memory, a block of rows at a
    # time: every capacitor at once for the run's extremes, start-up envelope and trend statistics
    view = getattr(backend, "vector_view", backend.vector)
    wanted = ["time"] + sorted({v for p in job.probes for v in (p.v_plus, p.v_minus, p.current) if v} & set(names))
    reducer = Reducer(job, [raw_name(n) for n in wanted])
    if reducer.missing:
        return {"ok": False, "error": "ngspice did not produce vectors for " + "; ".join(reducer.missing[:5])}
    columns = [t] + [view(tran, n) for n in wanted[1:]]
    step = max(256, (8 << 20) // (8 * len(columns)))  # about 8 MB a block
    for a in range(0, len(t), step):
        reducer.add(np.column_stack([c[a:a + step] for c in columns]))
    del columns
    op_row, op_index = None, {}
    if op:
        op_names = backend.vector_names(op)
        op_row = np.array([float(backend.vector(op, n)[0]) for n in op_names])
        op_index = {n: k for k, n in enumerate(op_names)}
    result = measure_reduced(job, reducer, op_row, op_index)
    result.update({"warnings": backend.warnings(messages), "load_seconds": load_s, "sim_seconds": sim_s,
                   "measure_seconds": time.perf_counter() - t0 - sim_s, "version": backend.version,
                   "simulator": "shared"})
    return result


def raw_name(name: str) -> str:
    """The raw-file name of a shared-library vector (the inverse of stream.shared_name)."""
    if name == "time":
        return name
    if name.startswith("@"):
        return f"i({name})"
    if name.endswith("#branch"):
        return f"i({name[:-len('#branch')]})"
    return f"v({name})"


def inspect(backend: Backend, job: InspectJob) -> dict[str, Any]:
    """Load a deck without running it and return the output of informational commands (listing, show)."""
    messages = backend.load(job.deck, job.dialect)
    problems = backend.problems(messages)
    if problems:
        return {"ok": False, "error": "; ".join(problems), "messages": messages}
    outputs = {cmd: backend.command(cmd) for cmd in job.commands}
    return {"ok": True, "outputs": outputs, "messages": messages, "version": backend.version}


def handle(backend: Backend, wire: dict[str, Any], progress=None) -> dict[str, Any]:
    """Dispatch one job, received as plain data, to its handler; return plain result data."""
    kind = wire.get("type")
    if kind == "simulate":
        job = SimulationJob.from_wire(wire)
        if job.backend == "stream":  # ngspice in batch mode, reduced as it streams: no library involved
            from .stream import run_streaming
            result = run_streaming(job, progress)
            result.setdefault("version", backend.version if backend is not None else "")
            return result
        return execute(backend, job, progress)
    if kind == "inspect":
        return inspect(backend, InspectJob(wire["deck"], tuple(wire.get("commands", ())),
                                           dialect=wire.get("dialect")))
    if kind == "allocate":  # used by the test of the memory-limit message only
        block = bytearray(int(wire.get("bytes", 0)))
        return {"ok": True, "size": len(block)}
    if kind == "sleep":  # used by tests of the timeout machinery only
        time.sleep(float(wire.get("seconds", 1)))
        return {"ok": True}
    return {"ok": False, "error": f"unknown job type {kind!r}"}
