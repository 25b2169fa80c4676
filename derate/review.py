"""One review: everything `derate check` produced, and the record every report format is built from."""

from __future__ import annotations

import datetime as dt
import functools
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path
from typing import Any

from . import __version__
from .assess import Assessment, CapacitorSummary, worst_of
from .checks import hotspot, life, ripple, voltage
from .findings import Finding
from .gate import Verdict
from .netlist.flatten import Circuit
from .policy import Policy
from .project import Project
from .simulate.results import SimulationRun
from .status import Status

REPORT_SCHEMA_ID = "derate-report/1"


@dataclass(frozen=True)
class Review:
    """The outcome of one review (``derate.review()``, ``derate check``)."""

    project: Project
    circuit: Circuit
    run: SimulationRun
    assessment: Assessment
    verdict: Verdict
    findings: tuple[Finding, ...]  # every gated finding with the gate's decision (details: gates, waived, baseline)
    lint: tuple[Finding, ...]  # lint warnings (errors, when there were any, are in ``findings``)
    policy: Policy
    caution: str | None = None
    generated: dt.datetime = field(default_factory=lambda: dt.datetime.now(dt.timezone.utc))
    halted_by_lint: bool = False  # lint errors: nothing was simulated
    notes: tuple[str, ...] = ()  # about the input data: BOM rows not in the netlist, words not read ...

    @cached_property
    def record(self) -> dict[str, Any]:
        """The canonical JSON document (built once; reporters must not modify it)."""
        return _build_record(self)

    def table(self):
        """The stress table as the reports show it, worst first: one row per capacitor with the check
        and scenario that decide it, the measured value, the limit, the ratio and the part.  A pandas
        DataFrame when pandas is installed, else a list of dicts (the same columns)."""
        from .report.words import row_status_word
        rows = []
        for r in worst_first(self.record["capacitors"]):
            g = r.get("governing") or {}
            rows.append({"capacitor": r["reference"], "status": row_status_word(r), "check": g.get("check"),
                         "scenario": g.get("scenario"), "value": g.get("measured"), "limit": g.get("limit"),
                         "unit": g.get("unit"), "ratio": g.get("ratio"), "part": r["part_number"],
                         "technology": r["technology"]})
        try:
            import pandas
        except ImportError:
            return rows
        return pandas.DataFrame(rows)

    @property
    def repo_root(self) -> Path:
        """The repository holding the project (git top level), else the project root."""
        from .trust import repository_root
        return repository_root(self.project.folder) or self.project.confinement.root

    def repo_relpath(self, project_relative: str) -> str:
        """A report's project-relative path made relative to the repository root (for SARIF)."""
        path = (self.project.folder / project_relative).resolve()
        try:
            return path.relative_to(self.repo_root.resolve()).as_posix()
        except ValueError:
            return project_relative

    def relpath(self, file: str | None) -> str | None:
        """A finding's file relative to the project folder (SARIF and reports use it)."""
        return _relative(file, str(self.project.folder)) if file else None


@functools.lru_cache(maxsize=4096)
def _relative(file: str, folder: str) -> str:
    """A file relative to a folder (resolved once per file: a board has thousands of findings in a few files)."""
    try:
        return Path(file).resolve().relative_to(Path(folder).resolve()).as_posix()
    except ValueError:
        return Path(file).as_posix()


def _num(x: float | None) -> float | None:
    return None if x is None else float(x)


def _rests_on(f: Finding, status: str) -> bool:
    """Whether a judgement used a policy value of this provenance status."""
    sources = f.details.get("sources", {})
    return any(isinstance(v, dict) and v.get("status") == status for v in sources.values())


def _first_stress(review: Review) -> dict[str, Any]:
    """{capacitor path: its Stress in the first scenario that ran} (what was simulated)."""
    out: dict[str, Any] = {}
    for r in review.run.results:
        if r.ok:
            for st in r.stresses:
                out.setdefault(st.capacitor, st)
    return out


def _by_capacitor(review: Review) -> dict[str, list]:
    """{capacitor path: its Stress records in every scenario that ran}."""
    out: dict[str, list] = {}
    for r in review.run.results:
        if r.ok:
            for st in r.stresses:
                out.setdefault(st.capacitor, []).append(st)
    return out


def measured(stresses: list) -> dict[str, Any]:
    """What was measured for one capacitor, worst over the scenarios (shown even when it cannot be judged)."""
    if not stresses:
        return {}
    peak = max(stresses, key=lambda s: s.v_peak_abs_v)
    ripple = max(stresses, key=lambda s: s.i_ac_rms_a)
    return {"v_peak_v": _num(peak.v_peak_abs_v), "v_max_v": _num(max(s.v_max_v for s in stresses)),
            "v_min_v": _num(min(s.v_min_v for s in stresses)),
            "v_ripple_pp_v": _num(max(s.v_ripple_pp_v for s in stresses)),
            "i_rms_a": _num(max(s.i_rms_a for s in stresses)), "i_ac_rms_a": _num(ripple.i_ac_rms_a),
            "f_main_hz": _num(ripple.f_fundamental_hz), "scenario": peak.scenario}


