"""stress.voltage against hand calculations: each input chosen so that a wrong formula gives another number.

Sources: policy factors as the policies cite them (KEMET polymer tantalum Q&A: 10 % derating up to
10 V rated, 20 % above; solid tantalum category voltage 2/3 of rated at 125 °C, MIL-PRF-55365-style
chip datasheets); Murata MLCC FAQ for ceramics (V p-p and V 0-p within the rating).
"""

from __future__ import annotations

import pytest

from derate.checks import voltage
from derate.parts import Part
from derate.status import Status
from tests.checks.helpers import context, policy, stress

TA = Part(technology="tantalum-mno2", rated_voltage_v=10.0, rated_temperature_c=125.0)
CAT = ((85.0, 1.0), (125.0, 2 / 3))


def _check(part, pol, ambient=25.0, **s):
    base = dict(v_max_v=4.0, v_min_v=3.0, v_peak_abs_v=4.0, v_ripple_pp_v=1.0)
    base.update(s)
    return voltage.check(context(stress(**base), part, pol, ambient_c=ambient))


def test_category_from_the_policy_part_or_none():
    pol = policy("tantalum-mno2", voltage_factor=0.5, category_voltage=CAT)
    at105 = _check(TA, pol, 105.0)
    # 105 °C: 1 - (20/40)(1/3) = 0.8333 of rated; limit 0.5 x 10 x 0.8333 = 4.1667 V
    assert at105.details["category_from"] == "policy" and at105.details["category_fraction"] == pytest.approx(5 / 6)
    assert at105.limit == pytest.approx(0.5 * 10 * 5 / 6) and at105.ratio == pytest.approx(4.0 / (25 / 6))
    own = Part(technology="tantalum-mno2", rated_voltage_v=10.0, rated_temperature_c=125.0,
               category_voltage=((85.0, 1.0), (125.0, 0.5)))
    mine = _check(own, pol, 105.0)
    assert mine.details["category_from"] == "part" and mine.details["category_fraction"] == pytest.approx(0.75)
    plain = _check(TA, policy("tantalum-mno2", voltage_factor=0.5), 105.0)
    assert plain.details["category_from"] == "none" and plain.details["category_fraction"] == 1.0
    assert "category" not in plain.message and "category 83 % at 105 °C" in at105.message


def test_a_curve_is_not_read_past_the_part_rating_or_its_own_end():
    pol = policy("tantalum-mno2", voltage_factor=0.5, category_voltage=CAT)
    rated_105 = Part(technology="tantalum-mno2", rated_voltage_v=10.0, rated_temperature_c=105.0)
    out = _check(rated_105, pol, 110.0)
    assert out.status == Status.UNRATED and out.ratio is None and "ends at 105 °C" in out.message
    no_rating = Part(technology="tantalum-mno2", rated_voltage_v=10.0)
    out = _check(no_rating, pol, 130.0)
    assert out.status == Status.UNRATED and "ends at 125 °C" in out.message
    inside = _check(no_rating, pol, 125.0)  # the curve's last row itself is read
    assert inside.details["category_fraction"] == pytest.approx(2 / 3)
    assert _check(TA, pol, None).missing == ("ambient temperature",)


def test_the_factor_by_rated_voltage_takes_the_first_row_that_covers_the_rating():
    # KEMET: polymer tantalum derated 10 % at or below 10 V rated, 20 % above
    pol = policy("tantalum-polymer", voltage_factor_by_rated_v=((10.0, 0.9), (100000.0, 0.8)))
    at10 = _check(Part(technology="tantalum-polymer", rated_voltage_v=10.0), pol)
    assert at10.details["factor"] == pytest.approx(0.9) and at10.limit == pytest.approx(9.0)
    above = _check(Part(technology="tantalum-polymer", rated_voltage_v=10.5), pol)
    assert above.details["factor"] == pytest.approx(0.8) and above.limit == pytest.approx(8.4)
    assert {"voltage_factor_by_rated_v"} <= set(at10.details["sources"])
    # a technology's own constant tightens it; the 'default' constant does not stand in beside it
    tighter = policy("tantalum-polymer", voltage_factor_by_rated_v=((10.0, 0.9), (100000.0, 0.8)), voltage_factor=0.7)
    assert _check(Part(technology="tantalum-polymer", rated_voltage_v=10.0), tighter).details["factor"] == 0.7
    with_default = policy("tantalum-polymer", voltage_factor_by_rated_v=((10.0, 0.9),))
    with_default = type(with_default)(name="t", technologies={
        "tantalum-polymer": with_default.technologies["tantalum-polymer"],
        "default": {"voltage_factor": type(with_default.near_limit_pct)(0.5, "test")}})
    assert _check(Part(technology="tantalum-polymer", rated_voltage_v=10.0), with_default).details["factor"] == 0.9
    # no row covers a 20 V part in a table that ends at 10 V: the 'default' constant stands in
    assert _check(Part(technology="tantalum-polymer", rated_voltage_v=20.0), with_default).details["factor"] == 0.5


