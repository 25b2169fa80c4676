"""Makers' published rules that a pass must respect, on hand-made stress records (pure formulas).

Each test names the rule's source beside it; the expected value, limit and ratio are hand
calculations from that rule, never derate's own output.
"""

from __future__ import annotations

import pytest

from derate.checks import hotspot, life, ripple, surge, voltage
from derate.parts import Part
from derate.policy import load_policy
from derate.status import Status
from tests.checks.helpers import context, policy, stress

COMMERCIAL = load_policy("commercial")
INDUSTRIAL = load_policy("industrial")


# ---------------------------------------------------------------- a part above its rated temperature
def test_an_85c_x5r_in_a_115c_ambient_fails_without_thermal_data():
    # Kyocera (AVX) MLCC safety application guide; Murata MLCC FAQ: the operating temperature,
    # self-heating included, must not exceed the upper category temperature.  With no thermal data the
    # hot spot is still at least the 115 °C ambient, over the 85 °C rating.
    x5r = Part(technology="ceramic-class2", dielectric="X5R", rated_voltage_v=25.0, rated_temperature_c=85.0)
    out = hotspot.check(context(stress(), x5r, COMMERCIAL, ambient_c=115.0))
    assert out.status == Status.FAIL
    assert out.measured == pytest.approx(115.0) and out.limit == pytest.approx(85.0)
    assert out.ratio == pytest.approx((115 - 25) / (85 - 25))  # measured from 25 °C, as every hot-spot ratio
    # the same part at 60 °C without thermal data cannot be judged (never a pass)
    assert hotspot.check(context(stress(), x5r, COMMERCIAL, ambient_c=60.0)).status == Status.UNRATED


def test_a_policy_without_a_margin_still_holds_the_rated_temperature():
    # the rated temperature applies whatever the policy: a policy with no hot-spot value at all
    pol = policy("ceramic-class2", voltage_factor=0.8)
    x5r = Part(technology="ceramic-class2", rated_voltage_v=25.0, rated_temperature_c=85.0)
    out = hotspot.check(context(stress(), x5r, pol, ambient_c=95.0))
    assert out.status == Status.FAIL and out.limit == pytest.approx(85.0)


def test_a_105c_polymer_tantalum_at_125c_is_not_judged_on_an_extrapolated_curve():
    # KEMET polymer Q&A: guidelines typically specified to 105 °C.  A 105 °C part has no voltage rating at
    # 125 °C: the category curve is not read there (unrated) and the hot-spot check fails it.
    part = Part(technology="tantalum-polymer", rated_voltage_v=16.0, rated_temperature_c=105.0)
    s = stress(v_max_v=5.0, v_peak_abs_v=5.0, startup_v_peak_v=5.0)
    v = voltage.check(context(s, part, COMMERCIAL, ambient_c=125.0))
    assert v.status == Status.UNRATED and "never extrapolated" in v.message
    assert hotspot.check(context(s, part, COMMERCIAL, ambient_c=125.0)).status == Status.FAIL
    # at 100 °C the part is inside its rating: judged, 80 % of 16 V (KEMET: 20 % derating above 10 V)
    ok = voltage.check(context(s, part, COMMERCIAL, ambient_c=100.0))
    assert ok.status == Status.PASS and ok.limit == pytest.approx(0.8 * 16.0)


# ---------------------------------------------------------------- ceramic peak-to-peak
def test_c0g_across_plus_minus_55v_is_judged_on_its_110v_peak_to_peak():
    # Murata MLCC FAQ: both V p-p and V 0-p (DC bias included) must be within the rated voltage.
    # 100 V C0G, commercial factor 0.8 -> 80 V allowed; +/-55 V is 110 V p-p: 110 / 80 = 137.5 %.
    c0g = Part(technology="ceramic-class1", rated_voltage_v=100.0)
    s = stress(v_max_v=55.0, v_min_v=-55.0, v_peak_abs_v=55.0, v_ripple_pp_v=110.0, v_mean_v=0.0)
    out = voltage.check(context(s, c0g, COMMERCIAL))
    assert out.measured == pytest.approx(110.0) and out.limit == pytest.approx(80.0)
    assert out.ratio == pytest.approx(110.0 / 80.0) and out.status == Status.FAIL
    assert "peak-to-peak" in out.message
    # a DC-biased ceramic: 0-p (40 V) above the p-p (4 V) decides
    biased = stress(v_max_v=40.0, v_min_v=36.0, v_peak_abs_v=40.0, v_ripple_pp_v=4.0, v_mean_v=38.0)
    assert voltage.check(context(biased, c0g, COMMERCIAL)).measured == pytest.approx(40.0)
    # a film part keeps the peak rule (the Murata rule is for ceramics)
    film = Part(technology="film-polypropylene", rated_voltage_v=100.0)
    assert voltage.check(context(s, film, COMMERCIAL)).measured == pytest.approx(55.0)


