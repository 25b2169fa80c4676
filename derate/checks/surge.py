"""Start-up peak voltage against the surge rating.

The start-up peak is the largest voltage over the whole run (power-up included).  The limit is
the policy's surge factor times the part's surge voltage, or times the rated voltage when the part
has no surge rating (the conservative choice).  Typical surge ratings: aluminum electrolytic
1.15 x rated; solid tantalum 1.33 x rated at 85 °C (manufacturer datasheets).

Passes: a 50 V electrolytic (surge 57.5 V) peaking at 40 V at power-up with factor 1.0.
Fails: a 6.3 V polymer capacitor overshooting to 7.5 V at power-up with factor 1.0 and no surge rating.
"""

from __future__ import annotations

from ..registry import RuleInfo
from .base import Context, Outcome, status_of, sources_of, unrated

INFO = RuleInfo(
    id="stress.surge",
    kind="stress",
    title="Start-up peak voltage against surge rating",
    needs=("rated_voltage_v",),
    policy_needs=("surge_factor",),
    formula="V_startup = max|v| over the whole run (polarized: max v); limit = factor x (V_surge or V_rated)",
    sources=("aluminum electrolytic surge 1.15 x rated; tantalum 1.33 x rated at 85 °C: manufacturer datasheets",),
    unit="V",
    doc=__doc__,
)


def check(ctx: Context) -> Outcome:
    part, s = ctx.part, ctx.stress
    if part.rated_voltage_v is None and part.surge_voltage_v is None:
        return unrated(INFO, ctx, ["rated_voltage_v"])
    factor = ctx.policy.value(part.technology, "surge_factor")
    if factor is None:
        return unrated(INFO, ctx, ["surge_factor"], "policy value")
    base = part.surge_voltage_v or part.rated_voltage_v
    peak = s.startup_v_peak_v if part.is_polarized else max(s.startup_v_peak_v, -s.startup_v_min_v)
    peak = max(peak, 0.0)
    limit = factor * base
    ratio = peak / limit
    basis = "surge rating" if part.surge_voltage_v else "rated voltage (no surge rating given)"
    return Outcome(INFO.id, status_of(ratio, ctx.policy), ratio, peak, limit, "V",
                   f"{ctx.capacitor} peaks at {peak:.3g} V during start-up against {limit:.3g} V "
                   f"({factor * 100:.0f} % of its {basis})", {"basis": basis, "sources": sources_of(ctx, ["surge_factor"])})
