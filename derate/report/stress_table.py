"""Measured capacitor stress as terminal tables and as JSON."""

from __future__ import annotations

import json
from typing import Any

from rich import box
from rich.console import Console
from .safe import json_document, terminal as escape
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
            console.print(f"[bold red]{escape(head)}: simulation failed[/]: {escape(res.error or '')}")
            continue
        source = "cache" if res.from_cache else f"{res.seconds:.1f} s, {res.points} points"
        console.print(f"{escape(head)} ({source})")
        # fits 80 columns; from 120 the peak current, start-up and inrush figures and the model join
        roomy = console.width >= 120
        cols = ["capacitor", "V min", "V max", "ripple p-p", "I rms", "f main", "settled"]
        if roomy:
            cols[6:6] = ["I peak", "start-up V", "inrush I", "model"]
        table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False, padding=(0, 1, 0, 0))
        for col in cols:
            table.add_column(col, justify="left" if col in ("capacitor", "model", "settled") else "right",
                             no_wrap=col != "capacitor", overflow="fold", max_width=24 if col == "capacitor" else None)
        for st in res.stresses:
            steady = "—" if st.steady_state is None else ("yes" if st.steady_state else "[yellow]no[/]")
            cells = [escape(st.capacitor), fmt(st.v_min_v, "V"), fmt(st.v_max_v, "V"), fmt(st.v_ripple_pp_v, "V"),
                     fmt(st.i_rms_a, "A"), fmt(st.f_fundamental_hz, "Hz") if st.f_fundamental_hz else "—"]
            if roomy:
                cells += [fmt(st.i_peak_a, "A"), fmt(st.startup_v_peak_v, "V"), fmt(st.startup_i_peak_a, "A"),
                          escape(st.model)]
            table.add_row(*cells, steady)
        console.print(table)
        for w in res.warnings[:10]:
            console.print(f"  [yellow]ngspice[/] {escape(w)}", soft_wrap=True)
        notes = sorted({n for s in res.stresses for n in s.notes})
        for n in notes:
            console.print(f"  [yellow]note[/] {escape(n)}", soft_wrap=True)


def measurements_json(run: SimulationRun) -> str:
    """Return every scenario's Stress records as a JSON document."""
    doc: dict[str, Any] = {"ngspice": run.ngspice_version, "scenarios": []}
    for res in run.results:
        doc["scenarios"].append({
            "name": res.scenario.name, "ok": res.ok, "error": res.error or None, "from_cache": res.from_cache,
            "seconds": res.seconds, "points": res.points, "warnings": res.warnings,
            "ambient_c": res.scenario.ambient_c, "temperature_c": res.scenario.temperature_c,
            "stress": [s.as_dict() for s in res.stresses]})
    return json_document(json.dumps(doc, indent=2)) + "\n"
