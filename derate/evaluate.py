"""The rule engine: every check on every capacitor in every scenario, worst case kept.

``evaluate`` turns Stress records (per scenario), part records and a policy into Findings.  Each
(capacitor, check) pair yields one Finding for its worst scenario (named in the finding), with
every scenario's ratio in ``details["scenarios"]``; passes are Findings too (severity info), so
reports can show one line per capacitor and check.  Missing data is an ``data.unrated`` finding.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Iterable, Mapping

from .checks import STRESS_CHECKS, hotspot
from .checks.base import FAIL, NEAR, PASS, UNRATED, Context, Outcome
from .checks.data import NO_RESULT, STEADY, TECHNOLOGY, UNRATED as UNRATED_INFO, VALUE
from .findings import Finding
from .measure import Stress
from .netlist.flatten import Circuit, Element
from .parts import Part
from .policy import Policy
from .project import Scenario
from .thermal import Thermal, thermal_state

_STATUS_RANK = {PASS: 0, NEAR: 1, UNRATED: 2, FAIL: 3}


@dataclass
class CapacitorSummary:
    """One row of the stress table: a capacitor's worst figures across scenarios."""

    path: str
    element: Element | None
    part: Part | None
    status: str = PASS
    worst_scenario: str | None = None
    findings: list[Finding] = field(default_factory=list)
    thermal: dict[str, Thermal] = field(default_factory=dict)  # per scenario

    def finding(self, rule: str) -> Finding | None:
        return next((f for f in self.findings if f.rule == rule), None)


@dataclass
class Evaluation:
    """All findings, and one summary per capacitor (netlist order)."""

    policy: Policy
    capacitors: list[CapacitorSummary]
    findings: list[Finding]

    def counts(self) -> dict[str, int]:
        out = {PASS: 0, NEAR: 0, FAIL: 0, UNRATED: 0}
        for c in self.capacitors:
            out[c.status] += 1
        return out


def _severity(status: str, policy: Policy) -> str:
    return {PASS: "info", NEAR: "warning", FAIL: "error", UNRATED: policy.unrated_severity}[status]


def _finding(outcome: Outcome, el: Element | None, scenario: str | None, policy: Policy,
             per_scenario: dict[str, float | None], cap: str) -> Finding:
    details = dict(outcome.details)
    details["scenarios"] = per_scenario
    if outcome.missing:
        details["missing"] = list(outcome.missing)
    return Finding(rule=outcome.check if outcome.status != UNRATED else UNRATED_INFO.id,
                   severity=_severity(outcome.status, policy), message=outcome.message, subject=cap,
                   file=el.loc.file if el else None, line=el.loc.line if el else None, scenario=scenario,
                   measured=outcome.measured, limit=outcome.limit, unit=outcome.unit, ratio=outcome.ratio,
                   status=outcome.status, details={"check": outcome.check, **details})


def _worst(outcomes: list[tuple[str, Outcome]]) -> tuple[str, Outcome]:
    def key(item: tuple[str, Outcome]):
        o = item[1]
        return (_STATUS_RANK[o.status], o.ratio if o.ratio is not None else -1.0)
    return max(outcomes, key=key)


