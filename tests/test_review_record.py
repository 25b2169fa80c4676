"""The review record and the hazard rule on hand-made records (no simulation)."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import jsonschema
import pytest

from derate.assess import assess
from derate.datafile import schema
from derate.gate import decide, decided_findings
from derate.hazard import CAUTION, caution_for
from derate.measure import Stress
from derate.netlist import load_circuit
from derate.parts import Part
from derate.policy import load_policy
from derate.project import Scenario, project_for_netlist
from derate.review import Review
from derate.simulate.results import ScenarioResult, SimulationRun
from derate.status import Status


def stress(cap, v_peak=5.0, **kw):
    base = dict(capacitor=cap, spice_name=cap.lower(), scenario="s", v_max_v=v_peak, v_min_v=0.0,
                v_peak_abs_v=v_peak, startup_v_peak_v=v_peak)
    base.update(kw)
    return Stress(**base)


@pytest.fixture
def review(tmp_path: Path) -> Review:
    net = tmp_path / "b.cir"
    net.write_text("b\nV1 a 0 5\nR1 a b 1\nC1 b 0 1u\nC2 b 0 10u\nC3 b 0 1n\n.tran 1u 1m\n.end\n")
    circuit = load_circuit(net)
    sc = Scenario("s", ambient_c=40.0)
    stresses = [stress("C1", 5.0), stress("C2", 9.0), stress("C3", 5.0)]
    full = dict(technology="ceramic-class1", rated_temperature_c=125.0, ripple_current_a=1.0, ripple_rise_c=10.0)
    parts = {"C1": Part(rated_voltage_v=16.0, **full), "C2": Part(rated_voltage_v=10.0, **full), "C3": None}
    policy = load_policy("industrial")
    assessment = assess({"s": stresses}, [sc], circuit, parts, policy)
    verdict = decide(list(assessment.findings))
    run = SimulationRun((ScenarioResult(sc, True, tuple(stresses)),), "39")
    return Review(project_for_netlist(net), circuit, run, assessment, verdict, tuple(decided_findings(verdict)), (),
                  policy, None, dt.datetime(2026, 12, 2, tzinfo=dt.timezone.utc))


def test_record_rows_and_summary(review):
    rec = review.record
    jsonschema.validate(rec, schema("report"))
    rows = {r["reference"]: r for r in rec["capacitors"]}
    assert rows["C1"]["status"] == "pass" and rows["C1"]["v_stress_pct"] == pytest.approx(100 * 5 / 16)
    assert rows["C2"]["status"] == "fail" and rows["C2"]["v_peak_v"] == 9.0
    assert rows["C3"]["status"] == "unrated" and rows["C3"]["findings"] == ["data.unrated"]
    s = rec["summary"]
    assert (s["pass"], s["near"], s["fail"], s["unrated"]) == (1, 0, 1, 1)
    assert s["verdict"] == "fail" and s["exit_code"] == 1
    assert rec["generated_utc"] == "2026-12-02T00:00:00Z"
    assert review.record is rec  # built once
    assert review.assessment.counts()[Status.FAIL] == 1


def test_hazard_caution_by_voltage_energy_or_declaration():
    low = [stress("C1", 12.0)]
    assert caution_for(low, {"C1": 100e-6}, None) is None
    assert caution_for([stress("C1", 61.0)], {"C1": 1e-9}, None) == CAUTION  # above 60 V (SELV, from memory)
    assert caution_for([stress("C1", 50.0)], {"C1": 1e-3}, None) == CAUTION  # 0.5 C V^2 = 1.25 J
    assert caution_for(low, {"C1": 100e-6}, True) == CAUTION
    assert caution_for([stress("C1", 400.0)], {"C1": 1e-6}, False) is None  # the project says no
