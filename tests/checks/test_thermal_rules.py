"""Self-heating, hot spot, life, DC bias, surge, ripple and AC voltage against hand calculations.

Inputs are chosen so a wrong formula gives another number: real self-heating (the hot spot differs
from the ambient), a life factor other than 1, negative rails, two limits of which the stricter must
win, start-up excursions beyond the steady state.  Sources:
- self-heating P = sum I_n^2 ESR(f_n), dT = P R_th, or dT = dT0 (I/I0)^2 (capacitor makers' ripple notes);
- MLCC self-heating at most 20 °C (Murata MLCC FAQ; Kyocera MLCC design guide);
- life L = L0 2^((T0 - T)/10) (TDK electronics primer vol. 7);
- class-2 capacitance from the part's own DC-bias curve (class codes give temperature, not voltage);
- aluminium surge 1.15 x rated (makers' datasheets);
- several ripple frequencies I_eq = sqrt(sum (I_n / k_n)^2) (makers' ripple notes);
- X and Y capacitors rated in AC volts RMS (IEC 60384-14, from memory).
"""

from __future__ import annotations

import math

import pytest

from derate.checks import acvoltage, dcbias, hotspot, life, ripple, selfheating, surge
from derate.parts import Part
from derate.status import Status
from derate.thermal import thermal_state
from tests.checks.helpers import context, policy, stress

ALU = dict(technology="aluminum-electrolytic", rated_voltage_v=50.0, rated_temperature_c=105.0)


# ---------------------------------------------------------------- self-heating and hot spot
def test_self_heating_from_losses_with_an_esr_table():
    # 1 A at 120 Hz and 0.5 A at 100 kHz; ESR 0.2 ohm at 120 Hz, 0.05 ohm at 100 kHz; R_th 10 °C/W
    part = Part(**ALU, esr_table=((120.0, 0.2), (100e3, 0.05)), thermal_resistance_c_per_w=10.0)
    s = stress(bands=((120.0, 1.0), (100e3, 0.5)))
    th = thermal_state(s, part, 40.0)
    loss = 1.0 ** 2 * 0.2 + 0.5 ** 2 * 0.05  # 0.2125 W
    assert th.method == "losses" and th.loss_w == pytest.approx(loss) and th.rise_c == pytest.approx(loss * 10)
    assert th.hotspot_c == pytest.approx(40 + 2.125)


def test_self_heating_from_the_rated_rise():
    # dT0 = 5 °C at 1.0 A rated: 0.5 A gives 5 x 0.25 = 1.25 °C
    part = Part(**ALU, ripple_current_a=1.0, ripple_rise_c=5.0)
    th = thermal_state(stress(bands=((120.0, 0.5),)), part, 30.0)
    assert th.method == "rated-rise" and th.rise_c == pytest.approx(1.25) and th.hotspot_c == pytest.approx(31.25)
    none = thermal_state(stress(), Part(**ALU), 30.0)
    assert none.rise_c is None and none.method == "unknown" and none.hotspot_c == 30.0
    assert "thermal_resistance_c_per_w" in none.missing[0] and "esr_ohm" in none.missing[0]
    assert thermal_state(stress(), Part(**ALU), None).hotspot_c is None


def test_mlcc_self_heating_against_20c():
    mlcc = Part(technology="ceramic-class2", rated_voltage_v=16.0, rated_temperature_c=125.0, esr_ohm=0.01,
                thermal_resistance_c_per_w=100.0)
    pol = policy("ceramic-class2", self_heating_max_c=20.0)
    # 3 A through 10 mohm: 90 mW, 9 °C rise: 45 %
    out = selfheating.check(context(stress(bands=((500e3, 3.0),)), mlcc, pol, ambient_c=50.0))
    assert out.measured == pytest.approx(9.0) and out.limit == 20.0 and out.ratio == pytest.approx(0.45)
    assert out.details["method"] == "losses" and "self_heating_max_c" in out.details["sources"]
    assert selfheating.check(context(stress(), mlcc, policy("ceramic-class2"), ambient_c=50.0)) is None
    bare = Part(technology="ceramic-class2", rated_voltage_v=16.0)
    assert selfheating.check(context(stress(), bare, pol)).status == Status.UNRATED


