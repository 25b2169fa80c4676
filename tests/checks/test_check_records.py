"""What each check records beside its ratio: the value that decided, the provenance of every policy
value it used, the message a reviewer reads, and the hints it gives.  The JSON report and the review
minutes carry these; the numbers are worked by hand beside each assertion.

Survivors of the mutation run (scripts/mutation.py) showed these records were not pinned.
"""

from __future__ import annotations

import math

import pytest

from derate.checks import acvoltage, dcbias, hotspot, reverse, ripple, selfheating, surge
from derate.checks.base import Context
from derate.parts import Part
from derate.policy import Policy, Sourced
from derate.project import Scenario
from derate.thermal import outside_frequency_table, thermal_state
from tests.checks.helpers import stress


def _ctx(s, part: Part, values: dict, ambient_c: float | None = 25.0) -> Context:
    """A context whose policy gives each value its own source (named after the key), so a record's
    provenance shows which values it used."""
    pol = Policy(name="team", near_limit_pct=Sourced(10.0, "team"),
                 technologies={part.technology: {k: Sourced(v, f"source of {k}") for k, v in values.items()}})
    return Context("C1", s, part, pol, Scenario("s", ambient_c=ambient_c), thermal_state(s, part, ambient_c), None, 1.0)


def _sources(outcome) -> set[str]:
    return {k for k in outcome.details["sources"]}


# ---------------------------------------------------------------- AC voltage (X/Y safety capacitors)
def test_ac_voltage_says_whether_rms_or_peak_decides():
    """A 275 V AC X2 part at 80 %: 220 V RMS allowed, 311.1 V peak.  A sine of 200 V RMS (282.8 V peak):
    RMS decides at 0.909.  A distorted wave of 200 V RMS with 330 V peak: peak decides at 1.061."""
    part = Part(technology="film-polypropylene", rated_voltage_ac_v=275.0, safety_class="X2")
    sine = acvoltage.check(_ctx(stress(v_rms_v=200.0, v_peak_abs_v=200.0 * math.sqrt(2)), part,
                                {"ac_voltage_factor": 0.8}))
    assert sine.ratio == pytest.approx(200.0 / 220.0) and sine.measured == 200.0 and sine.limit == pytest.approx(220.0)
    assert sine.details == {"v_rms_v": 200.0, "v_peak_v": pytest.approx(282.84, rel=1e-4), "factor": 0.8,
                            "decides": "RMS", "sources": {"ac_voltage_factor": sine.details["sources"]["ac_voltage_factor"]}}
    assert sine.message == ("C1 X2 sees 200 V RMS (282.8 V peak) against 220 V RMS allowed (80 % of its 275 V AC "
                            "rating; RMS decides)")
    spiky = acvoltage.check(_ctx(stress(v_rms_v=200.0, v_peak_abs_v=330.0), part, {"ac_voltage_factor": 0.8}))
    assert spiky.ratio == pytest.approx(330.0 / (220.0 * math.sqrt(2)))
    assert spiky.measured == 330.0 and spiky.limit == pytest.approx(311.13, rel=1e-4)
    assert spiky.details["decides"] == "peak (against sqrt2 x the RMS rating)"
    plain = acvoltage.check(_ctx(stress(v_rms_v=200.0, v_peak_abs_v=282.0), Part(technology="film-polypropylene",
                                                                                 rated_voltage_ac_v=275.0),
                                 {"ac_voltage_factor": 0.8}))
    assert plain.message.startswith("C1 sees 200 V RMS")


# ---------------------------------------------------------------- reverse voltage
def test_reverse_hint_only_for_a_part_negative_over_the_whole_window():
    """1.5 V reverse against aluminium's 1 V limit (factor 0 of rating; cap 1 V): ratio 1.5.  A card
    negative throughout (v_max -0.5 V) gets the node-order hint; one that swings through zero does not."""
    part = Part(technology="aluminum-electrolytic", rated_voltage_v=25.0)
    values = {"reverse_max_v": 1.0}
    whole = reverse.check(_ctx(stress(v_max_v=-0.5, v_min_v=-1.5, v_peak_abs_v=1.5, v_mean_v=-1.0), part, values))
    assert whole.ratio == pytest.approx(1.5) and "negative over the whole window" in whole.message
    assert _sources(whole) == {"reverse_max_v"}
    swing = reverse.check(_ctx(stress(v_max_v=0.5, v_min_v=-1.5, v_peak_abs_v=1.5, v_mean_v=-0.5), part, values))
    assert swing.ratio == pytest.approx(1.5) and swing.message == "C1 sees 1.5 V reverse against 1 V allowed"


