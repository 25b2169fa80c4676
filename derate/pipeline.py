"""The review as three stages with frozen records between them.

    plan(project, options)  -> Plan    every input read and checked: netlist, circuit, parts, policy,
                                       waivers, baseline, scenarios (after .step, matrix, samples),
                                       temperatures, what is not reviewed; nothing simulated yet
    simulate(plan, runner)  -> SimulationRun   every scenario simulated and measured (settled, switched
                                       on, worst-case vertices found); the only stage that runs ngspice
    judge(plan, run)        -> Review  the policy applied, the gate decided

``derate.measure`` is plan + simulate and ``derate.review`` is plan + simulate + judge, so the two
simulate the same decks (the parts' ESR and ESL included) by construction.
"""

from __future__ import annotations

import datetime as dt
import fnmatch
from dataclasses import dataclass, field, replace
from pathlib import Path
from types import MappingProxyType
from typing import Callable, Mapping

from .assess import assess
from .bom import load_bom
from .cardparts import load_card_attributes
from .datafile import load_document, validate
from .errors import DataError, DerateError
from .findings import Finding
from .gate import Baseline, decide, decided_findings, load_waivers
from .hazard import caution_for
from .netlist import ReadOptions, flatten, lint as lint_circuit, read_netlist
from .netlist.flatten import Circuit
from .netlist.parser import Netlist
from .netlist.steps import read_steps, step_scenarios
from .netlist.temperature import NetlistTemperature, netlist_temperature
from .netlist.topology import across_line as capacitors_across_line
from .options import DEFAULT_POLICY, DIALECT, Progress, ReviewOptions
from .parts import Part, PartTable, designator_aliases, load_parts, simulation_parasitics
from .policy import Policy, load_policy
from .project import MAX_SCENARIOS, Parasitics, Project, Scenario, analysis_from, scenarios_from
from .review import Review
from .schematic import load_schematic
from .simulate import bias
from .simulate.cache import Cache
from .simulate.results import ScenarioResult, SimulationRun, with_reversed_terminals
from .simulate.runner import Runner
from .simulate.scenarios import simulate_scenarios, stresses_by_scenario
from .status import Severity
from .tolerance import (Tolerances, Varying, extremes, one_at_a_time, sample as draw_sample, varying, vertices,
                        worst_case_method, worst_vertices)

MAX_SAMPLED_SCENARIOS = 20_000


@dataclass(frozen=True)
class Plan:
    """Everything a review needs before simulating, read and checked (frozen)."""

    project: Project  # overrides applied; scenarios after .step, matrix, samples; temperatures resolved
    options: ReviewOptions
    netlist: Netlist
    circuit: Circuit
    parts: Mapping[str, Part | None]  # per capacitor path (None: no part data)
    parasitics: Mapping[str, Parasitics]  # what is simulated with each capacitor (the parts' ESR, ESL)
    not_reviewed: Mapping[str, str]  # capacitor path -> why it is not reviewed
    offsets: Mapping[str, tuple[float, str]]  # capacitor path -> local ambient offset, why
    lint: tuple[Finding, ...]
    dialect: str | None
    reversed: frozenset[str]  # capacitors whose card lists the - terminal first
    policy: Policy | None
    waivers: tuple = ()
    baseline: Baseline | None = None
    across_line: Mapping = field(default_factory=dict)  # capacitor path -> the mains line it is across
    varying: tuple[Varying, ...] = ()  # what a Monte Carlo or worst-case run varies
    worst_case: str | None = None  # vertices or sensitivity (None: no worst case)
    notes: tuple[str, ...] = ()
    scenarios_of: Mapping[str, frozenset[str]] = field(default_factory=dict)  # a board: each capacitor's decks' scenarios

    @property
    def lint_errors(self) -> list[Finding]:
        return [f for f in self.lint if f.severity == Severity.ERROR]


