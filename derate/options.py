"""What the person running derate chooses: the command line's flags as one frozen record.

Paths given here are trusted (only the person running derate widens trust); everything a project
file says is not.  ``derate.api`` and the command line build a ``ReviewOptions``; the pipeline reads it.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

from .errors import DataError
from .project import MAX_FILE_SCENARIOS, MAX_LIFE_H, MAX_SCENARIOS, MAX_SETTLE_BUDGET, MAX_TIMEOUT_S, SIMULATORS
from .simulate.results import ScenarioResult
from .tolerance import WORST_CASE_METHODS, check_samples

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
    worst_case: bool | str = False  # False, or auto / vertices / sensitivity (True: auto); see tolerance.py
    gate_percentile: float = 100.0  # judge a corner's samples at this percentile (100: the worst sample)
    runner: str = "local"  # local (worker processes here) or dask (a Dask cluster)
    scheduler: str | None = None  # a Dask scheduler address (tcp://host:port); none: an embedded LocalCluster
    stall_s: float | None = None  # seconds without progress before a scenario counts as stalled
    settle_budget: float | None = None  # how much longer an unsettled run may be simulated (x its length)
    max_scenarios: int = MAX_FILE_SCENARIOS  # scenarios the project may run (only its runner raises it)
    scenario_names: tuple[str, ...] = ()  # run only these scenarios (names or globs; deck/scenario on a board)
    only: tuple[str, ...] = ()  # review only these capacitors (references or globs); the circuit is simulated whole

    def __post_init__(self) -> None:
        if self.fail_on not in (None, "error", "warning", "never"):  # never: the runner's choice, not a file's
            raise DataError(f"fail_on expects error, warning or never, got {self.fail_on!r}")
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
        if self.worst_case not in (False, True) and self.worst_case not in WORST_CASE_METHODS:
            raise DataError(f"worst case expects one of {', '.join(WORST_CASE_METHODS)}, got {self.worst_case!r}")
        if self.settle_budget is not None and not 1 <= self.settle_budget <= MAX_SETTLE_BUDGET:
            raise DataError(f"settle budget expects 1 to {MAX_SETTLE_BUDGET:g} (times the run), got {self.settle_budget!r}")
        if not 1 <= self.max_scenarios <= MAX_SCENARIOS:
            raise DataError(f"max scenarios expects 1 to {MAX_SCENARIOS}, got {self.max_scenarios!r}")
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

    stage: str  # "simulate"; "bias": scenarios simulated again with class-2 ceramics at their biased capacitance
    done: int
    total: int
    result: ScenarioResult | None = None
    scenario: str | None = None
    fraction: float | None = None

    def __repr__(self) -> str:  # short: a result carries waveforms, which a notebook need not print
        where = f" {self.scenario} {100 * self.fraction:.0f} %" if self.scenario and self.fraction is not None else ""
        last = f" {self.result.scenario.name} {'ok' if self.result.ok else 'failed'}" if self.result else ""
        return f"Progress({self.stage} {self.done}/{self.total}{where}{last})"
