"""Applied voltage against the derated rating.

The applied voltage is the worst of DC plus ripple peak over the steady-state window: the peak
|v| for unpolarized parts, the most positive voltage for polarized ones (reverse voltage has its
own check).  The limit is the policy's voltage factor (a constant, or a curve against the hot-spot
temperature) times the category voltage: the rated voltage, reduced above a temperature for
technologies whose rating falls with temperature (solid tantalum: rated up to 85 °C, linearly
to 2/3 of rated at 125 °C, per MIL-PRF-55365-style chip datasheets).

Passes: a 16 V X7R ceramic at 5.5 V peak with factor 0.6 (5.5 / 9.6 = 57 %).
Fails: a 35 V electrolytic at 37 V peak with factor 0.8 (37 / 28 = 132 %).
"""

from __future__ import annotations

from ..thermal import interp
from ..registry import RuleInfo
from .base import Context, Outcome, status_of, sources_of, unrated

INFO = RuleInfo(
    id="stress.voltage",
    kind="stress",
    title="Applied voltage against derated rating",
    needs=("rated_voltage_v",),
    policy_needs=("voltage_factor|voltage_factor_curve",),
    formula="V_applied = max|v| over the window (polarized: max v); "
            "limit = factor(T_hot) x V_rated x category(T_hot); ratio = V_applied / limit",
    sources=("policy values: see `derate rules`",
             "tantalum category voltage 2/3 of rated at 125 °C: MIL-PRF-55365-style chip datasheets"),
    unit="V",
    doc=__doc__,
)


def category_fraction(ctx: Context) -> tuple[float, str]:
    """Return the fraction of rated voltage allowed at the hot spot (part's curve, else policy's)."""
    t = ctx.thermal.hotspot_c
    if ctx.part.category_voltage:
        return interp(ctx.part.category_voltage, t), "part"
    curve = ctx.policy.get(ctx.part.technology, "category_voltage")
    if curve is not None:
        return interp(curve.value, t), "policy"
    return 1.0, "none"


def derating_factor(ctx: Context) -> float | None:
    """The policy's factor: the strictest of a factor by the part's rated voltage
    (``voltage_factor_by_rated_v``: polymer tantalum 10 % derating at or below 10 V rated, 20 % above,
    per KEMET's polymer derating Q&A), a curve against the hot spot, and a constant."""
    factors = []
    by_rated = ctx.policy.get(ctx.part.technology, "voltage_factor_by_rated_v")
    if by_rated is not None and ctx.part.rated_voltage_v is not None:
        factors += [f for up_to, f in sorted(by_rated.value) if ctx.part.rated_voltage_v <= up_to + 1e-9][:1]
    curve = ctx.policy.get(ctx.part.technology, "voltage_factor_curve")
    if curve is not None:
        factors.append(interp(curve.value, ctx.thermal.hotspot_c))
    # a technology's own constant tightens a factor by rating; the 'default' one only stands in for none
    constant = ctx.policy.own(ctx.part.technology, "voltage_factor") if factors else \
        ctx.policy.get(ctx.part.technology, "voltage_factor")
    if constant is not None:
        factors.append(constant.value)
    return min(factors) if factors else None  # the stricter applies (a policy that extends may tighten)


def check(ctx: Context) -> Outcome:
    part, s = ctx.part, ctx.stress
    if part.rated_voltage_v is None:
        return unrated(INFO, ctx, ["rated_voltage_v"])
    factor = derating_factor(ctx)
    if factor is None:
        return unrated(INFO, ctx, ["voltage_factor"], "policy value")
    applied = s.v_max_v if part.is_polarized else s.v_peak_abs_v
    applied = max(applied, 0.0)
    cat, cat_from = category_fraction(ctx)
    limit = factor * part.rated_voltage_v * cat
    ratio = applied / limit
    status = status_of(ratio, ctx.policy)
    msg = (f"{ctx.capacitor} sees {applied:.3g} V peak against {limit:.3g} V allowed "
           f"({factor * 100:.0f} % of {part.rated_voltage_v:.3g} V rated"
           + (f", category {cat * 100:.0f} % at {ctx.thermal.hotspot_c:.0f} °C" if cat < 1 else "") + ")")
    return Outcome(INFO.id, status, ratio, applied, limit, "V", msg,
                   {"factor": factor, "category_fraction": cat, "category_from": cat_from,
                    "hotspot_c": ctx.thermal.hotspot_c,
                    "sources": sources_of(ctx, ["voltage_factor_by_rated_v", "voltage_factor", "voltage_factor_curve",
                                                "category_voltage"])})
