"""Simulate every scenario of a project: plan the jobs, use the cache, hand the rest to a Runner."""

from __future__ import annotations


from dataclasses import replace
from typing import Callable, Iterable, Mapping

from ..errors import DataError, NetlistError
from ..measure import MEASURE_VERSION
from ..netlist.flatten import Circuit, flatten
from ..netlist.names import to_user_names
from ..netlist.parser import Netlist
from ..project import Parasitics, Project, Scenario, Window
from ..units import format_number
from . import backend as backends
from .cache import Cache
from .deck import Deck, build_deck, netlist_tran, parasitics_for, tran_note
from .job import JobResult, MeasureSettings, SimulationJob
from .powerup import POWER_UP_KEY, merge_power_up, starts_above_zero
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
    table = simulated_parasitics(project, base, parasitics)
    names = [sc.name for sc in project.scenarios]
    if len(set(names)) != len(names):  # every result is kept by its scenario's name
        twice = sorted({n for n in names if names.count(n) > 1})
        raise DataError(f"two scenarios are named {', '.join(repr(n) for n in twice[:3])}",
                        str(project.path) if project.path else None, "scenarios")
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
        deck, job = plan_job(project, netlist, circuit, sc, table, skip, dialect, notes=notes)
        out.append((sc, circuit, deck, job))
    return out


def simulated_parasitics(project: Project, base: Circuit,
                         parasitics: Mapping[str, Parasitics] | None = None) -> dict[str, Parasitics]:
    """{capacitor path: ESR/ESL simulated with it}: the project's ``esr:`` table, then the parts'."""
    table = dict(parasitics_for(base, project.esr))
    table.update(parasitics or {})
    return table


def plan_job(project: Project, netlist: Netlist, circuit: Circuit, sc: Scenario, table: Mapping[str, Parasitics],
             skip: frozenset[str], dialect: str | None, stop_s: float | None = None,
             notes: list[str] | None = None, uic: bool = False) -> tuple[Deck, SimulationJob]:
    """The deck and job of one scenario; ``stop_s`` runs it longer than its analysis says (to settle:
    the window keeps its place relative to the end of the run); ``uic`` switches it on from zero
    (powerup.py)."""
    analysis = project.analysis
    shift = 0.0
    if stop_s is not None or uic:
        base = analysis.tran or netlist_tran(netlist, circuit)
        if base is None:
            raise DataError("no transient analysis: give analysis.tran in derate.yaml or a .tran card in the netlist")
        span = base.stop_s - base.start_s
        # ngspice's default maximum step grows with the span: keep the original run's resolution
        max_step = base.max_step_s or min(base.step_s, span / 50)
        stop = stop_s if stop_s is not None else base.stop_s
        shift = stop - base.stop_s
        analysis = replace(analysis, tran=replace(base, stop_s=stop, max_step_s=max_step, uic=base.uic or uic))
    deck = build_deck(netlist, circuit, analysis, sc, table, skip)
    if project.analysis.tran is None and notes is not None:
        note = tran_note(netlist, circuit)
        if note:
            notes.append(note)
    period = steady_period(analysis, circuit, notes)
    planned = project.analysis.tran or netlist_tran(netlist, circuit)
    if period and not analysis.period_s and planned is not None and period > planned.stop_s:
        # a PULSE whose period is longer than the run is one edge (a step): no period to compare
        if notes is not None:
            notes.append(f"the sources' period ({format_number(period, 's')}) is longer than the run "
                         f"({format_number(planned.stop_s, 's')}): read as a single edge; steady state is judged "
                         "over tenths of the measuring window")
        period = None
    window = effective_window(analysis, period, deck.tran.stop_s)
    if shift and (window.from_s is not None or window.to_s is not None):
        window = Window(window.last_s, None if window.from_s is None else window.from_s + shift,
                        None if window.to_s is None else window.to_s + shift)
    start, end = window.bounds(deck.tran.stop_s)
    if period and notes is not None and start < end < start + 2 * period * (1 - 1e-3):
        notes.append(f"the measuring window ({format_number(start, 's')} to {format_number(end, 's')}) is shorter "
                     f"than two periods of the circuit ({format_number(period, 's')}): the window's ends are not "
                     "compared (the trend over the run's periods still is); the figures may hold the start-up")
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
    return deck, job


