"""One self-contained HTML file: stress table, stress-ratio chart, waveforms of every capacitor
that fails or is near a limit (with the limit lines), findings.  No scripts, no external files."""

from __future__ import annotations

import html

from ..review import Review, as_record, gate_tags
from ..units import format_number
from .plots import COLOURS, stress_bars, waveforms

CSS = """
body { font-family: system-ui, sans-serif; margin: 2em; color: #1d1d1f; max-width: 1200px; }
h1 { font-size: 1.4em; } h2 { font-size: 1.15em; margin-top: 1.8em; }
table { border-collapse: collapse; font-size: 0.9em; }
th, td { border-bottom: 1px solid #ddd; padding: 4px 8px; text-align: left; white-space: nowrap; }
th { background: #f2f2f4; } td.num { text-align: right; font-variant-numeric: tabular-nums; }
.status { font-weight: 600; color: white; border-radius: 3px; padding: 1px 6px; }
.caution { border: 2px solid #b26a00; background: #fff6e5; padding: 0.8em 1em; margin: 1em 0; }
.verdict-pass { color: %(pass)s; } .verdict-fail { color: %(fail)s; }
.finding { margin: 0.3em 0; } .muted { color: #666; font-size: 0.85em; }
figure { margin: 1em 0; } figure svg { max-width: 100%%; height: auto; }
""" % COLOURS


def _e(x) -> str:
    return html.escape("" if x is None else str(x))


def _n(x, unit, digits=3) -> str:
    return "—" if x is None else html.escape(format_number(x, unit, digits))


def to_html(review: Review) -> str:
    rec = as_record(review)
    proj, s = rec["project"], rec["summary"]
    parts = ["<!DOCTYPE html>", "<html lang=\"en\"><head><meta charset=\"utf-8\">",
             f"<title>derate: {_e(proj['title'])}</title><style>{CSS}</style></head><body>",
             f"<h1>Capacitor derating review: {_e(proj['title'])}</h1>",
             f"<p>Netlist <code>{_e(proj['netlist'])}</code>, policy <b>{_e(proj['policy']['name'])}</b> "
             f"({_e(proj['policy']['title'])}), fail on {_e(proj['fail_on'])}.</p>"]
    verdict_class = "verdict-pass" if s["verdict"] == "pass" else "verdict-fail"
    parts.append(f"<p class=\"{verdict_class}\"><b>Verdict: {_e(s['verdict'].upper())}</b> (exit {s['exit_code']}) — "
                 f"{s['capacitors']} capacitors: {s['pass']} pass, {s['near']} near the limit, {s['fail']} fail, "
                 f"{s['unrated']} unrated.</p>")
    if rec["caution"]:
        parts.append(f"<div class=\"caution\" role=\"note\"><b>{_e(rec['caution'])}</b></div>")
    parts.append("<h2>Scenarios</h2><table><tr><th>scenario</th><th>description</th><th>ambient</th>"
                 "<th>simulated at</th><th>result</th></tr>")
    for sc in rec["scenarios"]:
        result = "cached" if sc["from_cache"] else "simulated"
        if not sc["ok"]:
            result = f"FAILED: {sc['error']}"
        sim_t = "—" if sc["temperature_c"] is None else f"{sc['temperature_c']:.0f} °C"
        parts.append(f"<tr><td>{_e(sc['name'])}</td><td>{_e(sc['description'] or '')}</td>"
                     f"<td class=\"num\">{sc['ambient_c']:.0f} °C</td><td class=\"num\">{sim_t}</td>"
                     f"<td>{_e(result)}</td></tr>")
    parts.append("</table>")
    parts.append("<h2>Stress table</h2><table id=\"stress-table\"><tr><th>capacitor</th><th>part</th><th>technology</th>"
                 "<th>worst scenario</th><th>V peak / rated</th><th>V stress (limit)</th><th>ripple eq / allowed</th>"
                 "<th>hot spot</th><th>life</th><th>status</th></tr>")
    for r in rec["capacitors"]:
        stress = "—" if r["v_stress_pct"] is None else f"{r['v_stress_pct']:.0f} % ({r['v_limit_pct']:.0f} %)"
        colour = COLOURS[r["status"]]
        hot = "—" if r["hotspot_c"] is None else f"{r['hotspot_c']:.1f} °C"
        life = "—" if r["life_h"] is None else f"{r['life_h']:,.0f} h"
        parts.append(
            f"<tr><td><code>{_e(r['reference'])}</code></td><td>{_e(r['part_number'] or '—')}</td>"
            f"<td>{_e(r['technology'] or '—')}</td><td>{_e(r['worst_scenario'] or '—')}</td>"
            f"<td class=\"num\">{_n(r['v_peak_v'], 'V')} / {_n(r['v_rated_v'], 'V', 2)}</td>"
            f"<td class=\"num\">{_e(stress)}</td>"
            f"<td class=\"num\">{_n(r['ripple_equivalent_a'], 'A')} / {_n(r['ripple_allowed_a'], 'A')}</td>"
            f"<td class=\"num\">{hot}</td><td class=\"num\">{life}</td>"
            f"<td><span class=\"status\" style=\"background:{colour}\">{_e(r['status'])}</span></td></tr>")
    parts.append("</table>")
    parts.append("<h2>Stress ratios</h2><figure id=\"stress-chart\">" + stress_bars(review) + "</figure>")
    problems = [f for f in rec["findings"] if f["severity"] != "info"]
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
    for note in s["notes"]:
        parts.append(f"<p class=\"finding muted\">note: {_e(note)}</p>")
    shown = [c for c in review.assessment.capacitors if c.status in ("fail", "near")]
    if shown:
        parts.append("<h2>Waveforms of capacitors that fail or are near a limit</h2>")
    for c in shown:
        svg = waveforms(review, c.path)
        if svg:
            parts.append(f"<figure class=\"waveform\" id=\"wave-{_e(c.path)}\"><figcaption><b>{_e(c.path)}</b> "
                         f"({_e(c.status)}, worst scenario {_e(c.worst_scenario)})</figcaption>{svg}</figure>")
    parts.append(f"<p class=\"muted\">derate {_e(rec['tool']['version'])}, ngspice {_e(rec['ngspice'] or '?')}, "
                 f"generated {_e(rec['generated_utc'])}.</p></body></html>")
    return "\n".join(parts) + "\n"
