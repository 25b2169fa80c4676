"""The gate: waivers, baseline comparison and the verdict (exit code).

A finding *gates* when its severity is at or above the fail level (``error`` by default,
``warning`` stricter), it is not waived by a current waiver, and - when a baseline report is
given - it is new or worse than in the baseline.  An expired waiver stops waiving and says so.
"""

from __future__ import annotations

import datetime as dt
import fnmatch
import json
from dataclasses import dataclass, replace
from pathlib import Path

from . import exitcodes
from .datafile import load_document, read_limited, validate
from .errors import DataError
from .findings import SEVERITIES, Finding, severity_rank


@dataclass(frozen=True)
class Waiver:
    """An accepted finding: who accepted it, why, and until when."""

    reference: str
    rule: str
    reason: str
    owner: str
    expires: dt.date
    scenario: str | None = None
    source: str = ""

    def matches(self, f: Finding) -> bool:
        """A finding this waiver accepts: its capacitor among the reference's (a name, a glob, or several
        separated by commas: "C1,C2", "C4-C7"), its rule by id, short name ("voltage") or "*"."""
        subject = (f.subject or "").lower()
        exact, globs = _expand(self.reference)
        hit = subject in exact or any(fnmatch.fnmatchcase(subject, g) for g in globs)
        rule = self.rule.lower()
        return (hit and (rule == "*" or rule in (f.rule, f.rule.split(".", 1)[-1], f.details.get("check")))
                and (self.scenario is None or self.scenario == f.scenario))


def _expand(reference: str) -> tuple[list[str], list[str]]:
    from .parts import expand_reference
    try:
        return expand_reference(reference)
    except DataError:
        return [], []


def _known_rules() -> set[str]:
    from .registry import all_rules
    ids = {r.id for r in all_rules()}
    return ids | {i.split(".", 1)[-1] for i in ids}


def load_waivers(path: Path) -> list[Waiver]:
    """Read and validate a waivers file."""
    from .parts import expand_reference
    doc = load_document(path)
    if not isinstance(doc.data, dict):
        raise DataError("expected a mapping with 'waivers'", str(path))
    validate(doc, "waivers")  # an unquoted date arrives as its text (datafile keeps YAML dates as text)
    out = []
    for i, w in enumerate(doc.data["waivers"]):
        try:
            expires = dt.date.fromisoformat(w["expires"])
        except ValueError:
            raise doc.error(f"expected a real date YYYY-MM-DD, got {w['expires']!r}", ["waivers", i, "expires"]) from None
        if w["rule"] != "*" and w["rule"].lower() not in _known_rules():
            raise doc.error(f"no rule {w['rule']!r}: give a rule id (stress.voltage), its short name (voltage) or "
                            "'*' (derate explain lists them)", ["waivers", i, "rule"])
        try:
            expand_reference(w["reference"])  # a reference list that cannot be read is said here, not ignored
        except DataError as exc:
            raise doc.error(exc.message, ["waivers", i, "reference"]) from None
        out.append(Waiver(w["reference"], w["rule"], w["reason"], w["owner"], expires, w.get("scenario"),
                          f"{path}:{doc.line_of(['waivers', i]) or ''}".rstrip(":")))
    return out


@dataclass(frozen=True)
class Baseline:
    """Ratios and statuses per (capacitor, rule) from a previous JSON report."""

    entries: dict[tuple[str, str], tuple[str, float | None]]
    path: str

    @classmethod
    def load(cls, path: Path) -> "Baseline":
        """Read a previous JSON report; DataError naming the file and entry when it is not one."""
        raw = read_limited(path, 200 * 1024 * 1024)

        def no_constants(name: str):
            raise ValueError(f"{name} is not a number")
        try:
            doc = json.loads(raw.decode("utf-8-sig"), parse_constant=no_constants)
        except (ValueError, RecursionError) as exc:
            raise DataError(f"not a JSON report: {str(exc)[:120]}", str(path)) from None
        if not isinstance(doc, dict) or not isinstance(doc.get("findings"), list):
            raise DataError("not a derate JSON report (expected a 'findings' list)", str(path))
        entries = {}
        for i, f in enumerate(doc["findings"]):
            key = f"findings[{i}]"
            if not isinstance(f, dict):
                raise DataError("expected a finding record", str(path), key)
            subject, rule, severity, ratio = f.get("subject"), f.get("rule"), f.get("severity", "info"), f.get("ratio")
            if not isinstance(subject, (str, type(None))) or not isinstance(rule, str):
                raise DataError("expected 'subject' and 'rule' texts", str(path), key)
            if severity not in SEVERITIES:
                raise DataError(f"expected severity {', '.join(SEVERITIES)}, got {severity!r}", str(path), key)
            if ratio is not None and (isinstance(ratio, bool) or not isinstance(ratio, (int, float))):
                raise DataError(f"expected a number or null for 'ratio', got {ratio!r}", str(path), key)
            entries[(subject or "", rule)] = (severity, None if ratio is None else float(ratio))
        return cls(entries, str(path))

    def compare(self, f: Finding) -> str:
        """Return 'new', 'worse' or 'known' for a finding."""
        old = self.entries.get((f.subject or "", f.rule))
        if old is None:
            return "new"
        old_sev, old_ratio = old
        if severity_rank(f.severity) > severity_rank(old_sev):
            return "worse"
        if f.ratio is not None and old_ratio is not None and f.ratio > old_ratio * (1 + 1e-6) + 1e-12:
            return "worse"
        return "known"


