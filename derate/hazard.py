"""When a report needs the safety caution: mains or high-energy circuits.

The caution is added when the project says ``hazard: true``, or when any capacitor sees more
than 60 V (the SELV limit for DC; IEC 61140 / IEC 60950 - from memory) or stores 1 J or more
(common practice: energy that can burn or weld on contact).  ``hazard: false`` in the project
file turns the automatic detection off.
"""

from __future__ import annotations

from .measure import Stress

CAUTION = ("Caution: this circuit carries mains or hazardous energy. These results support engineering "
           "judgement; they do not replace safety analysis. Follow local electrical codes and the applicable "
           "product safety standards, and have the design reviewed under licensed professional practice.")
SELV_V = 60.0  # from memory: IEC 61140 SELV limit for DC
ENERGY_J = 1.0  # common practice


def caution_for(stresses: list[Stress], capacitance: dict[str, float | None], declared: bool | None) -> str | None:
    """Return the caution text when the circuit is (or is declared) hazardous, else None."""
    if declared is False:
        return None
    if declared:
        return CAUTION
    for s in stresses:
        v = max(abs(s.startup_v_peak_v), abs(s.startup_v_min_v), s.v_peak_abs_v)
        c = capacitance.get(s.capacitor) or 0.0
        if v > SELV_V or 0.5 * c * v * v >= ENERGY_J:
            return CAUTION
    return None