class LintStop(DerateError):
    """Lint found errors that would make ngspice fail or stall: nothing was simulated."""

    exit_code = 1

    def __init__(self, findings: list[Finding], message: str):
        self.findings = findings
        super().__init__(message)


# ---------------------------------------------------------------- plan
def plan(project: Project, options: ReviewOptions | None = None, *, policy: bool = True,
         read: tuple[Netlist, Circuit] | None = None, board_capacitors: frozenset[str] = frozenset()) -> Plan:
    """Read and check every input of a review (``policy=False``: no policy, waivers or baseline, for a
    measurement alone); DataError or NetlistError on bad input, before anything is simulated.

    ``read`` is the netlist and circuit when already read; ``board_capacitors`` the designators of the
    board's other decks (part data for them is no error in this one)."""
    options = options or ReviewOptions()
    project = with_options(project, options)
    netlist, circuit = read or read_circuit(project, options)
    project = with_netlist(project, netlist)
    notes: list[str] = []
    project = with_temperatures(project, netlist, circuit, notes)
    trust = project.confinement
    table = PartTable()
    for p in project.parts:
        load_parts(p, table, trust)
    for p in options.parts:
        load_parts(Path(p), table, trust.allowing(Path(p)))
    if project.bom:
        notes += load_bom(project.bom.file, table, dict(project.bom.columns) or None, project.bom.libraries)
    for p in options.bom:
        notes += load_bom(Path(p), table)
    for p in project.schematics + tuple(Path(s) for s in options.schematic):
        notes += load_schematic(Path(p), table, project.confinement.allowing(Path(p)))
    notes += load_card_attributes(circuit, table)  # V=, Irms=, pn= ... on the cards: the lowest layer
    the_policy = _policy(project, options) if policy else None
    waivers = tuple(load_waivers(Path(options.waivers)) if options.waivers else (
        load_waivers(project.waivers) if project.waivers else [])) if policy else ()
    baseline = Baseline.load(Path(options.baseline)) if options.baseline and policy else None
    parts = table.assign(circuit, elsewhere=board_capacitors)
    notes += table.notes
    skip = not_reviewed(project, netlist, circuit, table.dnp)
    if options.only:
        skip.update(_not_selected(circuit, options.only, board_capacitors))
    offsets = local_ambients(project, circuit)
    turned = frozenset(reversed_paths(project, circuit))
    items: tuple[Varying, ...] = ()
    method = None
    if options.samples or options.worst_case:
        items = _varying(project, circuit, parts, frozenset(skip), notes)
        method = worst_case_method(options.worst_case, len(items)) if options.worst_case else None
    if options.scenario_names:
        project = _selected_scenarios(project, options.scenario_names)
    if len(project.scenarios) > options.max_scenarios:
        raise DataError(f"the project runs {len(project.scenarios)} scenarios (its list, matrix or .step cards); "
                        f"at most {options.max_scenarios} are run unless the person running derate gives "
                        f"--max-scenarios (up to {MAX_SCENARIOS})", str(project.path or project.netlist))
    project = with_samples(project, items, options, method, notes)
    return Plan(project=project, options=options, netlist=netlist, circuit=circuit,
                parts=MappingProxyType(dict(parts)), parasitics=MappingProxyType(simulation_parasitics(parts)),
                not_reviewed=MappingProxyType(skip), offsets=MappingProxyType(offsets),
                lint=tuple(lint_circuit(circuit)), dialect=dialect_of(project, netlist, options), reversed=turned,
                policy=the_policy, waivers=waivers, baseline=baseline, varying=items, worst_case=method,
                across_line=MappingProxyType(capacitors_across_line(circuit)),
                notes=tuple(dict.fromkeys(notes)))


