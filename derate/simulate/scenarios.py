"""Simulate every scenario of a project: plan the jobs, use the cache, hand the rest to a Runner."""

from __future__ import annotations


from typing import Callable, Iterable, Mapping

from ..errors import DataError, NetlistError
from ..measure import MEASURE_VERSION
from ..netlist.flatten import Circuit, flatten
from ..netlist.names import to_user_names
from ..netlist.parser import Netlist
from ..project import Parasitics, Project, Scenario
from ..units import format_number
from . import backend as backends
from .cache import Cache
from .deck import Deck, build_deck, parasitics_for, tran_note
from .job import JobResult, MeasureSettings, SimulationJob
from .results import ScenarioResult, SimulationRun, result_from_data
from .runner import LocalRunner, Runner
from .window import effective_window, steady_period


def prepare(project: Project, netlist: Netlist, base: Circuit,
            parasitics: Mapping[str, Parasitics] | None = None,
            backend: str = "shared", notes: list[str] | None = None, skip: frozenset[str] = frozenset(),
            dialect: str | None = None) -> list[tuple[Scenario, Circuit, Deck, SimulationJob]]:
    """Return (scenario, circuit under the scenario, deck, job) for every scenario.

    What planning could not use (a source period that does not evaluate) goes into ``notes``.
    """
    table = dict(parasitics_for(base, project.esr))
    table.update(parasitics or {})
    analysis = project.analysis
    out = []
    flattened: dict[tuple, Circuit] = {}  # the samples of a corner share its parameters: flatten once
    for sc in project.scenarios:
        try:
            if sc.params and sc.params not in flattened:
                flattened[sc.params] = flatten(netlist, dict(sc.params))
            circuit = flattened[sc.params] if sc.params else base
        except NetlistError as exc:
            where = str(project.path) if project.path else "scenario"
            raise DataError(f"scenario '{sc.name}': {exc.message}", where) from None
        deck = build_deck(netlist, circuit, analysis, sc, table, skip)
        if analysis.tran is None and notes is not None:
            note = tran_note(netlist)
            if note:
                notes.append(note)
        period = steady_period(analysis, circuit, notes)
        window = effective_window(analysis, period, deck.tran.stop_s)
        start, end = window.bounds(deck.tran.stop_s)
        if period and notes is not None and start < end < start + 2 * period * (1 - 1e-3):
            notes.append(f"the measuring window ({format_number(start, 's')} to {format_number(end, 's')}) is shorter "
                         f"than two periods of the circuit ({format_number(period, 's')}): steady state is not "
                         "checked and the figures may hold the start-up; lengthen the run or set analysis.window")
        if start >= deck.tran.stop_s:
            raise DataError(f"the measuring window starts at {start:g} s, after the run ends "
                            f"({deck.tran.stop_s:g} s)", str(project.path) if project.path else None,
                            "analysis.window")
        job = SimulationJob(sc.name, deck.text, deck.tran.stop_s, window,
                            MeasureSettings(analysis.harmonics, analysis.spectrum_points, period,
                                            analysis.steady_state_tolerance,
                                            # a sample brings back its stress, not its waveforms
                                            buckets=0 if sc.corner else MeasureSettings.buckets),
                            deck.probes, analysis.timeout_s, choose_simulator(analysis.simulator, deck, notes),
                            dialect, stall_s=analysis.stall_s)
        out.append((sc, circuit, deck, job))
    return out


AUTO_STREAM_BYTES = 64 * 1024 ** 2  # above this (lower) estimate of saved data, auto streams


def expected_bytes(deck: Deck) -> float:
    """A lower estimate of what shared mode would hold: 8 bytes per saved vector per time point, with
    at least one point per maximum step (ngspice's default maximum step: min(step, span / 50))."""
    tran = deck.tran
    span = tran.stop_s - tran.start_s
    max_step = tran.max_step_s or min(tran.step_s, span / 50)
    vectors = len({v for p in deck.probes for v in (p.v_plus, p.v_minus, p.current) if v}) + 1
    return 8.0 * vectors * (tran.stop_s / max_step + 1)


