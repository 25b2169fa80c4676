"""Exactly at a limit, and the words of each unrated branch: where an off-by-one in a comparison would show."""

from __future__ import annotations

import pytest

from derate.checks import acvoltage, hotspot, life, reverse, selfheating, surge
from derate.checks.base import status_of
from derate.parts import Part
from derate.status import Status
from tests.checks.helpers import context, policy, stress

ALU = dict(technology="aluminum-electrolytic", rated_voltage_v=50.0, rated_temperature_c=105.0)


def test_status_at_the_limit_and_at_the_near_margin():
    pol = policy(near_pct=10.0)
    assert status_of(1.0, pol) == Status.NEAR  # exactly at the limit is not over it
    assert status_of(1.0 + 1e-12, pol) == Status.FAIL
    assert status_of(0.9, pol) == Status.NEAR and status_of(0.9 - 1e-12, pol) == Status.PASS


def test_the_hot_spot_at_its_limit():
    part = Part(**ALU)
    at = hotspot.check(context(stress(), part, policy(hotspot_margin_c=20.0), ambient_c=85.0))
    assert at.status == Status.UNRATED and at.message.startswith("C1: hot-spot temperature")
    assert "thermal data missing" in at.message  # at the limit, without self-heating data: not yet a fail
    over = hotspot.check(context(stress(), part, policy(hotspot_margin_c=20.0), ambient_c=85.5))
    assert over.status == Status.FAIL and over.details["lower_bound"] is True
    assert over.details["method"] == "ambient only" and over.details["rise_c"] is None
    assert over.message == "C1 runs at 86 °C ambient, above the 85 °C allowed before any self-heating (rated 105 °C)"
    assert "sources" in over.details and "hotspot_margin_c" in over.details["sources"]
    unknown = hotspot.check(context(stress(), Part(technology="aluminum-electrolytic"), policy(hotspot_max_c=60.0),
                                    ambient_c=70.0))
    assert unknown.message.endswith("(rated temperature unknown)")
    judged = hotspot.check(context(stress(bands=((120.0, 1.0),)), Part(**ALU, esr_ohm=0.1,
                                                                      thermal_resistance_c_per_w=10.0),
                                   policy(hotspot_margin_c=20.0), ambient_c=40.0))
    assert judged.details["method"] == "losses" and judged.details["loss_w"] == pytest.approx(0.1)
    assert judged.details["rise_c"] == pytest.approx(1.0)


def test_a_maximum_for_parts_of_one_rating_matches_within_half_a_degree():
    pol = policy(hotspot_margin_c=20.0, hotspot_max_by_rated_c=((105.0, 95.0),))
    near = Part(**{**ALU, "rated_temperature_c": 105.4}, esr_ohm=1e-9, thermal_resistance_c_per_w=1.0)
    off = Part(**{**ALU, "rated_temperature_c": 105.5}, esr_ohm=1e-9, thermal_resistance_c_per_w=1.0)
    assert hotspot.check(context(stress(), near, pol, ambient_c=40.0)).limit == 95.0
    assert hotspot.check(context(stress(), off, pol, ambient_c=40.0)).limit == pytest.approx(85.5)


def test_the_hot_spot_ratio_with_a_limit_at_25c():
    part = Part(technology="ceramic-class2", rated_temperature_c=25.0, esr_ohm=1e-9, thermal_resistance_c_per_w=1.0)
    at = hotspot.check(context(stress(bands=((1e3, 1e-6),)), part, policy("ceramic-class2"), ambient_c=25.0))
    assert at.ratio == 0.0  # exactly at a 25 °C limit: not over it
    over = hotspot.check(context(stress(bands=((1e3, 1e-6),)), part, policy("ceramic-class2"), ambient_c=25.5))
    assert over.ratio == float("inf")


