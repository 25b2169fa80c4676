"""The rule engine on hand-made Stress records: worst scenario kept, unrated never a pass."""

from __future__ import annotations

import pytest

from derate.assess import assess
from derate.netlist import load_circuit
from derate.parts import Part
from derate.policy import load_policy
from derate.project import Scenario
from tests.checks.helpers import stress

NET = "t\nV1 a 0 12\nR1 a b 1\nC1 b 0 470u\nC2 b 0 10u\nC3 b 0 1u\n.end\n"
ALU = Part(technology="aluminum-electrolytic", rated_voltage_v=16.0, rated_temperature_c=105.0, ripple_current_a=1.0,
           esr_ohm=0.1, thermal_resistance_c_per_w=20.0, base_life_h=2000.0, capacitance_f=470e-6, tolerance_pct=20)


@pytest.fixture
def circuit(write):
    return load_circuit(write("b.cir", NET))


def test_worst_scenario_and_unrated(circuit):
    scenarios = [Scenario("cold", ambient_c=-20), Scenario("hot", ambient_c=70)]
    stresses = {
        "cold": [stress(capacitor="C1", v_max_v=11.0, v_peak_abs_v=11.0), stress(capacitor="C2"), stress(capacitor="C3")],
        "hot": [stress(capacitor="C1", v_max_v=13.5, v_peak_abs_v=13.5), stress(capacitor="C2"), stress(capacitor="C3")],
    }
    parts = {"C1": ALU, "C2": Part(technology="ceramic-class2", capacitance_f=10e-6), "C3": None}
    ev = assess(stresses, scenarios, circuit, parts, load_policy("industrial"), mission_life_h=20000)
    by = {c.path: c for c in ev.capacitors}
    v = by["C1"].finding("stress.voltage")
    assert v.scenario == "hot" and v.status == "fail" and v.ratio == pytest.approx(13.5 / (0.8 * 16))
    assert v.details["scenarios"]["cold"] == pytest.approx(11.0 / 12.8)
    assert v.line == 4 and v.file.endswith("b.cir")
    # C2 has a record but no ratings: one unrated finding naming the fields per check, never a pass
    missing = [f for f in by["C2"].findings if f.status == "unrated"]
    assert len(missing) == 1 and by["C2"].status == "unrated"
    assert missing[0].details["missing"]["voltage"] == ["rated_voltage_v"]
    assert "voltage needs rated_voltage_v" in missing[0].message
    assert all(f.severity == "error" for f in missing)  # industrial: unrated fails
    # C3 has no record at all
    assert by["C3"].status == "unrated" and by["C3"].findings[0].rule == "data.unrated"
    assert ev.counts() == {"pass": 0, "near": 0, "fail": 1, "unrated": 2, "not-settled": 0}


def test_commercial_unrated_is_a_warning(circuit):
    ev = assess({"s": [stress(capacitor="C1")]}, [Scenario("s")], circuit, {}, load_policy("commercial"))
    assert {f.severity for f in ev.findings} == {"warning"}


def test_technology_not_allowed_and_value_mismatch(circuit):
    parts = {"C1": ALU, "C2": Part(technology="ceramic-class2", capacitance_f=4.7e-6, tolerance_pct=10), "C3": None}
    ev = assess({"s": [stress(capacitor="C1"), stress(capacitor="C2")]}, [Scenario("s")], circuit, parts,
                  load_policy("spaceflight"), mission_life_h=1000)
    rules = {(f.subject, f.rule) for f in ev.findings if f.status != "pass"}
    assert ("C1", "data.technology") in rules
    assert ("C2", "data.value") in rules


