"""A simulation job: everything a worker needs, as a frozen record that travels as plain data.

A job carries the deck text and the measuring settings, not file paths, so it can run in a local
worker process or on another machine and come back as the same Stress records.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import asdict, dataclass, field
from typing import Any

from ..project import Window
from .deck import Probe

JOB_FORMAT = 1


@dataclass(frozen=True)
class MeasureSettings:
    """How the worker measures: spectrum size, harmonics, steady-state period and tolerance."""

    harmonics: int = 10
    points: int = 32768
    period_s: float | None = None
    tolerance: float = 0.01
    buckets: int = 400  # plot envelope buckets in the window


@dataclass(frozen=True)
class SimulationJob:
    """Simulate one scenario's deck and measure every probed capacitor."""

    scenario: str
    deck: str
    tstop_s: float
    window: Window
    measure: MeasureSettings
    probes: tuple[Probe, ...]
    timeout_s: float = 3600.0
    backend: str = "shared"  # shared (the library in the worker) or stream (the program, into a pipe)
    dialect: str | None = None  # ngspice compatibility mode (ngbehavior) while the deck is read
    stall_s: float = 120.0  # no simulated-time progress for this long: stalled

    def to_wire(self) -> dict[str, Any]:
        """Plain JSON-able data (for a pipe, a cluster, or the cache key)."""
        return {"type": "simulate", "format": JOB_FORMAT, "scenario": self.scenario, "deck": self.deck,
                "tstop_s": self.tstop_s, "window": asdict(self.window), "measure": asdict(self.measure),
                "probes": [asdict(p) for p in self.probes], "backend": self.backend, "dialect": self.dialect}

    @classmethod
    def from_wire(cls, d: dict[str, Any]) -> "SimulationJob":
        return cls(d["scenario"], d["deck"], float(d["tstop_s"]), Window(**d["window"]),
                   MeasureSettings(**d["measure"]), tuple(Probe(**p) for p in d["probes"]),
                   backend=d.get("backend", "shared"), dialect=d.get("dialect"))
    # the timeout and the stall time travel beside the job (runner.run), not in it: they do not
    # change the result, so they stay out of the cache key

    def cache_key(self, fingerprint: str, measure_version: int) -> str:
        """A content hash of what decides the result (the timeout does not)."""
        h = hashlib.sha256()
        h.update(f"{JOB_FORMAT}|{measure_version}|{fingerprint}|".encode())
        h.update(json.dumps(self.to_wire(), sort_keys=True).encode())
        return h.hexdigest()


@dataclass(frozen=True)
class InspectJob:
    """Load a deck without running it and return the output of informational commands."""

    deck: str
    commands: tuple[str, ...] = ()
    timeout_s: float = 60.0
    backend: str = "shared"
    dialect: str | None = None

    def to_wire(self) -> dict[str, Any]:
        return {"type": "inspect", "deck": self.deck, "commands": list(self.commands), "backend": self.backend,
                "dialect": self.dialect}


@dataclass(frozen=True)
class JobResult:
    """What came back from one job: the worker's result data, or an error text."""

    key: Any
    ok: bool
    data: dict = field(default_factory=dict)
    error: str = ""
    seconds: float = 0.0
    timed_out: bool = False
