"""The stress table in the terminal: worst first, one row per capacitor, its status always visible.

At 80 columns a row shows the capacitor, its status, why (the governing check and its scenario),
what was measured against what is allowed, the ratio and the part; wider terminals add the
technology, hot spot and life, and ``--wide`` shows every column.  Findings follow, one line each.
"""

from __future__ import annotations

from rich import box
from rich.console import Console, Group
from rich.markup import escape as markup

from .safe import plain, terminal as escape
from rich.table import Table
from rich.text import Text

from ..review import Review, as_record, counts_words, gate_tags, not_reviewed_words, problems_of, worst_first
from .words import (DASH, SEVERITY_STYLE, SHORT_TECH, STATUS_STYLE, hours, percent, quantity,
                    row_status_word, temperature)


def why(row: dict) -> str:
    """'voltage @ high-line-hot', or what an unrated capacitor lacks."""
    g = row.get("governing") or {}
    if row["status"] == "unrated":
        return "no part data" if row["part_number"] is None and row["technology"] is None else "data missing"
    if not g:
        return DASH
    check = "not settled" if g.get("rule") == "measure.steady-state" else g["check"]
    return check + (f" @ {g['scenario']}" if g.get("scenario") else "")


def against(row: dict) -> str:
    """Measured against allowed for the governing check (the measured peak voltage when unrated)."""
    g = row.get("governing") or {}
    if g.get("rule") == "measure.steady-state" and g.get("measured") is not None:
        return f"drift {percent(100 * g['measured'])}"  # not settled: the stress values are uncertain
    if g.get("measured") is not None and g.get("limit") is not None:
        unit = g.get("unit") or ""
        if unit == "°C":
            return f"{temperature(g['measured'])} / {temperature(g['limit'])}"
        if unit == "h":
            return f"{hours(g['measured'])} / {hours(g['limit'])}"
        if not unit and 0 <= g["measured"] <= 10 and 0 <= g["limit"] <= 10:  # a fraction (capacitance kept)
            return f"{percent(100 * g['measured'])} / {percent(100 * g['limit'])}"
        return f"{quantity(g['measured'], unit)} / {quantity(g['limit'], unit)}"
    peak = (row.get("measured") or {}).get("v_peak_v")
    return f"{quantity(peak, 'V')} measured" if peak is not None else DASH


def ratio_text(row: dict) -> str:
    g = row.get("governing") or {}
    return percent(100 * g["ratio"]) if g.get("ratio") is not None and g.get("limit") is not None else DASH


def spread_text(row: dict) -> str:
    """Monte Carlo: the governing stress ratio's 50th and 95th percentiles and maximum over the samples."""
    sp = (row.get("governing") or {}).get("spread") or {}
    if sp.get("p50") is None:
        return DASH
    return f"{100 * sp['p50']:.0f}/{100 * sp['p95']:.0f}/{100 * sp['max']:.0f} %"


def over_text(row: dict) -> str:
    """Monte Carlo: the share of the samples over the limit."""
    sp = (row.get("governing") or {}).get("spread") or {}
    if sp.get("p_exceed") is None:
        return DASH
    share = 100 * sp["p_exceed"]
    return f"{share:.1f} %" if 0 < share < 1 else f"{share:.0f} %"


def sampled(rows: list[dict]) -> bool:
    return any((r.get("governing") or {}).get("spread") for r in rows)


def part_text(row: dict) -> str:
    text = row["part_number"] or (SHORT_TECH.get(row["technology"], row["technology"]) if row["technology"] else DASH)
    return text + (" †" if row.get("typical") else "")


def render_review(console: Console, review: Review, wide: bool = False) -> None:
    rec = as_record(review)
    proj = rec["project"]
    if rec["caution"]:
        console.print(f"[bold yellow]{escape(rec['caution'])}[/]")
    console.print(f"[bold]Capacitor stress[/]: {escape(proj['title'])} — policy {escape(proj['policy']['name'])}")
    rows = worst_first(rec["capacitors"])
    console.print(stress_table(rows, console.width, wide))
    if any(r.get("typical") for r in rec["capacitors"]):
        console.print("† judged partly on derate's typical part data (the JSON report lists the fields)")
    s = rec["summary"]
    verdict = "[green]pass[/]" if s["verdict"] == "pass" else "[bold red]fail[/]"
    extra = f", {s['not_reviewed']} not reviewed" if s.get("not_reviewed") else ""
    counts = ", ".join(f"[{STATUS_STYLE[st]}]{n} {words}[/]" for st, n, words in counts_words(s))
    console.print(f"{s['capacitors']} capacitors: {counts}{extra} — verdict {verdict} "
                  f"(fail on {proj['fail_on']}, exit {s['exit_code']})")
    if rec.get("not_reviewed"):
        console.print(f"not reviewed: {escape(not_reviewed_words(rec))}")
    if s.get("unverified_limits"):
        console.print(f"{s['unverified_limits']} of {s['judged_limits']} judgements rest on policy values not verified "
                      "against their source (`derate policy NAME` lists each value's status)")
    problems = problems_of(rec)
    if problems:
        console.print("\nFindings:")
    for f in problems:
        console.print("  " + finding_line(f, styled=True), soft_wrap=True)
    for note in s["notes"] + rec.get("data_notes", []) + rec.get("analysis_notes", []):
        console.print(f"  [yellow]note[/] {escape(note)}")
    for sc in rec["scenarios"]:
        for w in sc["warnings"][:5]:
            console.print(f"  [yellow]ngspice[/] {escape('[' + sc['name'] + ']')} {escape(w)}", soft_wrap=True)


