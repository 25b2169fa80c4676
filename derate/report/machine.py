"""Machine-readable reports built from the review record: JSON, CSV, Markdown, SARIF, JUnit XML."""

from __future__ import annotations

import csv
import io
import json
import xml.etree.ElementTree as ET
from typing import Any

from .. import __version__
from ..registry import all_rules
from ..review import Review, as_record, counts_words, gate_tags, not_reviewed_words, problems_of, worst_first
from ..units import format_number
from . import safe
from .words import row_status_word

SEVERITY_TO_SARIF = {"error": "error", "warning": "warning", "info": "note"}


def to_json(review: Review) -> str:
    return safe.json_document(json.dumps(as_record(review), indent=2, allow_nan=False, default=_json_default)) + "\n"


def _json_default(o: Any):
    if isinstance(o, (set, tuple)):
        return list(o)
    if hasattr(o, "item"):
        return o.item()
    raise TypeError(f"cannot write {type(o).__name__} to JSON")


CSV_COLUMNS = ["reference", "part_number", "technology", "status", "worst_scenario", "v_peak_v", "v_rated_v",
               "v_stress_pct", "v_limit_pct", "ripple_equivalent_a", "ripple_allowed_a", "hotspot_c", "life_h",
               "file", "line", "findings"]


def to_csv(review: Review) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for row in as_record(review)["capacitors"]:
        w.writerow(["" if row[c] is None else safe.csv_cell(" ".join(row[c]) if c == "findings" else row[c])
                    for c in CSV_COLUMNS])
    return buf.getvalue()


def _cell(x, unit="", digits=3):
    return "—" if x is None else format_number(x, unit, digits)


def _pct(x):
    return "—" if x is None else f"{x:.0f} %"


def _md(text) -> str:
    """Text from files made inert in Markdown (report/safe.py: no link, mention, HTML or table break)."""
    return safe.markdown(text)


def _md_row(r: dict, spread: bool = False) -> str:
    from .terminal import against, over_text, ratio_text, spread_text, why
    status = row_status_word(r)
    return "| " + " | ".join([
        safe.code_span(r["reference"]), f"**{status}**" if r["status"] in ("fail", "unrated", "not-settled") else status,
        _md(why(r)), _md(against(r)), ratio_text(r)] + ([spread_text(r), over_text(r)] if spread else [])
        + [_md(r["part_number"] or "—") + (" †" if r["typical"] else "")]) + " |"


def _report_order(item: tuple[str, int, str]) -> int:
    """Worst first, as the Markdown and HTML summaries read: fail, not settled, unrated, near, pass."""
    return ("fail", "not-settled", "unrated", "near", "pass").index(item[0])


