"""One vocabulary for every report: status words, colours, short technology names, numbers with units.

Terminal, HTML, Markdown, CSV and the annotated netlist all take their words from here, so a status
or a unit reads the same everywhere.
"""

from __future__ import annotations

from ..status import Severity, Status
from ..units import format_number

# what a capacitor's status is called (the record keeps the enum value: pass, near, fail, unrated, not-settled)
STATUS_WORD = {Status.PASS: "pass", Status.NEAR: "near", Status.FAIL: "fail", Status.UNRATED: "unrated",
               Status.NOT_SETTLED: "not settled"}
# colours: terminal styles (rich) and HTML/plot colours for the same statuses
STATUS_STYLE = {Status.PASS: "green", Status.NEAR: "yellow", Status.FAIL: "bold red", Status.UNRATED: "magenta",
                Status.NOT_SETTLED: "bold magenta"}
STATUS_COLOUR = {Status.PASS: "#1b7f3b", Status.NEAR: "#b26a00", Status.FAIL: "#b3261e", Status.UNRATED: "#6a6a9a",
                 Status.NOT_SETTLED: "#7a3c8c"}
SEVERITY_STYLE = {Severity.ERROR: "bold red", Severity.WARNING: "yellow", Severity.INFO: "cyan"}

SHORT_TECH = {"aluminum-electrolytic": "Al elyt", "aluminum-polymer": "Al polymer", "tantalum-mno2": "Ta MnO2",
              "tantalum-polymer": "Ta polymer", "tantalum-wet": "Ta wet", "ceramic-class1": "ceramic 1",
              "ceramic-class2": "ceramic 2", "film-polypropylene": "film PP", "film-polyester": "film PET",
              "mica-glass": "mica/glass", "other": "other"}

DASH = "—"  # a value that is not known or does not apply
DEGREES = "°C"


def status_word(status: str) -> str:
    return STATUS_WORD[Status(status)]


def row_status_word(row: dict) -> str:
    """A capacitor row's status as shown: 'waived' when every finding that would gate it is waived
    (it still fails its derating; the waiver accepts that)."""
    return "waived" if row.get("waived") else STATUS_WORD[Status(row["status"])]


def quantity(x: float | None, unit: str, digits: int = 3) -> str:
    """A value in engineering notation with its unit (``4.7 µF``, ``16 V``), or a dash."""
    return DASH if x is None else format_number(x, unit, digits)


def temperature(x: float | None) -> str:
    return DASH if x is None else f"{x:.1f} {DEGREES}"


def hours(x: float | None) -> str:
    return DASH if x is None else f"{x:,.0f} h"


def percent(x: float | None) -> str:
    return DASH if x is None else f"{x:.0f} %"