def capacitor_row(s: CapacitorSummary, review: Review, first: dict[str, Any],
                  stresses: list | None = None) -> dict[str, Any]:
    """One stress-table row (SI units, full precision)."""
    part = s.part
    v = s.finding(voltage.INFO.id)
    r = s.finding(ripple.INFO.id)
    life_f = s.finding(life.INFO.id)
    hot = s.finding(hotspot.INFO.id)
    rated = part.rated_voltage_v if part else None
    # the hot spot in the scenario that governs the row (the one its 'why' names), else the check's own
    governing_th = s.thermal.get(s.worst_scenario) if s.thermal and s.worst_scenario else None
    if governing_th is not None and governing_th.rise_c is not None:
        hot_c = governing_th.hotspot_c
    else:
        hot_c = hot.measured if hot and hot.measured is not None else None
    if hot_c is None and s.thermal:
        known = [t.hotspot_c for t in s.thermal.values() if t.rise_c is not None and t.hotspot_c is not None]
        hot_c = max(known) if known else None
    el = s.element
    simulated = first.get(s.path)
    return {
        "reference": s.path,
        "spice_name": el.spice_name if el else None,
        "file": review.relpath(el.loc.file) if el else None,
        "line": el.loc.line if el else None,
        "part_number": part.part_number if part else None,
        "technology": part.technology if part else None,
        "status": s.status,
        "worst_scenario": s.worst_scenario,
        "v_peak_v": _num(v.measured) if v else (measured(stresses or []).get("v_peak_v")),
        "v_rated_v": _num(rated),
        "v_stress_pct": (100.0 * v.measured / rated) if v and v.measured is not None and rated else None,
        "v_limit_pct": (100.0 * v.limit / rated) if v and v.limit is not None and rated else None,
        "ripple_equivalent_a": _num(r.measured) if r else None,
        "ripple_allowed_a": _num(r.limit) if r else None,
        "hotspot_c": _num(hot_c),
        "life_h": _num(life_f.measured) if life_f else None,
        "simulated_as": simulated.model if simulated else None,
        "capacitance_simulated": {r.scenario.name: f for r in review.run.results
                                  for k, f in r.scenario.scale if k == f"bias:{s.path}"} or None,
        "esr_ohm": _num(simulated.esr_ohm) if simulated else None,
        "esl_h": _num(simulated.esl_h) if simulated else None,
        "findings": [f.rule for f in s.findings if f.status not in (Status.PASS, None)],
        "measured": measured(stresses or []),
        "typical": list(part.typical) if part else [],
        "governing": governing(s),
    }


def governing(s: CapacitorSummary) -> dict[str, Any] | None:
    """The finding that decided the capacitor's status: its check, scenario and figures (the 'why')."""
    ranked = [f for f in s.findings if f.status]
    if not ranked:
        return None
    top = worst_of(ranked, lambda f: Status(f.status).rank, lambda f: f.ratio if f.ratio is not None else -1.0)
    check = top.details.get("check", top.rule)
    out = {"rule": top.rule, "check": check.split(".", 1)[-1] if check.startswith(("stress.", "data.", "measure."))
           else check, "scenario": top.scenario, "measured": _num(top.measured), "limit": _num(top.limit),
           "unit": top.unit, "ratio": _num(top.ratio), "status": top.status}
    dist = top.details.get("distribution")
    if dist:  # Monte Carlo: the stress ratio over the corner's samples (percentiles by nearest rank)
        out["spread"] = {k: _num(dist.get(k)) for k in ("samples", "mean", "p50", "p95", "p99_73", "max",
                                                         "p_exceed", "gate_percentile")}
    return out


