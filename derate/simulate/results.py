"""What a simulation run produces: per scenario, Stress records and plot envelopes."""

from __future__ import annotations

from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

from ..measure import Envelope, Stress
from ..netlist.flatten import Circuit
from ..project import Scenario
from .deck import Deck


@dataclass(frozen=True)
class ScenarioResult:
    """The outcome of one scenario: Stress records, plot envelopes, the simulator's warnings."""

    scenario: Scenario
    ok: bool
    stresses: tuple[Stress, ...] = ()
    waves: Mapping[str, Envelope] = field(default_factory=lambda: MappingProxyType({}))
    run_waves: Mapping[str, Envelope] = field(default_factory=lambda: MappingProxyType({}))
    warnings: tuple[str, ...] = ()
    error: str = ""
    seconds: float = 0.0
    from_cache: bool = False
    timed_out: bool = False
    points: int = 0
    deck: Deck | None = None
    circuit: Circuit | None = None
    resources: Mapping[str, object] = field(default_factory=lambda: MappingProxyType({}))  # simulator, peaks


@dataclass(frozen=True)
class SimulationRun:
    """Every scenario's result, in project order."""

    results: tuple[ScenarioResult, ...]
    ngspice_version: str = ""
    notes: tuple[str, ...] = ()  # from the cache: discarded entries, write failures

    @property
    def failed(self) -> list[ScenarioResult]:
        return [r for r in self.results if not r.ok]

    def stresses(self) -> list[Stress]:
        return [s for r in self.results if r.ok for s in r.stresses]


def result_from_data(scenario: Scenario, data: dict, seconds: float, cached: bool, deck: Deck | None = None,
                     circuit: Circuit | None = None) -> ScenarioResult:
    """A ScenarioResult from a worker's (or the cache's) result data."""
    stresses = tuple(Stress.from_dict(d) for d in data["stress"])
    waves, run_waves = {}, {}
    for path, w in data.get("waves", {}).items():
        waves[path] = Envelope.from_arrays(w)
        if "run_t" in w:
            run_waves[path] = Envelope.from_arrays({k[4:]: a for k, a in w.items() if k.startswith("run_")})
    resources = {k: data.get(k) for k in RESOURCE_KEYS if data.get(k) is not None}
    return ScenarioResult(scenario, True, stresses, MappingProxyType(waves), MappingProxyType(run_waves),
                          tuple(data.get("warnings", [])), seconds=seconds, from_cache=cached,
                          points=int(data.get("points", 0)), deck=deck, circuit=circuit,
                          resources=MappingProxyType(resources))


# what a run reports about itself: which simulator, how long it simulated and measured, peak memory
RESOURCE_KEYS = ("simulator", "sim_seconds", "measure_seconds", "worker_peak_mb", "ngspice_peak_mb")
