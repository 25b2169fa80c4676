"""What every check shares: its metadata block, its context, and how a stress ratio becomes a status."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from ..measure import Stress
from ..parts import Part
from ..policy import Policy
from ..project import Scenario
from ..registry import RuleInfo
from ..status import Status
from ..thermal import Thermal


@dataclass(frozen=True)
class Context:
    """Everything a check may look at for one capacitor in one scenario."""

    capacitor: str
    stress: Stress
    part: Part
    policy: Policy
    scenario: Scenario
    thermal: Thermal
    mission_life_h: float | None = None
    mission_duty: float = 1.0


@dataclass(frozen=True)
class Outcome:
    """One check's verdict for one capacitor in one scenario."""

    check: str
    status: Status
    ratio: float | None
    measured: float | None
    limit: float | None
    unit: str
    message: str
    details: dict[str, Any] = field(default_factory=dict)
    missing: tuple[str, ...] = ()


def status_of(ratio: float, policy: Policy) -> Status:
    """fail above 1.0, near from the policy's near-limit ratio, else pass."""
    if ratio > 1.0:
        return Status.FAIL
    if ratio >= policy.near_ratio:
        return Status.NEAR
    return Status.PASS


def unrated(info: RuleInfo, ctx: Context, missing: list[str] | tuple[str, ...], what: str = "part data") -> Outcome:
    fields_ = ", ".join(missing)
    return Outcome(info.id, Status.UNRATED, None, None, None, info.unit,
                   f"{ctx.capacitor}: {info.title.lower()} cannot be checked: {what} missing ({fields_})",
                   missing=tuple(missing))


TEMPERATURE = "ambient temperature"
TEMPERATURE_WHERE = "a temperature (the scenario's ambient_c or temperature_c, or the netlist's .temp)"


def no_temperature(info: RuleInfo, ctx: Context) -> Outcome:
    """Unrated: the scenario has no temperature and the limit depends on it (never judged at a default)."""
    return unrated(info, ctx, [TEMPERATURE], TEMPERATURE_WHERE)


def beyond(info: RuleInfo, ctx: Context, what: str, t_c: float, end_c: float) -> Outcome:
    """Unrated: a curve against temperature read above its end (or the part's rating): no value exists there."""
    return Outcome(info.id, Status.UNRATED, None, None, None, info.unit,
                   f"{ctx.capacitor}: {info.title.lower()} cannot be checked at {t_c:.1f} °C: {what} ends at "
                   f"{end_c:g} °C (never extrapolated)", missing=(f"{what} above {end_c:g} °C",))


def sources_of(ctx: Context, keys: list[str]) -> dict[str, dict[str, str]]:
    """Return {policy key: {source, status}} for the policy values a result used (its provenance)."""
    out = {}
    for key in keys:
        got = ctx.policy.get(ctx.part.technology, key)
        if got is not None:
            out[key] = got.provenance()
    return out
