"""The rule engine: every check on every capacitor in every scenario, worst case kept.

``assess`` turns Stress records (per scenario), part records and a policy into Findings.  Each
(capacitor, check) pair yields one Finding for its worst scenario (named in the finding), with
every scenario's ratio in ``details["scenarios"]``; passes are Findings too (severity info), so
reports can show one line per capacitor and check.  Missing data is a ``data.unrated`` finding.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from types import MappingProxyType
from typing import Iterable, Mapping

from .checks import STRESS_CHECKS, life
from .checks import data
from .checks.base import Context, Outcome, status_of
from .findings import Finding
from .measure import Stress
from .netlist.flatten import Circuit, Element
from .parts import Part, designator_aliases
from .policy import Policy
from .project import Scenario
from .status import JUDGED, Severity, Status
from . import typical
from .thermal import Thermal, thermal_state


@dataclass(frozen=True)
class CapacitorSummary:
    """One row of the stress table: a capacitor's worst figures across scenarios."""

    path: str
    element: Element | None
    part: Part | None
    status: Status = Status.PASS
    worst_scenario: str | None = None
    findings: tuple[Finding, ...] = ()
    thermal: Mapping[str, Thermal] = field(default_factory=lambda: MappingProxyType({}))  # per scenario

    def finding(self, rule: str) -> Finding | None:
        return next((f for f in self.findings if f.rule == rule), None)


@dataclass(frozen=True)
class Assessment:
    """All findings, and one summary per capacitor (netlist order)."""

    policy: Policy
    capacitors: tuple[CapacitorSummary, ...]
    findings: tuple[Finding, ...]
    not_reviewed: tuple[tuple[Element, str], ...] = ()  # (capacitor, why): excluded, or inside a device model

    def counts(self) -> dict[Status, int]:
        out = {s: 0 for s in Status}
        for c in self.capacitors:
            out[c.status] += 1
        return out


def _severity(status: Status, policy: Policy, check: str = "") -> str:
    if status == Status.NOT_SETTLED:
        # one finding per capacitor gates (the steady-state one, like a failed run); the checks judged on
        # the unsettled run say what they saw there
        return Severity.ERROR if check == data.STEADY.id else Severity.INFO
    return {Status.PASS: Severity.INFO, Status.NEAR: Severity.WARNING, Status.FAIL: Severity.ERROR,
            Status.UNRATED: policy.unrated_severity}[status]


def unsettled(outcome: Outcome, stress: Stress) -> Outcome:
    """A check's outcome on a run that had not settled: a pass or near becomes not settled (a fail stays a
    fail: the values were already over the limit), with the reason."""
    if outcome.status not in (Status.PASS, Status.NEAR):
        return outcome
    return replace(outcome, status=Status.NOT_SETTLED,
                   message=f"{outcome.message} [on a run that had not settled: not judged]",
                   details={**outcome.details, "not_settled": True})


def _finding(outcome: Outcome, el: Element, scenario: str | None, policy: Policy,
             per_scenario: dict[str, float | None], typical_fields: tuple[str, ...] = ()) -> Finding:
    details = dict(outcome.details)
    details["scenarios"] = per_scenario
    if typical_fields:
        details["typical"] = list(typical_fields)  # the part's data came partly from derate's typical library
    if outcome.missing:
        details["missing"] = list(outcome.missing)
    if policy.applied:
        details["policy_overrides"] = list(policy.applied)  # the team's own rules for this capacitor
    return Finding(rule=outcome.check if outcome.status != Status.UNRATED else data.UNRATED.id,
                   severity=_severity(outcome.status, policy, outcome.check), message=outcome.message,
                   subject=el.path,
                   file=el.loc.file, line=el.loc.line, scenario=scenario,
                   measured=outcome.measured, limit=outcome.limit, unit=outcome.unit, ratio=outcome.ratio,
                   status=outcome.status, details={"check": outcome.check, **details})


