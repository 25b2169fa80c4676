"""AC voltage of mains capacitors against their AC (RMS) rating.

Safety-rated capacitors for mains (classes X and Y, IEC 60384-14) carry an AC rating: a "275VAC"
X2 part is rated 275 V RMS at line frequency, which is not a DC rating (read as one, a 275 V DC
limit would fail it on 230 V mains, whose peak is 325 V).  The check compares the RMS voltage
across the capacitor over the window with the policy's factor times the AC rating, and, because a
distorted line can peak higher than its RMS suggests, the peak |v| with the same factor times the
rating's peak (sqrt 2 x the RMS rating; common practice for waveforms that are not sinusoidal).
A part with only an AC rating is not judged against a DC one (``stress.voltage`` does not apply).

Passes: an X2 275 V AC part on 230 V + 10 % mains (253 V RMS): 253 / 275 = 92 % (near).
Fails: the same part on a 277 V + 10 % line (305 V RMS): 111 %.
"""

from __future__ import annotations

import math

from ..registry import RuleInfo
from .base import Context, Outcome, sources_of, status_of, unrated

INFO = RuleInfo(
    id="stress.ac-voltage",
    kind="stress",
    title="AC voltage against the AC rating of a mains capacitor",
    needs=("rated_voltage_ac_v",),
    policy_needs=("ac_voltage_factor",),
    formula="ratio = max(V_rms / (factor x V_ac), max|v| / (factor x sqrt2 x V_ac))",
    sources=("X and Y capacitors are rated in AC volts RMS at line frequency: IEC 60384-14 (from memory)",
             "the peak against sqrt2 x the rating for non-sinusoidal waveforms: common practice"),
    applies=lambda part: part.rated_voltage_ac_v is not None or part.safety_class is not None,
    unit="V",
    doc=__doc__,
)


def check(ctx: Context) -> Outcome:
    part, s = ctx.part, ctx.stress
    if part.rated_voltage_ac_v is None:
        return unrated(INFO, ctx, ["rated_voltage_ac_v"])
    factor = ctx.policy.value(part.technology, "ac_voltage_factor")
    if factor is None:
        return unrated(INFO, ctx, ["ac_voltage_factor"], "policy value")
    limit = factor * part.rated_voltage_ac_v
    by_rms = s.v_rms_v / limit
    by_peak = s.v_peak_abs_v / (limit * math.sqrt(2.0))
    ratio = max(by_rms, by_peak)
    what = "RMS" if by_rms >= by_peak else "peak (against sqrt2 x the RMS rating)"
    measured = s.v_rms_v if by_rms >= by_peak else s.v_peak_abs_v
    shown = limit if by_rms >= by_peak else limit * math.sqrt(2.0)
    cls = f" {part.safety_class}" if part.safety_class else ""
    return Outcome(INFO.id, status_of(ratio, ctx.policy), ratio, measured, shown, "V",
                   f"{ctx.capacitor}{cls} sees {s.v_rms_v:.4g} V RMS ({s.v_peak_abs_v:.4g} V peak) against "
                   f"{limit:.4g} V RMS allowed ({factor * 100:.0f} % of its {part.rated_voltage_ac_v:.4g} V AC rating; "
                   f"{what} decides)",
                   {"v_rms_v": s.v_rms_v, "v_peak_v": s.v_peak_abs_v, "factor": factor, "decides": what,
                    "sources": sources_of(ctx, ["ac_voltage_factor"])})
