"""Lint findings as lines for the terminal or as JSON."""

from __future__ import annotations

import json
from collections import Counter
from pathlib import Path

from rich.console import Console
from .safe import json_document, terminal as escape

from ..findings import Finding
from .console import SEVERITY_STYLE


def render_lint_table(console: Console, netlist: str, findings: list[Finding], elements: int, nets: int) -> None:
    """Print the lint findings of one netlist, one line each (``file:line: severity rule: message``,
    the form editors and CI logs link), errors first, then a summary line."""
    counts = Counter(f.severity for f in findings)
    if findings:
        console.print(f"[bold]Topology and value checks[/]: {escape(netlist)}")
        order = {"error": 0, "warning": 1, "info": 2}
        for f in sorted(findings, key=lambda f: order.get(f.severity, 3)):
            where = f"{Path(f.file).name}:{f.line}" if f.file and f.line else (f.file or netlist)
            word = "note" if f.severity == "info" else f.severity
            console.print(f"  {escape(where)}: [{SEVERITY_STYLE[f.severity]}]{word}[/] {f.rule}: {escape(f.message)}",
                          soft_wrap=True)
    summary = (f"{netlist}: {elements} elements, {nets} nets; "
               f"{counts.get('error', 0)} error(s), {counts.get('warning', 0)} warning(s), "
               f"{counts.get('info', 0)} note(s)")
    console.print(escape(summary), soft_wrap=True)


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
    return json_document(json.dumps(doc, indent=2, sort_keys=False)) + "\n"
