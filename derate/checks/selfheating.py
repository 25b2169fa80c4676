"""Self-heating from ripple against the technology's own limit.

Self-heating is the hot-spot rise above ambient, from the ripple losses (dT = sum I_n^2 ESR(f_n)
R_th) or from the part's rated rise (dT = dT0 (I_eq / I_rated)^2), as computed in thermal.py.
Some technologies limit it whatever the temperature: MLCC 20 °C (Murata MLCC FAQ; Kyocera MLCC
design guide), polyester film 10 °C and polypropylene film 5 °C (film manufacturers' guides).
The check applies where the policy sets ``self_heating_max_c`` for the technology.

Passes: an X7R MLCC heating itself by 4 °C against 20 °C (ratio 0.2).
Fails: a polypropylene film capacitor heating itself by 7 °C against 5 °C (ratio 1.4).
"""

from __future__ import annotations

from ..registry import RuleInfo
from .base import Context, Outcome, status_of, sources_of, unrated

INFO = RuleInfo(
    id="stress.self-heating",
    kind="stress",
    title="Self-heating against the technology's limit",
    needs=(),
    policy_needs=("self_heating_max_c",),
    formula="ratio = dT / dT_max",
    sources=("MLCC <= 20 °C; polyester film < 10 °C; polypropylene film < 5 °C: manufacturer guides",),
    unit="°C",
    doc=__doc__,
)


def check(ctx: Context) -> Outcome | None:
    """None when the policy sets no self-heating limit for the technology (the check does not apply)."""
    limit = ctx.policy.value(ctx.part.technology, "self_heating_max_c")
    if limit is None:
        return None
    th = ctx.thermal
    if th.rise_c is None:
        return unrated(INFO, ctx, list(th.missing), "thermal data")
    ratio = th.rise_c / limit
    return Outcome(INFO.id, status_of(ratio, ctx.policy), ratio, th.rise_c, limit, "°C",
                   f"{ctx.capacitor} heats itself by {th.rise_c:.2f} °C against {limit:.0f} °C allowed",
                   {"method": th.method, "sources": sources_of(ctx, ["self_heating_max_c"])})
