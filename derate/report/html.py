"""One self-contained HTML file for the review meeting: verdict, what needs attention (worst first),
the stress of every capacitor, figures of the quantity that decides each failing or near one, and
the findings.  No scripts and no external files; a print stylesheet lays it out on A4 or Letter.

Figures are drawn for every failing capacitor and the ``max_figures`` worst near ones (the rest are
listed), as SVG written straight from the measured envelopes, so a 1,000-capacitor board stays a
few megabytes and renders in seconds.
"""

from __future__ import annotations


from ..review import Review, as_record, counts_words, gate_tags, not_reviewed_words, problems_of, worst_first
from . import safe
from .plots import MAX_BARS, figure, stress_bars
from .machine import _report_order
from .terminal import against, over_text, part_text, ratio_text, sampled, spread_text, why
from .words import SHORT_TECH, STATUS_COLOUR as COLOURS, STATUS_WORD, hours, quantity, temperature

MAX_FIGURES = 20  # near-limit capacitors drawn; failing ones are always drawn

CSS = """
body { font-family: system-ui, sans-serif; margin: 1.5em; color: #1d1d1f; max-width: 1180px; }
h1 { font-size: 1.35em; } h2 { font-size: 1.1em; margin-top: 1.6em; }
.wrap { overflow-x: auto; }
table { border-collapse: collapse; font-size: 0.88em; }
th, td { border-bottom: 1px solid #ddd; padding: 3px 7px; text-align: left; white-space: nowrap; }
th { background: #f2f2f4; position: sticky; top: 0; } td.num { text-align: right; font-variant-numeric: tabular-nums; }
td.part { white-space: normal; overflow-wrap: anywhere; min-width: 8em; }
.status { font-weight: 600; color: white; border-radius: 3px; padding: 1px 6px; }
.caution { border: 2px solid %(near)s; background: #fff6e5; padding: 0.7em 1em; margin: 1em 0; }
.verdict { font-size: 1.1em; } .verdict-pass { color: %(pass)s; } .verdict-fail { color: %(fail)s; }
.finding { margin: 0.25em 0; } .muted { color: #666; font-size: 0.85em; }
figure { margin: 1em 0; } figure svg { max-width: 100%%; height: auto; }
@page { margin: 12mm 10mm; }
@media print {
  /* A4 or Letter, whichever the printer has: every table starts a page and fits its width */
  body { margin: 0; max-width: none; font-size: 9.5pt; }
  .wrap { overflow: visible; }
  table { font-size: 7.5pt; width: 100%%; }
  th, td { padding: 2px 4px; white-space: normal; } td.num, td.why { white-space: nowrap; }
  th { position: static; } thead { display: table-header-group; }
  h2 { break-before: page; break-after: avoid; } h2.first { break-before: avoid; }
  figure, tr, .caution { break-inside: avoid; }
  figure svg { max-width: 100%%; }
  .status { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  a { color: inherit; text-decoration: none; }
}
""" % {k.value: v for k, v in COLOURS.items()}


def _e(x) -> str:
    """Text for HTML (report/safe.py: controls shown, markup escaped)."""
    return safe.html_text(x)


def _status(status: str, waived: bool = False) -> str:
    word = "waived" if waived else STATUS_WORD[status]  # still failing; a waiver accepts it
    return f"<span class=\"status\" style=\"background:{COLOURS[status]}\">{_e(word)}</span>"