def test_a_factor_curve_is_read_at_the_hot_spot_and_the_stricter_factor_wins():
    alu = Part(technology="aluminum-electrolytic", rated_voltage_v=50.0, rated_temperature_c=105.0)
    curve = ((25.0, 0.8), (105.0, 0.6))
    out = _check(alu, policy(voltage_factor_curve=curve), 65.0, v_max_v=20.0, v_peak_abs_v=20.0)
    # 65 °C: halfway, 0.7; limit 0.7 x 50 = 35 V; ratio 20 / 35
    assert out.details["factor"] == pytest.approx(0.7) and out.limit == pytest.approx(35.0)
    assert out.ratio == pytest.approx(20.0 / 35.0) and "voltage_factor_curve" in out.details["sources"]
    stricter = _check(alu, policy(voltage_factor_curve=curve, voltage_factor=0.65), 65.0)
    assert stricter.details["factor"] == pytest.approx(0.65)
    laxer = _check(alu, policy(voltage_factor_curve=curve, voltage_factor=0.75), 65.0)
    assert laxer.details["factor"] == pytest.approx(0.7)
    beyond = _check(alu, policy(voltage_factor_curve=((25.0, 0.8), (85.0, 0.6))), 95.0)
    assert beyond.status == Status.UNRATED and "voltage_factor_curve" in beyond.message and "85 °C" in beyond.message
    assert _check(alu, policy(voltage_factor_curve=curve), None).missing == ("ambient temperature",)


def test_the_applied_voltage_per_kind_of_part():
    alu = Part(technology="aluminum-electrolytic", rated_voltage_v=10.0)
    pol = policy(voltage_factor=1.0)
    # polarized: the most positive voltage, never below zero (a negative-only part has its own check)
    assert _check(alu, pol, v_max_v=0.4, v_peak_abs_v=3.0).measured == pytest.approx(0.4)
    assert _check(alu, pol, v_max_v=-2.0, v_peak_abs_v=3.0).measured == 0.0
    film = Part(technology="film-polyester", rated_voltage_v=10.0)
    fpol = policy("film-polyester", voltage_factor=1.0)
    small = _check(film, fpol, v_max_v=0.2, v_min_v=-0.3, v_peak_abs_v=0.3, v_ripple_pp_v=0.5)
    assert small.measured == pytest.approx(0.3) and small.details["applied"] == "peak"  # films: peak rule
    cer = Part(technology="ceramic-class1", rated_voltage_v=10.0)
    cpol = policy("ceramic-class1", voltage_factor=1.0)
    equal = _check(cer, cpol, v_max_v=2.0, v_min_v=0.0, v_peak_abs_v=2.0, v_ripple_pp_v=2.0)
    assert equal.details["applied"] == "peak" and "V peak against" in equal.message
    swing = _check(cer, cpol, v_max_v=2.0, v_min_v=-2.5, v_peak_abs_v=2.5, v_ripple_pp_v=4.5)
    assert swing.details["applied"] == "peak-to-peak" and swing.measured == pytest.approx(4.5)
    assert "4.5 V peak-to-peak against 10 V allowed" in swing.message


def test_what_is_missing_is_named():
    alu = Part(technology="aluminum-electrolytic")
    assert _check(alu, policy(voltage_factor=0.8)).missing == ("rated_voltage_v",)
    no_factor = _check(Part(technology="aluminum-electrolytic", rated_voltage_v=10.0), policy())
    assert no_factor.status == Status.UNRATED and no_factor.missing == ("voltage_factor",)
    assert "policy value missing" in no_factor.message
    assert not voltage.INFO.applies(Part(technology="film-polypropylene", rated_voltage_ac_v=275.0))
    assert voltage.INFO.applies(Part(technology="film-polypropylene", rated_voltage_ac_v=275.0, rated_voltage_v=630.0))
    assert voltage.INFO.applies(Part(technology="film-polypropylene"))


def test_the_record_of_a_judgement():
    pol = policy("tantalum-mno2", voltage_factor=0.5, category_voltage=CAT)
    out = _check(TA, pol, 105.0, v_max_v=3.0, v_peak_abs_v=3.0)
    assert out.check == "stress.voltage" and out.unit == "V" and out.status == Status.PASS
    assert out.details["hotspot_c"] == pytest.approx(105.0)
    assert set(out.details["sources"]) == {"voltage_factor", "category_voltage"}
    assert out.message.startswith("C1 sees 3 V peak against 4.17 V allowed (50 % of 10 V rated, category 83 %")


def test_curves_of_three_rows_and_what_their_end_is_called():
    three = ((25.0, 0.8), (65.0, 0.7), (85.0, 0.6))
    alu = Part(technology="aluminum-electrolytic", rated_voltage_v=50.0)
    beyond = _check(alu, policy(voltage_factor_curve=three), 95.0)
    assert "the policy's voltage_factor_curve ends at 85 °C" in beyond.message
    cat3 = ((85.0, 1.0), (105.0, 0.8), (125.0, 2 / 3))
    out = _check(Part(technology="tantalum-mno2", rated_voltage_v=10.0), policy("tantalum-mno2", voltage_factor=0.5,
                                                                                 category_voltage=cat3), 130.0)
    assert "the policy's category voltage (or the part's rated temperature) ends at 125 °C" in out.message


def test_the_message_states_the_factor_and_closes():
    alu = Part(technology="aluminum-electrolytic", rated_voltage_v=10.0)
    out = _check(alu, policy(voltage_factor=0.6), v_max_v=3.0, v_peak_abs_v=3.0)
    assert out.message == "C1 sees 3 V peak against 6 V allowed (60 % of 10 V rated)"