def read_circuit(project: Project, options: ReviewOptions | None = None) -> tuple[Netlist, Circuit]:
    """Read and flatten the project's netlist (includes confined to the project root)."""
    options = options or ReviewOptions()
    read = ReadOptions(allow_control=options.allow_control, allow_outside_includes=options.allow_outside_includes,
                       root=str(project.include_root or project.confinement.root),
                       model_path=tuple(str(p) for p in project.model_path + tuple(options.model_path)))
    netlist = read_netlist(project.netlist, read)
    return netlist, flatten(netlist)


def dialect_of(project: Project, netlist: Netlist, options: ReviewOptions) -> str | None:
    """The compatibility mode for the deck: the options', else the project's, else the netlist's hint."""
    hint = netlist.dialect if netlist.dialect and DIALECT.match(netlist.dialect) else None
    return options.dialect or project.dialect or hint


def _selected_scenarios(project: Project, patterns: tuple[str, ...]) -> Project:
    """The project with only the scenarios ``--scenario`` names (names or globs, case-insensitive; on a
    board of several decks, deck/scenario)."""
    deck = project.deck_name or None  # a deck of a board (a single netlist has no deck name)

    def names(sc: Scenario) -> tuple[str, ...]:
        return (sc.name.lower(), f"{deck}/{sc.name}".lower()) if deck else (sc.name.lower(),)
    kept = tuple(sc for sc in project.scenarios
                 if any(fnmatch.fnmatchcase(n, p.lower()) for p in patterns for n in names(sc)))
    if not kept:
        known = ", ".join(n for sc in project.scenarios for n in names(sc)[-1:])
        raise DataError(f"--scenario {' '.join(patterns)} matches no scenario{' of deck ' + deck if deck else ''} "
                        f"(scenarios: {known or 'none'})")
    return replace(project, scenarios=kept)


def _not_selected(circuit: Circuit, patterns: tuple[str, ...], elsewhere: frozenset[str]) -> dict[str, str]:
    """{capacitor: why not reviewed} for those ``--only`` does not name; a pattern naming no capacitor
    (here or in a board's other decks) is an input error."""
    pats = [p.strip().lower() for item in patterns for p in item.split(",") if p.strip()]
    caps = circuit.capacitors()
    hit = {p: [c.path for c in caps if any(fnmatch.fnmatchcase(a, p) for a in designator_aliases(c.path))]
           for p in pats}
    unknown = [p for p, got in hit.items() if not got and not any(fnmatch.fnmatchcase(e, p) for e in elsewhere)]
    if unknown:
        raise DataError(f"--only {', '.join(unknown)} names no capacitor of the netlist")
    chosen = {path for got in hit.values() for path in got}
    return {c.path: "not selected (--only)" for c in caps if c.path not in chosen}


def not_reviewed(project: Project, netlist: Netlist, circuit: Circuit,
                 dnp: set[str] | frozenset[str] = frozenset()) -> dict[str, str]:
    """{capacitor path: why it is not reviewed}: the project's ``exclude`` patterns, do-not-populate
    rows of a BOM, and capacitors inside device models (a card in a model library file) unless
    ``review_models``."""
    out: dict[str, str] = {}
    for cap in circuit.capacitors():
        low = cap.path.lower()
        pattern = next((p for p in project.exclude if fnmatch.fnmatchcase(low, p.lower())), None)
        if any(n in dnp for n in designator_aliases(cap.path)):
            out[cap.path] = "not fitted (do-not-populate in the BOM)"
        elif pattern is not None:
            out[cap.path] = f"excluded by the project ({pattern})"
        elif not project.review_models and cap.instance and cap.loc.file in netlist.library_files:
            out[cap.path] = f"model internal: part of the device model in {cap.loc.file}"
    return out


