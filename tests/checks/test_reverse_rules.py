"""stress.reverse against hand calculations: the stricter of two limits, the start-up dip, temperature.

Sources: solid tantalum reverse voltage 10 % / 3 % / 1 % of rated, and at most 1.0 / 0.5 / 0.1 V, at 25 / 85 /
125 °C, whichever is lower (a secondary page; makers' datasheets state it similarly: secondary); aluminium
electrolytic reverse voltage at most 1.5 V (GE capacitor application data).
"""

from __future__ import annotations

import pytest

from derate.checks import reverse
from derate.parts import Part
from derate.status import Status
from tests.checks.helpers import context, policy, stress

FRACTION = ((25.0, 0.10), (85.0, 0.03), (125.0, 0.01))
CAP = ((25.0, 1.0), (85.0, 0.5), (125.0, 0.1))
TA_POLICY = policy("tantalum-mno2", reverse_factor_curve=FRACTION, reverse_max_v_curve=CAP)


def _ta(rated: float = 16.0, **kw) -> Part:
    return Part(technology="tantalum-mno2", rated_voltage_v=rated, rated_temperature_c=125.0, **kw)


def _check(part, pol, ambient=25.0, v_min=-0.2, startup_min=None, v_max=5.0):
    s = stress(v_min_v=v_min, startup_v_min_v=v_min if startup_min is None else startup_min, v_max_v=v_max)
    return reverse.check(context(s, part, pol, ambient_c=ambient))


@pytest.mark.parametrize("rated, t_c, limit", [
    (16.0, 25.0, 1.0),    # 10 % of 16 V = 1.6 V; the 1.0 V cap is stricter
    (6.3, 25.0, 0.63),    # 10 % of 6.3 V = 0.63 V: stricter than 1.0 V
    (16.0, 85.0, 0.48),   # 3 % of 16 V = 0.48 V against 0.5 V
    (35.0, 85.0, 0.5),    # 3 % of 35 V = 1.05 V; the 0.5 V cap is stricter
    (35.0, 125.0, 0.1),   # 1 % of 35 V = 0.35 V; 0.1 V cap
    (6.3, 125.0, 0.063),  # 1 % of 6.3 V = 0.063 V against 0.1 V
])
def test_the_stricter_of_the_fraction_and_the_absolute_cap(rated, t_c, limit):
    out = _check(_ta(rated), TA_POLICY, t_c, v_min=-0.05)
    assert out.limit == pytest.approx(limit) and out.ratio == pytest.approx(0.05 / limit)
    assert set(out.details["sources"]) == {"reverse_factor_curve", "reverse_max_v_curve"}


def test_the_start_up_dip_counts_and_so_does_the_window():
    # steady state at -0.1 V, a start-up dip to -1.2 V: the dip decides (1.2 / 1.0)
    out = _check(_ta(), TA_POLICY, v_min=-0.1, startup_min=-1.2)
    assert out.measured == pytest.approx(1.2) and out.status == Status.FAIL
    late = _check(_ta(), TA_POLICY, v_min=-0.9, startup_min=-0.3)
    assert late.measured == pytest.approx(0.9)
    never = _check(_ta(), TA_POLICY, v_min=0.5, startup_min=0.2)
    assert never.measured == 0.0 and never.ratio == 0.0 and never.status == Status.PASS


def test_a_constant_fraction_and_a_maximum():
    pol = policy("aluminum-electrolytic", reverse_factor=0.05, reverse_max_v=1.5)
    alu = Part(technology="aluminum-electrolytic", rated_voltage_v=50.0)
    # 5 % of 50 V = 2.5 V; 1.5 V is stricter
    assert _check(alu, pol, v_min=-1.0).limit == pytest.approx(1.5)
    small = Part(technology="aluminum-electrolytic", rated_voltage_v=10.0)
    assert _check(small, pol, v_min=-0.2).limit == pytest.approx(0.5)  # 5 % of 10 V
    only_max = policy("aluminum-electrolytic", reverse_max_v=1.5)
    out = _check(Part(technology="aluminum-electrolytic"), only_max, v_min=-3.0)
    assert out.limit == pytest.approx(1.5) and out.ratio == pytest.approx(2.0) and out.status == Status.FAIL
    assert out.details["sources"] == {"reverse_max_v": {"source": "test", "status": "unverified"}}


