"""The stress table in the terminal: one row per capacitor, coloured by status, findings below."""

from __future__ import annotations

from rich import box
from rich.console import Console
from rich.markup import escape
from rich.table import Table

from ..review import Review, as_record, gate_tags
from ..units import format_number
from .words import SEVERITY_STYLE, SHORT_TECH, STATUS_STYLE

STATUS_TEXT = {"pass": "pass", "near": "near", "fail": "FAIL", "unrated": "UNRATED"}


def _n(x, unit, digits=3):
    return "—" if x is None else format_number(x, unit, digits)


def render_review(console: Console, review: Review) -> None:
    rec = as_record(review)
    proj = rec["project"]
    if rec["caution"]:
        console.print(f"[bold yellow]{escape(rec['caution'])}[/]", soft_wrap=True)
    console.print(f"[bold]Capacitor stress[/]: {escape(proj['title'])} — policy {proj['policy']['name']}",
                  soft_wrap=True)
    table = Table(box=box.SIMPLE_HEAD, pad_edge=False)
    cols = [("capacitor", "left", 9), ("part", "left", 20), ("technology", "left", 10),
            ("worst case", "left", 13), ("V peak / rated", "right", 14), ("stress (limit)", "right", 14),
            ("ripple eq / allowed", "right", 16), ("hot spot", "right", 8), ("life", "right", 9), ("status", "left", 7)]
    for name, justify, width in cols:
        table.add_column(name, justify=justify, overflow="fold", min_width=width)
    for r in rec["capacitors"]:
        stress = "—" if r["v_stress_pct"] is None else f"{r['v_stress_pct']:.0f} % ({r['v_limit_pct']:.0f} %)"
        style = STATUS_STYLE[r["status"]]
        table.add_row(
            r["reference"], r["part_number"] or "—", SHORT_TECH.get(r["technology"], r["technology"] or "—"),
            r["worst_scenario"] or "—",
            f"{_n(r['v_peak_v'], 'V')} / {_n(r['v_rated_v'], 'V', 2)}", stress,
            f"{_n(r['ripple_equivalent_a'], 'A')} / {_n(r['ripple_allowed_a'], 'A')}",
            "—" if r["hotspot_c"] is None else f"{r['hotspot_c']:.1f} °C",
            "—" if r["life_h"] is None else f"{r['life_h']:,.0f} h",
            f"[{style}]{STATUS_TEXT[r['status']]}[/]")
    console.print(table)
    s = rec["summary"]
    verdict = "[green]PASS[/]" if s["verdict"] == "pass" else "[bold red]FAIL[/]"
    console.print(f"{s['capacitors']} capacitors: [green]{s['pass']} pass[/], [yellow]{s['near']} near the limit[/], "
                  f"[red]{s['fail']} fail[/], [magenta]{s['unrated']} unrated[/] — verdict {verdict} "
                  f"(fail on {proj['fail_on']}, exit {s['exit_code']})", soft_wrap=True)
    if s.get("unverified_limits"):
        console.print(f"{s['unverified_limits']} of {s['judged_limits']} judgements rest on policy values not verified "
                      "against their source (`derate policy NAME` lists each value's status)", soft_wrap=True)
    problems = [f for f in rec["findings"] if f["severity"] != "info"]
    if problems:
        console.print("\nFindings:")
    for f in problems:
        tags = gate_tags(f)
        where = f"{f['file']}:{f['line']}" if f["file"] else ""
        sc = f" [{f['scenario']}]" if f["scenario"] else ""
        style = SEVERITY_STYLE[f["severity"]]
        console.print(f"  [{style}]{f['severity']:7s}[/] {escape(where)} {f['rule']}{escape(sc)}: {escape(f['message'])}"
                      + (f" ({escape('; '.join(tags))})" if tags else ""), soft_wrap=True)
    for note in s["notes"]:
        console.print(f"  [yellow]note[/] {escape(note)}", soft_wrap=True)
    for sc in rec["scenarios"]:
        for w in sc["warnings"][:5]:
            console.print(f"  [yellow]ngspice[/] [{sc['name']}] {escape(w)}", soft_wrap=True)
