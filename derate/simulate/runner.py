"""Simulate every scenario (in parallel worker processes, cached) and measure every capacitor.

The measuring happens inside the worker, next to the data: only Stress records and small plot
envelopes travel back, so a large board's full waveforms are never held by the main process.
"""

from __future__ import annotations

import os
import time
from dataclasses import dataclass, field
from typing import Any, Callable

import numpy as np

from ..errors import DataError, NetlistError
from ..measure import MEASURE_VERSION, Envelope, SpectrumPlan, Stress, envelope, measure
from ..netlist.expr import ExprError, eval_text
from ..netlist.flatten import Circuit, flatten
from ..netlist.parser import Netlist
from ..project import Analysis, Parasitics, Project, Scenario, Window
from . import cache as cache_mod
from .deck import Deck, build_deck, parasitics_for
from .worker import JobResult, WorkerPool


# ---------------------------------------------------------------- inside the worker
def simulate_in_worker(engine, job: dict[str, Any]) -> dict[str, Any]:
    """Load and run a deck, then measure every probed capacitor (runs in the worker process)."""
    t_load = time.perf_counter()
    load_msgs = engine.load(job["deck"])
    load_s = time.perf_counter() - t_load
    problems = engine.problems(load_msgs)
    if problems:
        return {"ok": False, "error": "ngspice could not read the deck: " + "; ".join(problems[:5]),
                "warnings": engine.warnings(load_msgs)}
    t0 = time.perf_counter()
    run_msgs = engine.run()
    sim_s = time.perf_counter() - t0
    messages = load_msgs + run_msgs
    plots = engine.plots()
    tran = next((p for p in plots if p.startswith("tran")), None)
    op = next((p for p in plots if p.startswith("op")), None)
    stop = float(job["tstop"])
    if tran is None:
        problems = engine.problems(run_msgs) or ["no transient results"]
        return {"ok": False, "error": "; ".join(problems[:5]), "warnings": engine.warnings(messages)}
    t = engine.vector(tran, "time")
    if len(t) < 2 or t[-1] < stop * (1 - 1e-6):
        problems = engine.problems(run_msgs)
        reached = t[-1] if len(t) else 0.0
        return {"ok": False, "error": f"transient stopped at {reached:.6g} s of {stop:.6g} s"
                + (": " + "; ".join(problems[:5]) if problems else ""), "warnings": engine.warnings(messages)}
    names = set(engine.vector_names(tran))
    op_names = set(engine.vector_names(op)) if op else set()
    w = job["window"]
    window = Window(w.get("last_s"), w.get("from_s"), w.get("to_s")).bounds(float(t[-1]))
    if window[1] - window[0] <= 0:
        return {"ok": False, "error": f"the measuring window {window} is empty for a run ending at {t[-1]:.6g} s"}
    m = job["measure"]
    plan = SpectrumPlan.make(window[0], window[1], m["points"])
    stresses, waves, missing = [], {}, []
    zeros = None
    for pr in job["probes"]:
        vecs = [pr["v_plus"], pr["v_minus"], pr["current"]]
        absent = [v for v in vecs if v and v not in names]
        if absent:
            missing.append(f"{pr['path']}: {', '.join(absent)}")
            continue
        if zeros is None:
            zeros = np.zeros_like(t)
        vp = engine.vector(tran, pr["v_plus"]) if pr["v_plus"] else zeros
        vn = engine.vector(tran, pr["v_minus"]) if pr["v_minus"] else zeros
        v = vp - vn
        i = engine.vector(tran, pr["current"])
        v_dc = 0.0
        if op:
            dc_p = float(engine.vector(op, pr["v_plus"])[0]) if pr["v_plus"] and pr["v_plus"] in op_names else 0.0
            dc_n = float(engine.vector(op, pr["v_minus"])[0]) if pr["v_minus"] and pr["v_minus"] in op_names else 0.0
            v_dc = dc_p - dc_n
        s = measure(pr["path"], pr["spice_name"], job["scenario"], t, v, i, v_dc, window,
                    harmonics=m["harmonics"], points=m["points"], period=m.get("period"),
                    tolerance=m["tolerance"], model=pr["model"], esr_ohm=pr.get("esr_ohm"), esl_h=pr.get("esl_h"),
                    plan=plan)
        stresses.append(s.as_dict())
        env = envelope(t, v, i, window[0], window[1], job.get("buckets", 400))
        run_env = envelope(t, v, i, float(t[0]), float(t[-1]), 200)
        waves[pr["path"]] = {**env.as_arrays(), **{f"run_{k}": a for k, a in run_env.as_arrays().items()}}
    if missing:
        return {"ok": False, "error": "ngspice did not produce vectors for " + "; ".join(missing[:5])}
    return {"ok": True, "stress": stresses, "waves": waves, "warnings": engine.warnings(messages),
            "points": int(len(t)), "load_seconds": load_s, "sim_seconds": sim_s,
            "measure_seconds": time.perf_counter() - t0 - sim_s, "version": engine.version}