# ---------------------------------------------------------------- DC bias
def test_dc_bias_message_and_unrated_reason():
    """A 10 uF X5R keeping 60 % at 5 V and 40 % at 10 V; at 7.5 V: 50 % against a 30 % minimum,
    ratio 0.6; the effective capacitance 5 uF."""
    part = Part(technology="ceramic-class2", capacitance_f=10e-6, dc_bias=((0.0, 1.0), (5.0, 0.6), (10.0, 0.4)))
    got = dcbias.check(_ctx(stress(v_mean_v=-7.5), part, {"dc_bias_min_fraction": 0.3}))
    assert got.ratio == pytest.approx(0.6) and got.measured == pytest.approx(0.5)
    assert got.message == "C1 keeps 50 % of its capacitance at 7.5 V DC (minimum 30 %)"
    assert got.details["v_dc_v"] == 7.5 and got.details["effective_capacitance_f"] == pytest.approx(5e-6)
    assert _sources(got) == {"dc_bias_min_fraction"}
    none = dcbias.check(_ctx(stress(v_mean_v=7.5), part, {}))
    assert none.status == "unrated" and none.message == (
        "C1: class-2 ceramic capacitance under dc bias cannot be checked: policy value missing (dc_bias_min_fraction)")
    past = dcbias.check(_ctx(stress(v_mean_v=10.5), part, {"dc_bias_min_fraction": 0.3}))
    assert past.status == "unrated" and "curve ends at 10 V" in past.message


# ---------------------------------------------------------------- hot spot, self-heating, surge
def test_hotspot_records_which_limits_it_used():
    """A 105 °C part under a 10 °C margin, a 100 °C maximum and 'at most 85 °C for 105 °C parts' (the
    row replaces the margin): the limit is min(105, 100, 85) = 85 °C, and all three values are cited."""
    part = Part(technology="aluminum-electrolytic", rated_temperature_c=105.0, ripple_current_a=1.0, ripple_rise_c=5.0)
    got = hotspot.check(_ctx(stress(), part, {"hotspot_margin_c": 10.0, "hotspot_max_c": 100.0,
                                              "hotspot_max_by_rated_c": ((105.0, 85.0),)}, ambient_c=40.0))
    assert got.limit == 85.0
    assert _sources(got) == {"hotspot_margin_c", "hotspot_max_c", "hotspot_max_by_rated_c"}


def test_self_heating_is_judged_with_a_status():
    """A film part 2 A RMS against a 4 A rating with a 10 °C rated rise: 10 x (2/4)^2 = 2.5 °C against a
    5 °C limit: ratio 0.5, pass."""
    part = Part(technology="film-polypropylene", ripple_current_a=4.0, ripple_rise_c=10.0)
    got = selfheating.check(_ctx(stress(bands=((1e5, 2.0),), i_ac_rms_a=2.0), part, {"self_heating_max_c": 5.0}))
    assert got.ratio == pytest.approx(0.5) and got.measured == pytest.approx(2.5) and got.status == "pass"
    assert got.details["method"] == "rated-rise"


def test_surge_of_a_rail_that_only_goes_negative_is_zero():
    """A polarized part whose start-up never goes positive has no forward surge: 0 V, ratio 0 (the
    reverse check judges its negative side)."""
    part = Part(technology="aluminum-electrolytic", rated_voltage_v=25.0, surge_voltage_v=32.0,
                rated_temperature_c=105.0)
    got = surge.check(_ctx(stress(startup_v_peak_v=-2.0, startup_v_min_v=-3.0, power_up="in-run"), part,
                           {"surge_factor": 0.9}))
    assert got.ratio == 0.0 and got.measured == 0.0
    assert got.message == ("C1 peaks at 0 V during start-up (the run starts from zero) against 28.8 V (90 % of "
                           "its surge rating)")


# ---------------------------------------------------------------- ripple: the current outside the frequency table
RISING = ((120.0, 0.6), (1e3, 0.8), (1e4, 0.9), (1e5, 1.0))


def _ripple_part(table=RISING, f_rating=1e5) -> Part:
    return Part(technology="aluminum-electrolytic", ripple_current_a=2.0, ripple_temperature_c=105.0,
                ripple_frequency_hz=f_rating, ripple_frequency_multipliers=table)