def to_markdown(review: Review) -> str:
    """A pull-request comment: the verdict and what needs attention first, everything else folded away."""
    rec = as_record(review)
    s = rec["summary"]
    failed = s["verdict"] != "pass"
    out = [f"## derate: {'fail' if failed else 'pass'} — {_md(rec['project']['title'])}", ""]
    out.append(f"Policy **{_md(rec['project']['policy']['name'])}**, exit {s['exit_code']}: {s['capacitors']} capacitors — "
               + ", ".join(f"{n} {words}" for _, n, words in sorted(counts_words(s), key=_report_order))
               + (f", {s['not_reviewed']} not reviewed" if s.get("not_reviewed") else "") + ".")
    if rec.get("not_reviewed"):
        out.append(f"Not reviewed: {_md(not_reviewed_words(rec))}.")
    if review.project.report_url:
        out.append(f"Full report with waveforms: [{_md(review.project.report_url)}]({review.project.report_url.replace(')', '%29')})")
    if rec["caution"]:
        out += ["", f"> **{_md(rec['caution'])}**"]
    from .terminal import sampled
    rows = worst_first(rec["capacitors"])
    spread = sampled(rows)  # Monte Carlo: percentiles of the ratio over the samples, the share over the limit
    head = (["| capacitor | status | why | value / limit | ratio | p50/p95/max | over | part |", "|---|---|---|---|---|---|---|---|"]
            if spread else ["| capacitor | status | why | value / limit | ratio | part |", "|---|---|---|---|---|---|"])
    attention = [r for r in rows if r["status"] != "pass"]
    if attention:
        out += ["", "### Needs attention", ""] + head + [_md_row(r, spread) for r in attention]
    gating = [f for f in rec["findings"] if f["details"].get("gates")]
    if gating:
        out += ["", "### Findings that fail the gate", ""]
        for f in gating:
            where = f"{f['file']}:{f['line']}" if f["file"] else ""
            sc = f" [{_md(f['scenario'])}]" if f["scenario"] else ""
            out.append(f"- **{f['severity']}** `{f['rule']}` {_md(where)}{sc}: {_md(f['message'])}")
    for sc in rec["scenarios"]:
        if not sc["ok"]:
            out.append(f"- **simulation failed** in scenario {safe.code_span(sc['name'])}: {_md(sc['error'])}")
    out += ["", f"<details><summary>All {len(rows)} capacitors, worst first</summary>", ""] + head
    out += [_md_row(r, spread) for r in rows] + ["", "</details>"]
    others = [f for f in problems_of(rec) if not f["details"].get("gates")]
    notes = s["notes"] + rec.get("data_notes", []) + rec.get("analysis_notes", [])
    if others or notes:
        out += ["", "<details><summary>Other findings and notes</summary>", ""]
        for f in others:
            tags = gate_tags(f)
            out.append(f"- {f['severity']} `{f['rule']}` {_md(f['subject'] or '')}: {_md(f['message'])}"
                       + (f" _({_md('; '.join(tags))})_" if tags else ""))
        out += [f"- note: {_md(n)}" for n in notes] + ["", "</details>"]
    if any(r["typical"] for r in rows):
        out += ["", "† judged partly on derate's typical part data."]
    return "\n".join(out) + "\n"


def _rules() -> list[dict[str, Any]]:
    rules = []
    for info in all_rules():
        if info.kind == "lint":
            rules.append({"id": info.id, "name": info.id.replace(".", "-"), "shortDescription": {"text": info.title},
                          "defaultConfiguration": {"level": SEVERITY_TO_SARIF[info.severity]}})
            continue
        rules.append({"id": info.id, "name": info.id.replace(".", "-"), "shortDescription": {"text": info.title},
                      "fullDescription": {"text": info.formula},
                      "help": {"text": (info.doc or info.title).strip() + "\nSources: " + "; ".join(info.sources)},
                      "properties": {"sources": list(info.sources)}})
    return rules


def to_sarif(review: Review) -> str:
    """SARIF 2.1.0: each finding at the capacitor's netlist file and line."""
    rec = as_record(review)
    rules = _rules()
    index = {r["id"]: i for i, r in enumerate(rules)}
    results = []
    for f in rec["findings"] + rec["lint"]:
        if f["severity"] == "info":
            continue
        res: dict[str, Any] = {
            "ruleId": f["rule"], "ruleIndex": index.get(f["rule"], -1), "level": SEVERITY_TO_SARIF[f["severity"]],
            "message": {"text": f["message"] + (f" (scenario {f['scenario']})" if f["scenario"] else "")},
            "properties": {**{k: f[k] for k in ("subject", "scenario", "measured", "limit", "unit", "ratio", "status")},
                           **({"provenance": f["details"]["sources"]} if f["details"].get("sources") else {}),
                           **({"distribution": {k: v for k, v in f["details"]["distribution"].items()
                                                if k not in ("ratios", "names")}}
                              if f["details"].get("distribution") else {})},
        }
        if res["ruleIndex"] < 0:
            del res["ruleIndex"]
        if f["file"]:
            res["locations"] = [{"physicalLocation": {
                "artifactLocation": {"uri": review.repo_relpath(f["file"]), "uriBaseId": "REPOROOT"},
                "region": {"startLine": f["line"] or 1}}}]
        if f["details"].get("waived"):
            w = f["details"]["waived"]
            res["suppressions"] = [{"kind": "external", "status": "accepted",
                                    "justification": f"{w['reason']} (owner {w['owner']}, expires {w['expires']})"}]
        if f["details"].get("baseline"):
            res["baselineState"] = {"new": "new", "worse": "updated", "known": "unchanged"}[f["details"]["baseline"]]
        results.append(res)
    doc = {
        "$schema": "https://json.schemastore.org/sarif-2.1.0.json",
        "version": "2.1.0",
        "runs": [{
            "tool": {"driver": {"name": "derate", "version": __version__, "informationUri": "https://derate.invalid/",
                                "rules": rules}},
            # code-scanning views resolve locations from the repository root: the URIs are relative to it
            "originalUriBaseIds": {"REPOROOT": {"uri": review.repo_root.as_uri() + "/", "description": {
                "text": "the repository holding the project (its git top level), else the project's folder"}}},
            "results": results,
            "invocations": [{"executionSuccessful": all(s["ok"] for s in rec["scenarios"]),
                             "exitCode": rec["summary"]["exit_code"]}],
        }],
    }
    return safe.json_document(json.dumps(doc, indent=2)) + "\n"


