"""Checks on the data itself: capacitors without ratings, parts not allowed, values that disagree.

``data.unrated``: a capacitor with no part record at all, or whose record lacks what a check
needs, gets this finding (never a silent pass); the severity is the policy's ``unrated_severity``.
``data.technology``: the policy does not allow the part's technology (e.g. liquid aluminum
electrolytics in a spaceflight policy).  ``data.value``: the part's capacitance differs from the
netlist value by more than its tolerance (1 % when none is given).  ``measure.steady-state``:
the simulation had not settled in the measuring window.
"""

from __future__ import annotations

from .base import CheckInfo

UNRATED = CheckInfo(
    id="data.unrated", title="Capacitor without the ratings a check needs", needs=(), policy_needs=(),
    formula="finding when a part record is missing or lacks the fields a check needs",
    sources=("common practice: missing data is a finding, never a pass",), doc=__doc__)
TECHNOLOGY = CheckInfo(
    id="data.technology", title="Technology not allowed by the policy", needs=("technology",),
    policy_needs=("allowed",), formula="finding when the policy marks the technology as not allowed",
    sources=("policy value: see `derate rules`",), doc=__doc__)
VALUE = CheckInfo(
    id="data.value", title="Part capacitance differs from the netlist value", needs=("capacitance_f",),
    policy_needs=(), formula="|C_part / C_netlist - 1| > tolerance (1 % when none is given)",
    sources=("common practice",), doc=__doc__)
STEADY = CheckInfo(
    id="measure.steady-state", title="Simulation not in steady state in the measuring window", needs=(),
    policy_needs=(), formula="first and last period of the window differ by more than the tolerance",
    sources=("common practice",), doc=__doc__)

NO_RESULT = CheckInfo(
    id="measure.no-result", title="No simulation result for a scenario", needs=(), policy_needs=(),
    formula="finding when a scenario's simulation failed, so the capacitor's stress there is unknown",
    sources=("common practice: a missing result is never a pass",), doc=__doc__)

DATA_CHECKS = (UNRATED, TECHNOLOGY, VALUE, STEADY, NO_RESULT)