def with_netlist(project: Project, netlist: Netlist) -> Project:
    """The project with what its netlist adds: ``.step`` sweeps as scenarios when the project lists none."""
    if project.scenarios_given or not netlist.steps:
        return project
    steps, notes = read_steps(netlist.steps)
    for card, note in notes:
        netlist.notes.append((card.loc, note))
    if not steps:
        return project
    scenarios = tuple(Scenario(name, params, (), temp, temp, f"from .step at {steps[0].card.loc}",
                               ambient_from=".step temp" if temp is not None else "")
                      for name, params, temp in step_scenarios(steps))
    netlist.notes.append((steps[0].card.loc, f".step sweeps read as {len(scenarios)} scenarios (a project that "
                                             "lists its own scenarios keeps them)"))
    return replace(project, scenarios=scenarios)


def with_temperatures(project: Project, netlist: Netlist, circuit: Circuit, notes: list[str] | None = None) -> Project:
    """The project with one temperature truth per scenario: its own ambient, else its simulation
    temperature, else the temperature the netlist simulates at (``.temp``, else ``.options temp=``,
    the project's ``analysis.options`` included).  A scenario left without any keeps no ambient: its
    thermal judgements are unrated, with the reason (never judged at a default)."""
    found = netlist_temperature(netlist, lambda name: circuit.params[name])
    option = dict(project.analysis.options).get("temp")
    if option is not None and (found is None or ".options" in found.where):
        found = NetlistTemperature(float(option), "the project's analysis.options.temp")
    scenarios, missing = [], []
    for sc in project.scenarios:
        if sc.ambient_c is None and found is not None:
            sc = replace(sc, ambient_c=found.value_c, ambient_from=found.where)
        elif sc.ambient_c is None:
            missing.append(sc.name)
        scenarios.append(sc)
    if missing and notes is not None:
        notes.append(f"no ambient temperature for scenario(s) {', '.join(missing[:6])}{' …' if len(missing) > 6 else ''}: "
                     "the checks that depend on temperature are unrated; give ambient_c (or temperature_c) in the "
                     "scenario, or a .temp card in the netlist")
    return replace(project, scenarios=tuple(scenarios))


def local_ambients(project: Project, circuit: Circuit) -> dict[str, tuple[float, str]]:
    """{capacitor path: (offset in °C, why)} from the project's ``ambient_offsets``: a capacitor named
    by several entries takes the largest offset.  An entry that names no capacitor is an error at its
    key, like a misspelt reference."""
    out: dict[str, tuple[float, str]] = {}
    caps = circuit.capacitors()
    for entry in project.ambient_offsets:
        pats = [p.lower() for p in entry.capacitors]
        nets = {n.lower() for n in entry.nets}
        hit = [c for c in caps if any(fnmatch.fnmatchcase(a, p) for p in pats for a in designator_aliases(c.path))
               or any(n.lower() in nets for n in c.nodes)]
        if not hit:
            raise DataError("matches no capacitor of the netlist (capacitors by reference or pattern, nets by "
                            "their netlist names)", entry.where, entry.key)
        why = entry.reason or entry.key
        for c in hit:
            if c.path not in out or entry.offset_c > out[c.path][0]:
                out[c.path] = (entry.offset_c, why)
    return out


def reversed_paths(project: Project, circuit) -> set[str]:
    """The capacitors ``reversed_terminals`` names (paths or globs, any case); a pattern that names
    none is an error at its key, like a misspelt reference."""
    caps = [c.path for c in circuit.capacitors()]
    out: set[str] = set()
    for k, pattern in enumerate(project.reversed_terminals):
        hit = {p for p in caps if fnmatch.fnmatchcase(p.lower(), pattern.lower())}
        if not hit:
            raise DataError(f"'{pattern}' matches no capacitor of the netlist", str(project.path or "derate.yaml"),
                            f"reversed_terminals[{k}]")
        out |= hit
    return out


