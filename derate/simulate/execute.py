"""Inside a worker: run one job on the simulator back end and measure every capacitor there.

The measuring happens next to the data: only Stress records and small plot envelopes travel back,
so a large board's full waveforms never reach the main process.
"""

from __future__ import annotations

import time
from typing import Any

import numpy as np

from ..measure import SpectrumPlan, envelope, measure
from .backend import Backend
from .job import InspectJob, SimulationJob


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
    names = set(backend.vector_names(tran))
    op_names = set(backend.vector_names(op)) if op else set()
    window = job.window.bounds(float(t[-1]))
    if window[1] - window[0] <= 0:
        return {"ok": False, "error": f"the measuring window {window} is empty for a run ending at {t[-1]:.6g} s"}
    m = job.measure
    plan = SpectrumPlan.make(window[0], window[1], m.points)
    stresses, waves, missing = [], {}, []
    zeros = None
    for pr in job.probes:
        vecs = [pr.v_plus, pr.v_minus, pr.current]
        absent = [v for v in vecs if v and v not in names]
        if absent:
            missing.append(f"{pr['path']}: {', '.join(absent)}")
            continue
        if zeros is None:
            zeros = np.zeros_like(t)
        vp = backend.vector(tran, pr.v_plus) if pr.v_plus else zeros
        vn = backend.vector(tran, pr.v_minus) if pr.v_minus else zeros
        v = vp - vn
        i = backend.vector(tran, pr.current)
        v_dc = 0.0
        if op:
            dc_p = float(backend.vector(op, pr.v_plus)[0]) if pr.v_plus and pr.v_plus in op_names else 0.0
            dc_n = float(backend.vector(op, pr.v_minus)[0]) if pr.v_minus and pr.v_minus in op_names else 0.0
            v_dc = dc_p - dc_n
        s = measure(pr.path, pr.spice_name, job.scenario, t, v, i, v_dc, window,
                    harmonics=m.harmonics, points=m.points, period=m.period_s,
                    tolerance=m.tolerance, model=pr.model, esr_ohm=pr.esr_ohm, esl_h=pr.esl_h,
                    plan=plan)
        stresses.append(s.as_dict())
        env = envelope(t, v, i, window[0], window[1], m.buckets, m.period_s)
        run_env = envelope(t, v, i, float(t[0]), float(t[-1]), 200)
        waves[pr.path] = {**env.as_arrays(), **{f"run_{k}": a for k, a in run_env.as_arrays().items()}}
    if missing:
        return {"ok": False, "error": "ngspice did not produce vectors for " + "; ".join(missing[:5])}
    return {"ok": True, "stress": stresses, "waves": waves, "warnings": backend.warnings(messages),
            "points": int(len(t)), "load_seconds": load_s, "sim_seconds": sim_s,
            "measure_seconds": time.perf_counter() - t0 - sim_s, "version": backend.version}


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
    if kind == "sleep":  # used by tests of the timeout machinery only
        time.sleep(float(wire.get("seconds", 1)))
        return {"ok": True}
    return {"ok": False, "error": f"unknown job type {kind!r}"}
