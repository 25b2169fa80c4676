"""Hot-spot temperature against the allowed maximum (ambient plus self-heating).

Hot spot = ambient + self-heating.  Self-heating comes from the ripple losses when the part gives
ESR (a value or a table against frequency) and a thermal resistance: dT = sum I_n^2 ESR(f_n) R_th;
else from its rated rise at rated ripple: dT = dT0 (I_eq / I_rated)^2 (manufacturers' notes).  The
limit is the part's rated (upper category) temperature, which always applies (Kyocera and Murata
MLCC guides, KEMET polymer guideline), tightened by the policy's margin below it or its absolute
maximum.  Without thermal data the hot spot is at least the ambient: a part whose ambient is
already over its limit fails; otherwise the check is unrated.  The ambient is the scenario's, plus
the capacitor's local offset (``ambient_offsets`` in derate.yaml).  The
stress ratio is (T_hot - 25) / (T_limit - 25): 1.0 at the limit, rising with temperature.
Self-heating on its own is ``stress.self-heating`` (checks/selfheating.py).

Passes: 60 °C ambient + 4 °C rise in a 105 °C part with a 20 °C margin (64 < 85 °C).
Fails: 60 °C ambient + 30 °C rise in a 105 °C part with a 20 °C margin (90 > 85 °C); an 85 °C X5R
in a 115 °C ambient whatever its thermal data.
"""

from __future__ import annotations

from ..registry import RuleInfo
from ..status import Status
from .base import Context, Outcome, no_temperature, status_of, sources_of, unrated

REFERENCE_C = 25.0

INFO = RuleInfo(
    id="stress.hotspot",
    kind="stress",
    title="Hot-spot temperature against the allowed maximum",
    needs=("rated_temperature_c",),
    policy_needs=("hotspot_margin_c|hotspot_max_c",),
    formula="T_hot = T_ambient + dT; dT = sum I_n^2 ESR(f_n) R_th or dT0 (I_eq/I_rated)^2; "
            "limit = T_rated - margin (or max); ratio = (T_hot - 25) / (limit - 25)",
    sources=("P = I^2 ESR self-heating: capacitor manufacturers' ripple notes",
             "MLCC self-heating <= 20 °C: manufacturer guides"),
    unit="°C",
    doc=__doc__,
)

def _ratio(t_hot: float, limit: float) -> float:
    if limit <= REFERENCE_C:
        return float("inf") if t_hot > limit else 0.0
    return max(0.0, (t_hot - REFERENCE_C) / (limit - REFERENCE_C))


def limits_of(ctx: Context) -> tuple[list[float], list[str]]:
    """The temperatures the hot spot must stay under, and what is missing to know them.

    The part's rated (upper category) temperature always applies, whatever the policy says (Kyocera
    and Murata MLCC guides, KEMET polymer guideline: the operating temperature, self-heating
    included, must not exceed it); the policy adds its margin below it or an absolute maximum.
    """
    part = ctx.part
    max_c = ctx.policy.value(part.technology, "hotspot_max_c")
    margin = ctx.policy.value(part.technology, "hotspot_margin_c")
    by_rated = ctx.policy.value(part.technology, "hotspot_max_by_rated_c")
    limits, missing = [], []
    if part.rated_temperature_c is not None:
        limits.append(part.rated_temperature_c)
    if max_c is not None:
        limits.append(max_c)
    if by_rated is not None and part.rated_temperature_c is not None:
        # a maximum for parts of one rating ("110 °C for 125 °C parts"); other ratings keep the margin
        row = next((mx for rated, mx in by_rated if abs(rated - part.rated_temperature_c) < 0.5), None)
        if row is not None:
            limits.append(row)
            margin = None
    if margin is not None:
        if part.rated_temperature_c is None:
            missing.append("rated_temperature_c")
        else:
            limits.append(part.rated_temperature_c - margin)
    if not limits and not missing:
        missing.append("hotspot_margin_c (policy) or rated_temperature_c (part)")
    return limits, missing


def check(ctx: Context) -> Outcome:
    part, th = ctx.part, ctx.thermal
    if th.ambient_c is None:
        return no_temperature(INFO, ctx)
    limits, missing = limits_of(ctx)
    if missing:
        return unrated(INFO, ctx, missing, "part data" if missing == ["rated_temperature_c"] else "a limit")
    limit = min(limits)
    where = f"{th.ambient_c:.0f} °C ambient" + (f" (scenario + {th.offset_c:g} °C local)" if th.offset_c else "")
    sources = sources_of(ctx, ["hotspot_margin_c", "hotspot_max_c", "hotspot_max_by_rated_c"])
    if th.rise_c is None:
        if th.ambient_c > limit:
            # without thermal data the hot spot is still at least the ambient: over the limit already
            ratio = _ratio(th.ambient_c, limit)
            return Outcome(INFO.id, Status.FAIL, ratio, th.ambient_c, limit, "°C",
                           f"{ctx.capacitor} runs at {where}, above the {limit:.0f} °C allowed before any "
                           f"self-heating (rated {_rated(part)})", {"rise_c": None, "method": "ambient only",
                                                                    "lower_bound": True, "sources": sources})
        return unrated(INFO, ctx, list(th.missing), "thermal data")
    ratio = _ratio(th.hotspot_c, limit)
    return Outcome(INFO.id, status_of(ratio, ctx.policy), ratio, th.hotspot_c, limit, "°C",
                   f"{ctx.capacitor} runs at {th.hotspot_c:.1f} °C hot spot ({where} + {th.rise_c:.1f} °C "
                   f"self-heating) against {limit:.0f} °C allowed",
                   {"rise_c": th.rise_c, "method": th.method, "loss_w": th.loss_w, "ambient_c": th.ambient_c,
                    "offset_c": th.offset_c, "sources": sources})


def _rated(part) -> str:
    return f"{part.rated_temperature_c:g} °C" if part.rated_temperature_c is not None else "temperature unknown"