@dataclass(frozen=True)
class GatedFinding:
    """A finding with what the gate decided about it."""

    finding: Finding
    gates: bool
    waived_by: Waiver | None = None
    expired_waiver: Waiver | None = None
    baseline: str | None = None  # new, worse, known


@dataclass(frozen=True)
class Verdict:
    """The gate's decision."""

    items: tuple[GatedFinding, ...]
    fail_on: str
    exit_code: int
    notes: tuple[str, ...] = ()

    @property
    def gating(self) -> list[GatedFinding]:
        return [g for g in self.items if g.gates]

    @property
    def passed(self) -> bool:
        """No finding gates (with --fail-on never the exit is 0 even when this is False)."""
        return self.exit_code == exitcodes.PASS and not any(g.gates for g in self.items)


def decide(findings: list[Finding], fail_on: str = "error", waivers: list[Waiver] | None = None,
           baseline: Baseline | None = None, today: dt.date | None = None,
           simulation_failed: bool = False) -> Verdict:
    """Apply waivers and the baseline to findings and return the verdict."""
    if fail_on not in ("error", "warning", "never"):
        raise DataError(f"--fail-on expects error, warning or never, got {fail_on!r}")
    today = today or dt.date.today()
    # never: findings are judged as with 'error' (the reports say which would gate) but the exit is 0
    threshold = severity_rank("error") if fail_on == "never" else severity_rank(fail_on)
    waivers = waivers or []
    items: list[GatedFinding] = []
    used: set[int] = set()
    for f in findings:
        waived_by = expired = None
        for i, w in enumerate(waivers):
            if w.matches(f):
                if w.expires >= today:
                    waived_by = w
                    used.add(i)
                    break
                expired = w
        known = baseline.compare(f) if baseline is not None else None
        gates = severity_rank(f.severity) >= threshold and waived_by is None and known != "known"
        items.append(GatedFinding(f, gates, waived_by, expired if waived_by is None else None, known))
    notes = [f"waiver for {g.expired_waiver.reference} {g.expired_waiver.rule} ({g.expired_waiver.source}) expired "
             f"on {g.expired_waiver.expires.isoformat()}: it no longer waives the finding"
             for g in items if g.expired_waiver is not None]
    notes += [f"waiver for {w.reference} {w.rule} ({w.source}) matches no finding"
              for i, w in enumerate(waivers)
              if i not in used and w.expires >= today and not any(w.matches(g.finding) for g in items)]
    if simulation_failed:
        code = exitcodes.SIMULATION
    elif any(g.gates for g in items):
        code = exitcodes.PASS if fail_on == "never" else exitcodes.FINDINGS
    else:
        code = exitcodes.PASS
    return Verdict(tuple(items), fail_on, code, tuple(sorted(set(notes))))


def decided_findings(verdict: Verdict) -> list[Finding]:
    """Return the findings with the gate's decision recorded in their details."""
    out = []
    for g in verdict.items:
        extra = {"gates": g.gates}
        if g.waived_by:
            w = g.waived_by
            extra["waived"] = {"reason": w.reason, "owner": w.owner, "expires": w.expires.isoformat(), "source": w.source}
        if g.expired_waiver and not g.waived_by:
            extra["waiver_expired"] = g.expired_waiver.expires.isoformat()
        if g.baseline:
            extra["baseline"] = g.baseline
        out.append(replace(g.finding, details={**g.finding.details, **extra}))
    return out
