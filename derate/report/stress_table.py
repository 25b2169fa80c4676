"""Measured capacitor stress as terminal tables and as JSON."""

from __future__ import annotations

import json
from typing import Any

from rich.console import Console
from rich.table import Table

from ..simulate.results import SimulationRun
from ..units import format_number as fmt


def render_measurements(console: Console, run: SimulationRun) -> None:
    """Print one table per scenario: what every capacitor sees."""
    for res in run.results:
        sc = res.scenario
        head = f"Scenario {sc.name}"
        if sc.description:
            head += f" — {sc.description}"
        if not res.ok:
            console.print(f"[bold red]{head}: simulation failed[/]: {res.error}")
            continue
        source = "cache" if res.from_cache else f"{res.seconds:.1f} s, {res.points} points"
        table = Table(title=f"{head} ({source})", title_justify="left")
        for col in ("capacitor", "model", "V min", "V max", "ripple p-p", "I rms", "I peak", "f main",
                    "start-up V", "inrush I", "steady"):
            table.add_column(col, justify="left" if col in ("capacitor", "model", "steady") else "right",
                             no_wrap=True)
        for s in res.stresses:
            steady = "—" if s.steady_state is None else ("yes" if s.steady_state else "[yellow]NO[/]")
            table.add_row(s.capacitor, s.model, fmt(s.v_min_v, "V"), fmt(s.v_max_v, "V"), fmt(s.v_ripple_pp_v, "V"),
                          fmt(s.i_rms_a, "A"), fmt(s.i_peak_a, "A"),
                          fmt(s.f_fundamental_hz, "Hz") if s.f_fundamental_hz else "—",
                          fmt(s.startup_v_peak_v, "V"), fmt(s.startup_i_peak_a, "A"), steady)
        console.print(table)
        for w in res.warnings[:10]:
            console.print(f"  [yellow]ngspice[/] {w}", soft_wrap=True)
        notes = sorted({n for s in res.stresses for n in s.notes})
        for n in notes:
            console.print(f"  [yellow]note[/] {n}", soft_wrap=True)


def measurements_json(run: SimulationRun) -> str:
    """Return every scenario's Stress records as a JSON document."""
    doc: dict[str, Any] = {"ngspice": run.ngspice_version, "scenarios": []}
    for res in run.results:
        doc["scenarios"].append({
            "name": res.scenario.name, "ok": res.ok, "error": res.error or None, "from_cache": res.from_cache,
            "seconds": res.seconds, "points": res.points, "warnings": res.warnings,
            "ambient_c": res.scenario.ambient_c, "temperature_c": res.scenario.temperature_c,
            "stress": [s.as_dict() for s in res.stresses]})
    return json.dumps(doc, indent=2) + "\n"