def over_profile(items: list[tuple[str, Outcome]], profile: Mapping[str, float], cap: str, policy: Policy) -> Outcome:
    """Life over a mission profile by Miner's rule: consumed = sum(share_i x T / L_i) against 1 / factor.

    With each corner's ratio r_i = T x factor / L_i, the profile's ratio is sum(share_i x r_i); the
    expected life over the profile is the share-weighted harmonic mean of the corners' lives.  A
    corner of the profile whose life could not be judged leaves the profile unjudged.
    """
    by_name = dict(items)
    missing = [n for n, share in profile.items() if share > 0 and n not in by_name]
    bad = [o for n, o in items if profile.get(n, 0) > 0 and o.status in (Status.UNRATED, Status.NOT_SETTLED)]
    if bad:
        return max(bad, key=lambda o: o.status.rank)
    if missing:
        first = items[0][1]
        return Outcome(first.check, Status.UNRATED, None, None, None, "h",
                       f"{cap}: life over the mission profile cannot be judged: no result for {', '.join(missing)}",
                       missing=tuple(f"a result for scenario {n}" for n in missing))
    terms = {n: profile[n] * by_name[n].ratio for n in profile if profile[n] > 0}
    ratio = sum(terms.values())
    required = next(o.limit for n, o in items if n in terms)
    effective = required / ratio if ratio > 0 else float("inf")
    shares = {n: {"share_of_time": profile[n], "life_h": by_name[n].measured,
                  "share_of_consumed_life": terms[n] / ratio if ratio > 0 else 0.0} for n in terms}
    order = sorted(terms, key=lambda n: -terms[n])
    msg = (f"{cap} is expected to last {effective:,.0f} h over the mission profile against {required:,.0f} h required ("
           + ", ".join(f"{n} {100 * terms[n] / ratio:.0f} % of the life consumed" for n in order[:4]) + ")")
    details = dict(items[0][1].details)
    details["profile"] = shares
    return Outcome(items[0][1].check, status_of(ratio, policy), ratio, effective, required, "h", msg, details)


def per_part(stress: Stress, m: float) -> Stress:
    """The stress of one of ``m`` identical parallel parts: the same voltage, 1/m of every current."""
    return replace(stress, i_rms_a=stress.i_rms_a / m, i_ac_rms_a=stress.i_ac_rms_a / m, i_mean_a=stress.i_mean_a / m,
                   i_peak_a=stress.i_peak_a / m, startup_i_peak_a=stress.startup_i_peak_a / m,
                   harmonics=tuple((n, f, i / m) for n, f, i in stress.harmonics),
                   bands=tuple((f, i / m) for f, i in stress.bands),
                   notes=stress.notes + (f"m={m:g}: judged per part (1/{m:g} of the measured current)",))


TIE = 1e-6  # ratios this close (relative) are equal: rounding noise never picks the governing scenario


def _worst(outcomes: list[tuple[str, Outcome]], heat: Mapping[str, float] | None = None) -> tuple[str, Outcome]:
    """The worst of a check's outcomes (status first, then ratio); of outcomes equal within ``TIE``, the
    one in the hottest scenario (``heat``: scenario -> ambient; where margins are slimmest for what the
    model leaves out), then the first in the project's scenario order."""
    return worst_of(outcomes, lambda item: item[1].status.rank,
                    lambda item: item[1].ratio if item[1].ratio is not None else -1.0,
                    (lambda item: (heat or {}).get(item[0], float("-inf"))) if heat else None)


def worst_of(items: list, rank, ratio, prefer=None):
    """The item with the highest rank and, among those, the highest ratio; ties within ``TIE`` go to the
    item ``prefer`` scores highest, then to the first (a stable choice, never one made by rounding noise)."""
    top = max(rank(x) for x in items)
    ranked = [x for x in items if rank(x) == top]
    best = max(ratio(x) for x in ranked)
    tied = [x for x in ranked if ratio(x) >= best - TIE * max(abs(best), 1e-12)]
    if prefer is not None and len(tied) > 1:
        hottest = max(prefer(x) for x in tied)
        return next(x for x in tied if prefer(x) == hottest)
    return tied[0]