def test_the_hot_spot_uses_the_real_rise_and_the_stricter_limit():
    # 60 °C ambient + (1 A^2 x 0.5 ohm x 20 °C/W = 10 °C) = 70 °C; limit 105 - 20 = 85 °C
    part = Part(**ALU, esr_ohm=0.5, thermal_resistance_c_per_w=20.0)
    pol = policy(hotspot_margin_c=20.0)
    out = hotspot.check(context(stress(bands=((120.0, 1.0),)), part, pol, ambient_c=60.0))
    assert out.measured == pytest.approx(70.0) and out.limit == pytest.approx(85.0)
    assert out.ratio == pytest.approx((70 - 25) / (85 - 25)) and out.details["rise_c"] == pytest.approx(10.0)
    # an absolute maximum below rated - margin wins; a laxer one does not
    strict = hotspot.check(context(stress(bands=((120.0, 1.0),)), part, policy(hotspot_margin_c=20.0,
                                                                                hotspot_max_c=75.0), ambient_c=60.0))
    assert strict.limit == pytest.approx(75.0)
    lax = hotspot.check(context(stress(bands=((120.0, 1.0),)), part, policy(hotspot_margin_c=20.0,
                                                                             hotspot_max_c=95.0), ambient_c=60.0))
    assert lax.limit == pytest.approx(85.0)
    # a maximum for parts of one rating replaces the margin for those parts
    flight = policy(hotspot_margin_c=20.0, hotspot_max_by_rated_c=((105.0, 95.0),))
    assert hotspot.check(context(stress(bands=((120.0, 1.0),)), part, flight, ambient_c=60.0)).limit == 95.0
    other = Part(technology="aluminum-electrolytic", rated_voltage_v=50.0, rated_temperature_c=125.0, esr_ohm=0.5,
                 thermal_resistance_c_per_w=20.0)
    assert hotspot.check(context(stress(bands=((120.0, 1.0),)), other, flight, ambient_c=60.0)).limit == 105.0
    assert "60 °C ambient + 10.0 °C self-heating" in out.message


def test_hot_spot_limits_and_what_is_missing():
    part = Part(**ALU, esr_ohm=0.5, thermal_resistance_c_per_w=20.0)
    s = stress(bands=((120.0, 1.0),))
    # the rated temperature holds with no policy value at all
    assert hotspot.check(context(s, part, policy(), ambient_c=60.0)).limit == 105.0
    no_rating = Part(technology="aluminum-electrolytic", esr_ohm=0.5, thermal_resistance_c_per_w=20.0)
    assert hotspot.check(context(s, no_rating, policy(hotspot_margin_c=20.0), ambient_c=60.0)).missing == (
        "rated_temperature_c",)
    assert hotspot.check(context(s, no_rating, policy(), ambient_c=60.0)).status == Status.UNRATED
    assert hotspot.check(context(s, no_rating, policy(hotspot_max_c=90.0), ambient_c=60.0)).limit == 90.0
    assert hotspot.check(context(s, part, policy(), ambient_c=None)).missing == ("ambient temperature",)
    # a local ambient offset is part of the ambient and named
    offset = hotspot.check(context(s, part, policy(), ambient_c=None).__class__(
        "C1", s, part, policy(), context(s, part, policy()).scenario, thermal_state(s, part, 75.0, 15.0)))
    assert offset.measured == pytest.approx(85.0) and "(scenario + 15 °C local)" in offset.message
    assert offset.details["offset_c"] == 15.0 and offset.details["ambient_c"] == 75.0


def test_the_hot_spot_ratio_below_25c_limits():
    part = Part(technology="ceramic-class2", rated_voltage_v=16.0, rated_temperature_c=20.0, esr_ohm=1e-9,
                thermal_resistance_c_per_w=1.0)
    # a limit at or below the 25 °C reference: over it is infinite stress, under it none
    over = hotspot.check(context(stress(bands=((1e3, 1e-6),)), part, policy("ceramic-class2"), ambient_c=22.0))
    assert over.ratio == float("inf") and over.status == Status.FAIL
    under = hotspot.check(context(stress(bands=((1e3, 1e-6),)), part, policy("ceramic-class2"), ambient_c=10.0))
    assert under.ratio == 0.0 and under.status == Status.PASS


