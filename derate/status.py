"""The words every stage and report shares: a check's status and a finding's severity."""

from __future__ import annotations

from enum import StrEnum


class Status(StrEnum):
    """How one capacitor fares against one limit (or all of them): compares equal to its text."""

    PASS = "pass"
    NEAR = "near"  # within the policy's margin of a limit
    FAIL = "fail"
    UNRATED = "unrated"  # data missing: never a pass
    NOT_SETTLED = "not-settled"  # judged on a run that had not reached steady state: never a pass

    @property
    def rank(self) -> int:
        """Order for "worst first": pass < near < unrated < not settled < fail."""
        return _STATUS_RANK[self]


_STATUS_RANK = {Status.PASS: 0, Status.NEAR: 1, Status.UNRATED: 2, Status.NOT_SETTLED: 3, Status.FAIL: 4}
JUDGED = frozenset({Status.PASS, Status.NEAR, Status.FAIL})  # a ratio against a limit on a settled run


class Severity(StrEnum):
    """How much a finding matters to the gate: compares equal to its text."""

    INFO = "info"
    WARNING = "warning"
    ERROR = "error"

    @property
    def rank(self) -> int:
        return _SEVERITY_RANK[self]


_SEVERITY_RANK = {Severity.INFO: 0, Severity.WARNING: 1, Severity.ERROR: 2}