def by_corner(items: list[tuple[str, Outcome]], scen: Mapping[str, Scenario], percentile: float,
              cap: str) -> list[tuple[str, Outcome]]:
    """A check's outcomes over a corner's samples become one outcome per corner: the sample at the
    gate's percentile (nearest rank: the worst sample at 100), with the distribution of the stress
    ratio over the samples in its details.  An unjudged sample leaves the corner unjudged."""
    from .tolerance import distribution, nearest_rank_index

    groups: dict[str, list[tuple[str, Outcome]]] = {}
    for name, o in items:
        groups.setdefault(scen[name].group if name in scen else name, []).append((name, o))
    out = []
    for corner, members in groups.items():
        judged = [(n, o) for n, o in members if o.status in JUDGED and o.ratio is not None]
        if len(members) == 1 or len(judged) != len(members):
            out.append((corner, _worst(members)[1] if len(judged) != len(members) else members[0][1]))
            continue
        ratios = [o.ratio for _, o in judged]
        name, rep = judged[nearest_rank_index(ratios, percentile)]
        worst_name = judged[max(range(len(ratios)), key=ratios.__getitem__)][0]
        dist = distribution(ratios, percentile)
        dist.update({"sample": name, "worst_sample": worst_name,
                     "worst_factors": dict(scen[worst_name].scale) if worst_name in scen else {},
                     "names": [n for n, _ in judged]})
        where = "worst" if percentile >= 100 else f"{percentile:g} th percentile"
        message = (f"{rep.message} [{where} of {len(ratios)} samples ({name}); {100 * dist['p_exceed']:.1f} % of "
                   "them over the limit]")
        out.append((corner, replace(rep, message=message, details={**rep.details, "distribution": dist})))
    return out