# ---------------------------------------------------------------- life
def test_life_at_the_real_hot_spot_with_a_life_rating_temperature():
    # L0 = 5000 h rated at 85 °C (life_temperature_c) on a 105 °C part; ambient 55 °C + 10 °C rise = 65 °C:
    # 5000 x 2^((85 - 65)/10) = 20 000 h; mission 30 000 h x duty 0.5 x factor 2 = 30 000 h: ratio 1.5
    part = Part(**ALU, base_life_h=5000.0, life_temperature_c=85.0, esr_ohm=0.5, thermal_resistance_c_per_w=20.0)
    out = life.check(context(stress(bands=((120.0, 1.0),)), part, policy(life_factor=2.0), ambient_c=55.0,
                             mission_life_h=30000.0, duty=0.5))
    assert out.details["hotspot_c"] == pytest.approx(65.0) and out.details["t0_c"] == 85.0
    assert out.measured == pytest.approx(20000.0) and out.limit == pytest.approx(30000.0)
    assert out.ratio == pytest.approx(1.5) and out.status == Status.FAIL
    assert out.details["factor"] == 2.0 and out.details["model"] == "arrhenius-10"


def test_polymer_life_and_the_cap():
    poly = Part(technology="aluminum-polymer", rated_voltage_v=16.0, rated_temperature_c=105.0, base_life_h=2000.0,
                esr_ohm=1e-9, thermal_resistance_c_per_w=1.0)
    # 10^((105 - 85)/20) = 10: 20 000 h (aluminium polymer makers' notes, from memory)
    out = life.check(context(stress(bands=((100e3, 1e-3),)), poly, policy("aluminum-polymer"), ambient_c=85.0,
                             mission_life_h=10000.0))
    assert out.measured == pytest.approx(20000.0, rel=1e-6) and out.details["model"] == "polymer-20"
    capped = life.check(context(stress(bands=((100e3, 1e-3),)), poly, policy("aluminum-polymer", life_max_h=15000.0),
                                ambient_c=85.0, mission_life_h=10000.0))
    assert capped.measured == 15000.0 and capped.details["model_life_h"] == pytest.approx(20000.0, rel=1e-6)
    assert "capped at the policy's 15,000 h" in capped.message and capped.ratio == pytest.approx(10000 / 15000)
    unknown = life.check(context(stress(), poly, policy("aluminum-polymer", life_model="eyring"), ambient_c=85.0,
                                 mission_life_h=10000.0))
    assert unknown.status == Status.UNRATED and "eyring" in unknown.missing[0]


def test_life_needs_its_data():
    base = Part(**ALU, esr_ohm=0.5, thermal_resistance_c_per_w=20.0)
    s = stress(bands=((120.0, 1.0),))
    assert life.check(context(s, base, policy(), ambient_c=60.0, mission_life_h=1e4)).missing == ("base_life_h",)
    no_t = Part(technology="aluminum-electrolytic", base_life_h=2000.0)
    assert life.check(context(s, no_t, policy(), ambient_c=60.0, mission_life_h=1e4)).missing == ("rated_temperature_c",)
    full = Part(**ALU, base_life_h=2000.0, esr_ohm=0.5, thermal_resistance_c_per_w=20.0)
    assert life.check(context(s, full, policy(), ambient_c=60.0)).missing == ("mission.life_h",)
    assert life.check(context(s, full, policy(), ambient_c=None, mission_life_h=1e4)).missing == ("ambient temperature",)
    cold = Part(**ALU, base_life_h=2000.0)
    assert life.check(context(s, cold, policy(), ambient_c=60.0, mission_life_h=1e4)).status == Status.UNRATED
    near = life.check(context(stress(bands=((120.0, 1e-6),)), full, policy(), ambient_c=75.0, mission_life_h=1e4))
    assert "outside the range" not in near.message  # 30 °C below the rating: inside the rule's range
    far = life.check(context(stress(bands=((120.0, 1e-6),)), full, policy(), ambient_c=65.0, mission_life_h=1e4))
    assert "outside the range" in far.message  # 40 °C below