def test_ripple_unjudged_when_much_of_the_current_lies_on_the_flattering_side():
    """30 % of I_eq^2 at 50 Hz, below a table that starts at 120 Hz and rises with frequency (holding
    its 0.6 would understate the weight there): unrated, saying where and how much."""
    a, b = 0.6 * math.sqrt(0.3), math.sqrt(0.7)  # weights (a/0.6)^2 = 0.3 and b^2 = 0.7
    got = ripple.check(_ctx(stress(bands=((50.0, a), (1e5, b))), _ripple_part(), {"ripple_factor": 1.0}))
    assert got.status == "unrated"
    assert got.message == ("C1: ripple current cannot be checked: 30 % of it (as I^2) lies below its frequency "
                           "multipliers (120 to 100000 Hz), where holding the end value would understate it")
    falling = ((120.0, 1.0), (1e3, 0.9), (1e4, 0.8))  # a table that falls with frequency: above flatters
    got = ripple.check(_ctx(stress(bands=((120.0, b), (5e4, 0.8 * math.sqrt(0.3)))), _ripple_part(falling, 120.0),
                            {"ripple_factor": 1.0}))
    assert got.message.startswith("C1: ripple current cannot be checked: 30 % of it (as I^2) lies above its frequency "
                                  "multipliers (120 to 10000 Hz)")


def test_ripple_judged_with_a_note_when_little_lies_outside():
    """3 % of I_eq^2 below the table and 2 % above it: judged, and the 5.0 % held at the ends is said."""
    w_low, w_high, w_mid = 0.03, 0.02, 0.95
    bands = ((50.0, 0.6 * math.sqrt(w_low)), (2e5, math.sqrt(w_high)), (1e5, math.sqrt(w_mid)))
    got = ripple.check(_ctx(stress(bands=bands), _ripple_part(), {"ripple_factor": 1.0}))
    assert got.status == "pass" and got.ratio == pytest.approx(1.0 / 2.0)  # I_eq = 1 A against 2 A
    assert "5.0 % of the current lies outside the frequency multipliers (held at their ends)" in got.details["notes"]


@pytest.mark.parametrize("f_rating,judged", [(100.0, False), (1e4, True), (5e4, True), (2e5, False)])
def test_ripple_rating_frequency_must_lie_inside_the_table(f_rating, judged):
    got = ripple.check(_ctx(stress(bands=((1e4, 1.0),)), _ripple_part(f_rating=f_rating), {"ripple_factor": 1.0}))
    assert (got.status != "unrated") == judged
    if not judged:
        assert got.message == (f"C1: ripple current cannot be checked: the rating frequency {f_rating:g} Hz lies "
                               "outside its frequency multipliers")


@pytest.mark.parametrize("table,side", [
    (((120.0, 0.6), (1e3, 1.1), (1e4, 1.0), (1e5, 0.9)), "below"),  # peaks in the middle; ends rise
    (((120.0, 0.8), (1e3, 0.7), (1e4, 1.0), (1e5, 0.9)), "below"),
    (((120.0, 0.8), (1e3, 0.9), (1e4, 0.7), (1e5, 1.0)), "below"),
    (((120.0, 1.0), (1e3, 0.7), (1e4, 0.9), (1e5, 0.8)), "above"),  # ends fall
])
def test_the_flattering_side_is_decided_by_the_table_ends(table, side):
    """Holding an end row flatters where that end is the lower one: the first row against the last,
    whatever the rows between do."""
    part = Part(technology="aluminum-electrolytic", ripple_frequency_multipliers=table, ripple_frequency_hz=1e4)
    flattering, below, above = outside_frequency_table(stress(bands=((50.0, 1.0), (2e5, 0.5))), part)
    assert flattering == (below if side == "below" else above)


def test_dc_bias_at_the_very_end_of_its_curve_is_judged_and_reported_in_whole_percent():
    part = Part(technology="ceramic-class2", capacitance_f=10e-6, dc_bias=((0.0, 1.0), (5.0, 0.6), (10.0, 0.4)))
    got = dcbias.check(_ctx(stress(v_mean_v=10.0), part, {"dc_bias_min_fraction": 0.7}))
    assert got.status == "fail" and got.ratio == pytest.approx(0.7 / 0.4)
    at5 = dcbias.check(_ctx(stress(v_mean_v=5.0), part, {"dc_bias_min_fraction": 0.7}))
    assert at5.message == "C1 keeps 60 % of its capacitance at 5 V DC (minimum 70 %)"


def test_reverse_records_the_factor_it_used():
    part = Part(technology="tantalum-mno2", rated_voltage_v=10.0)
    got = reverse.check(_ctx(stress(v_max_v=0.5, v_min_v=-0.4, v_peak_abs_v=0.5), part,
                             {"reverse_factor": 0.1, "reverse_max_v": 1.0}))
    assert got.limit == pytest.approx(1.0) and got.ratio == pytest.approx(0.4)
    assert _sources(got) == {"reverse_factor", "reverse_max_v"}
