"""The gate on hand-made findings: levels, waivers (expiry, scenario, globs), baselines, exit codes."""

from __future__ import annotations

import datetime as dt

import pytest

from derate import exitcodes
from derate.errors import DataError
from derate.findings import Finding
from derate.gate import Baseline, Waiver, decide, decided_findings

TODAY = dt.date(2026, 12, 2)


def f(rule="stress.voltage", severity="error", subject="C1", scenario="hot", ratio=1.2):
    return Finding(rule, severity, "msg", subject=subject, scenario=scenario, ratio=ratio)


def waiver(reference="C1", rule="stress.voltage", expires=dt.date(2027, 1, 1), scenario=None):
    return Waiver(reference, rule, "accepted in review 12", "A. Okafor", expires, scenario, "waivers.yaml:3")


def test_levels():
    assert decide([f(severity="warning")], today=TODAY).exit_code == exitcodes.PASS
    assert decide([f(severity="warning")], "warning", today=TODAY).exit_code == exitcodes.FINDINGS
    assert decide([f(severity="info")], "warning", today=TODAY).exit_code == exitcodes.PASS
    assert decide([f()], today=TODAY, simulation_failed=True).exit_code == exitcodes.SIMULATION
    with pytest.raises(DataError):
        decide([], "sometimes")


def test_waivers_match_by_glob_rule_and_scenario_and_expire():
    v = decide([f(subject="X2.C5")], waivers=[waiver("X*.C5")], today=TODAY)
    assert v.passed and v.items[0].waived_by is not None
    assert decide([f()], waivers=[waiver(rule="*")], today=TODAY).passed
    assert not decide([f()], waivers=[waiver(scenario="cold")], today=TODAY).passed
    expired = decide([f()], waivers=[waiver(expires=dt.date(2026, 12, 1))], today=TODAY)
    assert not expired.passed and "expired on 2026-12-01" in expired.notes[0]
    unused = decide([], waivers=[waiver()], today=TODAY)
    assert unused.passed and "matches no finding" in unused.notes[0]
    recorded = decided_findings(decide([f()], waivers=[waiver()], today=TODAY))[0]
    assert recorded.details["waived"]["owner"] == "A. Okafor" and recorded.details["gates"] is False


def test_baseline_fails_only_on_new_or_worse(tmp_path):
    path = tmp_path / "main.json"
    path.write_text('{"findings": [{"subject": "C1", "rule": "stress.voltage", "severity": "error", "ratio": 1.2},'
                    ' {"subject": "C2", "rule": "stress.ripple", "severity": "warning", "ratio": 0.95}]}')
    base = Baseline.load(path)
    assert decide([f(ratio=1.2)], baseline=base, today=TODAY).passed  # known
    assert not decide([f(ratio=1.3)], baseline=base, today=TODAY).passed  # worse ratio
    assert not decide([f(subject="C2", rule="stress.ripple", severity="error", ratio=0.9)], baseline=base,
                      today=TODAY).passed  # worse severity
    assert not decide([f(subject="C3")], baseline=base, today=TODAY).passed  # new