# ---------------------------------------------------------------- DC bias
def test_dc_bias_on_a_negative_rail_and_its_ratio():
    # a -12 V rail biases the part as much as +12 V: 70 % kept at 12 V by its curve; minimum 60 %: ratio 0.857
    part = Part(technology="ceramic-class2", rated_voltage_v=25.0, capacitance_f=10e-6,
                dc_bias=((0.0, 1.0), (12.0, 0.7), (25.0, 0.4)))
    pol = policy("ceramic-class2", dc_bias_min_fraction=0.6)
    out = dcbias.check(context(stress(v_mean_v=-12.0), part, pol))
    assert out.measured == pytest.approx(0.7) and out.limit == 0.6 and out.ratio == pytest.approx(0.6 / 0.7)
    assert out.details["v_dc_v"] == pytest.approx(12.0) and out.details["effective_capacitance_f"] == pytest.approx(7e-6)
    mid = dcbias.check(context(stress(v_mean_v=18.5), part, pol))  # halfway from 12 to 25 V: 0.55 kept
    assert mid.measured == pytest.approx(0.55) and mid.status == Status.FAIL
    past = dcbias.check(context(stress(v_mean_v=30.0), part, pol))
    assert past.status == Status.UNRATED and "ends at 25 V" in past.message
    assert dcbias.check(context(stress(), Part(technology="ceramic-class2"), pol)).missing == ("dc_bias",)
    assert dcbias.check(context(stress(), part, policy("ceramic-class2"))).missing == ("dc_bias_min_fraction",)
    no_c = Part(technology="ceramic-class2", dc_bias=((0.0, 1.0), (25.0, 0.4)))
    assert dcbias.check(context(stress(v_mean_v=5.0), no_c, pol)).details["effective_capacitance_f"] is None


# ---------------------------------------------------------------- surge
def test_surge_against_the_surge_rating_or_the_rating():
    alu = Part(**ALU, surge_voltage_v=57.5)
    pol = policy(surge_factor=0.9)
    # start-up peak 55 V (above the 40 V steady state) against 0.9 x 57.5 = 51.75 V
    out = surge.check(context(stress(v_max_v=40.0, startup_v_peak_v=55.0), alu, pol, ambient_c=40.0))
    assert out.measured == pytest.approx(55.0) and out.limit == pytest.approx(51.75) and out.status == Status.FAIL
    assert out.details["basis"] == "surge rating"
    plain = surge.check(context(stress(startup_v_peak_v=40.0), Part(**ALU), pol, ambient_c=40.0))
    assert plain.limit == pytest.approx(45.0) and plain.details["basis"].startswith("rated voltage")
    # unpolarized parts: the start-up swing either way
    film = Part(technology="film-polyester", rated_voltage_v=50.0)
    neg = surge.check(context(stress(startup_v_peak_v=10.0, startup_v_min_v=-48.0), film,
                              policy("film-polyester", surge_factor=1.0), ambient_c=40.0))
    assert neg.measured == pytest.approx(48.0)
    polar = surge.check(context(stress(startup_v_peak_v=10.0, startup_v_min_v=-48.0), Part(**ALU), pol,
                                ambient_c=40.0))
    assert polar.measured == pytest.approx(10.0)  # the negative side is the reverse check's
    assert surge.check(context(stress(), Part(technology="aluminum-electrolytic"), pol)).missing == ("rated_voltage_v",)
    assert surge.check(context(stress(), Part(**ALU), policy())).missing == ("surge_factor",)
    off = surge.check(context(stress(power_up="off"), Part(**ALU), pol))
    failed = surge.check(context(stress(power_up="failed"), Part(**ALU), pol))
    assert off.status == failed.status == Status.UNRATED and "switch-on" in failed.message
    assert "switch-on simulated from zero" in surge.check(context(stress(power_up="simulated"), Part(**ALU), pol)).message
    assert not surge.INFO.applies(Part(technology="film-polypropylene", rated_voltage_ac_v=275.0))