def with_options(project: Project, options: ReviewOptions) -> Project:
    """The project with the options' overrides applied (scenarios file, timeout, budgets)."""
    if options.scenarios:
        project = _scenario_file(project, Path(options.scenarios))
    analysis = project.analysis
    if options.timeout_s:
        analysis = replace(analysis, timeout_s=options.timeout_s)
    if options.stall_s:
        analysis = replace(analysis, stall_s=options.stall_s)
    if options.simulator:
        analysis = replace(analysis, simulator=options.simulator)
    if options.settle_budget:
        analysis = replace(analysis, settle_budget=options.settle_budget)
    return replace(project, analysis=analysis)


def _scenario_file(project: Project, path: Path) -> Project:
    doc = load_document(path)
    if not isinstance(doc.data, dict) or ("scenarios" not in doc.data and "matrix" not in doc.data):
        raise DataError("expected a mapping with a 'scenarios' list or a 'matrix'", str(path))
    wrapped = dict(doc.data)
    wrapped.setdefault("netlist", "-")
    doc.data = wrapped
    validate(doc, "project")
    project = replace(project, scenarios=scenarios_from(doc, doc.data.get("scenarios"), doc.data.get("matrix")),
                      scenarios_given=True)
    if "analysis" in doc.data:
        project = replace(project, analysis=analysis_from(doc, doc.data["analysis"]))
    return project


def _varying(project: Project, circuit: Circuit, parts, skip, notes) -> tuple[Varying, ...]:
    tol = project.tolerances or Tolerances()
    items = varying(tol, circuit, parts or {}, skip, notes)
    if not items:
        raise DataError("nothing varies: give 'tolerances:' in derate.yaml (elements by name, or capacitors from "
                        "their parts' tolerance_pct)", str(project.path) if project.path else None, "tolerances")
    return items


def with_samples(project: Project, items: tuple[Varying, ...], options: ReviewOptions, method: str | None,
                 notes: list[str] | None = None) -> Project:
    """Every corner replaced by its Monte Carlo samples (``options.samples``) or the worst case's first
    runs (``method``: every vertex of the tolerance box, or nominal and each quantity alone at its upper
    bound; the sensitivity method adds its vertices after those have run)."""
    if not options.samples and not method:
        return project
    tol = project.tolerances or Tolerances()
    per_corner = options.samples or (2 ** len(items) + 1 if method == "vertices" else len(items) + 1)
    total = len(project.scenarios) * per_corner
    if total > MAX_SAMPLED_SCENARIOS:
        raise DataError(f"{len(project.scenarios)} corners x {per_corner} runs make {total} runs (at most "
                        f"{MAX_SAMPLED_SCENARIOS})")
    out = []
    for index, sc in enumerate(project.scenarios):
        if method:
            out.append(replace(sc, name=f"{sc.name}~nom", corner=sc.name, sample="nom"))
            runs = vertices(items) if method == "vertices" else one_at_a_time(items)
            out += [replace(sc, name=f"{sc.name}~{side}", corner=sc.name, sample=side, scale=factors)
                    for side, factors in runs]
            continue
        width = len(str(options.samples))
        for k in range(1, options.samples + 1):
            out.append(replace(sc, name=f"{sc.name}~{k:0{width}d}", corner=sc.name, sample=f"{k:0{width}d}",
                               scale=draw_sample(items, tol.distribution, options.seed, index, k)))
    if notes is not None:
        if options.samples:
            what = f"Monte Carlo: {options.samples} samples of each corner (seed {options.seed}, {tol.distribution})"
        elif method == "vertices":
            what = f"worst case: every vertex of the tolerance box ({2 ** len(items)} per corner) and nominal"
        else:
            what = ("worst case by sensitivities: nominal, each quantity alone at its upper bound, then the vertex "
                    "that makes each capacitor's each judged figure worst")
        gate = ("the worst sample" if options.gate_percentile >= 100 else
                f"the {options.gate_percentile:g} th percentile of the samples")
        notes.append(f"{what}; {len(items)} quantities vary; each corner is judged at {gate}")
    return replace(project, scenarios=tuple(out))