# ---------------------------------------------------------------- ripple rating temperature
def test_a_tantalum_ripple_rating_at_25c_is_derated_at_115c():
    # KEMET T498 datasheet text (read on a mirror): ripple multipliers 1.0 at <= 25 °C, 0.9 at <= 85 °C,
    # 0.4 at <= 125 °C.  A 1.0 A rating at 25 °C allows 0.4 A at 115 °C (commercial factor 1.0).
    ta = Part(technology="tantalum-mno2", rated_voltage_v=10.0, rated_temperature_c=125.0, ripple_current_a=1.0,
              ripple_temperature_c=25.0)
    s = stress(bands=((100e3, 0.5),), i_ac_rms_a=0.5)
    out = ripple.check(context(s, ta, COMMERCIAL, ambient_c=115.0))
    assert out.limit == pytest.approx(0.4) and out.ratio == pytest.approx(0.5 / 0.4)
    assert out.status == Status.FAIL  # 50 % of the rating taken as is at 115 °C; 125 % by the maker's rule
    # without any table (a policy that has none) the rating cannot be used above 25 °C: unrated
    bare = policy("tantalum-mno2", ripple_factor=1.0)
    assert ripple.check(context(s, ta, bare, ambient_c=115.0)).status == Status.UNRATED
    # at or below its rating temperature the rating holds as is
    assert ripple.check(context(s, ta, bare, ambient_c=20.0)).limit == pytest.approx(1.0)


def test_a_part_table_is_normalised_at_its_rating_temperature():
    # an electrolytic rated 1.0 A at 85 °C whose table is written relative to 105 °C (1.0 at 105, 1.7 at 85,
    # 2.1 at 65: makers' multipliers for 105 °C types): at 65 °C it allows 1.0 x 2.1 / 1.7 = 1.235 A
    part = Part(technology="aluminum-electrolytic", rated_voltage_v=50.0, rated_temperature_c=105.0,
                ripple_current_a=1.0, ripple_temperature_c=85.0,
                ripple_temperature_multipliers=((65.0, 2.1), (85.0, 1.7), (105.0, 1.0)))
    out = ripple.check(context(stress(bands=((120.0, 0.5),)), part, COMMERCIAL, ambient_c=65.0))
    assert out.limit == pytest.approx(2.1 / 1.7)


def test_ripple_below_a_frequency_table_that_starts_at_10khz_is_unrated():
    # polymer aluminium multipliers from 10 kHz (0.6) upward (makers' polymer notes): 120 Hz current would be
    # weighted by 0.6 if the table were held below its end; the true multiplier there is lower
    part = Part(technology="aluminum-polymer", rated_voltage_v=16.0, rated_temperature_c=105.0,
                ripple_current_a=2.0, ripple_frequency_hz=100e3,
                ripple_frequency_multipliers=((10e3, 0.6), (100e3, 1.0), (1e6, 1.3)))
    line = stress(bands=((120.0, 1.0), (100e3, 0.3)), i_ac_rms_a=1.04)
    out = ripple.check(context(line, part, COMMERCIAL, ambient_c=40.0))
    assert out.status == Status.UNRATED and "below its frequency multipliers" in out.message
    # a current above the table's top (held there: the conservative side) is judged, with a note
    fast = stress(bands=((2e6, 1.0),), i_ac_rms_a=1.0)
    high = ripple.check(context(fast, part, COMMERCIAL, ambient_c=40.0))
    assert high.status != Status.UNRATED and high.measured == pytest.approx(1.0 / 1.3)


