"""What a simulation run produces: per scenario, Stress records and plot envelopes."""

from __future__ import annotations

from dataclasses import dataclass, field, replace
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
    first_stop_s: float | None = None  # the run's length by its analysis (deck.tran.stop_s: as simulated)
    settle_note: str | None = None  # simulated longer to settle, or still not settled


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


def _turned_stress(s: Stress) -> Stress:
    """The stress read with the capacitor's terminals the other way round: every voltage and the
    mean current change sign (maxima and minima swap); magnitudes (RMS, peaks, spectra) stay."""
    return replace(s, v_dc_v=-s.v_dc_v, v_max_v=-s.v_min_v, v_min_v=-s.v_max_v, v_mean_v=-s.v_mean_v,
                   i_mean_a=-s.i_mean_a, startup_v_peak_v=-s.startup_v_min_v, startup_v_min_v=-s.startup_v_peak_v,
                   notes=s.notes + ("terminals reversed by the project: the card's second node is +",))


def _turned_envelope(e: Envelope) -> Envelope:
    return Envelope(e.t_s, -e.v_max_v, -e.v_min_v, -e.i_max_a, -e.i_min_a, e.i_rms_a)


def with_reversed_terminals(run: SimulationRun, paths: set[str]) -> SimulationRun:
    """The run with the capacitors in ``paths`` read with their terminals reversed (the netlist card
    lists the - terminal first), in stresses and plot envelopes alike."""
    if not paths:
        return run
    out = []
    for r in run.results:
        if not r.ok:
            out.append(r)
            continue
        out.append(replace(
            r, stresses=tuple(_turned_stress(s) if s.capacitor in paths else s for s in r.stresses),
            waves=MappingProxyType({k: _turned_envelope(e) if k in paths else e for k, e in r.waves.items()}),
            run_waves=MappingProxyType({k: _turned_envelope(e) if k in paths else e for k, e in r.run_waves.items()})))
    return replace(run, results=tuple(out))