def _row(r: dict, full: bool, spread: bool = False) -> str:
    cells = [f"<td><code>{_e(r['reference'])}</code></td>", f"<td>{_status(r['status'], r.get('waived', False))}</td>",
             f"<td class=\"why\">{_e(why(r))}</td>", f"<td class=\"num\">{_e(against(r))}</td>",
             f"<td class=\"num\">{_e(ratio_text(r))}</td>"]
    if spread:
        cells += [f"<td class=\"num\">{_e(spread_text(r))}</td>", f"<td class=\"num\">{_e(over_text(r))}</td>"]
    if full:
        cells += [f"<td>{_e(SHORT_TECH.get(r['technology'], r['technology'] or '—'))}</td>",
                  f"<td class=\"num\">{_e(quantity(r['v_peak_v'], 'V'))} / {_e(quantity(r['v_rated_v'], 'V', 2))}</td>",
                  f"<td class=\"num\">{_e(quantity(r['ripple_equivalent_a'], 'A'))} / "
                  f"{_e(quantity(r['ripple_allowed_a'], 'A'))}</td>",
                  f"<td class=\"num\">{_e(temperature(r['hotspot_c']))}</td><td class=\"num\">{_e(hours(r['life_h']))}</td>"]
    cells.append(f"<td class=\"part\" title=\"{_e(r['part_number'] or '')}\">{_e(part_text(r))}</td>")
    return f"<tr id=\"row-{_e(r['reference'])}\">" + "".join(cells) + "</tr>"


HEAD_SHORT = ("capacitor", "status", "why", "value / limit", "ratio")
HEAD_FULL = HEAD_SHORT + ("technology", "V peak / rated", "ripple eq / allowed", "hot spot", "life")


def _table(rows: list[dict], full: bool, table_id: str, spread: bool = False) -> str:
    heads = (HEAD_SHORT + (("p50/p95/max", "over limit") if spread else ()) + (HEAD_FULL[len(HEAD_SHORT):] if full else ())
             + ("part",))
    head = "".join(f"<th>{h}</th>" for h in heads)
    return (f"<div class=\"wrap\"><table id=\"{table_id}\"><thead><tr>{head}</tr></thead><tbody>"
            + "".join(_row(r, full, spread) for r in rows) + "</tbody></table></div>")


def ambient_text(sc: dict) -> str:
    """A scenario's ambient and where it came from when not its own setting ('85 °C (the netlist's .temp ...)')."""
    if sc.get("ambient_c") is None:
        return "none (thermal checks unrated)"
    src = sc.get("ambient_from") or ""
    own = src.startswith("scenario")
    return f"{sc['ambient_c']:.0f} °C" + ("" if own or not src else f" ({src})")


