"""The library entry points: load a project, lint it, measure it, review it.

    import derate
    project = derate.load_project("examples/irrigation-controller/derate.yaml")
    review = derate.review(project)             # lint, simulate, measure, apply the policy, gate
    review.verdict.exit_code                    # 1: findings at or above the fail level
    [(c.path, c.status) for c in review.assessment.capacitors]

Everything the command line can override is a field of ``ReviewOptions`` (frozen; change it with
``dataclasses.replace``).  Nothing here prints, reads argv or exits: the command line
(``derate.cli``) maps flags to options and a Review to an exit code and report files.
"""

from __future__ import annotations

import datetime as dt
import fnmatch
import re
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Callable

from .assess import assess
from .datafile import load_document, validate
from .errors import DataError, DerateError
from .findings import Finding
from .gate import Baseline, decide, decided_findings, load_waivers
from .hazard import caution_for
from .netlist import ReadOptions, flatten, lint as lint_circuit, read_netlist
from .netlist.flatten import Circuit
from .netlist.parser import Netlist
from .bom import load_bom
from .cardparts import load_card_attributes
from .schematic import load_schematic
from .parts import designator_aliases, PartTable, load_parts, simulation_parasitics
from .policy import Policy, load_policy
from .netlist.steps import read_steps, step_scenarios
from .netlist.temperature import NetlistTemperature, netlist_temperature
from .project import (MAX_LIFE_H, MAX_TIMEOUT_S, SIMULATORS, Project, Scenario, analysis_from, find_project, load_project as _load_file,
                      project_for_netlist, scenarios_from)
from .review import Review
from .simulate.cache import Cache
from .simulate.results import ScenarioResult, SimulationRun, with_reversed_terminals
from .simulate.runner import Runner
from .simulate.scenarios import simulate_scenarios, stresses_by_scenario
from .tolerance import Tolerances, check_samples, extremes, sample as draw_sample, varying
from .status import Severity

DEFAULT_POLICY = "industrial"
DIALECT = re.compile(r"^(hs|ps|xs|lt|ki|a|spe|s3|mc)+$")


@dataclass(frozen=True)
class ReviewOptions:
    """What the person running derate chooses (the command line's flags), as opposed to project files.

    Paths given here are trusted: the files they name, and the files beside them, may be read.
    """

    parts: tuple[Path, ...] = ()  # extra parts files
    policy: str | None = None  # a built-in name or a policy file (default: the project's, else industrial)
    scenarios: Path | None = None  # a file with a 'scenarios:' list (and optionally 'analysis:')
    mission_life_h: float | None = None
    fail_on: str | None = None  # error or warning (default: the project's)
    waivers: Path | None = None
    baseline: Path | None = None
    jobs: int | None = None  # scenarios simulated in parallel (default: cores)
    use_cache: bool = True
    cache_dir: Path | None = None  # default: the per-user cache folder
    timeout_s: float | None = None
    allow_control: bool = False
    allow_outside_includes: bool = False
    model_path: tuple[Path, ...] = ()  # more model folders (searched with the project's)
    bom: tuple[Path, ...] = ()  # BOM exports (columns recognised by their headers)
    schematic: tuple[Path, ...] = ()  # KiCad schematics whose capacitor fields give part data
    dialect: str | None = None  # ngspice compatibility mode, overriding the project's
    backend: str = "shared"
    simulator: str | None = None  # auto, shared or stream (default: the project's analysis.simulator)
    samples: int | None = None  # Monte Carlo: this many samples of every corner
    seed: int = 1  # the samples' seed: the same seed gives the same samples, on any runner
    worst_case: bool = False  # every varying quantity at its upper bound, then at its lower bound
    gate_percentile: float = 100.0  # judge a corner's samples at this percentile (100: the worst sample)
    runner: str = "local"  # local (worker processes here) or dask (a Dask cluster)
    scheduler: str | None = None  # a Dask scheduler address (tcp://host:port); none: an embedded LocalCluster
    stall_s: float | None = None  # seconds without progress before a scenario counts as stalled

    def __post_init__(self) -> None:
        if self.fail_on not in (None, "error", "warning"):
            raise DataError(f"fail_on expects error or warning, got {self.fail_on!r}")
        if self.timeout_s is not None and not 0 < self.timeout_s <= MAX_TIMEOUT_S:
            raise DataError(f"timeout expects seconds above 0 and at most {MAX_TIMEOUT_S:g}, got {self.timeout_s!r}")
        if self.mission_life_h is not None and not 0 < self.mission_life_h <= MAX_LIFE_H:
            raise DataError(f"mission life expects hours above 0 and at most {MAX_LIFE_H:g}, "
                            f"got {self.mission_life_h!r}")
        if self.simulator not in (None, *SIMULATORS):
            raise DataError(f"simulator expects one of {', '.join(SIMULATORS)}, got {self.simulator!r}")
        check_samples(self.samples)
        if self.samples and self.worst_case:
            raise DataError("give either samples (Monte Carlo) or worst_case, not both")
        if not 50.0 <= self.gate_percentile <= 100.0:
            raise DataError(f"gate percentile expects 50 to 100, got {self.gate_percentile!r}")
        if not 0 <= self.seed < 2 ** 63:
            raise DataError(f"seed expects a whole number from 0, got {self.seed!r}")
        if self.runner not in ("local", "dask"):
            raise DataError(f"runner expects local or dask, got {self.runner!r}")
        if self.stall_s is not None and not 0 < self.stall_s <= MAX_TIMEOUT_S:
            raise DataError(f"stall time expects seconds above 0 and at most {MAX_TIMEOUT_S:g}, got {self.stall_s!r}")
        if self.jobs is not None and not 1 <= self.jobs <= 256:
            raise DataError(f"jobs expects 1 to 256, got {self.jobs!r}")
        if self.dialect is not None and not DIALECT.match(self.dialect):
            raise DataError(f"dialect expects ngspice compatibility modes such as ps, lt, ltps, hs, ki, spe; "
                            f"got {self.dialect!r}")