def assess(stresses: Mapping[str, Iterable[Stress]], scenarios: Iterable[Scenario], circuit: Circuit,
           parts: Mapping[str, Part | None], policy: Policy, mission_life_h: float | None = None,
           mission_duty: float = 1.0, not_reviewed: Mapping[str, str] | None = None,
           profile: Mapping[str, float] | None = None, percentile: float = 100.0,
           offsets: Mapping[str, tuple[float, str]] | None = None, across_line: Mapping | None = None,
           expected: Mapping[str, frozenset[str]] | None = None) -> Assessment:
    """Run every check on every capacitor; ``stresses`` maps scenario name to its Stress records.

    A scenario without Stress records (its simulation failed) makes every capacitor unrated for
    that scenario: a missing result is never a pass.  Samples of a corner (Monte Carlo, worst
    case) are judged together at the gate's ``percentile`` (``by_corner``).  ``offsets`` gives a
    capacitor's local ambient above the scenario's (°C, why).  ``expected`` gives, for a board of
    several decks, the scenarios each capacitor is simulated in (its decks'); others are not missing.
    """
    base_policy = policy
    by_scenario = {name: {s.capacitor: s for s in recs} for name, recs in stresses.items()}
    scenarios = list(scenarios)
    heat = {n: s.ambient_c for s in scenarios if s.ambient_c is not None for n in (s.name, s.group)}  # ties: hotter
    scen = {s.name: s for s in scenarios}
    missing_runs = [s.name for s in scenarios if s.name not in by_scenario]
    mission = mission_life_h if mission_life_h is not None else (
        policy.mission_life_h.value if policy.mission_life_h else None)
    summaries: list[CapacitorSummary] = []
    skipped: list[tuple[Element, str]] = []
    not_reviewed = not_reviewed or {}
    for el in circuit.capacitors():
        if el.path in not_reviewed:
            skipped.append((el, not_reviewed[el.path]))
            continue
        part = parts.get(el.path)
        policy = base_policy.for_capacitor(el.path, el.nodes, designator_aliases(el.path))
        rser = dict(el.parasitics).get("rser")
        if part is not None and rser and part.esr_ohm is None and part.esr_table is None:
            # the netlist's Rser= is the capacitor's ESR for the thermal checks unless part data says otherwise
            part = replace(part, esr_ohm=rser, source=f"{part.source}; ESR {rser:g} ohm from the netlist's Rser")
        if part is not None:
            # typical data fills what the record lacks, labelled; a policy that refuses it sees the record alone
            part = typical.fill(part) if policy.accepts_typical else typical.without_typical(part)
        if part is None:
            f = data.no_part(el, policy)
            summaries.append(CapacitorSummary(el.path, el, None, Status.UNRATED, None, (f,)))
            continue
        outcomes: dict[str, list[tuple[str, Outcome]]] = {}
        thermal: dict[str, Thermal] = {}
        for name, recs in by_scenario.items():
            stress = recs.get(el.path)
            if stress is None:
                continue
            if el.multiplicity != 1:
                stress = per_part(stress, el.multiplicity)  # m=2: two parts share the current, one is judged
            sc = scen[name]
            offset = (offsets or {}).get(el.path, (0.0, ""))[0]
            th = thermal_state(stress, part, None if sc.ambient_c is None else sc.ambient_c + offset, offset)
            thermal[name] = th
            ctx = Context(el.path, stress, part, policy, sc, th, mission, mission_duty)
            settled = stress.steady_state is not False
            for module in STRESS_CHECKS:
                if not module.INFO.applies(part):
                    continue
                outcome = module.check(ctx)
                if outcome is not None:
                    outcomes.setdefault(module.INFO.id, []).append(
                        (name, outcome if settled else unsettled(outcome, stress)))
            if not settled:
                outcomes.setdefault(data.STEADY.id, []).append((name, Outcome(
                    data.STEADY.id, Status.NOT_SETTLED, stress.drift_ratio, stress.drift_ratio, None, "",
                    f"{el.path} is not in steady state at the end of the run, so its stress is not judged: "
                    + "; ".join(n for n in stress.notes if "terminals reversed" not in n),
                    {"settle_more_s": stress.settle_more_s, "window": [stress.window_start_s, stress.window_end_s]})))
        findings: list[Finding] = []
        ripple = max((s.i_ac_rms_a for recs in by_scenario.values() if (s := recs.get(el.path))), default=0.0)
        required: dict[str, list[str]] = {}
        optional: dict[str, list[str]] = {}
        if part.technology is None:
            required["every check"] = ["technology"]
        sampled = any(s.corner for s in scenarios)
        for check_id, items in outcomes.items():
            if sampled:
                items = by_corner(items, scen, percentile, el.path)
            if check_id == life.INFO.id and profile:
                items = [("mission profile", over_profile(items, profile, el.path, policy))]
            scenario, worst = _worst(items, heat)
            per = {n: o.ratio for n, o in items}
            if worst.status == Status.UNRATED:
                short = check_id.split(".", 1)[1]
                (required if policy.required(part.technology, short, ripple) else optional)[short] = \
                    list(worst.missing)
                continue
            findings.append(_finding(worst, el, scenario, policy, per, part.typical))
            refused = data.unverified_limit(el, policy, check_id, worst.details.get("sources", {}))
            if refused is not None:
                findings.append(refused)
        findings.extend(data.missing_data(el, policy, required, optional))
        findings.extend(data.part_findings(el, part, policy))
        if across_line and el.path in across_line:
            got = data.safety_class(el, part, across_line[el.path])
            if got is not None:
                findings.append(got)
        absent = missing_runs + [n for n, recs in by_scenario.items() if el.path not in recs]
        if expected and el.path in expected:
            absent = [n for n in absent if n in expected[el.path]]
        if absent:
            findings.append(data.no_result(el, absent))
        status, worst_scenario = Status.PASS, None
        ranked = [f for f in findings if f.status]
        if ranked:
            top = worst_of(ranked, lambda f: f.status.rank, lambda f: f.ratio if f.ratio is not None else -1.0)
            status, worst_scenario = top.status, top.scenario
        summaries.append(CapacitorSummary(el.path, el, part, status, worst_scenario, tuple(findings),
                                          MappingProxyType(thermal)))
    return Assessment(base_policy, tuple(summaries), tuple(f for s in summaries for f in s.findings), tuple(skipped))