def evaluate(stresses: Mapping[str, Iterable[Stress]], scenarios: Iterable[Scenario], circuit: Circuit,
             parts: Mapping[str, Part | None], policy: Policy, mission_life_h: float | None = None,
             mission_duty: float = 1.0) -> Evaluation:
    """Run every check on every capacitor; ``stresses`` maps scenario name to its Stress records.

    A scenario without Stress records (its simulation failed) makes every capacitor unrated for
    that scenario: a missing result is never a pass.
    """
    by_scenario = {name: {s.capacitor: s for s in recs} for name, recs in stresses.items()}
    scenarios = list(scenarios)
    scen = {s.name: s for s in scenarios}
    missing_runs = [s.name for s in scenarios if s.name not in by_scenario]
    mission = mission_life_h if mission_life_h is not None else (
        policy.mission_life_h.value if policy.mission_life_h else None)
    summaries: list[CapacitorSummary] = []
    all_findings: list[Finding] = []
    for el in circuit.capacitors():
        part = parts.get(el.path)
        summary = CapacitorSummary(el.path, el, part)
        summaries.append(summary)
        if part is None:
            f = Finding(UNRATED_INFO.id, policy.unrated_severity,
                        f"{el.path} has no part data: no derating check can be made", subject=el.path,
                        file=el.loc.file, line=el.loc.line, status=UNRATED,
                        details={"check": "all", "missing": ["part record"]})
            summary.findings.append(f)
            summary.status = UNRATED
            all_findings.append(f)
            continue
        outcomes: dict[str, list[tuple[str, Outcome]]] = {}
        for name, recs in by_scenario.items():
            stress = recs.get(el.path)
            if stress is None:
                continue
            sc = scen[name]
            th = thermal_state(stress, part, sc.ambient_c)
            summary.thermal[name] = th
            ctx = Context(el.path, stress, part, policy, sc, th, mission, mission_duty, el.value)
            for module in STRESS_CHECKS:
                if not module.INFO.applies(part):
                    continue
                outcomes.setdefault(module.INFO.id, []).append((name, module.check(ctx)))
            sh = hotspot.check_self_heating(ctx)
            if sh is not None:
                outcomes.setdefault(sh.check, []).append((name, sh))
            if stress.steady_state is False:
                outcomes.setdefault(STEADY.id, []).append((name, Outcome(
                    STEADY.id, NEAR, stress.drift_ratio, stress.drift_ratio, None, "",
                    f"{el.path}: " + "; ".join(stress.notes))))
        for items in outcomes.values():
            scenario, worst = _worst(items)
            per = {n: o.ratio for n, o in items}
            if worst.status == UNRATED:
                scenario = None  # missing data is missing in every scenario
            summary.findings.append(_finding(worst, el, scenario, policy, per, el.path))
        summary.findings.extend(_data_findings(el, part, policy))
        absent = missing_runs + [n for n, recs in by_scenario.items() if el.path not in recs]
        if absent:
            summary.findings.append(Finding(
                NO_RESULT.id, "error", f"{el.path} has no simulation result for scenario(s) {', '.join(absent)}: "
                "its stress there is unknown", subject=el.path, file=el.loc.file, line=el.loc.line, status=UNRATED,
                details={"check": NO_RESULT.id, "scenarios": absent}))
        ranked = [f for f in summary.findings if f.status]
        if ranked:
            top = max(ranked, key=lambda f: (_STATUS_RANK[f.status], f.ratio if f.ratio is not None else -1))
            summary.status = top.status
            summary.worst_scenario = top.scenario
        all_findings.extend(summary.findings)
    return Evaluation(policy, summaries, all_findings)


def _data_findings(el: Element, part: Part, policy: Policy) -> list[Finding]:
    out = []
    allowed = policy.get(part.technology, "allowed")
    if allowed is not None and allowed.value is False:
        out.append(Finding(TECHNOLOGY.id, "error", f"{el.path} is {part.technology}, which the policy "
                           f"'{policy.name}' does not allow ({allowed.source})", subject=el.path,
                           file=el.loc.file, line=el.loc.line, status=FAIL, details={"check": TECHNOLOGY.id}))
    if part.technology is None:
        out.append(Finding(UNRATED_INFO.id, policy.unrated_severity, f"{el.path}: the part record gives no "
                           "technology, so no policy limits apply", subject=el.path, file=el.loc.file,
                           line=el.loc.line, status=UNRATED, details={"check": "technology", "missing": ["technology"]}))
    if part.capacitance_f and el.value:
        tol = (part.tolerance_pct or 1.0) / 100.0
        ratio = part.capacitance_f / el.value
        if abs(ratio - 1.0) > tol:
            out.append(Finding(VALUE.id, "warning", f"{el.path}: the netlist says {el.value:.4g} F but the part is "
                               f"{part.capacitance_f:.4g} F (tolerance {tol:.0%})", subject=el.path,
                               file=el.loc.file, line=el.loc.line, status=NEAR,
                               measured=el.value, limit=part.capacitance_f, unit="F", details={"check": VALUE.id}))
    return out