def choose_simulator(mode: str, deck: Deck, notes: list[str] | None = None) -> str:
    """``shared`` or ``stream`` for one deck: as asked, or by its expected size for ``auto``."""
    from .stream import ngspice_program

    want = mode
    if mode == "auto":
        want = "stream" if expected_bytes(deck) > AUTO_STREAM_BYTES else "shared"
    if want == "stream" and not ngspice_program():
        if notes is not None:
            notes.append("the ngspice program is not installed: scenarios run in shared mode, every point in memory")
        return "shared"
    return want


def simulate_scenarios(project: Project, netlist: Netlist, base: Circuit, *, runner: Runner | None = None,
                       cache: Cache | None = None, on_done: Callable[[ScenarioResult], None] | None = None,
                       parasitics: Mapping[str, Parasitics] | None = None, jobs: int | None = None,
                       backend: str = "shared", skip: frozenset[str] = frozenset(),
                       dialect: str | None = None,
                       on_progress: Callable[[str, float], None] | None = None) -> SimulationRun:
    """Simulate and measure every scenario; failures become failed ScenarioResults, never exceptions.

    ``runner``: where jobs run (default: a LocalRunner with ``jobs`` workers, closed afterwards).
    ``cache`` (an opened ``Cache``, or None for no caching) is read before and written after
    simulating; what it had to say (discarded entries, write failures) is in the run's ``notes``.
    """
    planning: list[str] = []
    prepared = prepare(project, netlist, base, parasitics, backend, planning, skip, dialect)
    store = cache if cache is not None and cache.enabled else None
    prints: dict[str, str] = {}

    def fingerprint(kind: str) -> str:  # the simulator that produced a result is part of its key
        if kind not in prints:
            prints[kind] = backends.fingerprint(kind)
        return prints[kind]
    results: dict[str, ScenarioResult] = {}
    todo: dict[str, tuple[Scenario, Circuit, Deck, SimulationJob, str]] = {}
    for sc, circuit, deck, job in prepared:
        key = job.cache_key(fingerprint(job.backend), MEASURE_VERSION) if store else ""
        hit = store.load(key) if store else None
        if hit is not None:
            results[sc.name] = result_from_data(sc, hit, 0.0, True, deck, circuit)
            if on_done:
                on_done(results[sc.name])
        else:
            todo[sc.name] = (sc, circuit, deck, job, key)
    version = ""
    if todo:
        own = runner is None
        runner = runner or LocalRunner(min(len(todo), jobs or 0) or None, backend=backend)

        def done(jr: JobResult) -> None:
            sc, circuit, deck, job, key = todo[jr.key]
            if jr.ok:
                res = result_from_data(sc, jr.data, jr.seconds, False, deck, circuit)
                if store:
                    store.save(key, jr.data)
            else:
                back = {d: u for u, d in circuit.deck_nets.items()}  # messages in the user's net names
                res = ScenarioResult(sc, False, error=deck.user_lines(to_user_names(jr.error, back)),
                                     seconds=jr.seconds, timed_out=jr.timed_out, deck=deck, circuit=circuit,
                                     warnings=tuple(deck.user_lines(to_user_names(w, back))
                                                    for w in jr.data.get("warnings", [])))
            results[sc.name] = res
            if on_done:
                on_done(res)

        try:
            for jr in runner.run([(name, item[3]) for name, item in todo.items()], done, on_progress):
                version = version or jr.data.get("version", "")
        finally:
            if own:
                runner.close()
    if store:
        store.prune()
    ordered = tuple(results[sc.name] for sc, _, _, _ in prepared)
    notes = list(dict.fromkeys(planning)) + (list(cache.notes) if cache is not None else [])
    return SimulationRun(ordered, version, tuple(notes))


def stresses_by_scenario(run: SimulationRun) -> dict[str, Iterable]:
    """{scenario name: its Stress records} for the scenarios that ran."""
    return {r.scenario.name: r.stresses for r in run.results if r.ok}