def _policy(project: Project, options: ReviewOptions) -> Policy:
    if options.policy:
        spec = options.policy
        path = Path(spec)
        trust = project.confinement.allowing(path) if path.suffix.lower() in (".yaml", ".yml") else project.confinement
        return load_policy(spec, Path.cwd(), trust)
    return load_policy(project.policy or DEFAULT_POLICY, project.folder, project.confinement)


# ---------------------------------------------------------------- simulate
def open_cache(options: ReviewOptions) -> Cache | None:
    """The result cache the options ask for (None when off); an unusable explicit folder is a DataError."""
    if not options.use_cache:
        return None
    return Cache.open(options.cache_dir, explicit=options.cache_dir is not None)


def progress_callbacks(on_progress: Callable[[Progress], None] | None, total: int, stage: str = "simulate") -> dict:
    """(on_done, on_progress) keyword arguments that turn runner reports into Progress events of ``stage``."""
    if on_progress is None:
        return {"on_done": None, "on_progress": None}
    done = [0]

    def on_done(result: ScenarioResult) -> None:
        done[0] += 1
        on_progress(Progress(stage, done[0], total, result))

    def on_fraction(scenario: str, fraction: float) -> None:
        on_progress(Progress(stage, done[0], total, None, scenario, fraction))
    return {"on_done": on_done, "on_progress": on_fraction}


def simulate(the_plan: Plan, runner: Runner | None = None,
             on_progress: Callable[[Progress], None] | None = None) -> SimulationRun:
    """Simulate and measure every scenario of a plan (on the runner the options ask for when none is
    given: a Dask one is started here and closed).  With lint errors nothing is simulated: every
    scenario is a failed result that says why."""
    p, options = the_plan, the_plan.options
    if p.lint_errors:
        return SimulationRun(tuple(ScenarioResult(sc, False, error="not simulated: the netlist has lint errors")
                                   for sc in p.project.scenarios))
    own = None
    if runner is None and options.runner == "dask":
        from .simulate.dask_runner import DaskRunner
        runner = own = DaskRunner(options.scheduler, options.jobs, options.backend)
    cache = open_cache(options)
    kw = dict(runner=runner, cache=cache, jobs=options.jobs, backend=options.backend, parasitics=p.parasitics,
              skip=frozenset(p.not_reviewed), dialect=p.dialect)
    try:
        run = simulate_scenarios(p.project, p.netlist, p.circuit,
                                 **kw, **progress_callbacks(on_progress, len(p.project.scenarios)))
        if p.worst_case == "sensitivity":
            run = _sensitivity_vertices(p, run, kw, on_progress)
        run = _bias_aware(p, run, kw, on_progress)
    finally:
        if own is not None:
            own.close()
    return with_reversed_terminals(run, set(p.reversed))


def _bias_aware(p: Plan, run: SimulationRun, kw: dict, on_progress) -> SimulationRun:
    """Class-2 ceramics at the capacitance their DC-bias curve gives at the mean voltage each scenario
    measured: simulated again until no biased value moves by more than 1 % (simulate/bias.py)."""
    top, inside = bias.biasable(p.parts, p.circuit)
    if not top and not inside:
        return run
    results = {r.scenario.name: r for r in run.results}
    notes = list(run.notes)
    for _ in range(bias.MAX_BIAS_ROUNDS):
        redo = []
        for res in results.values():
            if res.ok:
                want = bias.fractions(res, p.parts, top)
                if bias.moved(want, bias.simulated(res.scenario)):
                    redo.append(bias.with_bias(res.scenario, want))
        if not redo:
            break
        more = simulate_scenarios(replace(p.project, scenarios=tuple(redo)), p.netlist, p.circuit, **kw,
                                  **progress_callbacks(on_progress, len(redo), "bias"))
        results.update((r.scenario.name, r) for r in more.results)
        notes += [n for n in more.notes if n not in notes]
    else:
        unsettled = [r.scenario.name for r in results.values()
                     if r.ok and bias.moved(bias.fractions(r, p.parts, top), bias.simulated(r.scenario))]
        if unsettled:
            notes.append(f"the DC bias of class-2 ceramics still moved after {bias.MAX_BIAS_ROUNDS} re-simulations in "
                         f"scenario(s) {', '.join(unsettled)}: their last values are used")
    ordered = tuple(results[r.scenario.name] for r in run.results)
    notes += bias.describe(list(ordered), p.circuit, inside)
    return SimulationRun(ordered, run.ngspice_version, tuple(dict.fromkeys(notes)))


