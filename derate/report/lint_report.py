"""Lint findings as a rich table or as JSON."""

from __future__ import annotations

import json
from collections import Counter
from pathlib import Path

from rich.console import Console
from rich.table import Table

from ..findings import Finding
from .console import SEVERITY_STYLE


def render_lint_table(console: Console, netlist: str, findings: list[Finding], elements: int, nets: int) -> None:
    """Print the lint findings of one netlist as a table with a summary line."""
    counts = Counter(f.severity for f in findings)
    if findings:
        table = Table(title=f"Topology and value checks: {netlist}", title_justify="left", expand=True)
        table.add_column("severity", no_wrap=True)
        table.add_column("line", no_wrap=True)
        table.add_column("rule", no_wrap=True)
        table.add_column("finding", overflow="fold", ratio=1)
        for f in findings:
            where = f"{Path(f.file).name}:{f.line}" if f.file and f.line else (f.file or "")
            table.add_row(f"[{SEVERITY_STYLE[f.severity]}]{f.severity}[/]", where, f.rule, f.message)
        console.print(table)
    summary = (f"{netlist}: {elements} elements, {nets} nets; "
               f"{counts.get('error', 0)} error(s), {counts.get('warning', 0)} warning(s), "
               f"{counts.get('info', 0)} note(s)")
    console.print(summary, soft_wrap=True)


def lint_json(netlist: str, findings: list[Finding], elements: int, nets: int) -> str:
    """Return the lint result as a JSON document."""
    doc = {
        "netlist": netlist,
        "elements": elements,
        "nets": nets,
        "findings": [
            {k: v for k, v in f.as_record().items()
             if k in ("rule", "severity", "message", "subject", "file", "line", "details")}
            for f in findings
        ],
    }
    return json.dumps(doc, indent=2, sort_keys=False) + "\n"
