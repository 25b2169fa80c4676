"""Finding: the one record every check (topology lint or derating rule) produces."""

from __future__ import annotations

from dataclasses import dataclass, field, fields
from typing import Any

SEVERITIES = ("info", "warning", "error")


def severity_rank(severity: str) -> int:
    """Return 0 for info, 1 for warning, 2 for error."""
    return SEVERITIES.index(severity)


@dataclass(frozen=True)
class Finding:
    """One observation about the design, located at a netlist line where possible.

    ``measured`` and ``limit`` are in SI units named by ``unit``; ``ratio`` is measured / limit
    (1.0 = exactly at the limit), and ``margin_pct`` is (1 - ratio) * 100.
    """

    rule: str
    severity: str
    message: str
    subject: str | None = None
    file: str | None = None
    line: int | None = None
    scenario: str | None = None
    measured: float | None = None
    limit: float | None = None
    unit: str = ""
    ratio: float | None = None
    status: str | None = None  # for derating checks: pass, near, fail, unrated
    details: dict[str, Any] = field(default_factory=dict, hash=False, compare=False)

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise ValueError(f"severity must be one of {SEVERITIES}, got {self.severity!r}")

    @property
    def where(self) -> str:
        """``file:line`` or the file alone, or an empty string."""
        if self.file and self.line:
            return f"{self.file}:{self.line}"
        return self.file or ""

    @property
    def margin_pct(self) -> float | None:
        return None if self.ratio is None else (1.0 - self.ratio) * 100.0

    def as_record(self) -> dict[str, Any]:
        """Return a plain dict for machine-readable reports (JSON, SARIF, ...)."""
        # field by field (a deep asdict copy of every finding's details cost seconds on big boards)
        rec = {f.name: getattr(self, f.name) for f in fields(self)}
        rec["details"] = dict(self.details)
        rec["margin_pct"] = self.margin_pct
        return rec