@dataclass(frozen=True)
class Progress:
    """A progress report: ``done`` of ``total`` scenarios ended (``result`` is the one that just did),
    or a running ``scenario`` has simulated ``fraction`` of its run."""

    stage: str  # "simulate"
    done: int
    total: int
    result: ScenarioResult | None = None
    scenario: str | None = None
    fraction: float | None = None


@dataclass(frozen=True)
class LintResult:
    """The topology and value findings of one netlist."""

    path: str
    circuit: Circuit
    findings: tuple[Finding, ...]

    @property
    def errors(self) -> list[Finding]:
        return [f for f in self.findings if f.severity == Severity.ERROR]

    @property
    def nets(self) -> int:
        return len(self.circuit.nets())


def load_project(path: str | Path | None = None, *, root: str | Path | None = None) -> Project:
    """Return the Project of a ``derate.yaml``, or of a bare netlist (defaults everywhere).

    Without ``path`` the nearest ``derate.yaml`` in the current folder or a parent is used.
    ``root`` widens the project root (``--root``); see README, "Running on untrusted input".
    """
    if path is None:
        found = find_project()
        if found is None:
            raise DerateError("no derate.yaml in this folder or a parent; give a project file or a netlist")
        return _load_file(found, root=root)
    if Path(path).suffix.lower() in (".yaml", ".yml"):
        return _load_file(path, root=root)
    return project_for_netlist(path, root=root)


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


def lint(target: Project | str | Path, options: ReviewOptions | None = None) -> LintResult:
    """Lint a netlist (a path) or a project's netlist: topology and value findings, no simulation."""
    if isinstance(target, Project):
        _, circuit = read_circuit(target, options)
        return LintResult(str(target.netlist), circuit, tuple(lint_circuit(circuit)))
    options = options or ReviewOptions()
    project = project_for_netlist(target)
    _, circuit = read_circuit(project, options)
    return LintResult(str(target), circuit, tuple(lint_circuit(circuit)))


def open_cache(options: ReviewOptions) -> Cache | None:
    """The result cache the options ask for (None when off); an unusable explicit folder is a DataError."""
    if not options.use_cache:
        return None
    return Cache.open(options.cache_dir, explicit=options.cache_dir is not None)


