"""Ripple weighting, self-heating, hot-spot temperature and electrolytic life (pure functions).

Formulas and their sources (status as checked, see DEVELOPERS.md "Outside references"):
- several ripple frequencies: I_eq = sqrt(sum (I_n / k_f(f_n))^2), k_f the part's frequency
  multiplier relative to its rating frequency (capacitor manufacturers' ripple-current notes);
- self-heating from losses: dT = sum I_n^2 * ESR(f_n) * R_th (P = I^2 ESR, manufacturers' notes);
  or from the rated rise: dT = dT0 * (I_eq / I_rated)^2;
- hot spot = ambient + dT;
- aluminum electrolytic life: L = L0 * 2^((T0 - T) / 10), the 10 °C rule (e.g. TDK electronics
  primer vol. 7 "Arrhenius law (doubling for every 10 °C)"); best between about 70 and 90 °C;
- aluminum polymer life: L = L0 * 10^((T0 - T) / 20) (manufacturers' polymer notes; from memory).
Tables are interpolated linearly (frequency tables on a log-frequency axis) and held constant
beyond their ends.
"""

from __future__ import annotations

import bisect
import math
from dataclasses import dataclass, field
from typing import Sequence

from .measure import Stress
from .parts import Part

Table = Sequence[tuple[float, float]]


def interp(table: Table, x: float, log_x: bool = False) -> float:
    """Interpolate y(x) in a sorted [x, y] table; constant beyond the ends."""
    xs = [p[0] for p in table]
    ys = [p[1] for p in table]
    if x <= xs[0]:
        return ys[0]
    if x >= xs[-1]:
        return ys[-1]
    k = bisect.bisect_right(xs, x)
    x0, x1, y0, y1 = xs[k - 1], xs[k], ys[k - 1], ys[k]
    if log_x:
        x, x0, x1 = math.log(x), math.log(x0), math.log(x1)
    return y0 + (y1 - y0) * (x - x0) / (x1 - x0)


def frequency_multiplier(part: Part, f_hz: float) -> float:
    """Return k_f(f) relative to the rating frequency (1.0 without a table)."""
    table = part.ripple_frequency_multipliers
    if not table:
        return 1.0
    k = interp(table, f_hz, log_x=True)
    if part.ripple_frequency_hz:
        k /= interp(table, part.ripple_frequency_hz, log_x=True)
    return k


def temperature_multiplier(part: Part, ambient_c: float) -> float:
    """Return the ripple-rating multiplier at an ambient temperature (1.0 without a table)."""
    table = part.ripple_temperature_multipliers
    return interp(table, ambient_c) if table else 1.0


def equivalent_ripple(stress: Stress, part: Part) -> float:
    """Return I_eq = sqrt(sum (I_band / k_f(f_band))^2) at the part's rating frequency."""
    if not stress.bands:
        return stress.i_ac_rms_a
    total = 0.0
    for f, i in stress.bands:
        k = frequency_multiplier(part, f)
        total += (i / k) ** 2
    return math.sqrt(total)


def esr_at(part: Part, f_hz: float) -> float | None:
    """Return the ESR at a frequency: the table (log-log interpolation) or the single value."""
    if part.esr_table:
        logs = [(math.log(f), math.log(r)) for f, r in part.esr_table]
        return math.exp(interp(logs, math.log(f_hz)))
    return part.esr_ohm


def loss_w(stress: Stress, part: Part) -> float | None:
    """Return the ripple loss sum I_band^2 * ESR(f_band) in watts, or None without ESR data."""
    if part.esr_table is None and part.esr_ohm is None:
        return None
    bands = stress.bands or ((stress.f_fundamental_hz or 1.0, stress.i_ac_rms_a),)
    return sum(i * i * esr_at(part, f) for f, i in bands)


@dataclass(frozen=True)
class Thermal:
    """The thermal state of one capacitor in one scenario."""

    ambient_c: float
    i_eq_a: float
    rise_c: float | None  # None: not enough data to say
    method: str  # "losses", "rated-rise" or "unknown"
    loss_w: float | None = None
    missing: tuple[str, ...] = field(default=())

    @property
    def hotspot_c(self) -> float:
        """Ambient plus self-heating (ambient alone when the rise is unknown)."""
        return self.ambient_c + (self.rise_c or 0.0)


def thermal_state(stress: Stress, part: Part, ambient_c: float) -> Thermal:
    """Return the self-heating and hot spot from the part's thermal data, by the best method known."""
    i_eq = equivalent_ripple(stress, part)
    loss = loss_w(stress, part)
    if loss is not None and part.thermal_resistance_c_per_w is not None:
        return Thermal(ambient_c, i_eq, loss * part.thermal_resistance_c_per_w, "losses", loss)
    if part.ripple_rise_c is not None and part.ripple_current_a is not None:
        return Thermal(ambient_c, i_eq, part.ripple_rise_c * (i_eq / part.ripple_current_a) ** 2, "rated-rise", loss)
    missing = []
    if part.thermal_resistance_c_per_w is None:
        missing.append("thermal_resistance_c_per_w")
    if part.esr_ohm is None and part.esr_table is None:
        missing.append("esr_ohm")
    return Thermal(ambient_c, i_eq, None, "unknown", loss, ("either " + " and ".join(missing)
                                                            + ", or ripple_rise_c and ripple_current_a",))


LIFE_MODELS = {"arrhenius-10": (2.0, 10.0), "polymer-20": (10.0, 20.0)}
DEFAULT_LIFE_MODEL = {"aluminum-electrolytic": "arrhenius-10", "aluminum-polymer": "polymer-20"}


def life_hours(base_life_h: float, rated_c: float, hotspot_c: float, model: str = "arrhenius-10") -> float:
    """Return expected life at a hot-spot temperature: L0 * base^((T0 - T) / step)."""
    base, step = LIFE_MODELS[model]
    return base_life_h * base ** ((rated_c - hotspot_c) / step)
