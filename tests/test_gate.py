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


# ---------------------------------------------------------------- every branch of the gate, pinned
def test_waiver_matching_in_detail():
    by_check = Finding("data.unrated", "error", "m", subject="C7", details={"check": "stress.ripple"})
    assert waiver("C7", "stress.ripple").matches(by_check)  # a waiver names the check an unrated finding is about
    assert waiver("c7", "stress.voltage").matches(f(subject="C7"))  # references in any case
    assert not waiver("C7", "stress.ripple").matches(f(subject="C7"))
    assert not waiver("C1").matches(Finding("stress.voltage", "error", "m", subject=None))
    assert waiver("C1", scenario="hot").matches(f()) and not waiver("C1", scenario="cold").matches(f())
    # the day a waiver expires it still waives; the day after it does not
    assert decide([f()], waivers=[waiver(expires=TODAY)], today=TODAY).passed
    late = decide([f()], waivers=[waiver(expires=TODAY - dt.timedelta(days=1))], today=TODAY)
    assert not late.passed and late.items[0].expired_waiver is not None and late.items[0].waived_by is None
    assert late.notes == (f"waiver for C1 stress.voltage (waivers.yaml:3) expired on "
                          f"{(TODAY - dt.timedelta(days=1)).isoformat()}: it no longer waives the finding",)
    # the first current waiver wins; an expired one before it does not stop it
    both = decide([f()], waivers=[waiver(expires=dt.date(2026, 1, 1)), waiver()], today=TODAY)
    assert both.passed and both.items[0].expired_waiver is None
    # a used waiver is not reported unused; an expired unused one is not reported as unused either
    quiet = decide([f()], waivers=[waiver(), waiver("C9", expires=dt.date(2020, 1, 1))], today=TODAY)
    assert quiet.notes == ()
    assert decide([], waivers=[waiver("C9")], today=TODAY).notes == (
        "waiver for C9 stress.voltage (waivers.yaml:3) matches no finding",)


def test_levels_gate_exactly_at_the_fail_level():
    v = decide([f(severity="error"), f(severity="warning", subject="C2"), f(severity="info", subject="C3")],
               "warning", today=TODAY)
    assert [g.gates for g in v.items] == [True, True, False] and len(v.gating) == 2 and not v.passed
    e = decide([f(severity="warning")], "error", today=TODAY)
    assert [g.gates for g in e.items] == [False] and e.passed and e.fail_on == "error"
    assert decide([], today=TODAY).exit_code == exitcodes.PASS
    assert decide([f(severity="warning")], today=TODAY, simulation_failed=True).exit_code == exitcodes.SIMULATION


def test_baseline_comparison_in_detail(tmp_path):
    path = tmp_path / "main.json"
    path.write_text('{"findings": [{"subject": "C1", "rule": "stress.voltage", "severity": "warning", "ratio": 0.95},'
                    ' {"subject": null, "rule": "topology.floating", "severity": "error"},'
                    ' {"subject": "C4", "rule": "stress.ripple", "severity": "error", "ratio": null},'
                    ' {"subject": "C5", "rule": "stress.life", "ratio": 0.5}]}')
    base = Baseline.load(path)
    assert base.entries[("", "topology.floating")] == ("error", None)
    assert base.entries[("C5", "stress.life")] == ("info", 0.5) and base.path == str(path)
    assert base.compare(f(severity="warning", ratio=0.95)) == "known"
    assert base.compare(f(severity="warning", ratio=0.95 * (1 + 5e-7))) == "known"  # rounding noise
    assert base.compare(f(severity="warning", ratio=0.951)) == "worse"
    assert base.compare(f(severity="error", ratio=0.9)) == "worse"  # a worse severity at a lower ratio
    assert base.compare(f(severity="info", ratio=0.99)) == "worse"  # the ratio rose
    assert base.compare(f(severity="warning", ratio=None)) == "known"
    assert base.compare(Finding("topology.floating", "error", "m")) == "known"
    assert base.compare(f(subject="C4", rule="stress.ripple", ratio=2.0)) == "known"  # no ratio to compare
    assert base.compare(f(subject="C9")) == "new"
    recorded = decided_findings(decide([f(severity="warning", ratio=0.951)], baseline=base, today=TODAY))[0]
    assert recorded.details["baseline"] == "worse"


