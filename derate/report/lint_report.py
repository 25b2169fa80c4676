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


def _repo_path(file: str) -> str:
    """A netlist path as code scanning and annotations want it: from the repository's top level."""
    from ..trust import repository_root
    path = Path(file).resolve()
    root = repository_root(path.parent)
    if root is None:
        return Path(file).as_posix()
    try:
        return path.relative_to(root.resolve()).as_posix()
    except ValueError:
        return Path(file).as_posix()


def lint_sarif(runs: list[tuple[str, list[Finding]]]) -> str:
    """SARIF 2.1.0 of the lint findings of several netlists (code scanning, pre-commit)."""
    from .. import __version__
    from .machine import SEVERITY_TO_SARIF, _rules
    rules = [r for r in _rules() if r["id"].split(".")[0] in ("topology", "netlist", "value")]
    index = {r["id"]: i for i, r in enumerate(rules)}
    results = []
    for path, findings in runs:
        for f in findings:
            res = {"ruleId": f.rule, "level": SEVERITY_TO_SARIF[f.severity], "message": {"text": f.message},
                   "locations": [{"physicalLocation": {"artifactLocation": {"uri": _repo_path(f.file or path)},
                                                       "region": {"startLine": f.line or 1}}}]}
            if f.rule in index:
                res["ruleIndex"] = index[f.rule]
            results.append(res)
    doc = {"$schema": "https://json.schemastore.org/sarif-2.1.0.json", "version": "2.1.0",
           "runs": [{"tool": {"driver": {"name": "derate", "version": __version__,
                                         "informationUri": "https://derate.invalid/", "rules": rules}},
                     "results": results}]}
    return json_document(json.dumps(doc, indent=2)) + "\n"


def lint_github(runs: list[tuple[str, list[Finding]]]) -> str:
    """GitHub Actions annotations of the lint findings, one workflow command each."""
    from .machine import _gh_data, _gh_property
    level = {"error": "error", "warning": "warning", "info": "notice"}
    lines = []
    for path, findings in runs:
        for f in findings:
            where = f"file={_gh_property(_repo_path(f.file or path))}" + (f",line={int(f.line)}" if f.line else "")
            lines.append(f"::{level[f.severity]} {where},title={_gh_property('derate ' + f.rule)}::{_gh_data(f.message)}")
    return "\n".join(lines) + ("\n" if lines else "")