# ---------------------------------------------------------------- surge above 85 °C
def test_tantalum_surge_falls_with_the_category_voltage():
    # category voltage 2/3 of rated at 125 °C (MIL-PRF-55365-style chip datasheets); the surge rating falls
    # with it (makers' tantalum datasheets, from memory): a 13 V surge rating allows 13 x 0.667 at 125 °C
    part = Part(technology="tantalum-mno2", rated_voltage_v=10.0, surge_voltage_v=13.0, rated_temperature_c=125.0)
    out = surge.check(context(stress(startup_v_peak_v=8.0), part, COMMERCIAL, ambient_c=125.0))
    assert out.limit == pytest.approx(13.0 * 0.667) and out.status == Status.NEAR
    cool = surge.check(context(stress(startup_v_peak_v=8.0), part, COMMERCIAL, ambient_c=60.0))
    assert cool.limit == pytest.approx(13.0)


# ---------------------------------------------------------------- life extrapolation
def test_life_is_capped_and_marked_outside_the_rule_range():
    # 10 °C rule (TDK electronics primer vol. 7): a 2000 h / 105 °C part at 25 °C would last
    # 2000 x 2^8 = 512 000 h; the policy caps extrapolated life at 131 400 h (15 years, from memory)
    part = Part(technology="aluminum-electrolytic", rated_voltage_v=50.0, rated_temperature_c=105.0,
                base_life_h=2000.0, esr_ohm=1e-6, thermal_resistance_c_per_w=1.0)
    s = stress(bands=((120.0, 1e-3),))
    out = life.check(context(s, part, COMMERCIAL, ambient_c=25.0, mission_life_h=100000.0))
    assert out.details["model_life_h"] == pytest.approx(2000 * 2 ** 8, rel=1e-6)
    assert out.measured == pytest.approx(131400.0) and out.ratio == pytest.approx(100000 / 131400)
    assert "outside the range" in out.message
    cold = life.check(context(s, part, COMMERCIAL, ambient_c=-20.0, mission_life_h=200000.0))
    assert cold.measured == pytest.approx(131400.0) and cold.status == Status.FAIL


def test_life_factor_multiplies_the_required_life():
    # required = mission x duty x factor: a factor 2 doubles what the part must reach (a 105 °C / 2000 h part
    # at 85 °C lasts 8000 h by the 10 °C rule; 3000 h x 2 = 6000 h needed: 75 %; factor 1 would be 37.5 %)
    part = Part(technology="aluminum-electrolytic", rated_voltage_v=50.0, rated_temperature_c=105.0,
                base_life_h=2000.0, esr_ohm=1e-9, thermal_resistance_c_per_w=1e-3)
    pol = policy(life_factor=2.0)
    out = life.check(context(stress(bands=((120.0, 1e-6),)), part, pol, ambient_c=85.0, mission_life_h=3000.0))
    assert out.measured == pytest.approx(8000.0, rel=1e-6) and out.limit == pytest.approx(6000.0)
    assert out.ratio == pytest.approx(0.75, rel=1e-6)


# ---------------------------------------------------------------- no temperature
def test_without_a_temperature_the_thermal_checks_are_unrated_and_voltage_still_judged():
    ta = Part(technology="tantalum-mno2", rated_voltage_v=10.0, rated_temperature_c=125.0, ripple_current_a=1.0,
              esr_ohm=0.2, thermal_resistance_c_per_w=40.0)
    s = stress(v_max_v=3.0, v_peak_abs_v=3.0, startup_v_peak_v=3.0)
    ctx = context(s, ta, COMMERCIAL, ambient_c=None)
    for module in (voltage, hotspot, ripple, surge):
        out = module.check(ctx)
        assert out.status == Status.UNRATED and "ambient temperature" in out.missing, module.__name__
    c0g = Part(technology="ceramic-class1", rated_voltage_v=50.0)
    assert voltage.check(context(s, c0g, COMMERCIAL, ambient_c=None)).status == Status.PASS