def test_the_parts_own_limit_wins_over_the_policy():
    out = _check(_ta(reverse_voltage_v=0.2), TA_POLICY, v_min=-0.1)
    assert out.limit == pytest.approx(0.2) and out.ratio == pytest.approx(0.5)


def test_what_cannot_be_judged():
    # a fraction of a rating that is not known: never judged on the absolute cap alone (it may be laxer)
    no_rating = Part(technology="tantalum-mno2", rated_temperature_c=125.0)
    out = _check(no_rating, TA_POLICY)
    assert out.status == Status.UNRATED and out.missing == ("rated_voltage_v",)
    with_max = policy("tantalum-mno2", reverse_factor=0.1, reverse_max_v=1.0)
    assert _check(no_rating, with_max).missing == ("rated_voltage_v",)
    # no limit anywhere: a capacitor that never goes negative passes, one that does is unrated
    bare = policy("tantalum-mno2")
    assert _check(_ta(), bare, v_min=0.1).status == Status.PASS
    got = _check(_ta(), bare, v_min=-0.1)
    assert got.status == Status.UNRATED and got.missing == ("reverse_voltage_v",)
    # curves need a temperature, and are not read past their end or the part's rating
    assert _check(_ta(), TA_POLICY, None).missing == ("ambient temperature",)
    hot = _check(Part(technology="tantalum-mno2", rated_voltage_v=16.0, rated_temperature_c=105.0), TA_POLICY, 110.0)
    assert hot.status == Status.UNRATED and "ends at 105 °C" in hot.message
    unknown = _check(Part(technology="tantalum-mno2", rated_voltage_v=16.0), TA_POLICY, 130.0)
    assert "reverse_factor_curve (or the part's rated temperature) ends at 125 °C" in unknown.message
    only_cap = policy("tantalum-mno2", reverse_max_v_curve=CAP)
    capped = _check(Part(technology="tantalum-mno2", rated_voltage_v=16.0), only_cap, 130.0)
    assert "reverse_max_v_curve (or the part's rated temperature) ends at 125 °C" in capped.message
    assert _check(_ta(), only_cap, None).missing == ("ambient temperature",)


def test_a_part_negative_over_the_whole_window_is_told_about_node_order():
    alu = Part(technology="aluminum-electrolytic", rated_voltage_v=25.0)
    pol = policy("aluminum-electrolytic", reverse_max_v=1.5)
    flipped = _check(alu, pol, v_min=-12.0, v_max=-11.0)
    assert "reversed_terminals" in flipped.message and flipped.status == Status.FAIL
    dips = _check(alu, pol, v_min=-2.0, v_max=12.0)
    assert "reversed_terminals" not in dips.message
    small = _check(alu, pol, v_min=-1.0, v_max=-0.5)  # negative throughout but within the limit: no hint
    assert "reversed_terminals" not in small.message
    assert dips.message == "C1 sees 2 V reverse against 1.5 V allowed"
    assert not reverse.INFO.applies(Part(technology="ceramic-class2"))
    assert reverse.INFO.applies(Part(technology="film-polyester", polarized=True))


def test_never_negative_without_a_limit_is_a_judged_zero():
    out = _check(_ta(), policy("tantalum-mno2"), v_min=0.1, startup_min=0.0)
    assert (out.check, out.status, out.ratio, out.measured, out.limit, out.unit) == (
        "stress.reverse", Status.PASS, 0.0, 0.0, None, "V")
    assert out.message == "C1 never sees reverse voltage"
