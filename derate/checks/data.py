"""Checks on the data itself and on the simulation results, not on a stress.

``data.unrated``: a capacitor with no part record at all, or whose record lacks what a check
needs, gets this finding (never a silent pass); the severity is the policy's ``unrated_severity``.
``data.technology``: the policy does not allow the part's technology (e.g. liquid aluminum
electrolytics in a spaceflight policy).  ``data.value``: the part's capacitance differs from the
netlist value by more than its tolerance (1 % when none is given).  ``measure.steady-state``:
the simulation had not settled in the measuring window.  ``measure.no-result``: a scenario's
simulation failed, so the capacitor's stress there is unknown.
"""

from __future__ import annotations

from ..findings import Finding
from ..netlist.flatten import Element
from ..parts import Part
from ..policy import Policy
from ..registry import RuleInfo
from ..status import Severity, Status
from ..units import format_number

UNRATED = RuleInfo(
    id="data.unrated", kind="data", title="Capacitor without the ratings a check needs",
    formula="finding when a part record is missing or lacks the fields a check needs",
    sources=("common practice: missing data is a finding, never a pass",), doc=__doc__)
TECHNOLOGY = RuleInfo(
    id="data.technology", kind="data", title="Technology not allowed by the policy", needs=("technology",),
    policy_needs=("allowed",), formula="finding when the policy marks the technology as not allowed",
    sources=("policy value: see `derate policy`",), doc=__doc__)
VALUE = RuleInfo(
    id="data.value", kind="data", title="Part capacitance differs from the netlist value", needs=("capacitance_f",),
    formula="|C_part / C_netlist - 1| > tolerance (1 % when none is given)", sources=("common practice",), doc=__doc__)
STEADY = RuleInfo(
    id="measure.steady-state", kind="measure", title="Simulation not in steady state in the measuring window",
    formula="first and last period of the window differ by more than the tolerance",
    sources=("common practice",), doc=__doc__)
NO_RESULT = RuleInfo(
    id="measure.no-result", kind="measure", title="No simulation result for a scenario",
    formula="finding when a scenario's simulation failed, so the capacitor's stress there is unknown",
    sources=("common practice: a missing result is never a pass",), doc=__doc__)

NOT_CHECKED = RuleInfo(
    id="data.not-checked", kind="data", title="Optional check without its data (a note, not a finding)",
    formula="a check the policy does not require for the technology lacks part data: noted, never a pass",
    sources=("common practice",), doc=__doc__)

UNVERIFIED = RuleInfo(
    id="policy.unverified-limit", kind="data", title="A limit resting on an unverified policy value",
    formula="finding when the policy refuses unverified values (refuse_unverified) and a check used one",
    sources=("common practice: an organisation decides which sources it signs off on",), doc=__doc__)

SAFETY = RuleInfo(
    id="data.safety-class", kind="data", title="Capacitor across the mains without a safety class",
    needs=("safety_class",),
    formula="finding when a capacitor sits across a mains line (a sine above 50 V RMS at a line frequency, "
            "through nothing but shorts at that frequency) and its part has no X or Y safety class",
    sources=("capacitors across the mains must be safety-rated (class X or Y): IEC 60384-14 and product safety "
             "standards such as IEC 62368-1 (from memory)",), doc=__doc__)

DATA_RULES = (UNRATED, NOT_CHECKED, TECHNOLOGY, VALUE, STEADY, NO_RESULT, UNVERIFIED, SAFETY)


def safety_class(el: Element, part: Part, line) -> Finding | None:
    """A capacitor across a mains line whose part has no safety class (X or Y) fails."""
    if part.safety_class is not None:
        return None
    return Finding(SAFETY.id, Severity.ERROR, f"{el.path} is across the mains line of {line.source.path} "
                   f"({line.v_rms:.0f} V RMS, {line.f_hz:g} Hz) but its part has no safety class: a capacitor there "
                   "must be rated X or Y (give safety_class and rated_voltage_ac_v)", status=Status.FAIL,
                   details={"check": SAFETY.id, "line": line.source.path, "v_rms": line.v_rms}, **_at(el))