def _sensitivity_vertices(p: Plan, run: SimulationRun, kw: dict, on_progress) -> SimulationRun:
    """The worst case's second step: per corner, the vertices the sensitivities point to, simulated."""
    by_name = {r.scenario.name: r for r in run.results}
    extra: list[Scenario] = []
    for corner in dict.fromkeys(sc.corner for sc in p.project.scenarios if sc.corner):
        nominal = by_name.get(f"{corner}~nom")
        if nominal is None or not nominal.ok:
            continue
        moved = {}
        for v in p.varying:
            res = by_name.get(f"{corner}~{v.key}+")
            if res is not None and res.ok:
                moved[v.key] = {s.capacitor: s for s in res.stresses}
        base = next(sc for sc in p.project.scenarios if sc.name == f"{corner}~nom")
        for side, factors in worst_vertices(p.varying, {s.capacitor: s for s in nominal.stresses}, moved):
            extra.append(replace(base, name=f"{corner}~{side}", sample=side, scale=factors))
    if not extra:
        return run
    more = simulate_scenarios(replace(p.project, scenarios=tuple(extra)), p.netlist, p.circuit, **kw,
                              **progress_callbacks(on_progress, len(extra)))
    return SimulationRun(run.results + more.results, run.ngspice_version or more.ngspice_version,
                         tuple(dict.fromkeys(run.notes + more.notes)))


def measure(the_plan: Plan, runner: Runner | None = None,
            on_progress: Callable[[Progress], None] | None = None) -> SimulationRun:
    """Simulate a plan for its measurements alone: lint errors stop it (LintStop) before simulating."""
    errors = the_plan.lint_errors
    if errors:
        first = errors[0]
        raise LintStop(errors, f"{len(errors)} lint error(s) stop the simulation; first: {first.where} "
                               f"{first.rule}: {first.message}")
    return simulate(the_plan, runner, on_progress)


# ---------------------------------------------------------------- a board of several decks
def deck_name(deck: str, scenario: str) -> str:
    """A board scenario's name: the deck's, a slash, the scenario's (``front-end/hot``)."""
    return f"{deck}/{scenario}"


def _renamed_result(result: ScenarioResult, deck: str) -> ScenarioResult:
    sc = result.scenario
    name = deck_name(deck, sc.name)
    scenario = replace(sc, name=name, corner=deck_name(deck, sc.corner) if sc.corner else sc.corner)
    return replace(result, scenario=scenario, stresses=tuple(replace(st, scenario=name) for st in result.stresses))


def board_plans(project: Project, options: ReviewOptions | None = None, *, policy: bool = True) -> list[Plan]:
    """One plan per deck of a board (``netlists:``), every input read and checked before any is simulated."""
    reads = [read_circuit(with_options(deck, options or ReviewOptions()), options) for deck in project.decks]
    board_caps = frozenset(n for _, c in reads for cap in c.capacitors() for n in designator_aliases(cap.path))
    return [plan(deck, options, policy=policy, read=r, board_capacitors=board_caps)
            for deck, r in zip(project.decks, reads)]