# ---------------------------------------------------------------- ripple
def test_ripple_weighting_by_frequency_and_the_allowed_current():
    # 1.0 A at 120 Hz (k 1.0) and 0.8 A at 10 kHz (k 1.6): I_eq = sqrt(1 + 0.25) = 1.118 A;
    # rating 2.0 A at 120 Hz / 105 °C, ambient 65 °C (k_T 2.1 / 1.0), factor 0.8: 3.36 A allowed
    part = Part(**ALU, ripple_current_a=2.0, ripple_frequency_hz=120.0,
                ripple_frequency_multipliers=((120.0, 1.0), (10e3, 1.6)),
                ripple_temperature_multipliers=((65.0, 2.1), (85.0, 1.7), (105.0, 1.0)))
    out = ripple.check(context(stress(bands=((120.0, 1.0), (10e3, 0.8))), part, policy(ripple_factor=0.8),
                               ambient_c=65.0))
    assert out.measured == pytest.approx(math.sqrt(1.25)) and out.limit == pytest.approx(2.0 * 2.1 * 0.8)
    assert out.details["k_temperature"] == pytest.approx(2.1) and out.details["k_temperature_from"] == "part"
    assert out.details["factor"] == 0.8 and out.details["outside_share"] == 0.0
    # a rating frequency inside the table normalises it: rated at 10 kHz, 120 Hz current weighs 1.6 x
    at10k = Part(**ALU, ripple_current_a=2.0, ripple_frequency_hz=10e3,
                 ripple_frequency_multipliers=((120.0, 1.0), (10e3, 1.6)))
    got = ripple.check(context(stress(bands=((120.0, 1.0),)), at10k, policy(ripple_factor=1.0), ambient_c=65.0))
    assert got.measured == pytest.approx(1.6)
    outside = Part(**ALU, ripple_current_a=2.0, ripple_frequency_hz=50e3,
                   ripple_frequency_multipliers=((120.0, 1.0), (10e3, 1.6)))
    bad = ripple.check(context(stress(bands=((120.0, 1.0),)), outside, policy(ripple_factor=1.0), ambient_c=65.0))
    assert bad.status == Status.UNRATED and "rating frequency" in bad.message
    assert ripple.check(context(stress(), Part(**ALU), policy(ripple_factor=1.0))).missing == ("ripple_current_a",)
    assert ripple.check(context(stress(), Part(**ALU, ripple_current_a=1.0), policy())).missing == ("ripple_factor",)
    assert ripple.check(context(stress(), Part(**ALU, ripple_current_a=1.0), policy(ripple_factor=1.0),
                                ambient_c=None)).missing == ("ambient temperature",)
    assert "no frequency multipliers given" in ripple.check(
        context(stress(), Part(**ALU, ripple_current_a=1.0), policy(ripple_factor=1.0), ambient_c=40.0)).message
    assert ripple.INFO.applies(Part(technology="tantalum-polymer"))
    assert ripple.INFO.applies(Part(technology="ceramic-class2", ripple_current_a=1.0))
    assert not ripple.INFO.applies(Part(technology="ceramic-class2"))


