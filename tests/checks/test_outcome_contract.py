"""Every outcome of every check keeps the contract the engine and the reports rely on, on every branch.

An outcome names its check and unit (the registry's), a judged one carries its ratio, value, limit and
the provenance of the policy values it used, and an unrated one carries no ratio and names what is
missing.  The inputs reach each branch of each check: judged, each reason for unrated, no temperature.
"""

from __future__ import annotations

import math

import pytest

from derate.checks import STRESS_CHECKS, acvoltage, dcbias, hotspot, life, reverse, ripple, selfheating, surge, voltage
from derate.parts import Part
from derate.status import Status
from tests.checks.helpers import context, policy, stress

ALU = dict(technology="aluminum-electrolytic", rated_voltage_v=50.0, rated_temperature_c=105.0)
FULL_ALU = Part(**ALU, ripple_current_a=1.0, ripple_frequency_hz=120.0, base_life_h=2000.0, esr_ohm=0.1,
                thermal_resistance_c_per_w=20.0, surge_voltage_v=57.5,
                ripple_frequency_multipliers=((120.0, 1.0), (10e3, 1.5)),
                ripple_temperature_multipliers=((65.0, 2.1), (85.0, 1.7), (105.0, 1.0)))
FULL_POLICY = policy(voltage_factor=0.8, surge_factor=0.9, ripple_factor=0.8, hotspot_margin_c=20.0, life_factor=1.0,
                     reverse_max_v=1.5)
MLCC = Part(technology="ceramic-class2", rated_voltage_v=25.0, rated_temperature_c=85.0, esr_ohm=0.01,
            thermal_resistance_c_per_w=50.0, dc_bias=((0.0, 1.0), (25.0, 0.4)), capacitance_f=10e-6)
MLCC_POLICY = policy("ceramic-class2", voltage_factor=0.6, self_heating_max_c=20.0, dc_bias_min_fraction=0.5,
                     hotspot_margin_c=0.0, surge_factor=1.0)
X2 = Part(technology="film-polypropylene", rated_voltage_ac_v=275.0, safety_class="X2")
X2_POLICY = policy("film-polypropylene", ac_voltage_factor=1.0)
S = dict(v_max_v=20.0, v_min_v=-0.5, v_peak_abs_v=20.0, v_mean_v=12.0, v_rms_v=230.0, v_ripple_pp_v=2.0,
         startup_v_peak_v=30.0, startup_v_min_v=-0.7, bands=((120.0, 0.5), (10e3, 0.2)), i_ac_rms_a=0.54)

# (name, module, part, policy, ambient, stress overrides, mission life): every branch a check has
CASES = [
    ("voltage judged", voltage, FULL_ALU, FULL_POLICY, 40.0, {}, None),
    ("voltage no rating", voltage, Part(technology="aluminum-electrolytic"), FULL_POLICY, 40.0, {}, None),
    ("voltage no factor", voltage, FULL_ALU, policy(), 40.0, {}, None),
    ("voltage no temperature", voltage, FULL_ALU, policy(voltage_factor_curve=((25.0, 0.8), (105.0, 0.6))), None, {},
     None),
    ("reverse judged", reverse, FULL_ALU, FULL_POLICY, 40.0, {}, None),
    ("reverse no limit", reverse, FULL_ALU, policy(), 40.0, {}, None),
    ("surge judged", surge, FULL_ALU, FULL_POLICY, 40.0, {}, None),
    ("surge no factor", surge, FULL_ALU, policy(), 40.0, {}, None),
    ("surge switch-on failed", surge, FULL_ALU, FULL_POLICY, 40.0, {"power_up": "failed"}, None),
    ("ripple judged", ripple, FULL_ALU, FULL_POLICY, 40.0, {}, None),
    ("ripple no rating", ripple, Part(**ALU), FULL_POLICY, 40.0, {}, None),
    ("ripple no factor", ripple, FULL_ALU, policy(), 40.0, {}, None),
    ("ripple no temperature", ripple, FULL_ALU, FULL_POLICY, None, {}, None),
    ("ripple above its table", ripple, FULL_ALU, FULL_POLICY, 110.0, {}, None),
    ("ripple below its table", ripple, FULL_ALU, FULL_POLICY, 40.0, {"bands": ((50.0, 1.0),)}, None),
    ("ripple rating outside", ripple, Part(**ALU, ripple_current_a=1.0, ripple_frequency_hz=100e3,
                                           ripple_frequency_multipliers=((120.0, 1.0), (10e3, 1.5))),
     FULL_POLICY, 40.0, {}, None),
    ("hot spot judged", hotspot, FULL_ALU, FULL_POLICY, 40.0, {}, None),
    ("hot spot no data", hotspot, Part(**ALU), FULL_POLICY, 40.0, {}, None),
    ("hot spot over without data", hotspot, Part(**ALU), FULL_POLICY, 100.0, {}, None),
    ("self-heating judged", selfheating, MLCC, MLCC_POLICY, 40.0, {}, None),
    ("self-heating no data", selfheating, Part(technology="ceramic-class2"), MLCC_POLICY, 40.0, {}, None),
    ("life judged", life, FULL_ALU, FULL_POLICY, 40.0, {}, 20000.0),
    ("life no mission", life, FULL_ALU, FULL_POLICY, 40.0, {}, None),
    ("dc-bias judged", dcbias, MLCC, MLCC_POLICY, 40.0, {}, None),
    ("dc-bias past its curve", dcbias, MLCC, MLCC_POLICY, 40.0, {"v_mean_v": 30.0}, None),
    ("ac-voltage judged", acvoltage, X2, X2_POLICY, 40.0, {"v_peak_abs_v": 325.0}, None),
    ("ac-voltage no rating", acvoltage, Part(technology="film-polypropylene", safety_class="Y2"), X2_POLICY, 40.0,
     {}, None),
]


