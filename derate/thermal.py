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
beyond their ends; derating curves against temperature are never extrapolated past their last row or
the part's rated temperature (``curve_at``), and a ripple whose current lies largely outside its
frequency table is not judged (``outside_frequency_table``).
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


def curve_at(table: Table, t_c: float, upto_c: float | None = None) -> float | None:
    """A derating curve against temperature at ``t_c``, never extrapolated: held below its first row
    (the curves fall with temperature, so that is the conservative side) and None above its last row
    or above ``upto_c`` (the part's rated temperature: no rating exists there)."""
    if t_c > table[-1][0] + 1e-9 or (upto_c is not None and t_c > upto_c + 1e-9):
        return None
    return interp(table, t_c)


def frequency_multiplier(part: Part, f_hz: float) -> float:
    """Return k_f(f) relative to the rating frequency (1.0 without a table)."""
    table = part.ripple_frequency_multipliers
    if not table:
        return 1.0
    k = interp(table, f_hz, log_x=True)
    if part.ripple_frequency_hz:
        k /= interp(table, part.ripple_frequency_hz, log_x=True)
    return k


# Where a ripple rating is given when the part does not say: aluminium makers rate it at the upper category
# temperature, tantalum makers at 25 °C (KEMET T498 datasheet text, read on a mirror: secondary)
RIPPLE_RATED_AT_25C = frozenset({"tantalum-mno2", "tantalum-polymer", "tantalum-wet"})


def ripple_rating_temperature(part: Part) -> tuple[float | None, str]:
    """The temperature the ripple rating is given at, and where that came from."""
    if part.ripple_temperature_c is not None:
        return part.ripple_temperature_c, "ripple_temperature_c"
    if part.technology in RIPPLE_RATED_AT_25C:
        return 25.0, "tantalum ratings are given at 25 °C (makers' convention)"
    if part.rated_temperature_c is not None:
        return part.rated_temperature_c, "taken at the rated temperature (makers' convention for electrolytics)"
    return None, ""


@dataclass(frozen=True)
class TemperatureMultiplier:
    """The ripple rating's multiplier at an ambient: k_T(T) / k_T(T_rating), or why it is unknown."""

    value: float | None
    table: str  # "part", "policy", "none"
    note: str = ""


def temperature_multiplier(part: Part, ambient_c: float | None, policy_table: Table | None = None
                           ) -> TemperatureMultiplier:
    """The multiplier of the rated ripple current at ``ambient_c``.

    The table (the part's, else the policy's for the technology) is normalised at the temperature the
    rating is given at (``ripple_temperature_c``), as frequency tables are at ``ripple_frequency_hz``.
    At or below that temperature without a table the rating is used as is (multipliers only grow as
    the temperature falls).  Above it a table is needed; above a table's last row there is no rating.
    """
    if ambient_c is None:
        return TemperatureMultiplier(None, "none", "no ambient temperature")
    rated_at, why = ripple_rating_temperature(part)
    table, which = (part.ripple_temperature_multipliers, "part") if part.ripple_temperature_multipliers else (
        (policy_table, "policy") if policy_table else (None, "none"))
    if rated_at is None:
        if table is None:
            return TemperatureMultiplier(None, "none", "the temperature of the ripple rating is not known "
                                                       "(ripple_temperature_c or rated_temperature_c)")
        ones = [x for x, y in table if abs(y - 1.0) < 1e-9]  # a table written relative to its rating
        if not ones:
            return TemperatureMultiplier(None, which, "the temperature of the ripple rating is not known "
                                                      "(ripple_temperature_c)")
        rated_at, why = ones[-1], "the temperature multipliers' 1.0 row"
    if table is None:
        if ambient_c <= rated_at + 1e-9:
            return TemperatureMultiplier(1.0, "none", f"rating at {rated_at:g} °C ({why}) used as is at or below it")
        return TemperatureMultiplier(None, "none", f"the ripple rating is given at {rated_at:g} °C and the ambient is "
                                                   f"{ambient_c:g} °C: temperature multipliers are needed above it")
    top = table[-1][0]
    if ambient_c > top + 1e-9:
        return TemperatureMultiplier(None, which, f"the temperature multipliers end at {top:g} °C, below the "
                                                  f"{ambient_c:g} °C ambient")
    if rated_at > top + 1e-9 or rated_at < table[0][0] - 1e-9:
        return TemperatureMultiplier(None, which, f"the rating temperature {rated_at:g} °C lies outside the "
                                                  "temperature multipliers")
    held = (f"; held at its first row below {table[0][0]:g} °C (multipliers only grow as it gets colder)"
            if ambient_c < table[0][0] - 1e-9 else "")
    return TemperatureMultiplier(interp(table, ambient_c) / interp(table, rated_at), which,
                                 f"normalised at {rated_at:g} °C ({why}){held}")


