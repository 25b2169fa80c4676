"""Ripple current against the rated ripple current.

The simulated current spectrum (twelfth-octave bands of the steady-state window) is weighted by
the part's frequency multipliers into one equivalent current at the rating frequency,
I_eq = sqrt(sum (I_n / k_f(f_n))^2) (capacitor manufacturers' ripple notes).  The allowed current
is the rated ripple current times the temperature multiplier at the ambient temperature times the
policy's ripple factor.  The temperature multipliers (the part's, else the policy's for the
technology) are normalised at the temperature the rating is given at (``ripple_temperature_c``;
without it: 25 °C for tantalum, the rated temperature for other parts, as makers write them): at
or below it the rating holds as is, above it a table is needed (unrated without one).  Without a
frequency table the multiplier is taken as 1.0 everywhere and the finding says so; when more than
10 % of the current (as I^2) lies outside a table on the side where holding its end value would
flatter the part (below a table that rises with frequency), the ripple is unrated.  The check applies to electrolytic and tantalum parts, and to any part that
gives a ripple rating; ceramics and films are limited by self-heating instead.

Passes: 0.3 A at 120 Hz in a part rated 1.0 A at 120 Hz / 105 °C, 60 °C ambient (k_T 1.7).
Unrated: a tantalum rated 1.0 A at 25 °C in a 115 °C ambient with no temperature multipliers.
Fails: 2.5 A at 100 kHz in a part rated 1.2 A at 100 kHz with factor 0.8.
"""

from __future__ import annotations

from ..thermal import OUTSIDE_SHARE, outside_frequency_table, temperature_multiplier
from ..units import format_number
from ..registry import RuleInfo
from ..status import Status
from .base import Context, Outcome, no_temperature, status_of, sources_of, unrated

INFO = RuleInfo(
    id="stress.ripple",
    kind="stress",
    title="Ripple current against rated ripple current",
    needs=("ripple_current_a",),
    policy_needs=("ripple_factor",),
    formula="I_eq = sqrt(sum (I_n / k_f(f_n))^2); limit = I_rated x k_T(T_ambient) / k_T(T_rating) x factor; "
            "ratio = I_eq / limit",
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
    k = temperature_multiplier(part, ctx.thermal.ambient_c, ctx.policy.value(part.technology,
                                                                             "ripple_temperature_multipliers"))
    if k.value is None:
        if ctx.thermal.ambient_c is None:
            return no_temperature(INFO, ctx)
        return Outcome(INFO.id, Status.UNRATED, None, None, None, "A",
                       f"{ctx.capacitor}: ripple current cannot be checked: {k.note}",
                       missing=("ripple_temperature_multipliers (or ripple_temperature_c)",))
    outside, below, above = outside_frequency_table(ctx.stress, part)
    if outside > OUTSIDE_SHARE:
        lo, hi = part.ripple_frequency_multipliers[0][0], part.ripple_frequency_multipliers[-1][0]
        side = "below" if below >= above else "above"
        return Outcome(INFO.id, Status.UNRATED, None, None, None, "A",
                       f"{ctx.capacitor}: ripple current cannot be checked: {100 * outside:.0f} % of it (as I^2) lies "
                       f"{side} its frequency multipliers ({lo:g} to {hi:g} Hz), where holding the end value would "
                       "understate it",
                       missing=(f"ripple_frequency_multipliers covering the current's frequencies",))
    table = part.ripple_frequency_multipliers
    if table and part.ripple_frequency_hz and not table[0][0] <= part.ripple_frequency_hz <= table[-1][0]:
        return Outcome(INFO.id, Status.UNRATED, None, None, None, "A",
                       f"{ctx.capacitor}: ripple current cannot be checked: the rating frequency "
                       f"{part.ripple_frequency_hz:g} Hz lies outside its frequency multipliers",
                       missing=("ripple_frequency_multipliers covering ripple_frequency_hz",))
    limit = part.ripple_current_a * k.value * factor
    i_eq = ctx.thermal.i_eq_a
    ratio = i_eq / limit
    notes = []
    if not table:
        notes.append("no frequency multipliers given: taken as 1.0 at every frequency")
    elif below + above > 0:
        notes.append(f"{100 * (below + above):.1f} % of the current lies outside the frequency multipliers "
                     "(held at their ends)")
    notes.append(f"temperature multiplier {k.value:.2f} at {ctx.thermal.ambient_c:.0f} °C ambient "
                 f"({'the ' + k.table + ' table, ' if k.table != 'none' else ''}{k.note})")
    return Outcome(INFO.id, status_of(ratio, ctx.policy), ratio, i_eq, limit, "A",
                   f"{ctx.capacitor} carries {format_number(i_eq, 'A')} equivalent ripple against "
                   f"{format_number(limit, 'A')} allowed ({'; '.join(notes)})",
                   {"k_temperature": k.value, "k_temperature_from": k.table, "factor": factor,
                    "i_ac_rms_a": ctx.stress.i_ac_rms_a, "outside_share": outside, "notes": notes,
                    "sources": sources_of(ctx, ["ripple_factor", "ripple_temperature_multipliers"])})
