"""One registry for every rule derate applies: derating checks, data checks and netlist lint rules.

Each rule has one ``RuleInfo``: its id (``stress.voltage``, ``data.unrated``, ``topology.no-dc-path``),
kind, default severity, title, formula, sources and documentation.  ``derate explain``, the SARIF
``rules[]`` list and the reports all read it from here, and code refers to a rule through its
``RuleInfo.id``, never a repeated string.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

KINDS = ("stress", "data", "measure", "lint")


@dataclass(frozen=True)
class RuleInfo:
    """A rule's declarative metadata."""

    id: str
    kind: str  # stress (a derating check), data, measure, lint
    title: str
    severity: str | None = None  # default severity of lint rules; derating checks take theirs from the status
    formula: str = ""
    sources: tuple[str, ...] = ()
    needs: tuple[str, ...] = ()  # part fields the check cannot do without
    policy_needs: tuple[str, ...] = ()  # policy values (any one of each "a|b" group)
    unit: str = ""
    doc: str = ""
    applies: Callable[..., bool] = lambda part: True

    @property
    def short(self) -> str:
        """The id without its family: ``voltage`` for ``stress.voltage``."""
        return self.id.split(".", 1)[1]


def all_rules() -> tuple[RuleInfo, ...]:
    """Every rule: derating checks in report order, then data and measurement checks, then lint rules."""
    from .checks import CHECK_RULES
    from .netlist.lint_rules import LINT_RULES
    return CHECK_RULES + tuple(LINT_RULES.values())


def find(rule_id: str) -> RuleInfo | None:
    """Return a rule by id (``stress.voltage``) or short name (``voltage``)."""
    for info in all_rules():
        if info.id == rule_id or info.short == rule_id:
            return info
    return None
