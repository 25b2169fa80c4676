"""Expected life of aluminum electrolytic and polymer capacitors against the mission life.

Life at the hot-spot temperature: L = L0 * 2^((T0 - T_hot) / 10) for liquid aluminum
electrolytics (the 10 °C rule; e.g. TDK electronics primer vol. 7; best between about 70 and
90 °C) and L = L0 * 10^((T0 - T_hot) / 20) for aluminum polymer (from memory).  T0 is the
temperature of the life rating (the rated temperature unless given).  The required life is the
mission life times the duty cycle times the policy's life factor.  Each scenario is judged as if
the product ran in that corner all its life (the worst corner decides).  Extrapolated life is
capped at the policy's ``life_max_h`` (no capacitor outlives its seals and electrolyte however
cool it runs), and a hot spot more than 35 °C below the life rating's temperature is noted as
outside the range the makers state the rule for (Rubycon technical notes: about 70-90 °C for the
10 °C rule).

Passes: a 105 °C / 2000 h part at a 65 °C hot spot gives 32 000 h against 20 000 h required.
Fails: the same part at 95 °C gives 4000 h against 20 000 h.
"""

from __future__ import annotations

from ..thermal import DEFAULT_LIFE_MODEL, LIFE_MODELS, LIFE_VALID_BELOW_C, life_hours
from ..registry import RuleInfo
from .base import Context, Outcome, no_temperature, status_of, sources_of, unrated

INFO = RuleInfo(
    id="stress.life",
    kind="stress",
    title="Expected life against mission life",
    needs=("base_life_h", "rated_temperature_c"),
    policy_needs=("life_factor",),
    formula="L = min(L0 * 2^((T0 - T_hot)/10) (polymer: L0 * 10^((T0 - T_hot)/20)), cap); "
            "required = mission life x duty x factor; ratio = required / L",
    sources=("10 °C rule: capacitor manufacturers' life notes (e.g. TDK electronics primer vol. 7)",
             "polymer 20 °C decade rule: from memory"),
    applies=lambda part: part.technology in DEFAULT_LIFE_MODEL,
    unit="h",
    doc=__doc__,
)


def check(ctx: Context) -> Outcome:
    part = ctx.part
    missing = []
    if part.base_life_h is None:
        missing.append("base_life_h")
    t0 = part.life_temperature_c if part.life_temperature_c is not None else part.rated_temperature_c
    if t0 is None:
        missing.append("rated_temperature_c")
    if missing:
        return unrated(INFO, ctx, missing)
    mission = ctx.mission_life_h
    if mission is None:
        return unrated(INFO, ctx, ["mission.life_h"], "a mission life (project file or policy)")
    if ctx.thermal.ambient_c is None:
        return no_temperature(INFO, ctx)
    if ctx.thermal.rise_c is None:
        return unrated(INFO, ctx, list(ctx.thermal.missing), "thermal data for the hot spot")
    model = ctx.policy.value(part.technology, "life_model") or DEFAULT_LIFE_MODEL[part.technology]
    if model not in LIFE_MODELS:
        return unrated(INFO, ctx, [f"life_model '{model}' (known: {', '.join(LIFE_MODELS)})"], "policy value")
    factor = ctx.policy.value(part.technology, "life_factor", 1.0)
    hot = ctx.thermal.hotspot_c
    model_life = life_hours(part.base_life_h, t0, hot, model)
    cap = ctx.policy.value(part.technology, "life_max_h")
    life = min(model_life, cap) if cap is not None else model_life
    notes = []
    if cap is not None and model_life > cap:
        notes.append(f"the model gives {model_life:,.0f} h; capped at the policy's {cap:,.0f} h")
    if hot < t0 - LIFE_VALID_BELOW_C:
        notes.append(f"{hot:.0f} °C is more than {LIFE_VALID_BELOW_C:g} °C below the {t0:g} °C life rating: outside the "
                     "range the makers state the rule for (extrapolated)")
    required = mission * ctx.mission_duty * factor
    ratio = required / life
    return Outcome(INFO.id, status_of(ratio, ctx.policy), ratio, life, required, "h",
                   f"{ctx.capacitor} is expected to last {life:,.0f} h at {hot:.1f} °C hot spot "
                   f"against {required:,.0f} h required" + (f" ({'; '.join(notes)})" if notes else ""),
                   {"model": model, "t0_c": t0, "factor": factor, "model_life_h": model_life, "life_cap_h": cap,
                    "hotspot_c": hot, "notes": notes,
                    "sources": sources_of(ctx, ["life_factor", "life_model", "life_max_h"])})
