"""Ripple current against the rated ripple current.

The simulated current spectrum (twelfth-octave bands of the steady-state window) is weighted by
the part's frequency multipliers into one equivalent current at the rating frequency,
I_eq = sqrt(sum (I_n / k_f(f_n))^2) (capacitor manufacturers' ripple notes).  The allowed current
is the rated ripple current times the temperature multiplier at the ambient temperature times the
policy's ripple factor.  Without a frequency table the multiplier is taken as 1.0 everywhere and
the finding says so.  The check applies to electrolytic and tantalum parts, and to any part that
gives a ripple rating; ceramics and films are limited by self-heating instead.

Passes: 0.3 A at 120 Hz in a part rated 1.0 A at 120 Hz / 105 °C, 60 °C ambient (k_T 1.7).
Fails: 2.5 A at 100 kHz in a part rated 1.2 A at 100 kHz with factor 0.8.
"""

from __future__ import annotations

from ..thermal import temperature_multiplier
from ..units import format_number
from ..registry import RuleInfo
from .base import Context, Outcome, status_of, sources_of, unrated

INFO = RuleInfo(
    id="stress.ripple",
    kind="stress",
    title="Ripple current against rated ripple current",
    needs=("ripple_current_a",),
    policy_needs=("ripple_factor",),
    formula="I_eq = sqrt(sum (I_n / k_f(f_n))^2); limit = I_rated x k_T(T_ambient) x factor; ratio = I_eq / limit",
    sources=("several frequencies: I_eq = sqrt(sum (I_n/k_n)^2), capacitor manufacturers' ripple-current notes",),
    # ceramics and films rarely carry a ripple rating: their limit is self-heating (stress.hotspot,
    # stress.self-heating); a ripple rating given for them is checked too
    applies=lambda part: part.ripple_current_a is not None
    or (part.technology or "").startswith(("aluminum", "tantalum")),
    unit="A",
    doc=__doc__,
)


def check(ctx: Context) -> Outcome:
    part = ctx.part
    if part.ripple_current_a is None:
        return unrated(INFO, ctx, ["ripple_current_a"])
    factor = ctx.policy.value(part.technology, "ripple_factor")
    if factor is None:
        return unrated(INFO, ctx, ["ripple_factor"], "policy value")
    k_t = temperature_multiplier(part, ctx.scenario.ambient_c)
    limit = part.ripple_current_a * k_t * factor
    i_eq = ctx.thermal.i_eq_a
    ratio = i_eq / limit
    notes = []
    if not part.ripple_frequency_multipliers:
        notes.append("no frequency multipliers given: taken as 1.0 at every frequency")
    if not part.ripple_temperature_multipliers:
        notes.append("no temperature multipliers given: the rating is used as is")
    return Outcome(INFO.id, status_of(ratio, ctx.policy), ratio, i_eq, limit, "A",
                   f"{ctx.capacitor} carries {format_number(i_eq, 'A')} equivalent ripple against "
                   f"{format_number(limit, 'A')} allowed"
                   + (f" ({'; '.join(notes)})" if notes else ""),
                   {"k_temperature": k_t, "factor": factor, "i_ac_rms_a": ctx.stress.i_ac_rms_a, "notes": notes,
                    "sources": sources_of(ctx, ["ripple_factor"])})