@pytest.mark.parametrize("name, module, part, pol, ambient, over, mission", CASES, ids=[c[0] for c in CASES])
def test_every_outcome_keeps_the_contract(name, module, part, pol, ambient, over, mission):
    out = module.check(context(stress(**{**S, **over}), part, pol, ambient_c=ambient, mission_life_h=mission))
    assert out.check == module.INFO.id and out.unit == module.INFO.unit
    assert out.message.startswith("C1")
    if out.status == Status.UNRATED:
        assert out.ratio is None and out.measured is None and out.limit is None
        assert out.missing and all(isinstance(m, str) and m for m in out.missing)
        assert "cannot be checked" in out.message
    else:
        assert "judged" in name or "over" in name, (name, out.status, out.message)
        assert out.ratio is not None and math.isfinite(out.ratio) and out.measured is not None
        if module is not reverse or out.limit is not None:
            assert out.limit is not None and out.limit > 0
            assert out.ratio == pytest.approx(_ratio(module, out), rel=1e-9)
        assert isinstance(out.details.get("sources"), dict) and out.details["sources"], name
        for key, prov in out.details["sources"].items():
            assert pol.get(part.technology, key) is not None, (name, key)
            assert prov == {"source": "test", "status": "unverified"}
    if "judged" not in name and "over" not in name:
        assert out.status == Status.UNRATED, (name, out.message)


def _ratio(module, out) -> float:
    """The ratio each check states: measured over limit, but the hot spot from 25 °C, life required over
    expected, DC bias minimum over remaining."""
    if module is hotspot:
        return (out.measured - 25.0) / (out.limit - 25.0)
    if module in (life, dcbias):
        return out.limit / out.measured
    return out.measured / out.limit


def test_every_check_is_registered_with_its_unit():
    assert {m.INFO.unit for m in STRESS_CHECKS} <= {"V", "A", "°C", "h", ""}
    assert [m.INFO.id for m in STRESS_CHECKS] == ["stress.voltage", "stress.ac-voltage", "stress.reverse",
                                                   "stress.surge", "stress.ripple", "stress.hotspot",
                                                   "stress.self-heating", "stress.life", "stress.dc-bias"]


def test_exact_messages_of_the_unrated_branches():
    out = ripple.check(context(stress(**{**S, "bands": ((50.0, 1.0),)}), FULL_ALU, FULL_POLICY, ambient_c=40.0))
    assert out.message == ("C1: ripple current cannot be checked: 100 % of it (as I^2) lies below its frequency "
                           "multipliers (120 to 10000 Hz), where holding the end value would understate it")
    assert out.missing == ("ripple_frequency_multipliers covering the current's frequencies",)
    rating = ripple.check(context(stress(**S), Part(**ALU, ripple_current_a=1.0, ripple_frequency_hz=100e3,
                                                     ripple_frequency_multipliers=((120.0, 1.0), (10e3, 1.5))),
                                  FULL_POLICY, ambient_c=40.0))
    assert rating.missing == ("ripple_frequency_multipliers covering ripple_frequency_hz",)
    assert "the rating frequency 100000 Hz lies outside its frequency multipliers" in rating.message
    above = ripple.check(context(stress(**S), FULL_ALU, FULL_POLICY, ambient_c=110.0))
    assert above.missing == ("ripple_temperature_multipliers (or ripple_temperature_c)",)
    factor = ripple.check(context(stress(**S), FULL_ALU, policy(), ambient_c=40.0))
    assert factor.message == "C1: ripple current against rated ripple current cannot be checked: policy value " \
                             "missing (ripple_factor)"


def test_exact_message_of_a_judged_ripple():
    # 0.5 A at 120 Hz and 0.2 A at 10 kHz (k 1.5): I_eq = sqrt(0.25 + 0.0178) = 0.5175 A; at 40 °C the 105 °C
    # rating holds x2.1 (the table held below 65 °C): 1.0 x 2.1 x 0.8 = 1.68 A
    out = ripple.check(context(stress(**S), FULL_ALU, FULL_POLICY, ambient_c=40.0))
    assert out.message == ("C1 carries 517 mA equivalent ripple against 1.68 A allowed (temperature multiplier 2.10 "
                           "at 40 °C ambient (the part table, normalised at 105 °C (taken at the rated temperature "
                           "(makers' convention for electrolytics)); held at its first row below 65 °C (multipliers "
                           "only grow as it gets colder)))")
    assert out.details["i_ac_rms_a"] == 0.54 and out.details["notes"] == [out.message.split(" (", 1)[1][:-1]]
    outside = ripple.check(context(stress(**{**S, "bands": ((120.0, 0.5), (20e3, 0.2))}), FULL_ALU, FULL_POLICY,
                                   ambient_c=40.0))
    assert "% of the current lies outside the frequency multipliers (held at their ends)" in outside.message
    share = (0.2 / 1.5) ** 2 / ((0.5) ** 2 + (0.2 / 1.5) ** 2)
    assert f"{100 * share:.1f} % of the current lies outside" in outside.message
    none = ripple.check(context(stress(**S), Part(**ALU, ripple_current_a=1.0), FULL_POLICY, ambient_c=40.0))
    assert "(no frequency multipliers given: taken as 1.0 at every frequency; temperature multiplier 1.00 at 40 °C " \
           "ambient (rating at 105 °C" in none.message
