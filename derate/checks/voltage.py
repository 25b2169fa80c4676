"""Applied voltage against the derated rating.

The applied voltage is the worst of DC plus ripple peak over the steady-state window: the peak
|v| for unpolarized parts, the most positive voltage for polarized ones (reverse voltage has its
own check); for ceramics also the peak-to-peak voltage (Murata MLCC FAQ: both V p-p and V 0-p, DC
bias included, within the rated voltage), whichever is larger.  Curves against temperature are
never read above their end or the part's rated temperature (unrated there: the hot-spot check
judges a part run above its rating), nor without a temperature.  The limit is the policy's voltage factor (a constant, or a curve against the hot-spot
temperature) times the category voltage: the rated voltage, reduced above a temperature for
technologies whose rating falls with temperature (solid tantalum: rated up to 85 °C, linearly
to 2/3 of rated at 125 °C, per MIL-PRF-55365-style chip datasheets).

Passes: a 16 V X7R ceramic at 5.5 V peak with factor 0.6 (5.5 / 9.6 = 57 %).
Fails: a 35 V electrolytic at 37 V peak with factor 0.8 (37 / 28 = 132 %); a 100 V C0G across
+/-55 V with factor 0.8: 110 V peak-to-peak against 80 V (138 %), although its peak is 55 V.
"""

from __future__ import annotations

import math

from ..thermal import curve_at
from ..registry import RuleInfo
from .base import Context, Outcome, beyond, no_temperature, status_of, sources_of, unrated

INFO = RuleInfo(
    id="stress.voltage",
    kind="stress",
    title="Applied voltage against derated rating",
    needs=("rated_voltage_v",),
    policy_needs=("voltage_factor|voltage_factor_curve",),
    formula="V_applied = max|v| over the window (polarized: max v; ceramic: max(max|v|, V p-p)); "
            "limit = factor(T_hot) x V_rated x category(T_hot); ratio = V_applied / limit",
    sources=("policy values: see `derate rules`",
             "tantalum category voltage 2/3 of rated at 125 °C: MIL-PRF-55365-style chip datasheets",
             "MLCC: V p-p and V 0-p (DC bias included) within the rated voltage: Murata MLCC FAQ"),
    # a mains part with only an AC rating is judged by stress.ac-voltage, not against a DC rating
    applies=lambda part: part.rated_voltage_v is not None or part.rated_voltage_ac_v is None,
    unit="V",
    doc=__doc__,
)


def category_fraction(ctx: Context) -> tuple[float | None, str, float]:
    """The fraction of rated voltage allowed at the hot spot (part's curve, else policy's), where it came
    from, and the temperature its reading ends at (the curve's last row or the part's rating, the lower);
    None for the fraction when it cannot be read (no temperature, or above that end)."""
    table, source = ctx.part.category_voltage, "part"
    if not table:
        curve = ctx.policy.get(ctx.part.technology, "category_voltage")
        if curve is None:
            return 1.0, "none", math.inf
        table, source = curve.value, "policy"
    end = min(table[-1][0], ctx.part.rated_temperature_c if ctx.part.rated_temperature_c is not None else math.inf)
    t = ctx.thermal.hotspot_c
    return (curve_at(table, t, ctx.part.rated_temperature_c) if t is not None else None), source, end


def derating_factor(ctx: Context) -> float | None:
    """The policy's factor: the strictest of a factor by the part's rated voltage
    (``voltage_factor_by_rated_v``: polymer tantalum 10 % derating at or below 10 V rated, 20 % above,
    per KEMET's polymer derating Q&A), a curve against the hot spot, and a constant.  NaN when the
    curve cannot be read at this temperature (no temperature, or above its end)."""
    factors = []
    by_rated = ctx.policy.get(ctx.part.technology, "voltage_factor_by_rated_v")
    if by_rated is not None and ctx.part.rated_voltage_v is not None:
        factors = [f for up_to, f in sorted(by_rated.value) if ctx.part.rated_voltage_v <= up_to][:1]
    curve = ctx.policy.get(ctx.part.technology, "voltage_factor_curve")
    if curve is not None:
        t = ctx.thermal.hotspot_c
        got = curve_at(curve.value, t) if t is not None else None
        if got is None:
            return math.nan
        factors.append(got)
    # a technology's own constant tightens a factor by rating; the 'default' one only stands in for none
    constant = ctx.policy.own(ctx.part.technology, "voltage_factor") if factors else \
        ctx.policy.get(ctx.part.technology, "voltage_factor")
    if constant is not None:
        factors.append(constant.value)
    return min(factors) if factors else None  # the stricter applies (a policy that extends may tighten)


CERAMICS = frozenset({"ceramic-class1", "ceramic-class2"})


def applied_voltage(part, s) -> tuple[float, str]:
    """The voltage the rating is compared with, and what it is.

    Polarized parts: the most positive voltage.  Others: the peak |v|; ceramics also their
    peak-to-peak voltage, which must stay within the rating as well (Murata MLCC FAQ: both V p-p and
    V 0-p, DC bias included, within the rated voltage): the larger of the two.
    """
    if part.is_polarized:
        return max(s.v_max_v, 0.0), "peak"
    peak = max(s.v_peak_abs_v, 0.0)
    if part.technology in CERAMICS and s.v_ripple_pp_v > peak:
        return s.v_ripple_pp_v, "peak-to-peak"
    return peak, "peak"


def check(ctx: Context) -> Outcome:
    part, s = ctx.part, ctx.stress
    if part.rated_voltage_v is None:
        return unrated(INFO, ctx, ["rated_voltage_v"])
    factor = derating_factor(ctx)
    if factor is None:
        return unrated(INFO, ctx, ["voltage_factor"], "policy value")
    if math.isnan(factor):
        t = ctx.thermal.hotspot_c
        if t is None:
            return no_temperature(INFO, ctx)
        curve = ctx.policy.get(part.technology, "voltage_factor_curve")
        return beyond(INFO, ctx, "the policy's voltage_factor_curve", t, curve.value[-1][0])
    cat, cat_from, cat_end = category_fraction(ctx)
    if cat is None:
        if ctx.thermal.hotspot_c is None:
            return no_temperature(INFO, ctx)
        return beyond(INFO, ctx, f"the {cat_from}'s category voltage (or the part's rated temperature)",
                      ctx.thermal.hotspot_c, cat_end)
    applied, what = applied_voltage(part, s)
    limit = factor * part.rated_voltage_v * cat
    ratio = applied / limit
    status = status_of(ratio, ctx.policy)
    at = ctx.thermal.hotspot_c
    msg = (f"{ctx.capacitor} sees {applied:.3g} V {what} against {limit:.3g} V allowed "
           f"({factor * 100:.0f} % of {part.rated_voltage_v:.3g} V rated"
           + (f", category {cat * 100:.0f} % at {at:.0f} °C" if cat < 1 else "") + ")")
    return Outcome(INFO.id, status, ratio, applied, limit, "V", msg,
                   {"factor": factor, "category_fraction": cat, "category_from": cat_from, "applied": what,
                    "hotspot_c": at,
                    "sources": sources_of(ctx, ["voltage_factor_by_rated_v", "voltage_factor", "voltage_factor_curve",
                                                "category_voltage"])})
