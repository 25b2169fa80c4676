"""Reverse voltage on polarized capacitors.

The reverse voltage is the most negative voltage over the whole run (start-up included).  The
limit is the part's own reverse rating, else the policy's: a fraction of rated voltage (solid
tantalum: 10 % at 25 °C, 3 % at 85 °C, 1 % at 125 °C, a secondary source) and/or an
absolute maximum (aluminum electrolytic: 1.5 V per manufacturer application notes; solid tantalum:
10 % of rated or 1.0 V at 25 °C, 3 % or 0.5 V at 85 °C, 1 % or 0.1 V at 125 °C, a secondary
source); the lowest applies.  Unpolarized parts pass without a check.

Passes: a tantalum at -0.2 V with 10 V rating at 25 °C (0.2 / 1.0 = 20 %).
Fails: an electrolytic at -3 V (3 / 1.5 = 200 %).
"""

from __future__ import annotations

from ..thermal import curve_at
from ..registry import RuleInfo
from ..status import Status
from .base import Context, Outcome, beyond, no_temperature, status_of, sources_of, unrated

INFO = RuleInfo(
    id="stress.reverse",
    kind="stress",
    title="Reverse voltage on a polarized capacitor",
    needs=("rated_voltage_v",),
    policy_needs=("reverse_factor|reverse_factor_curve|reverse_max_v",),
    formula="V_reverse = max(0, -min v) over the run; limit = min(part limit | factor(T) x V_rated | max V); "
            "ratio = V_reverse / limit",
    sources=("tantalum reverse limits 10 %/3 %/1 % of rated, at most 1.0/0.5/0.1 V, at 25/85/125 °C: a secondary "
             "page (makers' datasheets state it similarly, from memory)",
             "aluminum electrolytic reverse voltage <= 1.5 V: manufacturer application notes"),
    applies=lambda part: part.is_polarized,
    unit="V",
    doc=__doc__,
)


def _at(ctx: Context, table, what: str) -> float | Outcome:
    """A reverse-limit curve at the hot spot, or the unrated outcome when it cannot be read there."""
    t = ctx.thermal.hotspot_c
    if t is None:
        return no_temperature(INFO, ctx)
    rated = ctx.part.rated_temperature_c
    got = curve_at(table, t, rated)
    if got is None:
        return beyond(INFO, ctx, f"{what} (or the part's rated temperature)", t,
                      min(table[-1][0], rated) if rated is not None else table[-1][0])
    return got


def check(ctx: Context) -> Outcome:
    part, s = ctx.part, ctx.stress
    reverse = max(0.0, -min(s.v_min_v, s.startup_v_min_v))
    limits = []
    if part.reverse_voltage_v is not None:
        limits.append(part.reverse_voltage_v)
    else:
        curve = ctx.policy.get(part.technology, "reverse_factor_curve")
        factor = ctx.policy.get(part.technology, "reverse_factor")
        max_v = ctx.policy.get(part.technology, "reverse_max_v")
        if (curve or factor) and part.rated_voltage_v is None:
            # the limit is a fraction of the rating (and at most an absolute cap): the cap alone may be laxer
            return unrated(INFO, ctx, ["rated_voltage_v"])
        if curve is not None:
            got = _at(ctx, curve.value, "the policy's reverse_factor_curve")
            if isinstance(got, Outcome):
                return got
            limits.append(got * part.rated_voltage_v)
        elif factor is not None:
            limits.append(factor.value * part.rated_voltage_v)
        if max_v is not None:
            limits.append(max_v.value)
        cap = ctx.policy.get(part.technology, "reverse_max_v_curve")
        if cap is not None:  # solid tantalum: also at most 1.0 / 0.5 / 0.1 V at 25 / 85 / 125 °C
            got = _at(ctx, cap.value, "the policy's reverse_max_v_curve")
            if isinstance(got, Outcome):
                return got
            limits.append(got)
    if not limits:
        if reverse == 0.0:
            return Outcome(INFO.id, Status.PASS, 0.0, 0.0, None, "V", f"{ctx.capacitor} never sees reverse voltage")
        return unrated(INFO, ctx, ["reverse_voltage_v"], "a reverse-voltage limit (part or policy)")
    limit = min(limits)
    ratio = reverse / limit
    hint = ""
    if s.v_max_v < 0 and ratio > 1:
        # negative over the whole window: a reversed part, or a card whose nodes are not (+, -)
        hint = (" (negative over the whole window: derate takes the card's first node as the + terminal; "
                "if the schematic symbol is not a polarized one, check the node order, or list the capacitor "
                "under reversed_terminals in derate.yaml)")
    return Outcome(INFO.id, status_of(ratio, ctx.policy), ratio, reverse, limit, "V",
                   f"{ctx.capacitor} sees {reverse:.3g} V reverse against {limit:.3g} V allowed{hint}",
                   {"sources": sources_of(ctx, ["reverse_factor", "reverse_factor_curve", "reverse_max_v",
                                                "reverse_max_v_curve"])})
