"""Every check's stress ratio is monotonic: more voltage, current or temperature never lowers it."""

from __future__ import annotations

from hypothesis import given, settings, strategies as st

from derate.checks import dcbias, hotspot, life, reverse, ripple, surge, voltage
from derate.parts import Part
from tests.checks.helpers import context, policy, stress

pos = st.floats(min_value=0.0, max_value=500.0, allow_nan=False)
amb = st.floats(min_value=-40.0, max_value=120.0, allow_nan=False)
cur = st.floats(min_value=0.0, max_value=20.0, allow_nan=False)

PART = Part(technology="aluminum-electrolytic", rated_voltage_v=50.0, surge_voltage_v=57.5, rated_temperature_c=105.0,
            ripple_current_a=1.0, ripple_frequency_hz=120.0,
            ripple_frequency_multipliers=((120.0, 1.0), (1e3, 1.3), (1e5, 1.5)),
            ripple_temperature_multipliers=((65.0, 2.1), (85.0, 1.7), (105.0, 1.0)),
            esr_table=((120.0, 0.15), (1e5, 0.06)), thermal_resistance_c_per_w=20.0, base_life_h=5000.0)
POLICY = policy(voltage_factor_curve=((25.0, 0.8), (105.0, 0.6)), surge_factor=0.9, ripple_factor=0.8,
                hotspot_margin_c=20.0, life_factor=1.0, reverse_max_v=1.5)
TA = Part(technology="tantalum-mno2", rated_voltage_v=10.0, rated_temperature_c=125.0, esr_ohm=0.2,
          thermal_resistance_c_per_w=50.0)
TA_POLICY = policy("tantalum-mno2", voltage_factor=0.5, category_voltage=((85.0, 1.0), (125.0, 2 / 3)),
                   reverse_factor_curve=((25.0, 0.1), (85.0, 0.05), (125.0, 0.01)))
MLCC = Part(technology="ceramic-class2", dc_bias=((0.0, 1.0), (10.0, 0.7), (50.0, 0.3)))
MLCC_POLICY = policy("ceramic-class2", dc_bias_min_fraction=0.5)


def _ratio(module, s, part, pol, ambient=25.0, **kw):
    """The stress ratio; a check that cannot judge (above the end of a curve or the part's rating, where
    no rating exists) counts as infinitely stressed: hotter never makes it pass again."""
    ratio = module.check(context(s, part, pol, ambient_c=ambient, **kw)).ratio
    return float("inf") if ratio is None else ratio


@settings(max_examples=200, deadline=None)
@given(pos, pos, amb)
def test_voltage_ratio_monotonic_in_voltage(v1, v2, t):
    lo, hi = sorted((v1, v2))
    for part, pol in ((PART, POLICY), (TA, TA_POLICY)):
        assert _ratio(voltage, stress(v_max_v=lo, v_peak_abs_v=lo), part, pol, t) <= \
            _ratio(voltage, stress(v_max_v=hi, v_peak_abs_v=hi), part, pol, t)


@settings(max_examples=200, deadline=None)
@given(st.floats(0.1, 400), amb, amb, cur)
def test_voltage_ratio_monotonic_in_temperature(v, t1, t2, i):
    lo, hi = sorted((t1, t2))
    s = stress(v_max_v=v, v_peak_abs_v=v, bands=((120.0, i),))
    for part, pol in ((PART, POLICY), (TA, TA_POLICY)):
        assert _ratio(voltage, s, part, pol, lo) <= _ratio(voltage, s, part, pol, hi) + 1e-12


@settings(max_examples=200, deadline=None)
@given(pos, pos, amb)
def test_reverse_and_surge_monotonic(v1, v2, t):
    lo, hi = sorted((v1, v2))
    for part, pol in ((PART, POLICY), (TA, TA_POLICY)):
        assert _ratio(reverse, stress(v_min_v=-lo, startup_v_min_v=-lo), part, pol, t) <= \
            _ratio(reverse, stress(v_min_v=-hi, startup_v_min_v=-hi), part, pol, t)
    assert _ratio(surge, stress(startup_v_peak_v=lo), PART, POLICY, t) <= \
        _ratio(surge, stress(startup_v_peak_v=hi), PART, POLICY, t)


@settings(max_examples=200, deadline=None)
@given(cur, cur, cur, amb, amb)
def test_ripple_monotonic_in_current_and_ambient(i1, i2, i_hf, t1, t2):
    lo, hi = sorted((i1, i2))
    ta, tb = sorted((t1, t2))
    s_lo = stress(bands=((120.0, lo), (1e5, i_hf)))
    s_hi = stress(bands=((120.0, hi), (1e5, i_hf)))
    assert _ratio(ripple, s_lo, PART, POLICY, ta) <= _ratio(ripple, s_hi, PART, POLICY, ta)
    assert _ratio(ripple, s_lo, PART, POLICY, ta) <= _ratio(ripple, s_lo, PART, POLICY, tb) + 1e-12


@settings(max_examples=200, deadline=None)
@given(cur, cur, amb, amb)
def test_hotspot_and_life_monotonic(i1, i2, t1, t2):
    ilo, ihi = sorted((i1, i2))
    ta, tb = sorted((t1, t2))
    for module in (hotspot, life):
        kw = {"mission_life_h": 50000.0}
        r = _ratio(module, stress(bands=((120.0, ilo),)), PART, POLICY, ta, **kw)
        assert r <= _ratio(module, stress(bands=((120.0, ihi),)), PART, POLICY, ta, **kw) + 1e-12
        assert r <= _ratio(module, stress(bands=((120.0, ilo),)), PART, POLICY, tb, **kw) + 1e-12


@settings(max_examples=200, deadline=None)
@given(pos, pos)
def test_dc_bias_monotonic_in_voltage(v1, v2):
    lo, hi = sorted((v1, v2))
    assert _ratio(dcbias, stress(v_mean_v=lo), MLCC, MLCC_POLICY) <= _ratio(dcbias, stress(v_mean_v=hi), MLCC, MLCC_POLICY)