OUTSIDE_SHARE = 0.10  # share of I_eq^2 on a table's flattering side that leaves the ripple unjudged (common practice)


def equivalent_ripple(stress: Stress, part: Part) -> float:
    """Return I_eq = sqrt(sum (I_band / k_f(f_band))^2) at the part's rating frequency."""
    if not stress.bands:
        return stress.i_ac_rms_a
    total = 0.0
    for f, i in stress.bands:
        k = frequency_multiplier(part, f)
        total += (i / k) ** 2
    return math.sqrt(total)


def outside_frequency_table(stress: Stress, part: Part) -> tuple[float, float, float]:
    """The shares of I_eq^2 from bands outside the frequency table: (on the side where holding the
    end value flatters the part, below the table, above it); zeros without a table.

    Multipliers rise with frequency (they fall toward low frequencies and level off high up), so
    holding the lowest row below the table understates the current's weight there, while holding the
    highest row above it is the conservative side; a table that falls with frequency is the reverse.
    """
    table = part.ripple_frequency_multipliers
    if not table or not stress.bands:
        return 0.0, 0.0, 0.0
    lo, hi = table[0][0], table[-1][0]
    parts = [((i / frequency_multiplier(part, f)) ** 2, f) for f, i in stress.bands]
    total = sum(p for p, _ in parts) or 1.0
    below = sum(p for p, f in parts if f < lo * (1 - 1e-6)) / total
    above = sum(p for p, f in parts if f > hi * (1 + 1e-6)) / total
    flattering = below if table[0][1] <= table[-1][1] else above
    return flattering, below, above


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

    ambient_c: float | None  # None: the scenario has no temperature
    i_eq_a: float
    rise_c: float | None  # None: not enough data to say
    method: str  # "losses", "rated-rise" or "unknown"
    loss_w: float | None = None
    missing: tuple[str, ...] = field(default=())
    offset_c: float = 0.0  # the capacitor's local ambient above the scenario's (included in ambient_c)

    @property
    def hotspot_c(self) -> float | None:
        """Ambient plus self-heating (ambient alone when the rise is unknown; None without an ambient)."""
        if self.ambient_c is None:
            return None
        return self.ambient_c + (self.rise_c or 0.0)


def thermal_state(stress: Stress, part: Part, ambient_c: float | None, offset_c: float = 0.0) -> Thermal:
    """Return the self-heating and hot spot from the part's thermal data, by the best method known."""
    i_eq = equivalent_ripple(stress, part)
    loss = loss_w(stress, part)
    if loss is not None and part.thermal_resistance_c_per_w is not None:
        return Thermal(ambient_c, i_eq, loss * part.thermal_resistance_c_per_w, "losses", loss, offset_c=offset_c)
    if part.ripple_rise_c is not None and part.ripple_current_a is not None:
        return Thermal(ambient_c, i_eq, part.ripple_rise_c * (i_eq / part.ripple_current_a) ** 2, "rated-rise", loss,
                       offset_c=offset_c)
    missing = []
    if part.thermal_resistance_c_per_w is None:
        missing.append("thermal_resistance_c_per_w")
    if part.esr_ohm is None and part.esr_table is None:
        missing.append("esr_ohm")
    return Thermal(ambient_c, i_eq, None, "unknown", loss, ("either " + " and ".join(missing)
                                                            + ", or ripple_rise_c and ripple_current_a",),
                   offset_c=offset_c)


LIFE_MODELS = {"arrhenius-10": (2.0, 10.0), "polymer-20": (10.0, 20.0)}
DEFAULT_LIFE_MODEL = {"aluminum-electrolytic": "arrhenius-10", "aluminum-polymer": "polymer-20"}
# below the life rating's temperature by more than this, the 10 °C rule is outside the range its makers
# state it for (Rubycon technical notes: consistent with Arrhenius in about 70-90 °C for 105 °C parts)
LIFE_VALID_BELOW_C = 35.0


def life_hours(base_life_h: float, rated_c: float, hotspot_c: float, model: str = "arrhenius-10") -> float:
    """Return expected life at a hot-spot temperature: L0 * base^((T0 - T) / step) (uncapped)."""
    base, step = LIFE_MODELS[model]
    return base_life_h * base ** ((rated_c - hotspot_c) / step)