def _gh_data(text: str) -> str:
    """A workflow command's message, escaped as GitHub's runner reads it (% CR LF), controls shown."""
    return safe.visible(str(text).replace("%", "%25").replace("\r", "%0D").replace("\n", "%0A"))


def _gh_property(text: str) -> str:
    """A workflow command's property value: the message escapes plus ':' and ','."""
    return _gh_data(text).replace(":", "%3A").replace(",", "%2C")


def to_github(review: Review) -> str:
    """GitHub Actions annotations, one workflow command per finding (``::error file=...,line=...::``),
    shown inline on the pull request without code scanning; paths relative to the repository root."""
    rec = as_record(review)
    level = {"error": "error", "warning": "warning", "info": "notice"}
    lines = []
    for f in rec["findings"] + rec["lint"]:
        if f["severity"] == "info" or f["details"].get("waived"):
            continue
        props = []
        if f["file"]:
            props.append(f"file={_gh_property(review.repo_relpath(f['file']))}")
            if f["line"]:
                props.append(f"line={int(f['line'])}")
        title = f"derate {f['rule']}" + (f" [{f['scenario']}]" if f["scenario"] else "")
        props.append(f"title={_gh_property(title)}")
        gate = "" if f["details"].get("gates", f["severity"] == "error") else " (does not gate)"
        lines.append(f"::{level[f['severity']]} {','.join(props)}::{_gh_data(f['message'] + gate)}")
    summary = rec["summary"]
    verdict = f"verdict {summary['verdict']} (exit {summary['exit_code']})"
    lines.append(f"::notice title=derate::{_gh_data(verdict)}")
    return "\n".join(lines) + "\n"


def to_junit(review: Review) -> str:
    """JUnit XML: one test case per capacitor and check; gating findings are failures."""
    rec = as_record(review)
    x = safe.xml_text  # every text from a file: characters XML 1.0 forbids shown as escapes
    root = ET.Element("testsuites", name="derate")
    suite = ET.SubElement(root, "testsuite", name=x(f"derating ({rec['project']['policy']['name']})"))
    tests = failures = skipped = 0
    for f in rec["findings"]:
        tests += 1
        case = ET.SubElement(suite, "testcase", classname=x(f"{rec['project']['netlist'] or 'netlist'}.{f['subject']}"),
                             name=x(f"{f['subject']} {f['details'].get('check', f['rule'])}"))
        if f["details"].get("gates"):
            failures += 1
            fail = ET.SubElement(case, "failure", message=x(f["message"]), type=f["rule"])
            fail.text = x(f"{f['file']}:{f['line']} scenario {f['scenario']}: {f['message']}")
        elif f["status"] == "unrated":
            skipped += 1
            ET.SubElement(case, "skipped", message=x(f["message"]))
        elif f["severity"] != "info":
            out = ET.SubElement(case, "system-out")
            out.text = x(f["message"]) + (" (waived)" if f["details"].get("waived") else "")
    for sc in rec["scenarios"]:
        if not sc["ok"]:
            tests += 1
            failures += 1
            case = ET.SubElement(suite, "testcase", classname="simulation", name=x(f"scenario {sc['name']}"))
            ET.SubElement(case, "failure", message=x(sc["error"] or "simulation failed"), type="simulation")
    for k, v in (("tests", tests), ("failures", failures), ("errors", 0), ("skipped", skipped)):
        suite.set(k, str(v))
    root.set("tests", str(tests))
    root.set("failures", str(failures))
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + safe.xml_document(ET.tostring(root, encoding="unicode")) + "\n"