# ---------------------------------------------------------------- in the main process
@dataclass
class ScenarioResult:
    """The outcome of one scenario: Stress records, plot envelopes, ngspice's warnings."""

    scenario: Scenario
    ok: bool
    stresses: list[Stress] = field(default_factory=list)
    waves: dict[str, Envelope] = field(default_factory=dict)
    run_waves: dict[str, Envelope] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    error: str = ""
    seconds: float = 0.0
    from_cache: bool = False
    timed_out: bool = False
    points: int = 0
    deck: Deck | None = None
    circuit: Circuit | None = None


@dataclass
class SimulationRun:
    """Every scenario's result, in project order."""

    results: list[ScenarioResult]
    ngspice_version: str = ""
    notes: list[str] = field(default_factory=list)  # from the cache: discarded entries, write failures

    @property
    def failed(self) -> list[ScenarioResult]:
        return [r for r in self.results if not r.ok]

    def stresses(self) -> list[Stress]:
        return [s for r in self.results if r.ok for s in r.stresses]


def source_periods(circuit: Circuit) -> list[float]:
    """Return the periods of the periodic independent sources (SIN frequency, PULSE period)."""
    def lookup(name: str) -> float:
        return circuit.params[name]
    out = []
    for el in circuit.elements:
        src = el.source
        if el.kind not in "vi" or src is None or not src.function:
            continue
        try:
            if src.function == "sin" and len(src.args) >= 3:
                f = eval_text(src.args[2], lookup)
                if f > 0:
                    out.append(1.0 / f)
            elif src.function == "pulse" and len(src.args) >= 7:
                per = eval_text(src.args[6], lookup)
                if per > 0:
                    out.append(per)
        except (ExprError, KeyError, ValueError):
            continue
    return out


def common_period(periods: list[float], max_multiple: int = 10000, rel_tol: float = 1e-9) -> float | None:
    """Return the shortest time that is a whole number of every period (None if over the limit)."""
    if not periods:
        return None
    common = max(periods)
    for p in sorted(set(periods), reverse=True):
        for k in range(1, max_multiple + 1):
            ratio = k * common / p
            if abs(ratio - round(ratio)) <= rel_tol * ratio:
                common *= k
                break
        else:
            return None
    return common


def steady_period(analysis: Analysis, circuit: Circuit) -> float | None:
    """Return the period for the steady-state check.

    The configured ``analysis.period``, else the common period of the periodic sources (SIN,
    PULSE), else the longest of them when they have no common period within 10 000 cycles.
    """
    if analysis.period_s:
        return analysis.period_s
    periods = source_periods(circuit)
    if not periods:
        return None
    return common_period(periods) or max(periods)


def effective_window(analysis: Analysis, period: float | None, stop_s: float) -> Window:
    """Return the configured window, or by default the last two periods (else the second half)."""
    w = analysis.window
    if w.last_s is not None or w.from_s is not None or w.to_s is not None:
        return w
    if period and 2 * period < stop_s:
        return Window(last_s=2 * period)
    return Window(last_s=stop_s / 2)


