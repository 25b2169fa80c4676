"""Each check's formula against a published worked example or a hand calculation from a named source."""

from __future__ import annotations

import math

import pytest

from derate.checks import dcbias, hotspot, life, reverse, ripple, selfheating, surge, voltage
from derate.parts import Part
from derate.thermal import equivalent_ripple, frequency_multiplier, interp, life_hours, thermal_state
from tests.checks.helpers import context, policy, stress

ALU = dict(technology="aluminum-electrolytic", rated_voltage_v=50.0, rated_temperature_c=105.0)


@pytest.mark.parametrize("t_c,expected_h", [(105, 2000), (95, 4000), (85, 8000), (65, 32000)])
def test_life_10_degree_rule_105c_2000h(t_c, expected_h):
    # 10 degC rule L = L0 2^((T0-T)/10) (capacitor manufacturers' life notes, e.g. TDK electronics
    # primer vol. 7); worked values from the project's reference facts: 105 degC / 2000 h part.
    assert life_hours(2000, 105, t_c) == pytest.approx(expected_h)


@pytest.mark.parametrize("t_c,expected_h", [(65, 16000), (55, 32000), (45, 64000)])
def test_life_10_degree_rule_105c_1000h(t_c, expected_h):
    assert life_hours(1000, 105, t_c) == pytest.approx(expected_h)


def test_polymer_life_rule():
    # L = L0 10^((T0-T)/20) (from memory): 20 degC cooler is ten times the life
    assert life_hours(2000, 105, 85, "polymer-20") == pytest.approx(20000)


def test_life_check_against_mission():
    part = Part(**ALU, base_life_h=2000, thermal_resistance_c_per_w=10.0, esr_ohm=0.1)
    s = stress(bands=((120.0, 1e-6),))
    ok = life.check(context(s, part, policy(life_factor=1.0), ambient_c=65, mission_life_h=20000))
    assert ok.status == "pass" and ok.measured == pytest.approx(32000, rel=1e-3)
    bad = life.check(context(s, part, policy(life_factor=1.0), ambient_c=95, mission_life_h=20000))
    assert bad.status == "fail" and bad.ratio == pytest.approx(20000 / 4000, rel=1e-3)
    # duty cycle: running half the time needs half the hours
    half = life.check(context(s, part, policy(life_factor=1.0), ambient_c=95, mission_life_h=20000, duty=0.5))
    assert half.ratio == pytest.approx(10000 / 4000, rel=1e-3)


def test_tantalum_category_voltage_at_105c():
    # category voltage: rated to 85 degC, 2/3 of rated at 125 degC (MIL-PRF-55365-style chip
    # datasheets); linear in between (shape from memory): at 105 degC a 10 V part allows
    # 10 * (1 - (20/40) * (1/3)) = 8.33 V before the policy factor.
    pol = policy("tantalum-mno2", voltage_factor=0.5, category_voltage=((85.0, 1.0), (125.0, 2 / 3)))
    part = Part(technology="tantalum-mno2", rated_voltage_v=10.0, rated_temperature_c=125.0,
                thermal_resistance_c_per_w=1.0, esr_ohm=1e-9)
    out = voltage.check(context(stress(v_max_v=3.0, v_peak_abs_v=3.0), part, pol, ambient_c=105))
    assert out.details["category_fraction"] == pytest.approx(1 - 1 / 6)
    assert out.limit == pytest.approx(0.5 * 10 * (1 - 1 / 6))
    assert out.ratio == pytest.approx(3.0 / 4.1667, rel=1e-3)


def test_tantalum_reverse_limits():
    # solid tantalum reverse voltage: 10 % of rated at 25 degC, 3 % at 85 degC, 1 % at 125 degC (a secondary
    # page; makers' datasheets state it similarly): the shipped commercial policy's curve
    from derate.policy import load_policy
    pol = load_policy("commercial")
    part = Part(technology="tantalum-mno2", rated_voltage_v=10.0, rated_temperature_c=125.0,
                thermal_resistance_c_per_w=1.0, esr_ohm=1e-9)
    for t_c, limit in ((25, 1.0), (85, 0.3), (125, 0.1)):
        out = reverse.check(context(stress(v_min_v=-0.2, startup_v_min_v=-0.2), part, pol, ambient_c=t_c))
        assert out.limit == pytest.approx(limit) and out.ratio == pytest.approx(0.2 / limit)


def test_aluminum_reverse_1v5():
    # aluminum electrolytic application notes: reverse voltage <= 1.5 V
    pol = policy(reverse_max_v=1.5)
    part = Part(**ALU)
    out = reverse.check(context(stress(v_min_v=-3.0), part, pol))
    assert out.status == "fail" and out.ratio == pytest.approx(2.0)
    unpolarized = Part(technology="ceramic-class2", rated_voltage_v=50.0)
    assert not reverse.INFO.applies(unpolarized)


def test_ripple_multipliers_and_equivalent_current():
    # Several frequencies: I_eq = sqrt(sum (I_n / k_n)^2) (manufacturers' ripple notes).
    # Hand calculation: 0.5 A at 120 Hz (k = 1.0) and 0.6 A at 10 kHz (k = 1.5):
    # I_eq = sqrt(0.25 + 0.16) = 0.640 A.
    part = Part(**ALU, ripple_current_a=1.0, ripple_frequency_hz=120.0,
                ripple_frequency_multipliers=((120.0, 1.0), (10e3, 1.5)),
                ripple_temperature_multipliers=((65.0, 2.1), (85.0, 1.7), (105.0, 1.0)))
    s = stress(bands=((120.0, 0.5), (10e3, 0.6)))
    assert equivalent_ripple(s, part) == pytest.approx(math.sqrt(0.25 + 0.16))
    # temperature multipliers (105 degC types): 1.0 at 105, 1.7 at 85, 2.1 at <= 65 degC (manufacturer data)
    out = ripple.check(context(s, part, policy(ripple_factor=1.0), ambient_c=85))
    assert out.limit == pytest.approx(1.7) and out.ratio == pytest.approx(0.640 / 1.7, rel=1e-3)
    cold = ripple.check(context(s, part, policy(ripple_factor=1.0), ambient_c=40))
    assert cold.limit == pytest.approx(2.1)