def test_the_ripple_rating_temperature_and_a_table_that_ends():
    hot = Part(**ALU, ripple_current_a=1.0, ripple_temperature_c=85.0,
               ripple_temperature_multipliers=((65.0, 2.1), (85.0, 1.7), (105.0, 1.0)))
    # above the table's 105 °C end: no rating
    beyond = ripple.check(context(stress(), hot, policy(ripple_factor=1.0), ambient_c=110.0))
    assert beyond.status == Status.UNRATED and "end at 105 °C" in beyond.message
    # a rating temperature outside the table
    odd = Part(**ALU, ripple_current_a=1.0, ripple_temperature_c=125.0,
               ripple_temperature_multipliers=((65.0, 2.1), (105.0, 1.0)))
    assert "outside the temperature multipliers" in ripple.check(
        context(stress(), odd, policy(ripple_factor=1.0), ambient_c=60.0)).message
    # no temperature known for the rating: a table written relative to it (its 1.0 row) tells it
    relative = Part(technology="aluminum-electrolytic", ripple_current_a=1.0,
                    ripple_temperature_multipliers=((65.0, 2.1), (85.0, 1.7), (105.0, 1.0)))
    assert ripple.check(context(stress(), relative, policy(ripple_factor=1.0), ambient_c=85.0)).limit == \
        pytest.approx(1.7)
    nothing = Part(technology="aluminum-electrolytic", ripple_current_a=1.0)
    assert "not known" in ripple.check(context(stress(), nothing, policy(ripple_factor=1.0), ambient_c=40.0)).message
    unnormed = Part(technology="aluminum-electrolytic", ripple_current_a=1.0,
                    ripple_temperature_multipliers=((65.0, 2.1), (105.0, 1.2)))
    assert ripple.check(context(stress(), unnormed, policy(ripple_factor=1.0), ambient_c=80.0)).status == \
        Status.UNRATED
    # the policy's table when the part has none
    ta = Part(technology="tantalum-mno2", ripple_current_a=1.0)
    pol = policy("tantalum-mno2", ripple_factor=1.0,
                 ripple_temperature_multipliers=((25.0, 1.0), (25.1, 0.9), (85.0, 0.9), (85.1, 0.4), (125.0, 0.4)))
    got = ripple.check(context(stress(), ta, pol, ambient_c=60.0))
    assert got.limit == pytest.approx(0.9) and got.details["k_temperature_from"] == "policy"
    assert "ripple_temperature_multipliers" in got.details["sources"]


# ---------------------------------------------------------------- AC voltage
def test_ac_voltage_rms_and_peak():
    x2 = Part(technology="film-polypropylene", rated_voltage_ac_v=275.0, safety_class="X2")
    pol = policy("film-polypropylene", ac_voltage_factor=1.0)
    # a sine of 253 V RMS: 253 / 275
    sine = acvoltage.check(context(stress(v_rms_v=253.0, v_peak_abs_v=253.0 * math.sqrt(2)), x2, pol))
    assert sine.ratio == pytest.approx(253 / 275) and sine.limit == pytest.approx(275.0)
    assert sine.details["decides"] == "RMS" and "X2 sees" in sine.message
    # a distorted line: 250 V RMS but 420 V peak: 420 / (275 sqrt 2) = 108 %
    spiky = acvoltage.check(context(stress(v_rms_v=250.0, v_peak_abs_v=420.0), x2, pol))
    assert spiky.ratio == pytest.approx(420 / (275 * math.sqrt(2))) and spiky.status == Status.FAIL
    assert spiky.limit == pytest.approx(275 * math.sqrt(2)) and spiky.measured == 420.0
    half = acvoltage.check(context(stress(v_rms_v=200.0, v_peak_abs_v=200.0), x2,
                                   policy("film-polypropylene", ac_voltage_factor=0.8)))
    assert half.limit == pytest.approx(220.0) and half.ratio == pytest.approx(200 / 220)
    assert acvoltage.check(context(stress(), Part(technology="film-polypropylene", safety_class="Y2"), pol)).missing \
        == ("rated_voltage_ac_v",)
    assert acvoltage.check(context(stress(), x2, policy("film-polypropylene"))).missing == ("ac_voltage_factor",)
    assert acvoltage.INFO.applies(Part(safety_class="Y1")) and not acvoltage.INFO.applies(Part())


def test_a_temperature_table_held_below_its_first_row_says_so():
    part = Part(**ALU, ripple_current_a=1.0, ripple_temperature_multipliers=((65.0, 2.1), (85.0, 1.7), (105.0, 1.0)))
    cold = ripple.check(context(stress(), part, policy(ripple_factor=1.0), ambient_c=-20.0))
    assert cold.limit == pytest.approx(2.1) and "held at its first row below 65 °C" in cold.message
    warm = ripple.check(context(stress(), part, policy(ripple_factor=1.0), ambient_c=70.0))
    assert "held at its first row" not in warm.message
