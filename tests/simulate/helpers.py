"""Run small circuits through derate's real simulation path (deck -> ngspice worker -> measure)."""

from __future__ import annotations

from pathlib import Path

import yaml

from derate.netlist import flatten, read_netlist
from derate.project import load_project
from derate.simulate.cache import Cache
from derate.simulate.runner import LocalRunner
from derate.simulate.scenarios import simulate_scenarios


def simulate(tmp_path: Path, netlist: str, project: dict, pool=None, use_cache: bool = False):
    """Write netlist + derate.yaml into tmp_path, simulate every scenario, return the SimulationRun."""
    tmp_path.mkdir(parents=True, exist_ok=True)
    (tmp_path / "board.cir").write_text(netlist)
    (tmp_path / "derate.yaml").write_text(yaml.safe_dump({"netlist": "board.cir", **project}))
    proj = load_project(tmp_path / "derate.yaml")
    nl = read_netlist(proj.netlist)
    cache = Cache.open(tmp_path / "cache") if use_cache else None
    return simulate_scenarios(proj, nl, flatten(nl), cache=cache, runner=LocalRunner(pool=pool) if pool else None)


def stress_of(run, capacitor: str, scenario: str | None = None):
    for res in run.results:
        if scenario and res.scenario.name != scenario:
            continue
        assert res.ok, res.error
        for s in res.stresses:
            if s.capacitor == capacitor:
                return s
    raise KeyError(capacitor)
