"""The project file (``derate.yaml``): netlist, analysis, scenarios (operating corners), data files.

Numbers may be written plainly or as SPICE numbers (``"0.5u"``, ``"100m"``); all are SI inside.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any, Mapping

from .datafile import Document, format_path, load_document, validate
from .errors import DataError
from .netlist.values import BadValue, SourceValue, parse_option, parse_source_value
from .trust import Confinement
from .units import parse_number

if TYPE_CHECKING:
    from .tolerance import Tolerances

PROJECT_FILE = "derate.yaml"
DEFAULT_TIMEOUT_S = 3600.0  # the overall budget per scenario; a stall is caught sooner (DEFAULT_STALL_S)
DEFAULT_STALL_S = 120.0  # no simulated-time progress for this long: stalled
SIMULATORS = ("auto", "shared", "stream")
MAX_TIMEOUT_S = 7 * 24 * 3600.0  # a week: beyond that a run is not a review step
MAX_FILE_TIMEOUT_S = 4 * 3600.0  # what a project file may ask per scenario (--timeout raises it to a week)
MAX_FILE_SCENARIOS = 200  # scenarios a project may run (--max-scenarios raises it)
MAX_SCENARIOS = 1000  # ... and what the flag may raise it to
ABSOLUTE_ZERO_C = -273.15
MAX_TEMPERATURE_C = 500.0
MAX_LIFE_H = 10_000_000.0  # about 1,100 years
DEFAULT_SETTLE_BUDGET = 10.0  # an unsettled run may be simulated up to ten times longer (common practice)
MAX_SETTLE_BUDGET_FILE = 20.0  # what a project file may ask; the command line may ask more
MAX_SETTLE_BUDGET = 100.0


@dataclass(frozen=True)
class Window:
    """The steady-state measuring window: the last ``last_s`` seconds, or ``from_s`` .. ``to_s``."""

    last_s: float | None = None
    from_s: float | None = None
    to_s: float | None = None

    def bounds(self, t_end: float) -> tuple[float, float]:
        """Return (start, end) in seconds for a run that ends at ``t_end``."""
        end = min(self.to_s, t_end) if self.to_s is not None else t_end
        if self.last_s is not None:
            start = max(0.0, end - self.last_s)
        elif self.from_s is not None:
            start = self.from_s
        else:
            start = 0.0
        return start, end


@dataclass(frozen=True)
class Tran:
    """A transient analysis: ``.tran step stop [start [max_step]]``."""

    step_s: float
    stop_s: float
    start_s: float = 0.0
    max_step_s: float | None = None
    uic: bool = False


@dataclass(frozen=True)
class Analysis:
    """How to simulate and where to measure."""

    tran: Tran | None = None  # None: take the netlist's own .tran
    window: Window = field(default_factory=lambda: Window(last_s=None))
    period_s: float | None = None  # steady-state period for the periodicity check
    timeout_s: float = DEFAULT_TIMEOUT_S
    harmonics: int = 10
    spectrum_points: int = 32768
    steady_state_tolerance: float = 0.01  # 1 %: stress figures settle to about this accuracy
    options: tuple[tuple[str, str | None], ...] = ()  # validated: (name, value or None for a flag)
    simulator: str = "auto"  # shared (in memory), stream (batch into a pipe, memory flat), auto: by size
    stall_s: float = DEFAULT_STALL_S
    settle_budget: float = DEFAULT_SETTLE_BUDGET  # a run may be simulated this many times longer to settle
    power_up: str = "auto"  # auto: switch-on simulated when a source starts above zero; off: not simulated


@dataclass(frozen=True)
class Scenario:
    """One operating corner.  Source values are validated structures, never raw text."""

    name: str
    params: tuple[tuple[str, float], ...] = ()
    sources: tuple[tuple[str, SourceValue], ...] = ()
    temperature_c: float | None = None
    ambient_c: float | None = None  # None: not given (the netlist's .temp may give it: pipeline.with_temperatures)
    description: str = ""
    corner: str | None = None  # a Monte Carlo or worst-case sample: the corner it belongs to
    sample: str | None = None  # its number ("007") or side ("max", "min")
    scale: tuple[tuple[str, float], ...] = ()  # the sample's factors: value:RL5, source:VAC, esr:C3
    ambient_from: str = ""  # where the ambient came from: the scenario, its simulation temperature, the netlist

    @property
    def group(self) -> str:
        """The corner a result counts for: itself, or the corner of a sample."""
        return self.corner or self.name


@dataclass(frozen=True)
class AmbientOffset:
    """Capacitors whose local ambient differs from the scenario's by ``offset_c`` (neighbours' heat)."""

    capacitors: tuple[str, ...]
    nets: tuple[str, ...]
    offset_c: float
    reason: str
    where: str  # file:line of the entry, for errors about it
    key: str  # ambient_offsets[k]


@dataclass(frozen=True)
class Parasitics:
    """Series ESR and ESL to simulate with a capacitor."""

    esr_ohm: float | None = None
    esl_h: float | None = None


@dataclass(frozen=True)
class Mission:
    """What the product must survive: required life and the fraction of time it is powered."""

    life_h: float | None = None
    duty: float = 1.0
    profile: tuple[tuple[str, float], ...] = ()  # (scenario, share of the operating time), shares summing to 1


@dataclass(frozen=True)
class BomSettings:
    """A BOM to import: the file, its column map (derate field -> header) and part libraries."""

    file: Path
    columns: tuple[tuple[str, str], ...] = ()  # empty: the columns are recognised by their headers
    libraries: tuple[Path, ...] = ()


@dataclass(frozen=True)
class Outputs:
    """Report files the project asks for (format -> path) and the annotated netlist."""

    reports: tuple[tuple[str, Path], ...] = ()
    annotate: Path | None = None


@dataclass(frozen=True)
class Project:
    """A loaded project file (paths resolved and confined to the project root)."""

    path: Path | None
    netlist: Path
    analysis: Analysis
    scenarios: tuple[Scenario, ...]
    confinement: Confinement
    include_root: Path | None = None  # narrower root for netlist includes (the file's ``root:``)
    parts: tuple[Path, ...] = ()
    bom: BomSettings | None = None
    policy: str | None = None  # a built-in name, or a policy file (resolved path)
    mission: Mission = Mission()
    waivers: Path | None = None
    fail_on: str = "error"
    hazard: bool | None = None
    esr: tuple[tuple[str, Parasitics], ...] = ()
    outputs: Outputs = Outputs()
    scenarios_given: bool = False  # False: the default scenario (a netlist's .step may replace it)
    model_path: tuple[Path, ...] = ()  # folders searched by file name for included model files
    dialect: str | None = None  # ngspice compatibility mode (ngbehavior) for the deck
    exclude: tuple[str, ...] = ()  # capacitor paths or globs not reviewed
    reversed_terminals: tuple[str, ...] = ()  # capacitors (paths or globs) whose card lists the - terminal first
    review_models: bool = False  # review capacitors inside device models too
    schematics: tuple[Path, ...] = ()  # KiCad schematics whose capacitor fields give part data
    report_url: str | None = None  # where the HTML report is published (set by --report-url; Markdown links it)
    report_figures: int = 20  # near-limit capacitors drawn in the HTML report (failing ones always are)
    tolerances: Tolerances | None = None  # what varies in Monte Carlo and worst-case runs
    ambient_offsets: tuple[AmbientOffset, ...] = ()  # capacitors that run warmer than the scenario's ambient
    decks: tuple["Project", ...] = ()  # several decks of one board (``netlists:``), each a project of its own
    deck_name: str = ""  # this project's name among its board's decks

    @property
    def folder(self) -> Path:
        return self.path.parent if self.path else self.netlist.parent


def number(value: Any, doc: Document | None = None, key_path: list | None = None) -> float:
    """Return a finite SI float from a YAML number or a SPICE number text."""
    def fail(msg: str) -> DataError:
        return doc.error(msg, key_path) if doc else DataError(msg, key=".".join(map(str, key_path or [])) or None)
    if isinstance(value, bool):
        raise fail(f"expected a number, got {value!r}")
    if isinstance(value, (int, float)):
        x = float(value)
    else:
        try:
            x = parse_number(str(value)).value
        except ValueError:
            raise fail(f"expected a number, got {value!r}") from None
    if not math.isfinite(x):
        raise fail(f"expected a finite number, got {value!r}")
    return x


def bounded(value: Any, doc: Document | None, key_path: list, low: float | None = None, high: float | None = None,
            low_open: bool = False, what: str = "a number") -> float:
    """Return ``number(value)`` checked against [low, high] (``low_open``: strictly above low)."""
    x = number(value, doc, key_path)
    below = low is not None and (x <= low if low_open else x < low)
    above = high is not None and x > high
    if below or above:
        lo = "" if low is None else (f"above {low:g}" if low_open else f"at least {low:g}")
        hi = "" if high is None else f"at most {high:g}"
        rng = " and ".join(p for p in (lo, hi) if p)
        msg = f"expected {what} {rng}, got {value!r}"
        raise doc.error(msg, key_path) if doc else DataError(msg, key=".".join(map(str, key_path)))
    return x


def temperature(value: Any, doc: Document | None, key_path: list) -> float:
    """A temperature in °C: above absolute zero and below 500 °C (no capacitor survives more)."""
    return bounded(value, doc, key_path, ABSOLUTE_ZERO_C, MAX_TEMPERATURE_C, low_open=True, what="a temperature in °C")


def find_project(start: Path | None = None) -> Path | None:
    """Return the nearest ``derate.yaml`` in ``start`` or a parent folder."""
    here = (start or Path.cwd()).resolve()
    for folder in [here, *here.parents]:
        candidate = folder / PROJECT_FILE
        if candidate.is_file():
            return candidate
    return None


def analysis_from(doc: Document, raw: Mapping[str, Any], at: tuple = ()) -> Analysis:
    """Read an ``analysis:`` mapping (already schema-validated); ``at`` is where it sits in the file
    (``netlists[1]`` for a deck's own)."""
    tran = None
    if "tran" in raw:
        t = raw["tran"]
        base = [*at, "analysis", "tran"]
        stop = bounded(t["stop"], doc, base + ["stop"], 0, None, True, "a run length in seconds")
        step = bounded(t["step"], doc, base + ["step"], 0, None, True, "a time step") if "step" in t else stop / 1000.0
        start = bounded(t["start"], doc, base + ["start"], 0, None, False, "a start time") if "start" in t else 0.0
        max_step = bounded(t["max_step"], doc, base + ["max_step"], 0, None, True, "a maximum step") \
            if "max_step" in t else None
        if start >= stop:
            raise doc.error("expected start < stop", base)
        tran = Tran(step, stop, start, max_step, bool(t.get("uic", False)))
    w = raw.get("window", {})
    wp = [*at, "analysis", "window"]
    window = Window(
        last_s=bounded(w["last"], doc, wp + ["last"], 0, None, True, "a duration") if "last" in w else None,
        from_s=bounded(w["from"], doc, wp + ["from"], 0, None, False, "a time") if "from" in w else None,
        to_s=bounded(w["to"], doc, wp + ["to"], 0, None, True, "a time") if "to" in w else None)
    if window.last_s is not None and window.from_s is not None:
        raise doc.error("give either 'last' or 'from', not both", wp)
    if window.from_s is not None and window.to_s is not None and window.to_s <= window.from_s:
        raise doc.error("expected 'to' after 'from'", wp)
    period = bounded(raw["period"], doc, [*at, "analysis", "period"], 0, None, True, "a period in seconds") \
        if "period" in raw else None
    options = []
    for k, v in (raw.get("options") or {}).items():
        try:
            options.append(parse_option(k, v))
        except BadValue as exc:
            raise doc.error(str(exc), [*at, "analysis", "options", k]) from None
    timeout = bounded(raw["timeout_s"], doc, [*at, "analysis", "timeout_s"], 0, MAX_FILE_TIMEOUT_S, True,
                      "a timeout in seconds (--timeout gives more)") if "timeout_s" in raw else DEFAULT_TIMEOUT_S
    tol = bounded(raw["steady_state_tolerance"], doc, [*at, "analysis", "steady_state_tolerance"], 0, 1, True,
                  "a fraction") if "steady_state_tolerance" in raw else 0.01
    stall = bounded(raw["stall_s"], doc, [*at, "analysis", "stall_s"], 0, MAX_FILE_TIMEOUT_S, True,
                    "seconds without progress (--stall-timeout gives more)") if "stall_s" in raw else DEFAULT_STALL_S
    budget = bounded(raw["settle_budget"], doc, [*at, "analysis", "settle_budget"], 1, MAX_SETTLE_BUDGET_FILE, False,
                     "a multiple of the run") if "settle_budget" in raw else DEFAULT_SETTLE_BUDGET
    return Analysis(tran=tran, window=window, period_s=period, timeout_s=timeout,
                    harmonics=int(raw.get("harmonics", 10)), spectrum_points=int(raw.get("spectrum_points", 32768)),
                    steady_state_tolerance=tol, options=tuple(options), simulator=raw.get("simulator", "auto"),
                    stall_s=stall, settle_budget=budget, power_up=raw.get("power_up", "auto"))


def _level_parts(doc: Document, s: dict, at: list) -> tuple:
    """params, sources, temperature, ambient and description of a scenario or a matrix level."""
    params = tuple((k.lower(), number(v, doc, at + ["params", k])) for k, v in s.get("params", {}).items())
    sources = []
    for k, v in s.get("sources", {}).items():
        try:
            sources.append((k, parse_source_value(v)))
        except BadValue as exc:
            raise doc.error(str(exc), at + ["sources", k]) from None
    temp = temperature(s["temperature_c"], doc, at + ["temperature_c"]) if "temperature_c" in s else None
    ambient = temperature(s["ambient_c"], doc, at + ["ambient_c"]) if "ambient_c" in s else None
    return params, tuple(sources), temp, ambient, s.get("description", "")


def _ambient(ambient: float | None, temp: float | None) -> tuple[float | None, str]:
    """The ambient of a scenario and where it came from: its own ambient_c, else its simulation
    temperature (the circuit and its parts at one temperature), else none yet."""
    if ambient is not None:
        return ambient, "scenario ambient_c"
    if temp is not None:
        return temp, "scenario temperature_c"
    return None, ""


def scenarios_from(doc: Document, raw: list | None, matrix: dict | None = None, at: tuple = ()) -> tuple[Scenario, ...]:
    """Read a ``scenarios:`` list and a ``matrix:`` (already schema-validated): the listed scenarios,
    then every combination of the matrix."""
    if not raw and not matrix:
        return (Scenario("default"),)
    out = []
    seen: dict[str, str] = {}
    for i, s in enumerate(raw or []):
        if s["name"] in seen:
            raise doc.error(f"scenario name '{s['name']}' is used twice", [*at, "scenarios", i, "name"])
        seen[s["name"]] = "scenarios"
        params, sources, temp, ambient, description = _level_parts(doc, s, [*at, "scenarios", i])
        amb, amb_from = _ambient(ambient, temp)
        out.append(Scenario(s["name"], params, sources, temp, amb, description, ambient_from=amb_from))
    if matrix:
        from .matrix import Axis, Level, combinations, level_name, value_text

        axes = []
        for axis, levels in matrix["axes"].items():
            read = []
            for j, lv in enumerate(levels):
                if isinstance(lv, dict):
                    read.append(Level(lv["name"], *_level_parts(doc, lv, [*at, "matrix", "axes", axis, j])))
                    continue
                value = number(lv, doc, [*at, "matrix", "axes", axis, j])
                name = level_name(f"{axis}={value_text(value)}")
                if axis == "temperature_c":
                    read.append(Level(name, temperature_c=temperature(value, doc, [*at, "matrix", "axes", axis, j]),
                                      ambient_c=value))
                elif axis == "ambient_c":
                    read.append(Level(name, ambient_c=temperature(value, doc, [*at, "matrix", "axes", axis, j])))
                else:
                    read.append(Level(name, params=((axis.lower(), value),)))
            if len({lv.name for lv in read}) != len(read):
                raise doc.error("two levels of this axis have the same name", [*at, "matrix", "axes", axis])
            axes.append(Axis(axis, tuple(read)))
        for name, lv in combinations(axes, matrix.get("exclude"), doc.error):
            if name in seen:
                raise doc.error(f"the matrix makes a scenario named '{name}', which the scenarios list has too",
                                [*at, "matrix"])
            seen[name] = "matrix"
            amb, amb_from = _ambient(lv.ambient_c, lv.temperature_c)
            out.append(Scenario(name, lv.params, lv.sources, lv.temperature_c, amb, lv.description,
                                ambient_from=amb_from))
        if not out:
            raise doc.error("every combination of the matrix is excluded", [*at, "matrix", "exclude"])
    return tuple(out)


def tolerances_from(doc: Document, raw: dict | None):
    """Read ``tolerances:`` (already schema-validated)."""
    from .tolerance import Tolerances

    if not raw:
        return None
    elements = tuple((k, bounded(v, doc, ["tolerances", "elements", k], 0, 100, True, "a tolerance in %"))
                     for k, v in (raw.get("elements") or {}).items())
    caps = raw.get("capacitors", "parts")
    if not isinstance(caps, str):
        caps = bounded(caps, doc, ["tolerances", "capacitors"], 0, 100, False, "a tolerance in %")
    esr = bounded(raw["esr_pct"], doc, ["tolerances", "esr_pct"], 0, 100, True, "a spread in %") \
        if "esr_pct" in raw else None
    ageing = bounded(raw["ageing_pct"], doc, ["tolerances", "ageing_pct"], 0, 100, False, "a loss in %") \
        if "ageing_pct" in raw else 0.0
    return Tolerances(raw.get("distribution", "normal"), elements, caps, esr, ageing)


def load_project(path: str | Path, root: str | Path | None = None) -> Project:
    """Read and validate a project file; DataError with file:line: key on any problem.

    ``root`` is the project root from the command line (``--root``); without it the root is
    the repository holding the project file, else its folder.  Every path in the file must stay
    inside the root.
    """
    path = Path(path)
    doc = load_document(path)
    if not isinstance(doc.data, dict):
        raise DataError("expected a mapping of project settings", str(path))
    if ("netlist" in doc.data) == ("netlists" in doc.data):
        raise doc.error("expected either 'netlist' (one deck) or 'netlists' (several decks of one board)",
                        ["netlists"] if "netlists" in doc.data else [])
    validate(doc, "project")
    raw = doc.data
    folder = path.parent
    confinement = Confinement.for_project(folder, root)

    def where(key_path: list) -> str:
        line = doc.line_of(key_path)
        return f"{path}:{line}" if line else str(path)

    def rel(p: str, key_path: list) -> Path:
        return confinement.read(folder / p, where(key_path), format_path(key_path))

    if raw.get("allow_outside_includes"):
        raise doc.error("a project file cannot widen its own trust: only the person running derate can allow "
                        "includes outside the project root, with --allow-outside-includes", ["allow_outside_includes"])
    include_root = rel(raw["root"], ["root"]) if "root" in raw else None

    esr = []
    for key, val in raw.get("esr", {}).items():
        esr.append((key, Parasitics(
            esr_ohm=bounded(val["esr_ohm"], doc, ["esr", key, "esr_ohm"], 0, 1e6, True, "a resistance in ohm")
            if "esr_ohm" in val else None,
            esl_h=bounded(val["esl_h"], doc, ["esr", key, "esl_h"], 0, 1.0, True, "an inductance in henry")
            if "esl_h" in val else None)))
    parts = raw.get("parts", [])
    if isinstance(parts, str):
        parts = [parts]
    bom = None
    if "bom" in raw:
        b = raw["bom"]
        libs = b.get("library") or []
        libs = [libs] if isinstance(libs, str) else libs
        bom = BomSettings(rel(b["file"], ["bom", "file"]), tuple((b.get("columns") or {}).items()),
                          tuple(rel(x, ["bom", "library"]) for x in libs))
    m = raw.get("mission", {})
    weights = {k: bounded(v, doc, ["mission", "profile", k], 0, 1e7, False, "a share or hours")
               for k, v in (m.get("profile") or {}).items()}
    if weights and sum(weights.values()) <= 0:
        raise doc.error("expected at least one scenario with time in it", ["mission", "profile"])
    names = {s["name"] for s in raw.get("scenarios") or []}
    if "netlists" in raw:  # a board of several decks: the profile names the board's scenarios, deck/scenario
        names = set()
    unknown = sorted(k for k in weights if names and k not in names)
    if unknown:
        raise doc.error(f"no scenario named {', '.join(unknown)} (scenarios: {', '.join(sorted(names))})",
                        ["mission", "profile", unknown[0]])
    total = sum(weights.values()) or 1.0
    mission = Mission(
        life_h=bounded(m["life_h"], doc, ["mission", "life_h"], 0, MAX_LIFE_H, True, "hours") if "life_h" in m else None,
        duty=bounded(m["duty"], doc, ["mission", "duty"], 0, 1, True, "a fraction") if "duty" in m else 1.0,
        profile=tuple((k, w / total) for k, w in weights.items()))
    policy = raw.get("policy")
    if policy is not None and (policy.endswith((".yaml", ".yml")) or "/" in policy or "\\" in policy):
        policy = str(rel(policy, ["policy"]))
    reports, annotate = [], None
    for fmt, p in (raw.get("outputs") or {}).items():
        target = confinement.write(folder / p, fmt, where(["outputs", fmt]), f"outputs.{fmt}")
        if fmt == "annotate":
            annotate = target
        else:
            reports.append((fmt, target))
    offsets = []
    for k, entry in enumerate(raw.get("ambient_offsets") or []):
        def listed(v):
            return tuple([v] if isinstance(v, str) else v or [])
        offsets.append(AmbientOffset(listed(entry.get("capacitors")), listed(entry.get("nets")),
                                     bounded(entry["offset_c"], doc, ["ambient_offsets", k, "offset_c"], -50, 200),
                                     str(entry.get("reason", "")), where(["ambient_offsets", k]),
                                     f"ambient_offsets[{k}]"))
    decks = raw.get("netlists") or []
    first = ["netlists", 0, "netlist"] if decks else ["netlist"]
    board = Project(
        ambient_offsets=tuple(offsets),
        path=path, netlist=rel(decks[0]["netlist"] if decks else raw["netlist"], first),
        analysis=analysis_from(doc, raw.get("analysis", {})),
        scenarios=scenarios_from(doc, raw.get("scenarios"), raw.get("matrix")),
        tolerances=tolerances_from(doc, raw.get("tolerances")), confinement=confinement, include_root=include_root,
        parts=tuple(rel(p, ["parts"]) for p in parts), bom=bom, policy=policy, mission=mission,
        waivers=rel(raw["waivers"], ["waivers"]) if "waivers" in raw else None,
        fail_on=raw.get("fail_on", "error"), hazard=raw.get("hazard"), esr=tuple(esr),
        outputs=Outputs(tuple(reports), annotate), scenarios_given=bool(raw.get("scenarios") or raw.get("matrix")),
        model_path=tuple(rel(m, ["model_path"]) for m in ([raw["model_path"]] if isinstance(raw.get("model_path"), str)
                                                          else raw.get("model_path", []))),
        dialect=raw.get("dialect"), exclude=tuple(raw.get("exclude", [])),
        reversed_terminals=tuple(raw.get("reversed_terminals", [])),
        review_models=bool(raw.get("review_models", False)),
        schematics=tuple(rel(s, ["schematic"]) for s in ([raw["schematic"]] if isinstance(raw.get("schematic"), str)
                                                         else raw.get("schematic", []))))
    return _with_decks(board, doc, decks, rel) if decks else board


def _with_decks(board: Project, doc: Document, entries: list[dict], rel) -> Project:
    """A board of several decks: each entry of ``netlists:`` a project of its own (the board's settings,
    with the entry's netlist, analysis, scenarios, dialect, exclusions)."""
    decks: list[Project] = []
    names: dict[str, int] = {}
    for k, entry in enumerate(entries):
        at = ("netlists", k)
        netlist = rel(entry["netlist"], [*at, "netlist"])
        name = entry.get("name") or netlist.stem
        if name in names:
            raise doc.error(f"two decks are named '{name}' (give each a 'name')", [*at])
        names[name] = k
        own_scenarios = "scenarios" in entry or "matrix" in entry
        decks.append(replace(
            board, netlist=netlist, deck_name=name,
            analysis=analysis_from(doc, entry["analysis"], at) if "analysis" in entry else board.analysis,
            scenarios=scenarios_from(doc, entry.get("scenarios"), entry.get("matrix"), at) if own_scenarios
            else board.scenarios,
            scenarios_given=own_scenarios or board.scenarios_given,
            dialect=entry.get("dialect", board.dialect),
            exclude=board.exclude + tuple(entry.get("exclude", [])),
            reversed_terminals=board.reversed_terminals + tuple(entry.get("reversed_terminals", []))))
    scenario_names = {f"{d.deck_name}/{s.name}" for d in decks for s in d.scenarios}
    unknown = sorted(k for k, _ in board.mission.profile if k not in scenario_names)
    if unknown:
        raise doc.error(f"no scenario named {', '.join(unknown)} (a board of several decks names its scenarios "
                        f"deck/scenario: {', '.join(sorted(scenario_names))})", ["mission", "profile", unknown[0]])
    return replace(board, decks=tuple(decks), deck_name=decks[0].deck_name)


def project_for_netlist(netlist: str | Path, analysis: Analysis | None = None,
                        scenarios: tuple[Scenario, ...] | None = None, root: str | Path | None = None) -> Project:
    """A project for a bare netlist given on the command line (defaults everywhere)."""
    netlist = Path(netlist)
    return Project(path=None, netlist=netlist, analysis=analysis or Analysis(),
                   scenarios=tuple(scenarios or (Scenario("default"),)),
                   confinement=Confinement.for_project(netlist.parent, root).allowing(netlist))