@pytest.mark.parametrize("text, message", [
    ("[]", "expected a 'findings' list"),
    ('{"findings": {}}', "expected a 'findings' list"),
    ('{"findings": [1]}', "expected a finding record"),
    ('{"findings": [{"subject": 3, "rule": "x"}]}', "expected 'subject' and 'rule' texts"),
    ('{"findings": [{"subject": "C1"}]}', "expected 'subject' and 'rule' texts"),
    ('{"findings": [{"subject": "C1", "rule": "x", "severity": "fatal"}]}', "expected severity info, warning, error"),
    ('{"findings": [{"subject": "C1", "rule": "x", "ratio": true}]}', "expected a number or null for 'ratio'"),
    ('{"findings": [{"subject": "C1", "rule": "x", "ratio": "1"}]}', "expected a number or null for 'ratio'"),
    ('{"findings": [{"subject": "C1", "rule": "x", "ratio": NaN}]}', "not a JSON report: NaN is not a number"),
    ("not json", "not a JSON report"),
])
def test_a_baseline_that_is_not_a_report_is_named(tmp_path, text, message):
    path = tmp_path / "base.json"
    path.write_text(text)
    with pytest.raises(DataError) as err:
        Baseline.load(path)
    assert message in err.value.message and err.value.file == str(path)
    if "finding record" in message or "texts" in message or "severity" in message or "'ratio'" in message:
        assert err.value.key == "findings[0]"


def test_a_baseline_with_a_byte_order_mark_loads(tmp_path):
    path = tmp_path / "base.json"
    path.write_bytes('\ufeff{"findings": [{"subject": "C1", "rule": "stress.voltage", "ratio": 1}]}'.encode("utf-8"))
    assert Baseline.load(path).entries == {("C1", "stress.voltage"): ("info", 1.0)}


def test_waivers_file(tmp_path):
    from derate.gate import load_waivers

    path = tmp_path / "waivers.yaml"
    path.write_text("waivers:\n  - {reference: C3, rule: stress.voltage, reason: accepted in review 12,\n"
                    "     owner: A. Okafor, expires: 2027-01-31, scenario: hot}\n"
                    "  - {reference: 'X*.C1', rule: '*', reason: model internals, owner: B. Lind, expires: 2027-02-01}\n")
    first, second = load_waivers(path)
    assert (first.reference, first.rule, first.reason, first.owner, first.expires, first.scenario) == (
        "C3", "stress.voltage", "accepted in review 12", "A. Okafor", dt.date(2027, 1, 31), "hot")
    assert first.source == f"{path}:2" and second.scenario is None and second.source == f"{path}:4"
    path.write_text("waivers:\n  - {reference: C3, rule: stress.voltage, reason: accepted in review 12, owner: A. Okafor,\n"
                    "     expires: 2027-02-30}\n")
    with pytest.raises(DataError) as err:
        load_waivers(path)
    assert "expected a real date YYYY-MM-DD, got '2027-02-30'" in err.value.message and err.value.file.endswith(":3") and err.value.key == "waivers[0].expires"
    path.write_text("- just a list\n")
    with pytest.raises(DataError, match="expected a mapping with 'waivers'"):
        load_waivers(path)


def test_the_gate_records_who_waived_a_finding_and_which_waiver_expired():
    """The JSON report carries a waived finding's reason, owner, expiry and source, and an expired
    waiver's date: what a reviewer reads to accept or chase it."""
    waived, expired = decided_findings(decide(
        [f(), f(subject="C2")], waivers=[waiver(), waiver("C2", expires=dt.date(2026, 11, 30))], today=TODAY))
    assert waived.details["waived"] == {"reason": "accepted in review 12", "owner": "A. Okafor",
                                        "expires": "2027-01-01", "source": "waivers.yaml:3"}
    assert waived.details["gates"] is False and "waiver_expired" not in waived.details
    assert expired.details["waiver_expired"] == "2026-11-30" and expired.details["gates"] is True
    assert "waived" not in expired.details


def test_a_waiver_is_valid_through_its_expiry_day():
    """'expires: 2026-12-02' waives on 2 December and no longer on the 3rd; an unused waiver that
    expires today is still reported as matching nothing."""
    assert decide([f()], waivers=[waiver(expires=TODAY)], today=TODAY).passed
    assert not decide([f()], waivers=[waiver(expires=TODAY)], today=TODAY + dt.timedelta(days=1)).passed
    unused = decide([f(subject="C9")], waivers=[waiver(expires=TODAY)], today=TODAY)
    assert unused.notes == ("waiver for C1 stress.voltage (waivers.yaml:3) matches no finding",)


def test_a_finding_without_a_capacitor_is_not_waived_by_a_reference_pattern():
    board = Finding("data.unrated", "error", "msg", subject=None, scenario=None)
    assert not decide([board], waivers=[waiver("x*", rule="*")], today=TODAY).passed
    assert decide([board], waivers=[waiver("*", rule="*")], today=TODAY).passed


def test_a_waivers_file_that_is_not_a_mapping_is_named(tmp_path):
    from derate.gate import load_waivers

    path = tmp_path / "waivers.yaml"
    path.write_text("- reference: C1\n")
    with pytest.raises(DataError) as err:
        load_waivers(path)
    assert err.value.file == str(path) and err.value.message == "expected a mapping with 'waivers'"