def _fold(text: str, width: int) -> str:
    """Break ``text`` into lines of at most ``width`` characters, after a space or hyphen where one is
    close, else anywhere: nothing is ever cut off."""
    lines = []
    while len(text) > width:
        cut = max(text.rfind(" ", 0, width + 1), text.rfind("-", 0, width))
        cut = cut + 1 if cut >= width * 2 // 3 else width
        lines.append(text[:cut].rstrip())
        text = text[cut:].lstrip()
    lines.append(text)
    return "\n".join(lines)


def stress_table(rows: list[dict], width: int, wide: bool = False) -> Table | Group:
    """The table for ``rows`` (already worst first) laid out for a terminal ``width`` columns wide.

    The reference, status, value/limit and ratio always keep their full width; 'why' and the part
    share what is left and fold onto further lines when they must.  From 120 columns the technology,
    hot spot and life join; ``wide`` adds the voltage and ripple against their ratings."""
    roomy = wide or width >= 120
    spread = sampled(rows)
    cols: list[tuple[str, str]] = [("ref", "left"), ("status", "left"), ("why", "left"), ("value / limit", "right"),
                                   ("ratio", "right")]
    if spread:  # Monte Carlo: percentiles of the ratio over the samples (and, when roomy, the share over)
        cols += [("p50/p95/max", "right")] + ([("over", "right")] if roomy else [])
    if roomy:
        cols += [("technology", "left"), ("hot spot", "right"), ("life", "right")]
    if wide:
        cols += [("V peak / rated", "right"), ("ripple eq / allowed", "right")]
    cols.append(("part", "left"))
    body = []
    for r in rows:
        cells = [r["reference"], row_status_word(r), why(r), against(r), ratio_text(r)]
        if spread:
            cells += [spread_text(r)] + ([over_text(r)] if roomy else [])
        if roomy:
            cells += [SHORT_TECH.get(r["technology"], r["technology"] or DASH), temperature(r["hotspot_c"]),
                      hours(r["life_h"])]
        if wide:
            cells += [f"{quantity(r['v_peak_v'], 'V')} / {quantity(r['v_rated_v'], 'V', 2)}",
                      f"{quantity(r['ripple_equivalent_a'], 'A')} / {quantity(r['ripple_allowed_a'], 'A')}"]
        cells.append(part_text(r))
        body.append([plain(c) for c in cells])  # file text on one line, controls shown, before folding
    natural = [max([len(h)] + [len(c[k]) for c in body]) for k, (h, _) in enumerate(cols)]
    why_at, part_at = 2, len(cols) - 1
    natural[0] = min(natural[0], 16)  # a hierarchical reference folds past 16 characters
    fixed = sum(w for k, w in enumerate(natural) if k not in (why_at, part_at)) + len(cols) - 1
    room = width - 1 - fixed  # one column spare: some terminals wrap on the last one
    if room < 24:  # too narrow for columns: one capacitor per line, wrapped by the terminal
        lines = [f"{escape(c[0])} [{STATUS_STYLE[r['status']]}]{escape(c[1])}[/]: {escape(c[2])}, {escape(c[3])} "
                 f"({escape(c[4])}" + (f"; p50/p95/max {escape(c[5])}" if spread else "") + f"), {escape(c[-1])}"
                 for r, c in zip(rows, body)]
        return Group(*(Text.from_markup(line) for line in lines))
    want_why, want_part = natural[why_at], natural[part_at]
    if want_why + want_part > room and not wide:
        # 'why' keeps up to 26 characters (a check and a scenario name); the part takes the rest
        want_why = min(want_why, max(12, room - max(want_part, 10), min(26, room - 10)))
        want_part = max(room - want_why, 6)
    widths = list(natural)
    widths[why_at], widths[part_at] = want_why, want_part
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False, expand=False, padding=(0, 0, 0, 0))
    for k, (head, justify) in enumerate(cols):
        table.add_column(head, justify=justify, no_wrap=True, overflow="fold", width=widths[k])
    for r, cells in zip(rows, body):
        shown = [markup(_fold(c, widths[k])) for k, c in enumerate(cells)]
        shown[1] = f"[{STATUS_STYLE[r['status']]}]{shown[1]}[/]"
        table.add_row(*shown)
    return table


def finding_line(f: dict, styled: bool = False) -> str:
    """One finding on one line: ``board.cir:27: error stress.voltage C3 [high-line-hot]: message``."""
    where = f"{f['file']}:{f['line']}" if f["file"] and f["line"] else (f["file"] or "")
    sc = f" [{f['scenario']}]" if f["scenario"] else ""
    tags = gate_tags(f)
    sev = f"[{SEVERITY_STYLE[f['severity']]}]{f['severity']:7s}[/]" if styled else f["severity"]
    text = f"{escape(where)}: {sev} {f['rule']}{escape(sc)}: {escape(f['message'])}"
    return text + (f" ({escape('; '.join(tags))})" if tags else "")
