"""Machine-readable reports built from the review record: JSON, CSV, Markdown, SARIF, JUnit XML."""

from __future__ import annotations

import csv
import io
import json
import xml.etree.ElementTree as ET
from typing import Any

from .. import __version__
from ..registry import all_rules
from ..review import Review, as_record, gate_tags
from ..units import format_number

SEVERITY_TO_SARIF = {"error": "error", "warning": "warning", "info": "note"}
STATUS_WORD = {"pass": "pass", "near": "near limit", "fail": "FAIL", "unrated": "unrated"}


def to_json(review: Review) -> str:
    return json.dumps(as_record(review), indent=2, allow_nan=False, default=_json_default) + "\n"


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
        w.writerow(["" if row[c] is None else (" ".join(row[c]) if c == "findings" else row[c]) for c in CSV_COLUMNS])
    return buf.getvalue()


def _cell(x, unit="", digits=3):
    return "—" if x is None else format_number(x, unit, digits)


def _pct(x):
    return "—" if x is None else f"{x:.0f} %"


def to_markdown(review: Review) -> str:
    """A summary that fits a pull-request comment."""
    rec = as_record(review)
    s = rec["summary"]
    out = [f"## derate: {rec['project']['title']}", ""]
    verdict = "passes" if s["verdict"] == "pass" else "does not pass"
    out.append(f"Policy **{rec['project']['policy']['name']}**; the design **{verdict}** "
               f"(exit {s['exit_code']}): {s['capacitors']} capacitors — {s['pass']} pass, {s['near']} near the limit, "
               f"{s['fail']} fail, {s['unrated']} unrated.")
    if rec["caution"]:
        out += ["", f"> **{rec['caution']}**"]
    out += ["", "| capacitor | part | technology | worst scenario | V peak / V rated | V stress (limit) | "
                "ripple eq / allowed | hot spot | life | status |",
            "|---|---|---|---|---|---|---|---|---|---|"]
    for r in rec["capacitors"]:
        out.append("| " + " | ".join([
            f"`{r['reference']}`", r["part_number"] or "—", r["technology"] or "—", r["worst_scenario"] or "—",
            f"{_cell(r['v_peak_v'], 'V')} / {_cell(r['v_rated_v'], 'V')}",
            f"{_pct(r['v_stress_pct'])} ({_pct(r['v_limit_pct'])})",
            f"{_cell(r['ripple_equivalent_a'], 'A')} / {_cell(r['ripple_allowed_a'], 'A')}",
            "—" if r["hotspot_c"] is None else f"{r['hotspot_c']:.1f} °C",
            "—" if r["life_h"] is None else f"{r['life_h']:,.0f} h",
            f"**{STATUS_WORD[r['status']]}**" if r["status"] in ("fail", "unrated") else STATUS_WORD[r["status"]],
        ]) + " |")
    problems = [f for f in rec["findings"] if f["severity"] != "info"]
    if problems:
        out += ["", "### Findings", ""]
        for f in problems:
            flags = gate_tags(f)
            where = f"{f['file']}:{f['line']}" if f["file"] else ""
            sc = f" [{f['scenario']}]" if f["scenario"] else ""
            out.append(f"- **{f['severity']}** `{f['rule']}` {where}{sc}: {f['message']}"
                       + (f" _({'; '.join(flags)})_" if flags else ""))
    for note in s["notes"]:
        out.append(f"- note: {note}")
    failed = [sc for sc in rec["scenarios"] if not sc["ok"]]
    for sc in failed:
        out.append(f"- **simulation failed** in scenario `{sc['name']}`: {sc['error']}")
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
                           **({"provenance": f["details"]["sources"]} if f["details"].get("sources") else {})},
        }
        if res["ruleIndex"] < 0:
            del res["ruleIndex"]
        if f["file"]:
            res["locations"] = [{"physicalLocation": {
                "artifactLocation": {"uri": f["file"], "uriBaseId": "PROJECTROOT"},
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
            "originalUriBaseIds": {"PROJECTROOT": {"description": {"text": "the folder of the project file"}}},
            "results": results,
            "invocations": [{"executionSuccessful": all(s["ok"] for s in rec["scenarios"]),
                             "exitCode": rec["summary"]["exit_code"]}],
        }],
    }
    return json.dumps(doc, indent=2) + "\n"


def to_junit(review: Review) -> str:
    """JUnit XML: one test case per capacitor and check; gating findings are failures."""
    rec = as_record(review)
    root = ET.Element("testsuites", name="derate")
    suite = ET.SubElement(root, "testsuite", name=f"derating ({rec['project']['policy']['name']})")
    tests = failures = skipped = 0
    for f in rec["findings"]:
        tests += 1
        case = ET.SubElement(suite, "testcase", classname=f"{rec['project']['netlist'] or 'netlist'}.{f['subject']}",
                             name=f"{f['subject']} {f['details'].get('check', f['rule'])}")
        if f["details"].get("gates"):
            failures += 1
            fail = ET.SubElement(case, "failure", message=f["message"], type=f["rule"])
            fail.text = f"{f['file']}:{f['line']} scenario {f['scenario']}: {f['message']}"
        elif f["status"] == "unrated":
            skipped += 1
            ET.SubElement(case, "skipped", message=f["message"])
        elif f["severity"] != "info":
            out = ET.SubElement(case, "system-out")
            out.text = f["message"] + (" (waived)" if f["details"].get("waived") else "")
    for sc in rec["scenarios"]:
        if not sc["ok"]:
            tests += 1
            failures += 1
            case = ET.SubElement(suite, "testcase", classname="simulation", name=f"scenario {sc['name']}")
            ET.SubElement(case, "failure", message=sc["error"] or "simulation failed", type="simulation")
    for k, v in (("tests", tests), ("failures", failures), ("errors", 0), ("skipped", skipped)):
        suite.set(k, str(v))
    root.set("tests", str(tests))
    root.set("failures", str(failures))
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"