def settle_stop(result: ScenarioResult, job: SimulationJob, first_stop_s: float, budget: float) -> float | None:
    """The longer stop time that should let an unsettled run settle, within ``budget`` times the
    first run's length; None when the run settled or the budget is spent."""
    needs = [s.settle_more_s for s in result.stresses if s.steady_state is False]
    if not needs or job.window.to_s is not None:  # a window that ends at a fixed time: the run is what it asks
        return None
    limit = first_stop_s * budget
    if job.tstop_s >= limit * (1 - 1e-9):
        return None
    if any(n is None for n in needs):  # not slowing down, or no estimate: three times the run
        extra = 2.0 * job.tstop_s
    else:
        extra = 1.25 * max(needs)  # the trend's estimate and a quarter more
    # each longer run starts again from zero: at least half as long again, so few rounds are needed
    return min(job.tstop_s + max(extra, 0.5 * job.tstop_s), limit)


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
    table = simulated_parasitics(project, base, parasitics)
    store = cache if cache is not None and cache.enabled else None
    prints: dict[str, str] = {}

    def fingerprint(kind: str) -> str:  # the simulator that produced a result is part of its key
        if kind not in prints:
            prints[kind] = backends.fingerprint(kind)
        return prints[kind]

    def as_result(sc, circuit, deck, jr: JobResult) -> ScenarioResult:
        if jr.ok:
            return result_from_data(sc, jr.data, jr.seconds, False, deck, circuit)
        back = {d: u for u, d in circuit.deck_nets.items()}  # messages in the user's net names
        return ScenarioResult(sc, False, error=deck.user_lines(to_user_names(jr.error, back)),
                              seconds=jr.seconds, timed_out=jr.timed_out, deck=deck, circuit=circuit,
                              warnings=tuple(deck.user_lines(to_user_names(w, back))
                                             for w in jr.data.get("warnings", [])))

    results: dict[str, ScenarioResult] = {}
    first_stop = {sc.name: job.tstop_s for sc, _, _, job in prepared}
    spent = {sc.name: 0.0 for sc, _, _, _ in prepared}
    budget = project.analysis.settle_budget
    # switch-on runs: scenarios whose sources start above zero and whose run starts from the operating point
    switch_on: dict[str, ScenarioResult | None] = {}
    power_state: dict[str, str] = {}
    first_round: list[tuple[str, Scenario, Circuit, Deck, SimulationJob]] = []
    for sc, circuit, deck, job in prepared:
        first_round.append((sc.name, sc, circuit, deck, job))
        state = "in-run"
        if not deck.tran.uic and starts_above_zero(circuit, sc):
            state = "simulated" if project.analysis.power_up == "auto" else "off"
        power_state[sc.name] = state
        if state == "simulated":
            deck_on, job_on = plan_job(project, netlist, circuit, sc, table, skip, dialect, uic=True)
            first_round.append((sc.name + POWER_UP_KEY, sc, circuit, deck_on, job_on))
            switch_on[sc.name] = None
    version = ""
    cached_version = [""]  # a run served from the cache still says which ngspice made its results
    own = runner is None

    def complete(name: str) -> None:
        """Hand a scenario on once its main run is final and its switch-on run (if any) is back."""
        res = results.get(name)
        if res is None or (name in switch_on and switch_on[name] is None):
            return
        on = switch_on.get(name)
        state = power_state[name]
        if on is not None and not on.ok:
            state = "failed"
            res = replace(res, warnings=res.warnings + (f"the switch-on run (.tran uic) failed: {on.error}",))
        if res.ok:
            res = replace(res, stresses=merge_power_up(res.stresses, on.stresses if on is not None and on.ok else None,
                                                       state),
                          run_waves=on.run_waves if on is not None and on.ok and on.run_waves else res.run_waves)
        results[name] = res
        if on_done:
            on_done(res)

    rounds = first_round
    try:
        for round_no in range(MAX_SETTLE_ROUNDS + 1):
            if not rounds:
                break
            got: dict[str, ScenarioResult] = {}
            todo: dict[str, tuple[Scenario, Circuit, Deck, SimulationJob, str]] = {}
            jobs_by_key = {key: job for key, _, _, _, job in rounds}
            for key, sc, circuit, deck, job in rounds:
                cache_key = job.cache_key(fingerprint(job.backend), MEASURE_VERSION) if store else ""
                hit = store.load(cache_key) if store else None
                if hit is not None:
                    got[key] = result_from_data(sc, hit, 0.0, True, deck, circuit)
                    cached_version[0] = cached_version[0] or str(hit.get("version", ""))
                else:
                    todo[key] = (sc, circuit, deck, job, cache_key)
            nexts: dict[str, float] = {}

            def settle_or_finish(key: str, res: ScenarioResult, job: SimulationJob) -> None:
                if key.endswith(POWER_UP_KEY):  # a switch-on run: only its start-up extremes are used
                    switch_on[key[:-len(POWER_UP_KEY)]] = res
                    complete(key[:-len(POWER_UP_KEY)])
                    return
                spent[key] += res.seconds
                longer = settle_stop(res, job, first_stop[key], budget) \
                    if res.ok and round_no < MAX_SETTLE_ROUNDS else None
                if longer is None:
                    results[key] = _with_settling(res, first_stop[key], budget, spent[key])
                    complete(key)
                else:
                    nexts[key] = longer  # the next round runs it longer

            for key, res in list(got.items()):
                settle_or_finish(key, res, jobs_by_key[key])
            if todo:
                if runner is None:
                    runner = LocalRunner(min(len(todo), jobs or 0) or None, backend=backend)

                def done(jr: JobResult) -> None:
                    sc, circuit, deck, job, cache_key = todo[jr.key]
                    if jr.ok and store:
                        store.save(cache_key, jr.data)
                    settle_or_finish(jr.key, as_result(sc, circuit, deck, jr), job)

                for jr in runner.run([(key, item[3]) for key, item in todo.items()], done, on_progress):
                    version = version or jr.data.get("version", "")
            rounds = []
            for sc, circuit, deck, job in prepared:
                if sc.name in nexts:
                    deck2, job2 = plan_job(project, netlist, circuit, sc, table, skip, dialect, nexts[sc.name])
                    rounds.append((sc.name, sc, circuit, deck2, job2))
    finally:
        if own and runner is not None:
            runner.close()
    if store:
        store.prune()
    ordered = tuple(results[sc.name] for sc, _, _, _ in prepared)
    settle_notes = [r.settle_note for r in ordered if r.settle_note]
    notes = list(dict.fromkeys(planning)) + settle_notes + (list(cache.notes) if cache is not None else [])
    return SimulationRun(ordered, version or cached_version[0], tuple(notes))


