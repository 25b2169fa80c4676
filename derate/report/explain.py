"""`derate explain` and `derate policy`: check documentation and policy values with their sources."""

from __future__ import annotations

import json
import sys

from rich.console import Console
from rich.markup import escape
from rich.table import Table

from .. import exitcodes
from ..registry import all_rules, find
from ..policy import builtin_names, load_policy


def explain(console: Console, rule: str | None) -> int:
    rules = all_rules()
    if rule is None:
        table = Table(title="Checks and lint rules", title_justify="left")
        table.add_column("id", no_wrap=True)
        table.add_column("what it checks")
        for info in rules:
            table.add_row(info.id, info.title + (f" ({info.severity})" if info.kind == "lint" else ""))
        console.print(table)
        return exitcodes.PASS
    info = find(rule)
    if info is None:
        known = ", ".join(i.id for i in rules)
        console.print(f"[red]no rule named {escape(rule)}[/]; known: {known}", soft_wrap=True)
        return exitcodes.USAGE
    if info.kind == "lint":
        console.print(f"[bold]{info.id}[/] (lint, {info.severity}): {escape(info.title)}")
        return exitcodes.PASS
    console.print(f"[bold]{info.id}[/]: {escape(info.title)}")
    console.print(f"[bold]formula[/]: {escape(info.formula)}", soft_wrap=True)
    if info.needs:
        console.print(f"[bold]part data needed[/]: {', '.join(info.needs)}")
    if info.policy_needs:
        console.print(f"[bold]policy values[/]: {', '.join(info.policy_needs)}")
    console.print("[bold]sources[/]:")
    for src in info.sources:
        console.print(f"  - {escape(src)}", soft_wrap=True)
    if info.doc:
        console.print()
        console.print(escape(info.doc.strip()), soft_wrap=True)
    return exitcodes.PASS


def _fmt(value) -> str:
    if isinstance(value, tuple) and value and isinstance(value[0], tuple):
        return ", ".join(f"{a:g}: {b:g}" for a, b in value)
    if isinstance(value, tuple):
        return ", ".join(map(str, value))
    return str(value)


def show_policies(console: Console, spec: str | None, fmt: str) -> int:
    names = [spec] if spec else builtin_names()
    policies = [load_policy(n) for n in names]
    if fmt == "json":
        doc = [{"name": p.name, "title": p.title, "chain": list(p.chain), "unrated_severity": p.unrated_severity,
                "typical_data": {"value": p.typical_data.value, "source": p.typical_data.source},
                "near_limit_pct": {"value": p.near_limit_pct.value, "source": p.near_limit_pct.source},
                "technologies": {t: {k: {"value": v.value, "source": v.source, "status": v.status}
                                     for k, v in vals.items()}
                                 for t, vals in p.technologies.items()}} for p in policies]
        sys.stdout.write(json.dumps(doc, indent=2) + "\n")
        return exitcodes.PASS
    if not spec:  # the list the help promises: one line each; `derate policy NAME` gives the values
        for p in policies:
            values = sum(len(v) for v in p.technologies.values())
            unverified = sum(1 for v in p.technologies.values() for x in v.values() if x.status == "unverified")
            console.print(f"[bold]{p.name}[/]: {escape(p.title)} ({values} values, {unverified} not yet verified "
                          "against their source)", soft_wrap=True)
        console.print("derate policy NAME lists one policy's values with their sources and status")
        return exitcodes.PASS
    for p in policies:
        console.print(f"[bold]{p.name}[/]: {escape(p.title)} (built on {' -> '.join(p.chain)}; "
                      f"unrated parts are {p.unrated_severity}s; near the limit within {p.near_limit_pct.value:g} %)",
                      soft_wrap=True)
        if console.width >= 140:
            table = Table(show_header=True, title_justify="left")
            table.add_column("technology", no_wrap=True)
            table.add_column("setting", no_wrap=True)
            table.add_column("value", overflow="fold")
            table.add_column("status", no_wrap=True)
            table.add_column("source", overflow="fold")
            for tech in sorted(p.technologies, key=lambda t: (t != "default", t)):
                for key, val in sorted(p.technologies[tech].items()):
                    table.add_row(tech, key, _fmt(val.value), val.status, escape(val.source))
            console.print(table)
            continue
        # Narrow terminals and logs: one setting per line, its source on the next, nothing cut off.
        for tech in sorted(p.technologies, key=lambda t: (t != "default", t)):
            console.print(f"  [bold]{tech}[/]")
            for key, val in sorted(p.technologies[tech].items()):
                console.print(f"    {key} = {_fmt(val.value)}  [{val.status}]", soft_wrap=True, markup=False)
                console.print(f"      {escape(val.source)}", soft_wrap=True, highlight=False)
    return exitcodes.PASS
