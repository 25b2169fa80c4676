"""Findings about the data itself, whole: rule, severity, status, place, message and details."""

from __future__ import annotations

from pathlib import Path

import pytest

from derate.checks import data
from derate.netlist import flatten, read_netlist
from derate.netlist.topology import MainsLine
from derate.parts import Part
from derate.policy import Policy, Sourced


def _cap(tmp_path: Path, card: str = "C7 a 0 10u"):
    path = tmp_path / "b.cir"
    path.write_text(f"t\nV1 a 0 5\n{card}\n.end\n")
    (cap,) = flatten(read_netlist(path)).capacitors()
    return cap, str(path)


POLICY = Policy("team", unrated_severity="warning", technologies={
    "spaceflightish": {}, "aluminum-electrolytic": {"allowed": Sourced(False, "team rule 4")}})


def test_no_part(tmp_path):
    cap, path = _cap(tmp_path)
    f = data.no_part(cap, POLICY)
    assert (f.rule, f.severity, f.status, f.subject, f.file, f.line) == ("data.unrated", "warning", "unrated", "C7",
                                                                        path, 3)
    assert f.message.startswith("C7 has no part data: every check needs at least technology and rated_voltage_v")
    assert f.details == {"check": "all", "missing": {"all": ["technology", "rated_voltage_v"]}}


def test_missing_data_required_and_optional(tmp_path):
    cap, path = _cap(tmp_path)
    req, opt = data.missing_data(cap, POLICY, {"ripple": ["ripple_current_a"], "life": ["base_life_h", "x"]},
                                 {"hotspot": ["esr_ohm"]})
    assert (req.rule, req.severity, req.status, req.line) == ("data.unrated", "warning", "unrated", 3)
    assert req.message == "C7 cannot be judged on ripple, life: ripple needs ripple_current_a; life needs base_life_h, x"
    assert req.details == {"check": "required", "missing": {"ripple": ["ripple_current_a"], "life": ["base_life_h", "x"]}}
    assert (opt.rule, opt.severity, opt.status, opt.file) == ("data.not-checked", "info", None, path)
    assert opt.message == "C7: not checked (hotspot; optional under policy 'team'): hotspot needs esr_ohm"
    assert opt.details == {"check": "optional", "missing": {"hotspot": ["esr_ohm"]}}
    assert data.missing_data(cap, POLICY, {}, {}) == []
    assert [f.rule for f in data.missing_data(cap, POLICY, {}, {"x": ["y"]})] == ["data.not-checked"]


def test_part_findings_technology_and_value(tmp_path):
    cap, _ = _cap(tmp_path, "C7 a 0 10u m=2")
    wrong = Part(technology="aluminum-electrolytic", capacitance_f=22e-6)
    tech, value = data.part_findings(cap, wrong, POLICY)
    assert (tech.rule, tech.severity, tech.status) == ("data.technology", "error", "fail")
    assert tech.message == "C7 is aluminum-electrolytic, which the policy 'team' does not allow (team rule 4)"
    assert tech.details == {"check": "data.technology"} and tech.line == 3
    # the netlist's 10 uF with m=2 is two 10 uF parts; a 22 uF part differs by more than 1 % (no tolerance given)
    assert (value.rule, value.severity, value.status, value.unit) == ("data.value", "warning", "near", "F")
    assert value.measured == pytest.approx(10e-6) and value.limit == 22e-6
    assert value.message == "C7: the netlist says 10 µF per part (m=2) but the part is 22 µF (tolerance 1 %)"
    assert value.details == {"check": "data.value"}
    ok = Part(technology="ceramic-class2", capacitance_f=10.05e-6)  # within 1 %
    assert data.part_findings(cap, ok, POLICY) == []
    wide = Part(technology="ceramic-class2", capacitance_f=11e-6, tolerance_pct=20.0)
    assert data.part_findings(cap, wide, POLICY) == []
    loose = Part(technology="ceramic-class2", capacitance_f=30e-6, tolerance_pct=60.0)
    assert data.part_findings(cap, loose, POLICY)[0].message.endswith("(tolerance 60 %)")
    edge = Part(technology="ceramic-class2", capacitance_f=12.1e-6, tolerance_pct=20.0)
    assert "tolerance 20 %" in data.part_findings(cap, edge, POLICY)[0].message
    single, _ = _cap(tmp_path, "C7 a 0 10u")
    assert data.part_findings(single, Part(capacitance_f=22e-6), POLICY)[0].message == \
        "C7: the netlist says 10 µF but the part is 22 µF (tolerance 1 %)"
    assert data.part_findings(single, Part(technology="aluminum-electrolytic"), Policy("p")) == []


def test_unverified_limits_refused_only_when_the_policy_says_so(tmp_path):
    cap, _ = _cap(tmp_path)
    sources = {"voltage_factor": {"source": "a standard, from memory", "status": "unverified"},
               "category_voltage": {"source": "a datasheet", "status": "verified"}, "odd": "text"}
    strict = Policy("strict", refuse_unverified=Sourced(True, "our sign-off rule"))
    f = data.unverified_limit(cap, strict, "stress.voltage", sources)
    assert (f.rule, f.severity, f.status) == ("policy.unverified-limit", "error", "fail")
    assert f.message == ("C7: the stress.voltage limit rests on unverified values (voltage_factor: a standard, from "
                         "memory); policy 'strict' refuses them")
    assert f.details == {"check": "policy.unverified-limit", "values": ["voltage_factor"]} and f.subject == "C7"
    assert data.unverified_limit(cap, Policy("lax"), "stress.voltage", sources) is None
    assert data.unverified_limit(cap, strict, "stress.voltage", {"k": {"status": "verified", "source": "s"}}) is None


def test_no_result_and_safety_class(tmp_path):
    cap, path = _cap(tmp_path)
    f = data.no_result(cap, ["hot", "cold"])
    assert (f.rule, f.severity, f.status, f.file) == ("measure.no-result", "error", "unrated", path)
    assert f.message == "C7 has no simulation result for scenario(s) hot, cold: its stress there is unknown"
    assert f.details == {"check": "measure.no-result", "scenarios": ["hot", "cold"]}
    line = MainsLine(type("E", (), {"path": "VAC"})(), 230.0, 50.0)
    s = data.safety_class(cap, Part(technology="film-polypropylene"), line)
    assert (s.rule, s.severity, s.status, s.line) == ("data.safety-class", "error", "fail", 3)
    assert s.message.startswith("C7 is across the mains line of VAC (230 V RMS, 50 Hz) but its part has no safety class")
    assert s.details == {"check": "data.safety-class", "line": "VAC", "v_rms": 230.0}
    assert data.safety_class(cap, Part(safety_class="X2"), line) is None
