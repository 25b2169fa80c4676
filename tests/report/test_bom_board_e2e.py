"""End to end: a board with a netlist and a BOM export only (no YAML written by hand) is judged
(real ngspice): every capacitor the BOM gives a rating and a technology gets a voltage judgement,
typical data is marked, and every capacitor shows its measured stress."""

from __future__ import annotations

import json
import shutil

from derate.cli import main
from tests.conftest import DATA


def test_netlist_and_bom_only(tmp_path, capsys):
    folder = tmp_path / "greenhouse-buck"
    shutil.copytree(DATA / "boards" / "greenhouse-buck", folder)
    code = main(["check", "--no-color", str(folder / "buck.cir"), "--bom", str(folder / "bom.csv"),
                 "--format", "json", "--output", str(folder / "r.json")])
    rec = json.loads((folder / "r.json").read_text())
    rows = {r["reference"]: r for r in rec["capacitors"]}
    assert set(rows) == {"C1", "C2", "C3", "C4", "C5", "C6", "C7"}
    judged = {f["subject"] for f in rec["findings"] if f["rule"] == "stress.voltage"}
    assert judged == set(rows)  # every capacitor has a rating and a technology in the BOM
    for ref, row in rows.items():
        assert row["measured"]["v_peak_v"] > 0 and row["measured"]["i_rms_a"] is not None, ref
    assert "dc_bias" in rows["C3"]["typical"]  # a 22 µF 16 V X5R 1206 judged on a typical DC-bias curve
    assert rows["C5"]["status"] == "unrated" and code == 1  # the electrolytic still needs its ripple rating
    (c5,) = [f for f in rec["findings"] if f["subject"] == "C5" and f["rule"] == "data.unrated"]
    assert "ripple needs ripple_current_a" in c5["message"] and "life needs mission.life_h" in c5["message"]
    capsys.readouterr()


def test_init_writes_a_project_that_runs(tmp_path, capsys):
    folder = tmp_path / "greenhouse-buck"
    shutil.copytree(DATA / "boards" / "greenhouse-buck", folder)
    assert main(["init", str(folder / "buck.cir"), "--bom", str(folder / "bom.csv")]) == 0
    capsys.readouterr()
    project = (folder / "derate.yaml").read_text()
    assert "bom: {file: bom.csv}" in project and "step 100n, stop 12m, maximum step 100n" in project
    parts = (folder / "parts.yaml").read_text()
    assert "C5: {}" in parts and "ripple: ripple_current_a" in parts and "C1:" not in parts
    (folder / "parts.yaml").write_text(parts.replace("C5: {}", "C5: {ripple_current_a: 1.2}"))
    (folder / "derate.yaml").write_text(project.replace("# mission: {life_h: HOURS}", "mission: {life_h: 40000}"))
    code = main(["check", "--no-color", str(folder / "derate.yaml"), "--format", "json"])
    rec = json.loads(capsys.readouterr().out)
    assert code in (0, 1) and rec["summary"]["unrated"] == 0