def test_not_steady_is_reported(circuit):
    s = stress(capacitor="C1", steady_state=False, drift_ratio=0.08, notes=("not in steady state: ...",))
    ev = assess({"s": [s]}, [Scenario("s")], circuit, {"C1": ALU}, load_policy("industrial"), 1000)
    f = next(f for f in ev.findings if f.rule == "measure.steady-state")
    # not settled is never a pass: it gates like a failed run, and the capacitor's status says so
    assert f.severity == "error" and f.subject == "C1" and f.status == "not-settled"
    (c1,) = [c for c in ev.capacitors if c.path == "C1"]
    assert c1.status == "not-settled"
    # the checks judged on the unsettled run say what they saw, and do not pass
    voltage = c1.finding("stress.voltage")
    assert voltage.status == "not-settled" and voltage.severity == "info" and voltage.ratio is not None


def test_parallel_multiplicity_is_judged_per_part(write):
    """C1 with m=2 is two 470 uF parts: each carries half the measured 1.6 A of ripple (0.8 A against a
    1.0 A rating at 120 Hz: ripple ratio 0.8 / (1.0 x 0.8 industrial factor) = 1.0 rather than 2.0), and
    the value check compares one part's 470 uF, not the netlist's 940 uF."""
    circuit = load_circuit(write("m.cir", "t\nV1 a 0 12\nR1 a b 1\nC1 b 0 470u m=2\n.end\n"))
    (el,) = circuit.capacitors()
    assert el.value == pytest.approx(940e-6) and el.multiplicity == 2
    s = stress(i_rms_a=1.6, i_ac_rms_a=1.6, bands=((120.0, 1.6),))
    ev = assess({"s": [s]}, [Scenario("s", ambient_c=25)], circuit, {"C1": ALU}, load_policy("industrial"), 1000)
    (summary,) = ev.capacitors
    ripple = summary.finding("stress.ripple")
    assert ripple.measured == pytest.approx(0.8) and ripple.ratio == pytest.approx(1.0)
    assert summary.finding("data.value") is None  # 470 uF per part: as the part says


def test_life_over_a_mission_profile_by_miners_rule(circuit):
    """Hand calculation (the 10 degC rule, TDK electronics primer vol. 7; Miner's rule for the sum):
    a 105 degC / 2000 h part with a rated-rise of 0 at 65 degC lives 2000 x 2^4 = 32 000 h, at 85 degC
    8 000 h.  20 000 h required, 80 % of the time at 65 degC and 20 % at 85 degC: consumed
    = 0.8 x 20 000 / 32 000 + 0.2 x 20 000 / 8 000 = 0.5 + 0.5 = 1.0 (at the limit); 35 % of the life
    is consumed... no: each corner consumes half.  The profile's life is 20 000 h."""
    part = Part(technology="aluminum-electrolytic", rated_voltage_v=16.0, rated_temperature_c=105.0,
                ripple_current_a=10.0, ripple_rise_c=1e-9, base_life_h=2000.0, capacitance_f=470e-6, tolerance_pct=20)
    stresses = {"mild": [stress(capacitor="C1")], "hot": [stress(capacitor="C1")]}
    scenarios = [Scenario("mild", ambient_c=65), Scenario("hot", ambient_c=85)]
    policy = load_policy("commercial")  # life_factor 1.0
    ev = assess(stresses, scenarios, circuit, {"C1": part}, policy, 20000, 1.0, profile={"mild": 0.8, "hot": 0.2})
    f = ev.capacitors[0].finding("stress.life")
    assert f.ratio == pytest.approx(1.0, rel=1e-6) and f.measured == pytest.approx(20000, rel=1e-6)
    assert f.scenario == "mission profile"
    shares = f.details["profile"]
    assert shares["mild"]["life_h"] == pytest.approx(32000) and shares["hot"]["life_h"] == pytest.approx(8000)
    assert shares["mild"]["share_of_consumed_life"] == pytest.approx(0.5)
    # without a profile each corner is judged as if the whole life were spent in it: the hot one decides
    ev = assess(stresses, scenarios, circuit, {"C1": part}, policy, 20000, 1.0)
    assert ev.capacitors[0].finding("stress.life").ratio == pytest.approx(20000 / 8000)