def worst_first(rows: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """Capacitor rows in the order a reviewer reads them: fail, not settled, unrated, near, pass; highest
    stress first."""
    order = {"fail": 0, "not-settled": 1, "unrated": 2, "near": 3, "pass": 4}
    return sorted(rows, key=lambda r: (order[r["status"]], -((r.get("governing") or {}).get("ratio") or 0.0)))


def counts_words(summary: dict[str, Any]) -> list[tuple[str, int, str]]:
    """The summary's counts as (status, count, words), in the order every report states them; a status
    nobody has (not settled) is left out."""
    fail = "fail" + (f" ({summary['waived']} waived)" if summary.get("waived") else "")
    out = [("pass", summary["pass"], "pass"), ("near", summary["near"], "near the limit"),
           ("fail", summary["fail"], fail), ("unrated", summary["unrated"], "unrated")]
    if summary.get("not_settled"):
        out.append(("not-settled", summary["not_settled"], "not settled"))
    return out


def problems_of(rec: dict[str, Any]) -> list[dict[str, Any]]:
    """Every finding a reader must see (no info), the review's and the lint's (a lint warning such as a
    floating node is said in every report), each once."""
    seen = {(f["rule"], f["file"], f["line"], f["message"]) for f in rec["findings"]}
    return ([f for f in rec["findings"] if f["severity"] != "info"]
            + [f for f in rec.get("lint", []) if f["severity"] != "info"
               and (f["rule"], f["file"], f["line"], f["message"]) not in seen])


def not_reviewed_words(rec: dict[str, Any], limit: int = 12) -> str:
    """The capacitors a review leaves out, named with why: 'C7 (excluded by the project (C7)); ...'."""
    items = rec.get("not_reviewed") or []
    shown = "; ".join(f"{n['reference']} ({n['reason']})" for n in items[:limit])
    return shown + (f"; and {len(items) - limit} more (the JSON report lists them)" if len(items) > limit else "")


def gate_tags(rec: dict[str, Any], with_reason: bool = False) -> list[str]:
    """Return what the gate said about a finding record, in words (waived, expired, baseline)."""
    tags = []
    details = rec["details"]
    if details.get("waived"):
        w = details["waived"]
        tags.append(f"waived by {w['owner']} until {w['expires']}" + (f": {w['reason']}" if with_reason else ""))
    if details.get("waiver_expired"):
        tags.append(f"waiver expired {details['waiver_expired']}")
    if details.get("baseline"):
        tags.append(f"baseline: {details['baseline']}")
    return tags


def finding_record(f: Finding, review: Review) -> dict[str, Any]:
    rec = f.as_record()
    rec["file"] = review.relpath(f.file)
    return rec


def as_record(review: Review) -> dict[str, Any]:
    """Return the canonical JSON document of a review (documented by schemas/report.schema.json).

    Built once per review and shared by every report format (reporters must not modify it).
    """
    return review.record


def deck_scenario(deck: str, board_name: str) -> str:
    """A board scenario's own name within its deck (``front-end/hot`` -> ``hot``)."""
    return board_name[len(deck) + 1:] if board_name.startswith(deck + "/") else board_name


def _build_record(review: Review) -> dict[str, Any]:
    ev = review.assessment
    first = _first_stress(review)
    by_cap = _by_capacitor(review)
    judged = [f for f in ev.findings if f.status in (Status.PASS, Status.NEAR, Status.FAIL)
              and f.rule.startswith("stress.")]
    # capacitors whose failing findings are all accepted by waivers: still failing, shown as waived
    waived = {f.subject for f in review.findings if f.details.get("waived")} - {
        f.subject for f in review.findings if f.details.get("gates")}
    counts = ev.counts()
    proj = review.project
    return {
        "schema": REPORT_SCHEMA_ID,
        "tool": {"name": "derate", "version": __version__},
        "generated_utc": review.generated.strftime("%Y-%m-%dT%H:%M:%SZ"),
        "project": {
            "file": proj.path.name if proj.path else None,
            "netlist": review.relpath(str(proj.netlist)),
            "title": review.circuit.title,
            "policy": {"name": review.policy.name, "title": review.policy.title, "chain": list(review.policy.chain)},
            "mission": {"life_h": proj.mission.life_h, "duty": proj.mission.duty,
                        **({"profile": dict(proj.mission.profile)} if proj.mission.profile else {})},
            "fail_on": review.verdict.fail_on,
            **({"decks": [{"name": d.deck_name, "netlist": review.relpath(str(d.netlist)),
                           "scenarios": [deck_scenario(d.deck_name, r.scenario.name) for r in review.run.results
                                         if r.scenario.name.startswith(d.deck_name + "/")]}
                          for d in proj.decks]} if proj.decks else {}),
        },
        "caution": review.caution,
        "ngspice": review.run.ngspice_version or None,
        "scenarios": [
            {"name": r.scenario.name, "description": r.scenario.description or None,
             "ambient_c": r.scenario.ambient_c, "ambient_from": r.scenario.ambient_from or None,
             "temperature_c": r.scenario.temperature_c, "simulated_to_s": r.deck.tran.stop_s if r.deck else None,
             "settle": r.settle_note,
             "ok": r.ok, "error": r.error or None, "from_cache": r.from_cache, "warnings": list(r.warnings),
             "run": {"points": r.points or None, **{k: v for k, v in r.resources.items()}}}
            for r in review.run.results],
        "summary": {
            "capacitors": len(ev.capacitors), "pass": counts[Status.PASS], "near": counts[Status.NEAR],
            "fail": counts[Status.FAIL], "unrated": counts[Status.UNRATED],
            "not_settled": counts[Status.NOT_SETTLED], "not_reviewed": len(ev.not_reviewed),
            "gating_findings": len(review.verdict.gating),
            "judged_limits": len(judged), "unverified_limits": sum(1 for f in judged if _rests_on(f, "unverified")),
            "waived": sum(1 for c in ev.capacitors if c.path in waived),
            "verdict": "pass" if review.verdict.passed else "fail", "exit_code": review.verdict.exit_code,
            "notes": list(review.verdict.notes),
        },
        "capacitors": [dict(capacitor_row(s, review, first, by_cap.get(s.path)), waived=s.path in waived)
                       for s in ev.capacitors],
        "not_reviewed": [{"reference": el.path, "reason": why, "file": review.relpath(el.loc.file), "line": el.loc.line}
                         for el, why in ev.not_reviewed],
        "analysis_notes": list(review.run.notes),
        "data_notes": list(review.notes),
        "findings": [finding_record(f, review) for f in review.findings],
        "lint": [finding_record(f, review) for f in review.lint],
    }