def unverified_limit(el: Element, policy: Policy, check: str, sources: dict) -> Finding | None:
    """A finding when the policy refuses unverified values and a check's limit rests on one."""
    weak = {k: v["source"] for k, v in sources.items() if isinstance(v, dict) and v.get("status") == "unverified"}
    if not weak or not policy.refuse_unverified.value:
        return None
    return Finding(UNVERIFIED.id, Severity.ERROR, f"{el.path}: the {check} limit rests on unverified values "
                   f"({'; '.join(f'{k}: {v}' for k, v in weak.items())}); policy '{policy.name}' refuses them",
                   status=Status.FAIL, details={"check": UNVERIFIED.id, "values": sorted(weak)}, **_at(el))


def missing_data(el: Element, policy: Policy, required: dict[str, list[str]], optional: dict[str, list[str]]
                 ) -> list[Finding]:
    """One finding for the data the required checks lack (it gates at the policy's unrated severity)
    and one note for what optional checks lack; each names the fields per check."""
    def listing(table: dict[str, list[str]]) -> str:
        return "; ".join(f"{check} needs {', '.join(fields)}" for check, fields in table.items())
    out = []
    if required:
        out.append(Finding(UNRATED.id, policy.unrated_severity, f"{el.path} cannot be judged on "
                           f"{', '.join(required)}: {listing(required)}", status=Status.UNRATED,
                           details={"check": "required", "missing": required}, **_at(el)))
    if optional:
        out.append(Finding(NOT_CHECKED.id, Severity.INFO, f"{el.path}: not checked ({', '.join(optional)}; optional "
                           f"under policy '{policy.name}'): {listing(optional)}", status=None,
                           details={"check": "optional", "missing": optional}, **_at(el)))
    return out


def _at(el: Element) -> dict:
    return {"subject": el.path, "file": el.loc.file, "line": el.loc.line}


def no_part(el: Element, policy: Policy) -> Finding:
    """A capacitor with no part record at all (its measured stress is still reported)."""
    return Finding(UNRATED.id, policy.unrated_severity, f"{el.path} has no part data: every check needs at least "
                   "technology and rated_voltage_v (give them in a parts file, a BOM or the schematic's fields)",
                   status=Status.UNRATED, details={"check": "all", "missing": {"all": ["technology", "rated_voltage_v"]}},
                   **_at(el))


def part_findings(el: Element, part: Part, policy: Policy) -> list[Finding]:
    """Findings about a part record itself: technology allowed and given, value as in the netlist."""
    out = []
    allowed = policy.get(part.technology, "allowed")
    if allowed is not None and allowed.value is False:
        out.append(Finding(TECHNOLOGY.id, Severity.ERROR, f"{el.path} is {part.technology}, which the policy "
                           f"'{policy.name}' does not allow ({allowed.source})", status=Status.FAIL,
                           details={"check": TECHNOLOGY.id}, **_at(el)))
    if part.capacitance_f and el.value:
        tol = (part.tolerance_pct or 1.0) / 100.0
        each = el.value / el.multiplicity  # m=2: the netlist value is two parts'
        if abs(part.capacitance_f / each - 1.0) > tol:
            per = f" per part (m={el.multiplicity:g})" if el.multiplicity != 1 else ""
            out.append(Finding(VALUE.id, Severity.WARNING, f"{el.path}: the netlist says "
                               f"{format_number(each, 'F')}{per} but the part is {format_number(part.capacitance_f, 'F')} "
                               f"(tolerance {tol * 100:.0f} %)", status=Status.NEAR, measured=each,
                               limit=part.capacitance_f, unit="F", details={"check": VALUE.id}, **_at(el)))
    return out


def no_result(el: Element, scenarios: list[str]) -> Finding:
    """A capacitor without a result in some scenarios: its stress there is unknown (never a pass)."""
    return Finding(NO_RESULT.id, Severity.ERROR, f"{el.path} has no simulation result for scenario(s) "
                   f"{', '.join(scenarios)}: its stress there is unknown", status=Status.UNRATED,
                   details={"check": NO_RESULT.id, "scenarios": scenarios}, **_at(el))