def with_options(project: Project, options: ReviewOptions) -> Project:
    """The project with the options' overrides applied (scenarios file, timeout)."""
    if options.scenarios:
        project = _scenario_file(project, Path(options.scenarios))
    if options.timeout_s:
        project = replace(project, analysis=replace(project.analysis, timeout_s=options.timeout_s))
    if options.stall_s:
        project = replace(project, analysis=replace(project.analysis, stall_s=options.stall_s))
    if options.simulator:
        project = replace(project, analysis=replace(project.analysis, simulator=options.simulator))
    return project


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


def _progress_adapter(on_progress: Callable[[Progress], None] | None, total: int):
    """(on_done, on_fraction) callbacks that turn runner reports into Progress events."""
    if on_progress is None:
        return None, None
    done = [0]

    def on_done(result: ScenarioResult) -> None:
        done[0] += 1
        on_progress(Progress("simulate", done[0], total, result))

    def on_fraction(scenario: str, fraction: float) -> None:
        on_progress(Progress("simulate", done[0], total, None, scenario, fraction))
    return on_done, on_fraction


def _progress_kw(on_progress, total: int) -> dict:
    on_done, on_fraction = _progress_adapter(on_progress, total)
    return {"on_done": on_done, "on_progress": on_fraction}


def measure(project: Project, options: ReviewOptions | None = None, runner: Runner | None = None,
            on_progress: Callable[[Progress], None] | None = None) -> SimulationRun:
    """Simulate every scenario and measure every capacitor (no policy).

    Lint errors stop the run before simulating (a DerateError naming them).
    """
    options = options or ReviewOptions()
    project = with_options(project, options)
    netlist, circuit = read_circuit(project, options)
    project = with_netlist(project, netlist)
    cache = open_cache(options)
    errors = [f for f in lint_circuit(circuit) if f.severity == Severity.ERROR]
    if errors:
        first = errors[0]
        raise LintStop(errors, f"{len(errors)} lint error(s) stop the simulation; first: {first.where} "
                               f"{first.rule}: {first.message}")
    skip = frozenset(not_reviewed(project, netlist, circuit))
    project = with_samples(project, circuit, None, options, skip)
    return _simulate(project, netlist, circuit, options, runner, cache=cache,
                     skip=skip,
                     dialect=dialect_of(project, netlist, options), **_progress_kw(on_progress, len(project.scenarios)))


MAX_SAMPLED_SCENARIOS = 20_000


def with_samples(project: Project, circuit, parts, options: ReviewOptions, skip=frozenset(),
                 notes: list[str] | None = None) -> Project:
    """Every corner replaced by its Monte Carlo samples (``options.samples``) or its worst-case
    extremes and nominal (``options.worst_case``); the project's tolerances say what varies."""
    if not options.samples and not options.worst_case:
        return project
    tol = project.tolerances or Tolerances()
    items = varying(tol, circuit, parts or {}, skip, notes)
    if not items:
        raise DataError("nothing varies: give 'tolerances:' in derate.yaml (elements by name, or capacitors from "
                        "their parts' tolerance_pct)", str(project.path) if project.path else None, "tolerances")
    total = len(project.scenarios) * (options.samples or 3)
    if total > MAX_SAMPLED_SCENARIOS:
        raise DataError(f"{len(project.scenarios)} corners x {options.samples} samples make {total} runs (at most "
                        f"{MAX_SAMPLED_SCENARIOS})")
    out = []
    for index, sc in enumerate(project.scenarios):
        if options.worst_case:
            out.append(replace(sc, name=f"{sc.name}~nom", corner=sc.name, sample="nom"))
            out += [replace(sc, name=f"{sc.name}~{side}", corner=sc.name, sample=side, scale=factors)
                    for side, factors in extremes(items)]
            continue
        width = len(str(options.samples))
        for k in range(1, options.samples + 1):
            out.append(replace(sc, name=f"{sc.name}~{k:0{width}d}", corner=sc.name, sample=f"{k:0{width}d}",
                               scale=draw_sample(items, tol.distribution, options.seed, index, k)))
    if notes is not None:
        what = (f"Monte Carlo: {options.samples} samples of each corner (seed {options.seed}, {tol.distribution})"
                if options.samples else "worst case: each corner at nominal, every tolerance high, every tolerance low")
        gate = ("the worst sample" if options.gate_percentile >= 100 else
                f"the {options.gate_percentile:g} th percentile of the samples")
        notes.append(f"{what}; {len(items)} quantities vary; each corner is judged at {gate}")
    return replace(project, scenarios=tuple(out))