def test_polymer_frequency_multiplier_table():
    # polymer aluminum multipliers (manufacturer data): 10k 0.6, 20k 0.7, 50k 0.8, 100k 1.0, 250k 1.1,
    # 500k 1.2, 1M 1.3; interpolated on a log-frequency axis
    table = ((10e3, 0.6), (20e3, 0.7), (50e3, 0.8), (100e3, 1.0), (250e3, 1.1), (500e3, 1.2), (1e6, 1.3))
    part = Part(technology="aluminum-polymer", ripple_frequency_hz=100e3, ripple_frequency_multipliers=table)
    assert frequency_multiplier(part, 50e3) == pytest.approx(0.8)
    assert frequency_multiplier(part, math.sqrt(50e3 * 100e3)) == pytest.approx(0.9)
    assert frequency_multiplier(part, 5e6) == pytest.approx(1.3)  # held beyond the end


def test_self_heating_from_rated_rise():
    # dT = dT0 (I/I0)^2 with dT0 ~ 5 degC at rated ripple (manufacturer notes): at half the rated
    # current the rise is a quarter: 1.25 degC
    part = Part(**ALU, ripple_current_a=2.0, ripple_rise_c=5.0)
    th = thermal_state(stress(bands=((120.0, 1.0),)), part, 40.0)
    assert th.method == "rated-rise" and th.rise_c == pytest.approx(1.25) and th.hotspot_c == pytest.approx(41.25)


def test_self_heating_from_losses():
    # P = I^2 ESR(f) per band, dT = P R_th: 1 A at 120 Hz through 0.1 ohm and 0.5 A at 100 kHz
    # through 0.05 ohm: P = 0.1 + 0.0125 W; R_th = 20 degC/W: dT = 2.25 degC
    part = Part(**ALU, esr_table=((120.0, 0.1), (100e3, 0.05)), thermal_resistance_c_per_w=20.0)
    th = thermal_state(stress(bands=((120.0, 1.0), (100e3, 0.5))), part, 25.0)
    assert th.method == "losses" and th.loss_w == pytest.approx(0.1125) and th.rise_c == pytest.approx(2.25)


def test_hotspot_and_mlcc_self_heating():
    # P = I^2 ESR (capacitor makers' ripple notes); the hot spot at most the rated temperature less the policy's
    # margin (here 15 °C: 110 °C for a 125 °C part); MLCC self-heating at most 20 °C (Murata MLCC FAQ)
    part = Part(technology="ceramic-class2", rated_voltage_v=16.0, rated_temperature_c=125.0, esr_ohm=0.01,
                thermal_resistance_c_per_w=100.0)
    pol = policy("ceramic-class2", hotspot_margin_c=15.0, self_heating_max_c=20.0)
    # 3 A rms through 10 mohm = 90 mW, x 100 degC/W = 9 degC rise; 85 degC ambient -> 94 degC
    ctx = context(stress(bands=((500e3, 3.0),)), part, pol, ambient_c=85)
    hs = hotspot.check(ctx)
    assert hs.measured == pytest.approx(94.0) and hs.limit == pytest.approx(110.0)
    assert hs.ratio == pytest.approx((94 - 25) / (110 - 25))
    sh = selfheating.check(ctx)
    # MLCC manufacturer guides: allowable self-heating 20 degC
    assert sh.ratio == pytest.approx(9 / 20)


def test_dc_bias_interpolation():
    part = Part(technology="ceramic-class2", capacitance_f=10e-6,
                dc_bias=((0.0, 1.0), (10.0, 0.8), (25.0, 0.5), (50.0, 0.3)))
    pol = policy("ceramic-class2", dc_bias_min_fraction=0.5)
    out = dcbias.check(context(stress(v_mean_v=12.0), part, pol))
    assert out.measured == pytest.approx(0.8 - 0.3 * 2 / 15)
    assert out.details["effective_capacitance_f"] == pytest.approx(10e-6 * out.measured)
    assert dcbias.check(context(stress(v_mean_v=33.0), part, pol)).status == "fail"


def test_surge_uses_surge_rating_or_rated_voltage():
    # aluminium surge voltage 1.15 x rated (57.5 V for a 50 V part: makers' datasheets); with no surge rating
    # the rated voltage is the limit (the conservative choice)
    pol = policy(surge_factor=1.0)
    with_surge = Part(**{**ALU, "surge_voltage_v": 57.5})
    out = surge.check(context(stress(startup_v_peak_v=40.0), with_surge, pol))
    assert out.limit == pytest.approx(57.5) and out.status == "pass"
    without = Part(**ALU)
    assert surge.check(context(stress(startup_v_peak_v=52.0), without, pol)).status == "fail"


def test_interp_holds_ends():
    table = ((0.0, 1.0), (10.0, 0.0))
    assert interp(table, -5) == 1.0 and interp(table, 5) == 0.5 and interp(table, 20) == 0.0