def to_html(review: Review, max_figures: int | None = None) -> str:
    if max_figures is None:
        max_figures = getattr(review.project, "report_figures", MAX_FIGURES)
    rec = as_record(review)
    proj, s = rec["project"], rec["summary"]
    rows = worst_first(rec["capacitors"])
    parts = ["<!DOCTYPE html>", "<html lang=\"en\"><head><meta charset=\"utf-8\">",
             "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">",
             f"<title>derate: {_e(proj['title'])}</title><style>{CSS}</style></head><body>",
             f"<h1>Capacitor derating review: {_e(proj['title'])}</h1>",
             f"<p>Netlist <code>{_e(proj['netlist'])}</code>, policy <b>{_e(proj['policy']['name'])}</b> "
             f"({_e(proj['policy']['title'])}), fail on {_e(proj['fail_on'])}.</p>"]
    verdict_class = "verdict-pass" if s["verdict"] == "pass" else "verdict-fail"
    parts.append(f"<p class=\"verdict {verdict_class}\"><b>Verdict: {_e(s['verdict'])}</b> (exit {s['exit_code']}) — "
                 f"{s['capacitors']} capacitors: "
                 + ", ".join(f"{n} {words}" for _, n, words in sorted(counts_words(s), key=_report_order))
                 + (f", {s['not_reviewed']} not reviewed" if s.get("not_reviewed") else "") + ".</p>")
    if rec.get("not_reviewed"):
        parts.append(f"<p>Not reviewed: {_e(not_reviewed_words(rec))}.</p>")
    if s.get("unverified_limits"):
        parts.append(f"<p class=\"muted\">{s['unverified_limits']} of {s['judged_limits']} judgements rest on policy "
                     "values not verified against their source.</p>")
    if rec["caution"]:
        parts.append(f"<div class=\"caution\" role=\"note\"><b>{_e(rec['caution'])}</b></div>")
    attention = [r for r in rows if r["status"] != "pass"]
    spread = sampled(rows)  # Monte Carlo: percentiles of the governing ratio over each corner's samples
    if attention:
        parts.append("<h2 class=\"first\">Needs attention</h2>" + _table(attention, False, "attention-table", spread))
    parts.append("<h2>Stress table</h2>" + _table(rows, True, "stress-table", spread))
    if any(r["typical"] for r in rows):
        parts.append("<p class=\"muted\">† judged partly on derate's typical part data.</p>")
    shown = min(len(rows), MAX_BARS)
    title = ("Stress per capacitor and check" if shown == len(rows)
             else f"Stress per check of the {shown} most stressed capacitors")
    parts.append(f"<h2>{title}</h2><figure id=\"stress-chart\">" + stress_bars(review, rows) + "</figure>")
    if shown < len(rows):
        parts.append(f"<p class=\"muted\">The other {len(rows) - shown} are in the stress table.</p>")
    failing = [r for r in rows if r["status"] == "fail"]
    near = [r for r in rows if r["status"] == "near"]
    drawn = failing + near[:max_figures]
    if drawn:
        parts.append("<h2>What decides each failing or near capacitor</h2>")
    for r in drawn:
        svg = figure(review, r)
        if svg:
            parts.append(f"<figure class=\"waveform\" id=\"wave-{_e(r['reference'])}\"><figcaption><b>{_e(r['reference'])}"
                         f"</b> {_status(r['status'])} {_e(why(r))}: {_e(against(r))} ({_e(ratio_text(r))})</figcaption>"
                         f"{svg}</figure>")
    if len(near) > max_figures:
        rest = near[max_figures:]
        noun = "capacitor is" if len(rest) == 1 else "capacitors are"
        parts.append(f"<p class=\"muted\">{len(rest)} more near-limit {noun} not drawn (--figures N draws more): "
                     + ", ".join(_e(r["reference"]) for r in rest[:50]) + (" …" if len(rest) > 50 else "") + "</p>")
    problems = problems_of(rec)
    parts.append("<h2>Findings</h2>")
    if not problems:
        parts.append("<p>No findings above the info level.</p>")
    for f in problems:
        tags = gate_tags(f, with_reason=True)
        where = f"{f['file']}:{f['line']}" if f["file"] else ""
        parts.append(f"<p class=\"finding\"><b style=\"color:{COLOURS['fail'] if f['severity'] == 'error' else COLOURS['near']}\">"
                     f"{_e(f['severity'])}</b> <code>{_e(f['rule'])}</code> <span class=\"muted\">{_e(where)} "
                     f"{_e(f['scenario'] or '')}</span> {_e(f['message'])}"
                     + (f" <span class=\"muted\">({_e('; '.join(tags))})</span>" if tags else "") + "</p>")
    for note in s["notes"] + rec.get("data_notes", []) + rec.get("analysis_notes", []):
        parts.append(f"<p class=\"finding muted\">note: {_e(note)}</p>")
    parts.append("<h2>Scenarios</h2><div class=\"wrap\"><table><tr><th>scenario</th><th>description</th><th>ambient</th>"
                 "<th>simulated at</th><th>result</th></tr>")
    for sc in rec["scenarios"]:
        result = "cached" if sc["from_cache"] else "simulated"
        if not sc["ok"]:
            result = f"failed: {sc['error']}"
        sim_t = "—" if sc["temperature_c"] is None else f"{sc['temperature_c']:.0f} °C"
        parts.append(f"<tr><td>{_e(sc['name'])}</td><td>{_e(sc['description'] or '')}</td>"
                     f"<td class=\"num\">{_e(ambient_text(sc))}</td><td class=\"num\">{sim_t}</td>"
                     f"<td>{_e(result)}</td></tr>")
    parts.append("</table></div>")
    parts.append(f"<p class=\"muted\">derate {_e(rec['tool']['version'])}, ngspice {_e(rec['ngspice'] or '?')}, "
                 f"generated {_e(rec['generated_utc'])}.</p></body></html>")
    return "\n".join(parts) + "\n"
