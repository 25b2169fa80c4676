"""The project file (``derate.yaml``): netlist, analysis, scenarios (operating corners), data files.

Numbers may be written plainly or as SPICE numbers (``"0.5u"``, ``"100m"``); all are SI inside.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

from .datafile import Document, load_document, validate
from .errors import DataError
from .units import parse_number

PROJECT_FILE = "derate.yaml"
DEFAULT_AMBIENT_C = 25.0


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
    timeout_s: float = 300.0
    harmonics: int = 10
    spectrum_points: int = 32768
    steady_state_tolerance: float = 0.01  # 1 %: stress figures settle to about this accuracy
    options: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class Scenario:
    """One operating corner."""

    name: str
    params: tuple[tuple[str, float], ...] = ()
    sources: tuple[tuple[str, str], ...] = ()
    temperature_c: float | None = None
    ambient_c: float = DEFAULT_AMBIENT_C
    description: str = ""


@dataclass(frozen=True)
class Parasitics:
    """Series ESR and ESL to simulate with a capacitor."""

    esr_ohm: float | None = None
    esl_h: float | None = None


@dataclass
class Project:
    """A loaded project file (paths resolved relative to it)."""

    path: Path | None
    netlist: Path
    analysis: Analysis
    scenarios: list[Scenario]
    root: Path | None = None
    allow_outside_includes: bool = False
    parts: list[Path] = field(default_factory=list)
    bom: dict[str, Any] | None = None
    policy: str | None = None
    mission: dict[str, float] = field(default_factory=dict)
    waivers: Path | None = None
    fail_on: str = "error"
    hazard: bool | None = None
    esr: dict[str, Parasitics] = field(default_factory=dict)
    outputs: dict[str, Path] = field(default_factory=dict)

    @property
    def folder(self) -> Path:
        return self.path.parent if self.path else self.netlist.parent

    @property
    def cache_dir(self) -> Path:
        return self.folder / ".derate-cache"


def number(value: Any, doc: Document | None = None, key_path: list | None = None) -> float:
    """Return an SI float from a YAML number or a SPICE number text."""
    if isinstance(value, bool):
        raise (doc.error(f"expected a number, got {value!r}", key_path) if doc else DataError(f"expected a number, got {value!r}"))
    if isinstance(value, (int, float)):
        return float(value)
    try:
        return parse_number(str(value)).value
    except ValueError:
        err = f"expected a number, got {value!r}"
        raise (doc.error(err, key_path) if doc else DataError(err)) from None


def find_project(start: Path | None = None) -> Path | None:
    """Return the nearest ``derate.yaml`` in ``start`` or a parent folder."""
    here = (start or Path.cwd()).resolve()
    for folder in [here, *here.parents]:
        candidate = folder / PROJECT_FILE
        if candidate.is_file():
            return candidate
    return None


def _analysis(doc: Document, raw: Mapping[str, Any]) -> Analysis:
    tran = None
    if "tran" in raw:
        t = raw["tran"]
        base = ["analysis", "tran"]
        stop = number(t["stop"], doc, base + ["stop"])
        step = number(t["step"], doc, base + ["step"]) if "step" in t else stop / 1000.0
        start = number(t["start"], doc, base + ["start"]) if "start" in t else 0.0
        max_step = number(t["max_step"], doc, base + ["max_step"]) if "max_step" in t else None
        if stop <= 0 or step <= 0 or start < 0 or start >= stop:
            raise doc.error("expected 0 <= start < stop and step > 0", base)
        tran = Tran(step, stop, start, max_step, bool(t.get("uic", False)))
    w = raw.get("window", {})
    window = Window(
        last_s=number(w["last"], doc, ["analysis", "window", "last"]) if "last" in w else None,
        from_s=number(w["from"], doc, ["analysis", "window", "from"]) if "from" in w else None,
        to_s=number(w["to"], doc, ["analysis", "window", "to"]) if "to" in w else None)
    if window.last_s is not None and window.from_s is not None:
        raise doc.error("give either 'last' or 'from', not both", ["analysis", "window"])
    period = number(raw["period"], doc, ["analysis", "period"]) if "period" in raw else None
    options = tuple((str(k), str(v)) for k, v in raw.get("options", {}).items())
    return Analysis(tran=tran, window=window, period_s=period,
                    timeout_s=float(raw.get("timeout_s", 300.0)), harmonics=int(raw.get("harmonics", 10)),
                    spectrum_points=int(raw.get("spectrum_points", 32768)),
                    steady_state_tolerance=float(raw.get("steady_state_tolerance", 0.01)), options=options)


def _scenarios(doc: Document, raw: list | None) -> list[Scenario]:
    if not raw:
        return [Scenario("default")]
    out = []
    seen = set()
    for i, s in enumerate(raw):
        if s["name"] in seen:
            raise doc.error(f"scenario name '{s['name']}' is used twice", ["scenarios", i, "name"])
        seen.add(s["name"])
        params = tuple((k.lower(), number(v, doc, ["scenarios", i, "params", k])) for k, v in s.get("params", {}).items())
        sources = tuple((k, str(v)) for k, v in s.get("sources", {}).items())
        temp = s.get("temperature_c")
        ambient = s.get("ambient_c", temp if temp is not None else DEFAULT_AMBIENT_C)
        out.append(Scenario(s["name"], params, sources, temp, float(ambient), s.get("description", "")))
    return out


def load_project(path: str | Path) -> Project:
    """Read and validate a project file; DataError with file:line: key on any problem."""
    path = Path(path)
    doc = load_document(path)
    if not isinstance(doc.data, dict):
        raise DataError("expected a mapping of project settings", str(path))
    validate(doc, "project")
    raw = doc.data
    folder = path.parent

    def rel(p: str) -> Path:
        return (folder / p) if not Path(p).is_absolute() else Path(p)

    esr = {}
    for key, val in raw.get("esr", {}).items():
        esr[key] = Parasitics(
            esr_ohm=number(val["esr_ohm"], doc, ["esr", key, "esr_ohm"]) if "esr_ohm" in val else None,
            esl_h=number(val["esl_h"], doc, ["esr", key, "esl_h"]) if "esl_h" in val else None)
    parts = raw.get("parts", [])
    if isinstance(parts, str):
        parts = [parts]
    return Project(
        path=path, netlist=rel(raw["netlist"]), analysis=_analysis(doc, raw.get("analysis", {})),
        scenarios=_scenarios(doc, raw.get("scenarios")),
        root=rel(raw["root"]) if "root" in raw else None,
        allow_outside_includes=bool(raw.get("allow_outside_includes", False)),
        parts=[rel(p) for p in parts], bom=raw.get("bom"), policy=raw.get("policy"),
        mission=dict(raw.get("mission", {})), waivers=rel(raw["waivers"]) if "waivers" in raw else None,
        fail_on=raw.get("fail_on", "error"), hazard=raw.get("hazard"), esr=esr,
        outputs={k: rel(v) for k, v in raw.get("outputs", {}).items()})


def project_for_netlist(netlist: str | Path, analysis: Analysis | None = None,
                        scenarios: list[Scenario] | None = None) -> Project:
    """A project for a bare netlist given on the command line (defaults everywhere)."""
    return Project(path=None, netlist=Path(netlist), analysis=analysis or Analysis(),
                   scenarios=scenarios or [Scenario("default")])