def _simulate(project: Project, netlist, circuit, options: ReviewOptions, runner: Runner | None, **kw) -> SimulationRun:
    """simulate_scenarios on the runner the options ask for (a Dask one is started here and closed)."""
    own = None
    if runner is None and options.runner == "dask":
        from .simulate.dask_runner import DaskRunner
        runner = own = DaskRunner(options.scheduler, options.jobs, options.backend)
    turned = reversed_paths(project, circuit)
    try:
        run = simulate_scenarios(project, netlist, circuit, runner=runner, jobs=options.jobs, backend=options.backend,
                                 **kw)
    finally:
        if own is not None:
            own.close()
    return with_reversed_terminals(run, turned)


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


class LintStop(DerateError):
    """Lint found errors that would make ngspice fail or stall: nothing was simulated."""

    exit_code = 1

    def __init__(self, findings: list[Finding], message: str):
        self.findings = findings
        super().__init__(message)


def review(project: Project, options: ReviewOptions | None = None, runner: Runner | None = None,
           on_progress: Callable[[Progress], None] | None = None) -> Review:
    """The whole review: lint, simulate, measure, apply the policy, gate.

    Every input is read and checked before the (long) simulation.  When lint finds errors nothing
    is simulated: the Review then holds the lint errors as gating findings and every capacitor's
    stress is unknown (``measure.no-result``), so the verdict fails and every report can still be
    written.
    """
    options = options or ReviewOptions()
    project = with_options(project, options)
    netlist, circuit = read_circuit(project, options)
    project = with_netlist(project, netlist)
    trust = project.confinement
    cache = open_cache(options)
    notes: list[str] = []
    project = with_temperatures(project, netlist, circuit, notes)
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
    policy = _policy(project, options)
    waivers = load_waivers(Path(options.waivers)) if options.waivers else (
        load_waivers(project.waivers) if project.waivers else [])
    baseline = Baseline.load(Path(options.baseline)) if options.baseline else None
    parts = table.assign(circuit)
    notes += table.notes
    offsets = local_ambients(project, circuit)
    skip = not_reviewed(project, netlist, circuit, table.dnp)
    lint_findings = lint_circuit(circuit)
    lint_errors = [f for f in lint_findings if f.severity == Severity.ERROR]
    project = with_samples(project, circuit, parts, options, frozenset(skip), notes)
    if lint_errors:
        run = SimulationRun(tuple(ScenarioResult(sc, False, error="not simulated: the netlist has lint errors")
                                  for sc in project.scenarios))
    else:
        run = _simulate(project, netlist, circuit, options, runner, cache=cache,
                        parasitics=simulation_parasitics(parts), skip=frozenset(skip),
                        dialect=dialect_of(project, netlist, options), **_progress_kw(on_progress, len(project.scenarios)))
    mission = options.mission_life_h if options.mission_life_h is not None else project.mission.life_h
    assessment = assess(stresses_by_scenario(run), project.scenarios, circuit, parts, policy, mission,
                        project.mission.duty, skip, dict(project.mission.profile) or None, options.gate_percentile,
                        offsets)
    fail_on = options.fail_on or project.fail_on
    gated = list(lint_errors) + list(assessment.findings)
    verdict = decide(gated, fail_on, waivers, baseline, simulation_failed=bool(run.failed) and not lint_errors)
    caps = {c.path: c.value for c in circuit.capacitors()}
    caution = caution_for(run.stresses(), caps, project.hazard)
    return Review(project=project, circuit=circuit, run=run, assessment=assessment, verdict=verdict,
                  findings=tuple(decided_findings(verdict)), lint=tuple(f for f in lint_findings if f.severity != Severity.ERROR),
                  policy=policy, caution=caution, generated=dt.datetime.now(dt.timezone.utc),
                  halted_by_lint=bool(lint_errors), notes=tuple(dict.fromkeys(notes)))


def _policy(project: Project, options: ReviewOptions) -> Policy:
    if options.policy:
        spec = options.policy
        path = Path(spec)
        trust = project.confinement.allowing(path) if path.suffix.lower() in (".yaml", ".yml") else project.confinement
        return load_policy(spec, Path.cwd(), trust)
    return load_policy(project.policy or DEFAULT_POLICY, project.folder, project.confinement)