def board(project: Project, plans: list[Plan], runs: list[SimulationRun]) -> tuple[Plan, SimulationRun]:
    """The plan and run of a board of several decks as one: scenarios named deck/scenario, capacitors of
    every deck (one designator in two decks is one part on the board: judged over the scenarios of both),
    lint, parts and notes of all.  ``judge`` then gives one review of the board."""
    names = [p.project.deck_name for p in plans]
    results = tuple(_renamed_result(r, name) for name, run in zip(names, runs) for r in run.results)
    run = SimulationRun(results, next((r.ngspice_version for r in runs if r.ngspice_version), ""),
                        tuple(dict.fromkeys(n for r in runs for n in r.notes)))
    first = plans[0]
    elements, seen = [], set()
    for p in plans:
        for el in p.circuit.elements:
            if el.kind == "c":
                if el.path in seen:
                    continue
                seen.add(el.path)
            elements.append(el)
    title = " + ".join(p.circuit.title or name for name, p in zip(names, plans))  # the board's reports name every deck
    circuit = replace(first.circuit, netlist=replace(first.netlist, title=title), elements=elements,
                      findings=[f for p in plans for f in p.circuit.findings])

    def merged(field_name: str) -> MappingProxyType:
        out: dict = {}
        for p in plans:
            for k, v in getattr(p, field_name).items():
                out.setdefault(k, v)
        return MappingProxyType(out)

    scenarios = tuple(r.scenario for r in results)
    scenarios_of: dict[str, set[str]] = {}
    for name, p, deck_run in zip(names, plans, runs):
        own = {deck_name(name, r.scenario.name) for r in deck_run.results}
        for cap in p.circuit.capacitors():
            scenarios_of.setdefault(cap.path, set()).update(own)
    notes = [f"{name}: {n}" for name, p in zip(names, plans) for n in p.notes]
    combined = replace(first, project=replace(project, scenarios=scenarios), circuit=circuit,
                       parts=merged("parts"), parasitics=merged("parasitics"), not_reviewed=merged("not_reviewed"),
                       offsets=merged("offsets"), across_line=merged("across_line"),
                       lint=tuple(f for p in plans for f in p.lint), dialect=None,
                       reversed=frozenset().union(*(p.reversed for p in plans)),
                       varying=tuple(v for p in plans for v in p.varying), notes=tuple(dict.fromkeys(notes)),
                       scenarios_of=MappingProxyType({k: frozenset(v) for k, v in scenarios_of.items()}))
    return combined, run


# ---------------------------------------------------------------- judge
def judge(the_plan: Plan, run: SimulationRun) -> Review:
    """Apply the policy to a run and decide the gate."""
    p, options = the_plan, the_plan.options
    if p.policy is None:
        raise DerateError("this plan was made without a policy (plan(..., policy=False)): it cannot be judged")
    project = p.project
    scenarios = [r.scenario for r in run.results]  # a worst case adds vertices to the plan's runs
    mission = options.mission_life_h if options.mission_life_h is not None else project.mission.life_h
    assessment = assess(stresses_by_scenario(run), scenarios, p.circuit, p.parts, p.policy, mission,
                        project.mission.duty, p.not_reviewed, dict(project.mission.profile) or None,
                        options.gate_percentile, p.offsets, p.across_line, p.scenarios_of)
    fail_on = options.fail_on or project.fail_on
    lint_errors = p.lint_errors
    gated = list(lint_errors) + list(assessment.findings)
    verdict = decide(gated, fail_on, list(p.waivers), p.baseline, simulation_failed=bool(run.failed) and not lint_errors)
    caps = {c.path: c.value for c in p.circuit.capacitors()}
    caution = caution_for(run.stresses(), caps, project.hazard)
    return Review(project=replace(project, scenarios=tuple(scenarios)), circuit=p.circuit, run=run,
                  assessment=assessment, verdict=verdict, findings=tuple(decided_findings(verdict)),
                  lint=tuple(f for f in p.lint if f.severity != Severity.ERROR), policy=p.policy, caution=caution,
                  generated=dt.datetime.now(dt.timezone.utc), halted_by_lint=bool(lint_errors), notes=p.notes)