MAX_SETTLE_ROUNDS = 3  # longer runs tried for an unsettled scenario (each sized by the trend's estimate)


def _fixed_end(res: ScenarioResult) -> bool:
    return any(abs(s.window_end_s - res.deck.tran.stop_s) > 1e-9 * res.deck.tran.stop_s for s in res.stresses)


def _with_settling(res: ScenarioResult, first_stop_s: float, budget: float, spent_s: float) -> ScenarioResult:
    """The result with what settling took: how long it was simulated, and a note when it is longer
    than its analysis or still not settled."""
    if not res.ok or res.deck is None:
        return res
    stop = res.deck.tran.stop_s
    unsettled = sorted(s.capacitor for s in res.stresses if s.steady_state is False)
    name = res.scenario.name
    note = ""
    if stop > first_stop_s * (1 + 1e-9):
        note = (f"scenario {name}: simulated to {format_number(stop, 's')} instead of "
                f"{format_number(first_stop_s, 's')} to reach steady state")
    if unsettled:
        more = ", ".join(unsettled[:6]) + (" …" if len(unsettled) > 6 else "")
        if res.deck is not None and res.stresses and stop <= first_stop_s * (1 + 1e-9) and \
                _fixed_end(res):
            why = "the measuring window ends at a fixed time (analysis.window.to), so the run is not lengthened"
        elif stop >= first_stop_s * budget * (1 - 1e-9):
            why = f"the settle budget (analysis.settle_budget: {budget:g} x the run) is spent"
        else:
            why = "longer runs did not settle it"
        note = (note + "; " if note else f"scenario {name}: ") + \
            f"still not settled at {format_number(stop, 's')} ({more}): {why}"
    return replace(res, first_stop_s=first_stop_s, settle_note=note or None, seconds=max(res.seconds, spent_s))


def stresses_by_scenario(run: SimulationRun) -> dict[str, Iterable]:
    """{scenario name: its Stress records} for the scenarios that ran."""
    return {r.scenario.name: r.stresses for r in run.results if r.ok}