def test_the_words_of_unrated_branches():
    missing_part = hotspot.check(context(stress(), Part(technology="aluminum-electrolytic"),
                                         policy(hotspot_margin_c=20.0), ambient_c=40.0))
    assert "part data missing (rated_temperature_c)" in missing_part.message
    no_policy = hotspot.check(context(stress(), Part(technology="aluminum-electrolytic"), policy(), ambient_c=40.0))
    assert "a limit missing (hotspot_margin_c (policy) or rated_temperature_c (part))" in no_policy.message
    no_heat = hotspot.check(context(stress(), Part(**ALU), policy(hotspot_margin_c=20.0), ambient_c=40.0))
    assert "thermal data missing (either thermal_resistance_c_per_w and esr_ohm" in no_heat.message
    full = Part(**ALU, base_life_h=2000.0, esr_ohm=0.1, thermal_resistance_c_per_w=10.0)
    no_mission = life.check(context(stress(), full, policy(), ambient_c=40.0))
    assert "a mission life (project file or policy) missing (mission.life_h)" in no_mission.message
    cold = life.check(context(stress(), Part(**ALU, base_life_h=2000.0), policy(), ambient_c=40.0, mission_life_h=1e4))
    assert "thermal data for the hot spot missing (either" in cold.message
    model = life.check(context(stress(), full, policy(life_model="eyring"), ambient_c=40.0, mission_life_h=1e4))
    assert "policy value missing (life_model 'eyring' (known: arrhenius-10, polymer-20))" in model.message
    ta = Part(technology="tantalum-mno2", rated_voltage_v=10.0, rated_temperature_c=125.0)
    no_temp = surge.check(context(stress(), ta, policy("tantalum-mno2", surge_factor=1.0,
                                                       category_voltage=((85.0, 1.0), (125.0, 0.667))), ambient_c=None))
    assert no_temp.missing == ("ambient temperature",) and "a temperature (the scenario's ambient_c" in no_temp.message
    # an aluminium part's surge limit does not depend on temperature: judged without one
    assert surge.check(context(stress(), Part(**ALU), policy(surge_factor=1.0), ambient_c=None)).status == Status.PASS
    no_factor = surge.check(context(stress(), Part(**ALU), policy(), ambient_c=40.0))
    assert "policy value missing (surge_factor)" in no_factor.message
    off = surge.check(context(stress(power_up="off"), Part(**ALU), policy(surge_factor=1.0), ambient_c=40.0))
    assert "a simulation missing (a switch-on run (analysis.power_up is off))" in off.message
    heat = selfheating.check(context(stress(), Part(technology="ceramic-class2"),
                                     policy("ceramic-class2", self_heating_max_c=20.0)))
    assert "thermal data missing" in heat.message
    ac = acvoltage.check(context(stress(), Part(technology="film-polypropylene", rated_voltage_ac_v=275.0),
                                 policy("film-polypropylene")))
    assert "policy value missing (ac_voltage_factor)" in ac.message
    rev = reverse.check(context(stress(v_min_v=-1.0, startup_v_min_v=-1.0), Part(**ALU), policy()))
    assert "a reverse-voltage limit (part or policy) missing (reverse_voltage_v)" in rev.message


def test_surge_past_the_category_curve():
    pol = policy("tantalum-mno2", surge_factor=1.0, category_voltage=((85.0, 1.0), (125.0, 2 / 3)))
    part = Part(technology="tantalum-mno2", rated_voltage_v=10.0, rated_temperature_c=105.0)
    out = surge.check(context(stress(startup_v_peak_v=5.0), part, pol, ambient_c=110.0))
    assert out.status == Status.UNRATED and out.check == "stress.surge" and out.unit == "V"
    assert out.message == ("C1: start-up peak voltage against surge rating cannot be checked at 110.0 °C: the policy's "
                           "category voltage (or the part's rated temperature) ends at 105 °C (never extrapolated)")
    assert out.missing == ("the policy's category voltage (or the part's rated temperature) above 105 °C",)
    judged = surge.check(context(stress(startup_v_peak_v=5.0), part, pol, ambient_c=95.0))
    assert judged.details["category_fraction"] == pytest.approx(1 - 10 / 40 / 3)
    assert set(judged.details["sources"]) == {"surge_factor", "category_voltage"}
    assert judged.details["power_up"] == "in-run" and judged.details["basis"].startswith("rated voltage")
    assert judged.message == ("C1 peaks at 5 V during start-up (the run starts from zero) against 9.17 V (100 % of its "
                              "rated voltage (no surge rating given), category 92 % at 95 °C)")
    plain = surge.check(context(stress(startup_v_peak_v=5.0, power_up="from-op"), Part(**ALU),
                                policy(surge_factor=1.0), ambient_c=40.0))
    assert "(start-up of the run)" in plain.message and ", category" not in plain.message


def test_life_notes_at_their_edges():
    part = Part(**ALU, base_life_h=2000.0, esr_ohm=1e-9, thermal_resistance_c_per_w=1e-3)
    pol = policy(life_max_h=8000.0)
    # exactly at the cap (2000 x 2^2 = 8000 h at 85 °C): no capping note
    at = life.check(context(stress(bands=((120.0, 1e-6),)), part, pol, ambient_c=85.0, mission_life_h=4000.0))
    assert at.measured == pytest.approx(8000.0) and "capped" not in at.message and at.details["life_cap_h"] == 8000.0
    # exactly 35 °C below the rating: still inside the rule's range
    edge = life.check(context(stress(bands=((120.0, 1e-6),)), part, policy(), ambient_c=70.0, mission_life_h=4000.0))
    assert "outside the range" not in edge.message and edge.message.endswith("h required")
    assert edge.details["notes"] == [] and edge.details["model"] == "arrhenius-10"
    assert set(edge.details["sources"]) == set()  # a policy with no life values at all
    full = life.check(context(stress(bands=((120.0, 1e-6),)), part, policy(life_factor=1.0, life_model="arrhenius-10",
                                                                           life_max_h=1e6),
                              ambient_c=70.0, mission_life_h=4000.0))
    assert set(full.details["sources"]) == {"life_factor", "life_model", "life_max_h"}
