"""Start-up peak voltage against the surge rating.

The start-up peak is the largest voltage over the whole run and over a switch-on run: where a
source starts above zero and the run starts from the operating point, derate simulates the circuit
switched on from zero as well (``analysis.power_up``).  The limit is the policy's surge factor
times the part's surge voltage, or times the rated voltage when the part has no surge rating (the
conservative choice), times the category fraction at the hot spot where the rating falls with
temperature.  Typical surge ratings: aluminum electrolytic 1.15 x rated; solid tantalum 1.33 x
rated at 85 °C (manufacturer datasheets).

Passes: a 50 V electrolytic (surge 57.5 V) peaking at 40 V at power-up with factor 1.0.
Fails: a 6.3 V polymer capacitor overshooting to 7.5 V at power-up with factor 1.0 and no surge rating.
"""

from __future__ import annotations

from ..registry import RuleInfo
from ..status import Status
from .base import Context, Outcome, beyond, no_temperature, status_of, sources_of, unrated
from .voltage import category_fraction

INFO = RuleInfo(
    id="stress.surge",
    kind="stress",
    title="Start-up peak voltage against surge rating",
    needs=("rated_voltage_v",),
    policy_needs=("surge_factor",),
    formula="V_startup = max|v| over the run and a switch-on run (polarized: max v); "
            "limit = factor x (V_surge or V_rated) x category(T_hot)",
    sources=("aluminum electrolytic surge 1.15 x rated; tantalum 1.33 x rated at 85 °C: manufacturer datasheets",),
    applies=lambda part: part.rated_voltage_v is not None or part.surge_voltage_v is not None
    or part.rated_voltage_ac_v is None,
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
    if s.power_up == "failed":
        return Outcome(INFO.id, Status.UNRATED, None, None, None, "V",
                       f"{ctx.capacitor}: the start-up peak cannot be checked: the switch-on run failed",
                       missing=("a switch-on run (see the scenario's notes)",))
    if s.power_up == "off":
        return unrated(INFO, ctx, ["a switch-on run (analysis.power_up is off)"], "a simulation")
    # the surge rating falls with the category voltage where the maker derates it (solid tantalum: surge
    # 1.33 x rated up to 85 °C, 1.3 x the category voltage at 125 °C; makers' tantalum datasheets, from memory)
    cat, cat_from, cat_end = category_fraction(ctx)
    if cat is None:
        if ctx.thermal.hotspot_c is None:
            return no_temperature(INFO, ctx)
        return beyond(INFO, ctx, f"the {cat_from}'s category voltage (or the part's rated temperature)",
                      ctx.thermal.hotspot_c, cat_end)
    base = part.surge_voltage_v or part.rated_voltage_v
    peak = s.startup_v_peak_v if part.is_polarized else max(s.startup_v_peak_v, -s.startup_v_min_v)
    peak = max(peak, 0.0)
    limit = factor * base * cat
    ratio = peak / limit
    basis = "surge rating" if part.surge_voltage_v else "rated voltage (no surge rating given)"
    start = {"simulated": "switch-on simulated from zero", "in-run": "the run starts from zero"}.get(
        s.power_up, "start-up of the run")
    at = f", category {cat * 100:.0f} % at {ctx.thermal.hotspot_c:.0f} °C" if cat < 1 else ""
    return Outcome(INFO.id, status_of(ratio, ctx.policy), ratio, peak, limit, "V",
                   f"{ctx.capacitor} peaks at {peak:.3g} V during start-up ({start}) against {limit:.3g} V "
                   f"({factor * 100:.0f} % of its {basis}{at})",
                   {"basis": basis, "power_up": s.power_up, "category_fraction": cat,
                    "sources": sources_of(ctx, ["surge_factor", "category_voltage"])})
