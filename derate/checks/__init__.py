"""The derating checks: one module per family, each with an INFO block and a pure check function.

`derate explain RULE` and the SARIF rules list are generated from ALL_CHECKS.
"""

from __future__ import annotations

from . import dcbias, hotspot, life, reverse, ripple, surge, voltage
from .base import CheckInfo
from .data import DATA_CHECKS

STRESS_CHECKS = (voltage, reverse, surge, ripple, hotspot, life, dcbias)
ALL_CHECKS: tuple[CheckInfo, ...] = tuple(m.INFO for m in STRESS_CHECKS) + (hotspot.SELF_HEATING,) + DATA_CHECKS


def find(rule_id: str) -> CheckInfo | None:
    """Return the metadata of a check by id (``stress.voltage``) or short name (``voltage``)."""
    for info in ALL_CHECKS:
        if info.id == rule_id or info.id.split(".", 1)[1] == rule_id:
            return info
    return None
