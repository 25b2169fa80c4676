"""Class-2 ceramic capacitance left under DC bias.

Class-2 codes (X7R, X5R) specify the capacitance change over temperature, not voltage, so the
loss under DC bias must come from the part's own curve (manufacturer data): fraction of nominal
capacitance against DC volts, interpolated linearly, never read past its last row (the loss keeps
growing there: unrated).  The DC voltage is the magnitude of the mean over the steady-state window
(a negative rail biases a ceramic as much as a positive one).  The stress ratio is the policy's minimum fraction over
the remaining fraction.

Passes: 10 uF 50 V X7R 1210 at 12 V keeping 70 % with a 50 % minimum (ratio 0.71).
Fails: the same part at 33 V keeping 35 % (ratio 1.43).
"""

from __future__ import annotations

from ..thermal import interp
from ..registry import RuleInfo
from ..status import Status
from .base import Context, Outcome, status_of, sources_of, unrated

INFO = RuleInfo(
    id="stress.dc-bias",
    kind="stress",
    title="Class-2 ceramic capacitance under DC bias",
    needs=("dc_bias",),
    policy_needs=("dc_bias_min_fraction",),
    formula="remaining = curve(|V_dc|); ratio = minimum fraction / remaining",
    sources=("class-2 codes give temperature, not voltage, coefficients; the curve must be the part's own "
             "(manufacturer data)",),
    applies=lambda part: part.technology == "ceramic-class2",
    unit="",
    doc=__doc__,
)


def check(ctx: Context) -> Outcome:
    part = ctx.part
    if not part.dc_bias:
        return unrated(INFO, ctx, ["dc_bias"])
    minimum = ctx.policy.value(part.technology, "dc_bias_min_fraction")
    if minimum is None:
        return unrated(INFO, ctx, ["dc_bias_min_fraction"], "policy value")
    v_dc = abs(ctx.stress.v_mean_v)
    end = part.dc_bias[-1][0]
    if v_dc > end * (1 + 1e-6):  # the loss keeps growing past the curve: its last value would flatter
        return Outcome(INFO.id, Status.UNRATED, None, None, None, "",
                       f"{ctx.capacitor}: capacitance under DC bias cannot be checked at {v_dc:.3g} V DC: its "
                       f"curve ends at {end:.3g} V (never extrapolated)", missing=(f"dc_bias up to {v_dc:.3g} V",))
    remaining = interp(part.dc_bias, v_dc)
    ratio = minimum / remaining
    effective = part.capacitance_f * remaining if part.capacitance_f else None
    return Outcome(INFO.id, status_of(ratio, ctx.policy), ratio, remaining, minimum, "",
                   f"{ctx.capacitor} keeps {remaining * 100:.0f} % of its capacitance at {v_dc:.3g} V DC "
                   f"(minimum {minimum * 100:.0f} %)", {"v_dc_v": v_dc, "effective_capacitance_f": effective,
                                                "sources": sources_of(ctx, ["dc_bias_min_fraction"])})