def prepare(project: Project, netlist: Netlist, base: Circuit,
            parasitics: dict[str, Parasitics] | None = None) -> list[tuple[Scenario, Circuit, Deck, dict]]:
    """Return (scenario, circuit under the scenario, deck, worker job) for every scenario."""
    table = dict(parasitics_for(base, project.esr))
    table.update(parasitics or {})
    out = []
    for sc in project.scenarios:
        try:
            circuit = flatten(netlist, dict(sc.params)) if sc.params else base
        except NetlistError as exc:
            where = str(project.path) if project.path else "scenario"
            raise DataError(f"scenario '{sc.name}': {exc.message}", where) from None
        deck = build_deck(netlist, circuit, project.analysis, sc, table)
        period = steady_period(project.analysis, circuit)
        window = effective_window(project.analysis, period, deck.tran.stop_s)
        start, _ = window.bounds(deck.tran.stop_s)
        if start >= deck.tran.stop_s:
            raise DataError(f"the measuring window starts at {start:g} s, after the run ends "
                            f"({deck.tran.stop_s:g} s)", str(project.path) if project.path else None,
                            "analysis.window")
        job = {
            "type": "simulate", "scenario": sc.name, "deck": deck.text, "tstop": deck.tran.stop_s,
            "window": {"last_s": window.last_s, "from_s": window.from_s, "to_s": window.to_s},
            "measure": {"harmonics": project.analysis.harmonics, "points": project.analysis.spectrum_points,
                        "period": period, "tolerance": project.analysis.steady_state_tolerance},
            "probes": [p.__dict__ for p in deck.probes],
        }
        out.append((sc, circuit, deck, job))
    return out


def _from_data(sc: Scenario, data: dict, seconds: float, cached: bool) -> ScenarioResult:
    stresses = [Stress.from_dict(d) for d in data["stress"]]
    waves, run_waves = {}, {}
    for path, w in data.get("waves", {}).items():
        waves[path] = Envelope.from_arrays(w)
        if "run_t" in w:
            run_waves[path] = Envelope.from_arrays({k[4:]: a for k, a in w.items() if k.startswith("run_")})
    return ScenarioResult(sc, True, stresses, waves, run_waves, list(data.get("warnings", [])),
                          seconds=seconds, from_cache=cached, points=int(data.get("points", 0)))


def run_scenarios(project: Project, netlist: Netlist, base: Circuit, *, jobs: int | None = None,
                  cache: cache_mod.Cache | None = None, on_done: Callable[[ScenarioResult], None] | None = None,
                  parasitics: dict[str, Parasitics] | None = None,
                  pool: WorkerPool | None = None) -> SimulationRun:
    """Simulate and measure every scenario; failures become failed ScenarioResults, never exceptions.

    ``cache`` (an opened ``Cache``, or None for no caching) is read before and written after
    simulating; what it had to say (discarded entries, write failures) is in ``notes``.
    """
    prepared = prepare(project, netlist, base, parasitics)
    fingerprint = cache_mod.library_fingerprint()
    results: dict[str, ScenarioResult] = {}
    todo = []
    store = cache if cache is not None and cache.enabled else None
    for sc, circuit, deck, job in prepared:
        key = cache_mod.key(job, fingerprint, MEASURE_VERSION)
        job["cache_key"] = key
        hit = store.load(key) if store else None
        if hit is not None:
            res = _from_data(sc, hit, 0.0, True)
            res.deck, res.circuit = deck, circuit
            results[sc.name] = res
            if on_done:
                on_done(res)
        else:
            todo.append((sc, circuit, deck, job))
    version = ""
    if todo:
        own = pool is None
        pool = pool or WorkerPool(min(len(todo), jobs or os.cpu_count() or 1))
        by_name = {sc.name: (sc, circuit, deck, job) for sc, circuit, deck, job in todo}

        def done(jr: JobResult) -> None:
            sc, circuit, deck, job = by_name[jr.key]
            if jr.ok:
                res = _from_data(sc, jr.data, jr.seconds, False)
                if store:
                    store.save(job["cache_key"], jr.data)
            else:
                res = ScenarioResult(sc, False, error=jr.error, seconds=jr.seconds, timed_out=jr.timed_out,
                                     warnings=list(jr.data.get("warnings", [])))
            res.deck, res.circuit = deck, circuit
            results[sc.name] = res
            if on_done:
                on_done(res)

        try:
            for jr in pool.run([(sc.name, job, project.analysis.timeout_s) for sc, _, _, job in todo], done):
                version = version or jr.data.get("version", "")
        finally:
            if own:
                pool.close()
    ordered = [results[sc.name] for sc, _, _, _ in prepared]
    if store:
        store.prune()
    return SimulationRun(ordered, version, list(cache.notes) if cache is not None else [])

