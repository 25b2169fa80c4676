"""Edges of the thermal and ripple-weighting maths, each with a hand calculation beside it: tables read
past their ends, the rating frequency between rows (log-frequency interpolation), the current's share
outside a frequency table, and what the thermal state records (loss, local offset, missing data).

Survivors of the mutation run (scripts/mutation.py) showed these were not pinned.
"""

from __future__ import annotations

import math

import pytest

from derate.parts import Part
from derate.thermal import (curve_at, frequency_multiplier, loss_w, outside_frequency_table,
                            temperature_multiplier, thermal_state)
from tests.checks.helpers import stress

ELYT = "aluminum-electrolytic"
# multipliers rising with frequency, the shape aluminium makers print (invented values for the test)
RISING = ((120.0, 0.6), (1e3, 0.8), (1e4, 0.9), (1e5, 1.0))


def test_a_curve_is_not_read_half_a_degree_past_its_end():
    table = ((25.0, 1.0), (85.0, 0.8))
    assert curve_at(table, 85.0) == 0.8
    assert curve_at(table, 85.5) is None  # no extrapolation, not even by a degree
    assert curve_at(table, 80.0, upto_c=80.0) == pytest.approx(0.8 + 0.2 * 5 / 60)
    assert curve_at(table, 80.5, upto_c=80.0) is None  # above the part's rated temperature


def test_the_rating_frequency_between_rows_is_read_on_a_log_axis():
    """Makers draw multipliers against frequency on a log axis; at a 50 kHz rating between the 10 kHz
    (0.9) and 100 kHz (1.0) rows: k = 0.9 + 0.1 * log(5)/log(10) = 0.96990 (linear would give 0.9444)."""
    part = Part(technology=ELYT, ripple_frequency_multipliers=RISING, ripple_frequency_hz=5e4)
    k_rating = 0.9 + 0.1 * math.log10(5.0)
    assert frequency_multiplier(part, 1e5) == pytest.approx(1.0 / k_rating, rel=1e-9)
    assert frequency_multiplier(part, 120.0) == pytest.approx(0.6 / k_rating, rel=1e-9)


def test_shares_of_the_current_outside_the_frequency_table():
    """Bands at 50 Hz (below the 120 Hz row) and 200 kHz (above 100 kHz), 1 A each, rating at 100 kHz:
    weights (1/0.6)^2 = 2.778 and (1/1.0)^2 = 1 beside 1 A at 10 kHz (1/0.9)^2 = 1.235; total 5.012.
    With rising multipliers holding the lowest row flatters the part: the flattering share is below."""
    part = Part(technology=ELYT, ripple_frequency_multipliers=RISING, ripple_frequency_hz=1e5)
    s = stress(bands=((50.0, 1.0), (1e4, 1.0), (2e5, 1.0)))
    w_low, w_mid, w_high = (1 / 0.6) ** 2, (1 / 0.9) ** 2, 1.0
    total = w_low + w_mid + w_high
    flattering, below, above = outside_frequency_table(s, part)
    assert below == pytest.approx(w_low / total, rel=1e-9)
    assert above == pytest.approx(w_high / total, rel=1e-9)
    assert flattering == below
    # a table that falls with frequency: holding its highest row flatters, the share above counts
    falling = Part(technology=ELYT, ripple_frequency_multipliers=((120.0, 1.0), (1e3, 0.9), (1e5, 0.7)),
                   ripple_frequency_hz=120.0)
    f2, b2, a2 = outside_frequency_table(s, falling)
    assert f2 == a2 and a2 > 0 and b2 > 0
    # no bands or no table: nothing outside
    assert outside_frequency_table(stress(bands=()), part) == (0.0, 0.0, 0.0)
    assert outside_frequency_table(s, Part(technology=ELYT)) == (0.0, 0.0, 0.0)


def test_loss_without_bands_uses_the_table_at_the_lowest_frequency():
    """A record without bands or fundamental (a DC rail): the AC RMS current against the ESR table's
    first row (held below it): 0.5 A^2 x 0.2 ohm = 0.05 W."""
    part = Part(technology=ELYT, esr_table=((100.0, 0.2), (1e5, 0.05)))
    assert loss_w(stress(bands=(), f_fundamental_hz=None, i_ac_rms_a=0.5), part) == pytest.approx(0.05)


def test_the_thermal_state_records_its_loss_offset_and_what_is_missing():
    s = stress(bands=((1e5, 1.0),))
    rated = Part(technology=ELYT, esr_ohm=0.1, ripple_rise_c=5.0, ripple_current_a=2.0)
    th = thermal_state(s, rated, 40.0, offset_c=7.0)
    assert th.method == "rated-rise" and th.rise_c == pytest.approx(5.0 * (1.0 / 2.0) ** 2)
    assert th.loss_w == pytest.approx(0.1) and th.offset_c == 7.0  # 1 A^2 x 0.1 ohm, kept for the report
    table_only = Part(technology=ELYT, esr_table=((100.0, 0.2), (1e5, 0.05)))
    th = thermal_state(s, table_only, 40.0, offset_c=3.0)
    assert th.method == "unknown" and th.offset_c == 3.0 and th.loss_w == pytest.approx(0.05)
    assert th.missing == ("either thermal_resistance_c_per_w, or ripple_rise_c and ripple_current_a",)
    bare = thermal_state(s, Part(technology=ELYT), 40.0)
    assert bare.missing == ("either thermal_resistance_c_per_w and esr_ohm, or ripple_rise_c and ripple_current_a",)


def test_temperature_multipliers_are_not_stretched_past_their_rows():
    """A table from -40 to 85 °C: a rating temperature or an ambient half a degree outside it is not
    read (no extrapolation); half a degree below the first row the first row is held, and said."""
    table = ((-40.0, 2.0), (85.0, 1.0))
    part = Part(technology=ELYT, ripple_temperature_multipliers=table, ripple_temperature_c=85.5)
    assert temperature_multiplier(part, 25.0).value is None
    below = Part(technology=ELYT, ripple_temperature_multipliers=table, ripple_temperature_c=-40.5)
    assert temperature_multiplier(below, 25.0).value is None
    ok = Part(technology=ELYT, ripple_temperature_multipliers=table, ripple_temperature_c=85.0)
    held = temperature_multiplier(ok, -40.5)
    assert held.value == 2.0 and held.table == "part"
    assert held.note == "normalised at 85 °C (ripple_temperature_c); held at its first row below -40 °C " \
                        "(multipliers only grow as it gets colder)"
    inside = temperature_multiplier(ok, 22.5)
    assert inside.value == pytest.approx(1.5) and inside.note == "normalised at 85 °C (ripple_temperature_c)"


def test_without_a_table_the_rating_is_used_as_is_at_or_below_its_temperature():
    part = Part(technology=ELYT, ripple_temperature_c=105.0)
    at = temperature_multiplier(part, 60.0)
    assert (at.value, at.table) == (1.0, "none")
    assert at.note == "rating at 105 °C (ripple_temperature_c) used as is at or below it"
    above = temperature_multiplier(part, 110.0)
    assert above.value is None and above.table == "none"
    by_policy = temperature_multiplier(part, 60.0, policy_table=((25.0, 1.4), (105.0, 1.0)))
    assert by_policy.table == "policy" and by_policy.value == pytest.approx(1.4 - 0.4 * 35 / 80)