def test_fail_on_never_gates_nothing_but_keeps_simulation_failures():
    v = decide([f(), f(severity="warning")], "never", today=TODAY)
    assert v.exit_code == exitcodes.PASS and [g.gates for g in v.items] == [True, False]
    assert not v.passed  # the reports still say fail: only the exit code lets the job go on
    assert decide([f()], "never", today=TODAY, simulation_failed=True).exit_code == exitcodes.SIMULATION


def test_a_project_file_cannot_turn_the_gate_off(tmp_path):
    """'never' is the runner's choice (--fail-on never); a pull request's derate.yaml cannot make its
    own findings pass."""
    from derate.project import load_project

    (tmp_path / "board.cir").write_text("t\nV1 a 0 1\nR1 a b 1k\nC1 b 0 1u\n.tran 1u 1m\n.end\n")
    (tmp_path / "derate.yaml").write_text("netlist: board.cir\nfail_on: never\n")
    with pytest.raises(DataError, match="fail_on"):
        load_project(tmp_path / "derate.yaml")


def test_a_capacitor_whose_failures_are_all_waived_is_shown_as_waived(tmp_path):
    """Waived findings used to leave the capacitor's row saying 'fail' with nothing beside it; the row now
    says 'waived' (its status stays fail in the data) and the counts say how many fails are waived."""
    from tests.boards import review_board

    (tmp_path / "b").mkdir()
    (tmp_path / "b" / "waivers.yaml").write_text(
        "waivers:\n  - {reference: C1, rule: '*', reason: accepted in design review 4, owner: R. Ibe, "
        "expires: 2099-01-01}\n")
    review = review_board(tmp_path / "b", "vent filter\nV1 a 0 SIN(0 20 1k)\nR1 a b 10\nC1 b 0 1u\nR2 b c 10\n"
                          "C2 c 0 1u\n.tran 1u 3m\n.end\n",
                          {"waivers": "waivers.yaml", "scenarios": [{"name": "warm", "temperature_c": 40}]},
                          {"C1": {"technology": "ceramic-class1", "rated_voltage_v": 10},
                           "C2": {"technology": "ceramic-class1", "rated_voltage_v": 10}})
    assert review.verdict.exit_code == 1  # C2 still gates
    rows = {r["reference"]: r for r in review.record["capacitors"]}
    assert rows["C1"]["waived"] is True and rows["C1"]["status"] == "fail"
    assert rows["C2"]["waived"] is False and rows["C2"]["status"] == "fail"
    assert review.record["summary"]["waived"] == 1
    from derate.review import counts_words
    assert ("fail", 2, "fail (1 waived)") in counts_words(review.record["summary"])


def test_waivers_take_grouped_references_and_short_rule_names(tmp_path):
    """`reference: "C1,C2"` and `rule: voltage` used to match nothing, silently; they now match as a
    reviewer means them, and a rule name that exists nowhere is an error at its line."""
    from derate.gate import load_waivers

    group = Waiver("C1,C2, C7-C9", "voltage", "accepted in review 12", "A. Okafor", dt.date(2027, 1, 1))
    assert all(group.matches(f(subject=s)) for s in ("C1", "C2", "C8"))
    assert not group.matches(f(subject="C3")) and not group.matches(f(subject="C1", rule="stress.ripple"))
    path = tmp_path / "waivers.yaml"
    path.write_text("waivers:\n  - {reference: C1, rule: voltag, reason: accepted in review 12, owner: A. Okafor, "
                    "expires: 2027-01-01}\n")
    with pytest.raises(DataError) as err:
        load_waivers(path)
    assert "waivers.yaml:2: waivers[0].rule: no rule 'voltag'" in str(err.value)
    path.write_text("waivers:\n  - {reference: 'C9-C1', rule: stress.voltage, reason: accepted in review 12, "
                    "owner: A. Okafor, expires: 2027-01-01}\n")
    with pytest.raises(DataError) as err:
        load_waivers(path)
    assert "waivers.yaml:2: waivers[0].reference: bad reference range 'C9-C1'" in str(err.value)
    path.write_text("waivers:\n" + "".join(
        f"  - {{reference: 'C1,C2', rule: {rule}, reason: accepted in review 12, owner: A. Okafor, expires: 2027-01-01}}\n"
        for rule in ("voltage", "stress.voltage", "'*'", "dc-bias", "steady-state")))
    assert [w.rule for w in load_waivers(path)] == ["voltage", "stress.voltage", "*", "dc-bias", "steady-state"]


def test_every_rule_id_is_a_category_and_a_name():
    """Waivers' short rule names rest on this: each id has exactly one dot (stress.voltage)."""
    from derate.registry import all_rules

    ids = [r.id for r in all_rules()]
    assert ids and all(i.count(".") == 1 for i in ids), [i for i in ids if i.count(".") != 1]
