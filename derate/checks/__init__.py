"""The derating checks: one module per family, each with an INFO block (``derate.registry.RuleInfo``)
and a pure ``check(ctx) -> Outcome | None`` (None: the check does not apply under this policy).

``STRESS_CHECKS`` is the order checks run and reports show them; ``CHECK_RULES`` adds the data and
measurement rules.  ``derate.registry`` joins them with the lint rules.
"""

from __future__ import annotations

from ..registry import RuleInfo
from . import acvoltage, dcbias, hotspot, life, reverse, ripple, selfheating, surge, voltage
from .data import DATA_RULES

STRESS_CHECKS = (voltage, acvoltage, reverse, surge, ripple, hotspot, selfheating, life, dcbias)
CHECK_RULES: tuple[RuleInfo, ...] = tuple(m.INFO for m in STRESS_CHECKS) + DATA_RULES
