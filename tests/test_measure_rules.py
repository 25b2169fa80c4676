"""Waveforms to stress figures on synthetic waveforms whose figures are known in closed form.

Pure maths (no simulator): each waveform is chosen so that a wrong formula gives another number:
negative peaks larger than positive ones, a DC offset under the ripple, a window that cuts between
samples, a waveform moving toward its end value at a known geometric rate.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from derate.measure import (Envelope, Stress, SpectrumPlan, _at, _line, drift, envelope, harmonics_of, measure,
                            period_stats, segment_squares, settle_spacing, square_integral, time_mean, time_rms,
                            trend)


def test_a_record_survives_its_round_trip():
    s = Stress("C1", "c1", "hot", model="C+ESR", esr_ohm=0.1, esl_h=1e-9, window_start_s=0.1, window_end_s=0.2,
               v_dc_v=1.5, v_max_v=2.0, v_min_v=-3.0, v_peak_abs_v=3.0, v_mean_v=0.5, v_rms_v=1.2, v_ripple_pp_v=5.0,
               i_rms_a=0.7, i_ac_rms_a=0.6, i_mean_a=0.1, i_peak_a=1.1, dvdt_max_v_per_s=1e3, f_fundamental_hz=50.0,
               harmonics=((1, 50.0, 0.5), (3, 150.0, 0.1)), bands=((50.0, 0.5), (150.0, 0.1)),
               startup_v_peak_v=4.0, startup_v_min_v=-5.0, startup_i_peak_a=9.0, steady_state=False,
               drift_ratio=0.03, settle_more_s=0.2, power_up="simulated", notes=("a", "b"))
    d = s.as_dict()
    assert d["harmonics"] == [[1, 50.0, 0.5], [3, 150.0, 0.1]] and d["bands"] == [[50.0, 0.5], [150.0, 0.1]]
    assert d["notes"] == ["a", "b"] and d["power_up"] == "simulated" and d["v_rms_v"] == 1.2
    assert Stress.from_dict(d) == s
    assert Stress.from_dict({**d, "unknown": 1}) == s  # a field another version wrote is left out


def test_an_envelope_survives_its_round_trip():
    env = Envelope(np.array([0.0, 1.0]), np.array([-1.0, -2.0]), np.array([1.0, 2.0]), np.array([-0.1, -0.2]),
                   np.array([0.1, 0.2]), np.array([0.05, 0.06]))
    arrays = env.as_arrays()
    assert sorted(arrays) == ["imax", "imin", "irms", "t", "vmax", "vmin"]
    back = Envelope.from_arrays(arrays)
    for name in ("t_s", "v_min_v", "v_max_v", "i_min_a", "i_max_a", "i_rms_a"):
        assert (getattr(back, name) == getattr(env, name)).all(), name
    old = Envelope.from_arrays({k: v for k, v in arrays.items() if k != "irms"})
    assert len(old.i_rms_a) == 2 and np.isnan(old.i_rms_a).all()
    assert (old.v_max_v == env.v_max_v).all() and (old.i_min_a == env.i_min_a).all()


def test_integrals_over_real_time():
    t = np.array([0.0, 1.0, 3.0])
    y = np.array([0.0, 2.0, 2.0])
    assert time_mean(t, y) == pytest.approx((1.0 + 4.0) / 3.0)  # trapezoids: 1 + 4 over 3 s
    assert time_mean(np.array([2.0]), np.array([7.0])) == 7.0  # no span: the value itself
    # exact square of a ramp 0 -> 2 over 1 s is 4/3; of a constant 2 over 2 s is 8
    assert square_integral(t, y) == pytest.approx(4 / 3 + 8)
    assert time_rms(t, y) == pytest.approx(math.sqrt((4 / 3 + 8) / 3))
    assert time_rms(np.array([0.0]), np.array([-3.0])) == 3.0
    cols = segment_squares(t, np.column_stack([y, -y]))
    assert cols.shape == (2, 2) and cols[:, 0] == pytest.approx([4 / 3, 8]) and cols[:, 1] == pytest.approx([4 / 3, 8])


def test_interpolation_at_a_time():
    t = np.array([0.0, 1.0, 1.0, 2.0])
    y = np.array([0.0, 10.0, 20.0, 30.0])
    assert _at(t, y, -1.0) == 0.0 and _at(t, y, 5.0) == 30.0
    assert _at(t, y, 0.25) == pytest.approx(2.5) and _at(t, y, 1.5) == pytest.approx(25.0)
    assert _at(t, y, 1.0) == 20.0  # at a repeated time (a breakpoint): the later sample


def test_least_squares_line():
    x = np.arange(5, dtype=float)
    a, b = _line(x, 3 * x - 2)
    assert a == pytest.approx(3.0) and b == pytest.approx(-2.0)
    assert _line(np.zeros(3), np.array([1.0, 2.0, 3.0])) == (0.0, 2.0)  # no spread in x: flat through the mean


def test_harmonics_and_the_strongest_component():
    n = 1000
    freqs = np.arange(1, n + 1) * 10.0
    rms = np.zeros(n)
    rms[9] = 1.0  # 100 Hz
    rms[29] = 0.3  # 300 Hz
    rms[30] = 0.4  # 310 Hz: leakage that stays with the third harmonic
    f0, harm = harmonics_of(freqs, rms, 4)
    assert f0 == 100.0
    assert harm[0] == (1, 100.0, 1.0) and harm[1] == (2, 200.0, 0.0)
    assert harm[2][0] == 3 and harm[2][1] == 300.0 and harm[2][2] == pytest.approx(0.5)
    assert len(harm) == 4
    assert harmonics_of(freqs, np.zeros(n), 4) == (None, ())
    assert harmonics_of(np.array([]), np.array([]), 3) == (None, ())
    short = harmonics_of(freqs[:24], rms[:24], 10)[1]
    assert [h[0] for h in short] == [1, 2]  # no bins at 300 Hz and above: the listing stops


def test_bands_of_a_spectrum():
    plan = SpectrumPlan.make(0.0, 1.0, 1024)
    t = np.linspace(0.0, 1.0, 4097)
    y = math.sqrt(2) * 0.8 * np.sin(2 * np.pi * 50 * t) + math.sqrt(2) * 0.6 * np.sin(2 * np.pi * 200 * t)
    bands = plan.bands(plan.rms_bins(t, y))
    assert sum(i * i for _, i in bands) == pytest.approx(1.0, rel=1e-3)  # 0.8^2 + 0.6^2
    strongest = max(bands, key=lambda b: b[1])
    assert strongest[0] == pytest.approx(50.0, rel=1e-3) and strongest[1] == pytest.approx(0.8, rel=1e-3)
    assert plan.bands(np.zeros(len(plan.freqs))) == ()
    odd = SpectrumPlan.make(0.0, 1.0, 1023)
    assert len(odd.grid) == 1023 and odd.grid[1] == pytest.approx(1 / 1023)


def test_drift_measures_the_ends_of_the_window():
    t = np.linspace(0, 0.1, 10001)
    v = 10 + 0.01 * t / 0.1 * 100  # 10 V rising to 11 V
    i = np.full_like(t, 0.5)
    # per period means at the window's two ends differ by (10.95 - 10.05) ... relative to the 11 V scale
    got = drift(t, v, i, 0.0, 0.1, 0.01)
    assert got == pytest.approx((10.95 - 10.05) / 11.0, rel=1e-3)
    cur = drift(t, np.full_like(t, 5.0), np.where(t < 0.05, 1.0, 2.0), 0.0, 0.1, 0.01)
    assert cur == pytest.approx(0.5)  # RMS current 1 A then 2 A: half of the larger
    assert drift(t, np.zeros_like(t), np.zeros_like(t), 0.0, 0.1, 0.01) == 0.0


def test_per_period_statistics():
    t = np.linspace(0, 0.04, 4001)
    v = 5 + np.sin(2 * np.pi * 100 * t)
    i = np.cos(2 * np.pi * 100 * t)
    stats = period_stats(t, v, i, 0.04, 0.01, 3)
    assert stats.shape == (3, 4)
    assert stats[:, 0] == pytest.approx(5.0, abs=1e-6) and stats[:, 1] == pytest.approx(6.0, abs=1e-4)
    assert stats[:, 2] == pytest.approx(4.0, abs=1e-4) and stats[:, 3] == pytest.approx(1 / math.sqrt(2), rel=1e-4)
    assert period_stats(t, v, i, 0.04, 0.01, 60).shape == (4, 4)  # only four whole periods in the run
    assert period_stats(t, v, i, 0.004, 0.01, 5).shape == (0, 4)


def _stats(values: np.ndarray) -> np.ndarray:
    return np.column_stack([values, values + 0.5, values - 0.5, np.ones(len(values))])


def test_trend_settled_settling_drifting_and_scatter():
    k = np.arange(40, dtype=float)
    assert trend(_stats(np.full(5, 10.0)), 0.01) is None  # fewer than six periods
    flat = trend(_stats(np.full(40, 10.0)), 0.01)
    assert flat.remaining == 0.0 and flat.more_periods == 0 and flat.periods == 40
    # geometric approach: 10 - 2 x 0.9^k; still to come after the last (k = 39): 2 x 0.9^39 = 0.033 V of 10.5
    approach = trend(_stats(10 - 2 * 0.9 ** k), 0.001)
    assert approach.ratio == pytest.approx(0.9, abs=0.01)
    assert approach.remaining == pytest.approx(2 * 0.9 ** 39 / 10.5, rel=0.3)
    assert approach.more_periods == math.ceil(math.log(0.001 / approach.remaining) / math.log(approach.ratio))
    # a straight drift does not slow: its remaining is at least as much again
    linear = trend(_stats(10 + 0.01 * k), 0.001)
    assert (linear.ratio is None or linear.ratio >= 0.999) and linear.more_periods is None
    assert linear.remaining == pytest.approx(0.01 / 10.89 * 40, rel=0.02)
    # a start-up over the first periods, then flat: settled
    start = np.concatenate([10 - 3 * 0.3 ** np.arange(8), np.full(32, 10.0)])
    assert trend(_stats(start), 0.01).remaining == 0.0
    # scatter that turns back within the tolerance is not a drift; beyond it, it is
    scatter = np.concatenate([np.linspace(9.0, 10.0, 20), 10 + 0.02 * (-1) ** np.arange(20)])
    assert trend(_stats(scatter), 0.05).remaining == 0.0
    # (a period-to-period swing larger than the tolerance is no trend either: the window's ends catch it, drift())
    # the current decides when it is what moves
    cur = np.column_stack([np.full(40, 10.0), np.full(40, 10.5), np.full(40, 9.5), 1 + 0.01 * k])
    assert trend(cur, 0.001).remaining > 0.001


def test_settle_spacing():
    assert settle_spacing(0.02, 0.0, 1.0) == 0.02
    assert settle_spacing(None, 0.5, 1.5) == pytest.approx(0.1) and settle_spacing(0.0, 0.0, 1.0) == 0.1


def test_every_figure_of_a_window():
    # 2 V DC with a 3 V, 100 Hz sine over eight periods; the window [0.06, 0.08] falls between samples
    t = np.linspace(0, 0.08, 8000)
    v = 2 + 3 * np.sin(2 * np.pi * 100 * t)
    i = 1e-3 * 3 * 2 * np.pi * 100 * np.cos(2 * np.pi * 100 * t) + 0.01  # C dv/dt of 1 mF, plus 10 mA DC
    s = measure("C1", "c1", "hot", t, v, i, 2.0, (0.06, 0.08), period=0.01, points=4096, harmonics=3,
                model="C+ESR", esr_ohm=0.1, esl_h=2e-9)
    assert s.v_max_v == pytest.approx(5.0, abs=1e-3) and s.v_min_v == pytest.approx(-1.0, abs=1e-3)
    assert s.v_peak_abs_v == pytest.approx(5.0, abs=1e-3) and s.v_ripple_pp_v == pytest.approx(6.0, abs=2e-3)
    assert s.v_mean_v == pytest.approx(2.0, abs=0.01) and s.v_rms_v == pytest.approx(math.sqrt(4 + 4.5), abs=0.01)
    amp = 1e-3 * 3 * 2 * np.pi * 100
    assert s.i_mean_a == pytest.approx(0.01, abs=1e-3)
    assert s.i_rms_a == pytest.approx(math.sqrt(amp ** 2 / 2 + 1e-4), rel=0.01)
    assert s.i_ac_rms_a == pytest.approx(amp / math.sqrt(2), rel=0.01)
    assert s.i_peak_a == pytest.approx(amp + 0.01, rel=1e-3)
    assert s.dvdt_max_v_per_s == pytest.approx(3 * 2 * np.pi * 100, rel=1e-3)
    assert s.f_fundamental_hz == pytest.approx(100.0, rel=0.01) and s.harmonics[0][0] == 1
    assert s.harmonics[0][2] == pytest.approx(amp / math.sqrt(2), rel=0.02)
    assert (s.window_start_s, s.window_end_s) == (0.06, 0.08) and s.v_dc_v == 2.0
    assert (s.model, s.esr_ohm, s.esl_h, s.capacitor, s.spice_name, s.scenario) == (
        "C+ESR", 0.1, 2e-9, "C1", "c1", "hot")
    assert s.startup_v_peak_v == pytest.approx(5.0, abs=1e-3) and s.startup_v_min_v == pytest.approx(-1.0, abs=1e-3)
    assert s.startup_i_peak_a == pytest.approx(amp + 0.01, rel=1e-3)
    assert s.steady_state is True and s.settle_more_s == 0.0 and s.drift_ratio == pytest.approx(0.0, abs=1e-3)


def test_negative_peaks_and_the_whole_runs_extremes():
    t = np.linspace(0, 0.08, 8001)
    v = -1 - 4 * np.sin(2 * np.pi * 100 * t)  # from -5 V to 3 V: the negative peak is the larger
    i = np.zeros_like(t)
    s = measure("C1", "c1", "s", t, v, i, 0.0, (0.06, 0.08), period=0.01, points=1024)
    assert s.v_peak_abs_v == pytest.approx(5.0, abs=1e-3) and s.v_max_v == pytest.approx(3.0, abs=1e-3)
    given = measure("C1", "c1", "s", t, v, i, 0.0, (0.06, 0.08), period=0.01, points=1024,
                    extremes=(9.0, -8.0, 7.0))
    assert (given.startup_v_peak_v, given.startup_v_min_v, given.startup_i_peak_a) == (9.0, -8.0, 7.0)
    spike = v.copy()
    spike[5] = -30.0  # a start-up spike before the window
    run = measure("C1", "c1", "s", t, spike, i - spike * 1e-3, 0.0, (0.06, 0.08), period=0.01, points=1024)
    assert run.startup_v_min_v == -30.0 and run.v_min_v == pytest.approx(-5.0, abs=1e-3)
    assert run.startup_i_peak_a == pytest.approx(0.030)


def test_an_unsettled_window_says_so_with_what_it_needs():
    t = np.linspace(0, 0.3, 30001)
    v = 10 * (1 - np.exp(-t / 0.1)) + 0.2 * np.sin(2 * np.pi * 100 * t)
    i = np.gradient(v, t) * 1e-4
    s = measure("C1", "c1", "s", t, v, i, 0.0, (0.28, 0.3), period=0.01, points=1024)
    assert s.steady_state is False and s.drift_ratio > 0.01
    assert s.settle_more_s is not None and s.settle_more_s > 0.05
    assert any(n.startswith("still settling") for n in s.notes)
    steady = measure("C1", "c1", "s", t, np.sin(2 * np.pi * 100 * t), np.cos(2 * np.pi * 100 * t), 0.0, (0.28, 0.3),
                     period=0.01, points=1024)
    assert steady.steady_state is True and steady.notes == ()


def test_the_envelope_keeps_every_peak_and_a_running_rms():
    t = np.linspace(0, 1.0, 100001)
    i = np.sin(2 * np.pi * 50 * t)
    v = i.copy()
    v[50000] = 7.0
    env = envelope(t, v, i, 0.0, 1.0, buckets=50, rms_period=0.02)
    assert len(env.t_s) == 50 and env.v_max_v.max() == 7.0
    assert env.i_rms_a[-1] == pytest.approx(1 / math.sqrt(2), rel=1e-3)
    short = envelope(t[:50], v[:50], i[:50], 0.0, t[49], buckets=50)
    assert len(short.t_s) == 50 and (short.v_min_v == short.v_max_v).all()  # few samples: kept as they are


def test_the_window_ends_alone_can_call_a_run_unsettled():
    # a sine whose amplitude alternates from period to period (1.0, 1.1, ...): no trend over the run, but the
    # window's first and last periods differ by about 10 %/(1.1 x ...), over the 1 % tolerance
    t = np.linspace(0, 0.2, 40001)
    amp = np.where(np.floor(t / 0.01 + 1e-9) % 2 == 0, 1.0, 1.1)
    v = 5 + amp * np.sin(2 * np.pi * 100 * t)
    s = measure("C1", "c1", "s", t, v, np.zeros_like(t), 0.0, (0.18, 0.2), period=0.01, points=1024)
    # the trend is flat, so two more periods are asked for to show which end is right
    assert s.steady_state is False and s.settle_more_s == pytest.approx(0.02) and s.drift_ratio > 0.01
    assert s.notes[0].startswith("not in steady state: the window's last period differs from its first by ")
    # a window of under two periods is not compared end to end
    short = measure("C1", "c1", "s", t, v, np.zeros_like(t), 0.0, (0.185, 0.2), period=0.01, points=1024)
    assert short.drift_ratio == 0.0 and short.steady_state is True
    # "two periods" written to a few digits (33.333 ms at 60 Hz) counts as two
    t2 = np.linspace(0, 0.2, 40001)
    v2 = 5 + np.sin(2 * np.pi * 60 * t2) * np.where(t2 > 0.18, 1.2, 1.0)
    near = measure("C1", "c1", "s", t2, v2, np.zeros_like(t2), 0.0, (0.2 - 0.033333, 0.2), period=1 / 60, points=1024)
    assert near.drift_ratio > 0.01


def test_figures_that_depend_on_the_window_alone():
    t = np.linspace(0, 0.08, 8001)
    v = 0.05 * np.sin(2 * np.pi * 100 * t)  # a small voltage: its RMS is 35 mV, never floored
    i = 0.5 + 0.1 * np.sin(2 * np.pi * 100 * t)  # 0.5 A DC under 0.1 A of ripple
    spike_t = np.concatenate([t, [0.0805, 0.081]])
    spike_v = np.concatenate([v, [9.0, 0.0]])
    spike_i = np.concatenate([i, [0.5, 0.5]])
    s = measure("C1", "c1", "s", spike_t, spike_v, spike_i, 0.0, (0.06, 0.08), period=0.01, points=1024)
    assert s.v_rms_v == pytest.approx(0.05 / math.sqrt(2), rel=1e-3)
    assert s.v_max_v == pytest.approx(0.05, rel=1e-3)  # the spike after the window is not in it
    assert s.startup_v_peak_v == 9.0  # but it is in the whole run
    assert s.i_ac_rms_a == pytest.approx(0.1 / math.sqrt(2), rel=1e-3)  # the DC taken out
    assert s.model == "ideal" and len(s.harmonics) <= 10 and s.esr_ohm is None
    # a repeated time point (a breakpoint) does not make dv/dt infinite
    tt = np.array([0.0, 0.5, 0.5, 1.0])
    vv = np.array([0.0, 1.0, 1.0, 3.0])
    r = measure("C1", "c1", "s", tt, vv, np.zeros(4), 0.0, (0.0, 1.0), points=64)
    assert r.dvdt_max_v_per_s == pytest.approx(4.0)
    flat = measure("C1", "c1", "s", np.array([0.0, 1.0]), np.array([1.0, 1.0]), np.zeros(2), 0.0, (0.0, 1.0), points=8)
    assert flat.dvdt_max_v_per_s == 0.0


def test_the_temperature_multiplier_branch_by_branch():
    from derate.parts import Part
    from derate.thermal import temperature_multiplier

    table = ((65.0, 2.1), (85.0, 1.7), (105.0, 1.0))
    base = dict(technology="aluminum-electrolytic", ripple_current_a=1.0, rated_temperature_c=105.0)
    none = temperature_multiplier(Part(**base), None)
    assert (none.value, none.table, none.note) == (None, "none", "no ambient temperature")
    # no table: the rating as is at (or below) its temperature, nothing above it
    at = temperature_multiplier(Part(**base), 105.0)
    assert at.value == 1.0 and at.table == "none" and "used as is at or below it" in at.note
    above = temperature_multiplier(Part(**base), 105.5)
    assert above.value is None and above.table == "none"
    assert above.note == "the ripple rating is given at 105 °C and the ambient is 105.5 °C: temperature multipliers " \
                         "are needed above it"
    unknown = temperature_multiplier(Part(technology="aluminum-electrolytic", ripple_current_a=1.0), 40.0)
    assert unknown.value is None and unknown.table == "none" and unknown.note.endswith(
        "(ripple_temperature_c or rated_temperature_c)")
    # a table: normalised, at its last row exactly still read, above it not
    part = Part(**base, ripple_temperature_multipliers=table)
    top = temperature_multiplier(part, 105.0)
    assert top.value == 1.0 and top.table == "part" and top.note.startswith("normalised at 105 °C")
    over = temperature_multiplier(part, 105.5)
    assert over.value is None and over.table == "part" and over.note.startswith("the temperature multipliers end")
    first = temperature_multiplier(part, 65.0)
    assert first.value == pytest.approx(2.1) and "held" not in first.note
    # the rating temperature at the table's ends is inside it; beyond them it is not
    at_end = temperature_multiplier(Part(**base, ripple_temperature_c=65.0, ripple_temperature_multipliers=table), 85.0)
    assert at_end.value == pytest.approx(1.7 / 2.1)
    outside = temperature_multiplier(Part(**base, ripple_temperature_c=60.0, ripple_temperature_multipliers=table),
                                     80.0)
    assert outside.value is None and outside.table == "part" and "lies outside" in outside.note
    relative = temperature_multiplier(Part(technology="aluminum-electrolytic", ripple_temperature_multipliers=table),
                                      85.0)
    assert relative.value == pytest.approx(1.7) and relative.table == "part"
    assert "the temperature multipliers' 1.0 row" in relative.note
    no_one = temperature_multiplier(Part(technology="aluminum-electrolytic",
                                         ripple_temperature_multipliers=((65.0, 2.1), (105.0, 1.0000001))), 85.0)
    assert no_one.value is None and no_one.table == "part" and no_one.note.endswith("(ripple_temperature_c)")
    policy_table = temperature_multiplier(Part(technology="tantalum-mno2"), 60.0, ((25.0, 1.0), (125.0, 0.4)))
    assert policy_table.table == "policy" and policy_table.value == pytest.approx(1 - 0.6 * 35 / 100)


def test_the_envelopes_buckets_and_running_rms_in_detail():
    # 1000 samples from t = 1 s to 2 s, a 10 Hz sine of 1 A: 20 buckets of 50 samples each
    t = np.linspace(1.0, 2.0, 1001)
    i = np.sin(2 * np.pi * 10 * t)
    v = 2 * t
    env = envelope(t, v, i, 1.2, 1.8, buckets=20, rms_period=0.1)
    assert len(env.t_s) == 20
    width = 0.6 / 20
    assert env.t_s[0] == pytest.approx(1.2 + 0.5 * width) and env.t_s[-1] == pytest.approx(1.8 - 0.5 * width)
    assert env.v_min_v[0] == pytest.approx(2.4) and env.v_max_v[-1] == pytest.approx(3.6)  # only the window's samples
    # the running RMS over one period of a sine is its RMS wherever it ends
    assert env.i_rms_a == pytest.approx(1 / math.sqrt(2), rel=2e-3)
    # without a period, a twentieth of the span: 0.03 s of a 10 Hz sine is not its RMS
    other = envelope(t, v, i, 1.2, 1.8, buckets=20)
    assert not np.allclose(other.i_rms_a, 1 / math.sqrt(2), rtol=0.01)
    # the running RMS at the run's first samples looks back no further than the run
    early = envelope(t, v, np.ones_like(t), 1.0, 1.05, buckets=5, rms_period=0.1)
    assert early.i_rms_a == pytest.approx(1.0)
    # up to twice as many samples as buckets are kept as they are
    keep = envelope(t, v, i, 1.0, 1.039, buckets=20)
    assert len(keep.t_s) == 40 and (keep.v_min_v == keep.v_max_v).all()
    cut = envelope(t, v, i, 1.0, 1.041, buckets=20)
    assert len(cut.t_s) == 20


def test_messages_and_fields_of_an_unsettled_window():
    t = np.linspace(0, 0.3, 30001)
    v = 10 * (1 - np.exp(-t / 0.1)) + 0.2 * np.sin(2 * np.pi * 100 * t)
    s = measure("C1", "c1", "s", t, v, np.gradient(v, t) * 1e-4, 0.0, (0.28, 0.3), period=0.01, points=1024)
    note = next(n for n in s.notes if n.startswith("still settling"))
    assert "over the last 30 periods the values move " in note and "% more to come; about " in note
    assert s.settle_more_s == pytest.approx(round(s.settle_more_s / 0.01) * 0.01)  # whole periods
    assert s.drift_ratio <= 10.0 and s.bands and s.harmonics
    linear = np.linspace(0, 0.3, 30001)
    drifting = measure("C1", "c1", "s", linear, 1 + linear, np.zeros_like(linear), 0.0, (0.25, 0.3), points=256)
    assert drifting.steady_state is False and drifting.settle_more_s is None
    assert any(n.startswith("still drifting: over the last 60 parts of a tenth of the window (no periodic source)")
               for n in drifting.notes)
    young = measure("C1", "c1", "s", t[:501], v[:501], np.zeros(501), 0.0, (0.0, 0.005), period=0.01, points=256)
    assert young.settle_more_s == pytest.approx(0.06)  # no whole period yet: six more


def test_a_window_exactly_two_periods_long_is_compared_end_to_end():
    t = np.linspace(0, 0.1, 20001)
    v = 5 + np.sin(2 * np.pi * 100 * t) * np.where(t > 0.09, 1.1, 1.0)
    s = measure("C1", "c1", "s", t, v, np.zeros_like(t), 0.0, (0.08, 0.1), period=0.01, points=1024)
    assert s.drift_ratio > 0.01 and s.notes[0] == ("not in steady state: the window's last period differs from its "
                                                   f"first by {100 * s.drift_ratio:.1f} % (tolerance 1.0 %)")


def _rows(mean, vmax, vmin, irms):
    return np.column_stack([mean, vmax, vmin, irms])


def test_the_trend_watches_each_quantity():
    n = 40
    k = np.arange(n, dtype=float)
    flat = np.full(n, 10.0)
    ones = np.ones(n)
    rise = 10 + 0.02 * k  # 0.8 V over the run on a 10 V scale: a drift in any one quantity
    assert trend(_rows(rise, flat + 1, flat - 1, ones), 0.01).remaining > 0.01  # the mean alone
    assert trend(_rows(flat, rise + 1, flat - 1, ones), 0.01).remaining > 0.01  # the maximum alone
    assert trend(_rows(flat, flat + 1, rise - 1, ones), 0.01).remaining > 0.01  # the minimum alone
    assert trend(_rows(flat, flat + 1, flat - 1, 1 + 0.02 * k), 0.01).remaining > 0.01  # the current alone
    # the steepest quantity is the one recorded
    got = trend(_rows(flat, flat + 1, flat - 1, 1 + 0.02 * k), 0.01)
    assert got.slope == pytest.approx(0.02 / (1 + 0.02 * 39), rel=1e-6) and got.noise == pytest.approx(0.0, abs=1e-12)
    assert got.periods == n


def test_the_trends_scales_and_floors():
    n = 40
    k = np.arange(n, dtype=float)
    # a swing of +/-0.5 V around 0 V: the scale is the 1 V swing, so a 6 mV drift of the mean is 0.6 % (settled at
    # 1 %); on the 0.5 V peak alone it would be 1.2 %
    mean = 0.006 * k / (n - 1)
    swing = trend(_rows(mean, mean + 0.5, mean - 0.5, np.ones(n)), 0.01)
    assert swing.remaining <= 0.01
    # ten nanovolts moving by 100 % are far below the 1 mV floor of the voltage scale; picoamps below the 1 nA one
    tiny_v = 1e-8 * (1 + k) / n
    assert trend(_rows(tiny_v, tiny_v, tiny_v, np.ones(n)), 0.01).remaining == 0.0
    tiny_i = 1e-13 * (1 + k) / n
    assert trend(_rows(np.full(n, 5.0), np.full(n, 5.5), np.full(n, 4.5), tiny_i), 0.01).remaining == 0.0
    # a straight line of zero scatter whose whole change is under a quarter of the tolerance: settled, with nothing
    # said to remain
    slow = 10 + 0.0022 * 10.5 * k / (n - 1)  # 0.22 % of the 10.5 V scale over the run
    got = trend(_rows(slow, slow + 0.5, slow - 0.5, np.ones(n)), 0.01)
    assert got.remaining == 0.0 and got.more_periods == 0


def test_the_trend_needs_six_periods_and_reads_exactly_six():
    six = trend(_rows(np.full(6, 1.0), np.full(6, 1.5), np.full(6, 0.5), np.ones(6)), 0.01)
    assert six is not None and six.periods == 6 and six.remaining == 0.0


def test_a_geometric_settling_in_the_later_half_decides_even_beside_a_flat_quantity():
    n = 40
    k = np.arange(n, dtype=float)
    settling = 10 - 2 * 0.9 ** k
    got = trend(_rows(np.full(n, 10.0), settling + 0.5, np.full(n, 9.5), np.ones(n)), 0.001)
    assert got.ratio == pytest.approx(0.9, abs=0.01) and got.more_periods > 0
    # ...and the remaining uses the ratio of the later half to the earlier half's slopes, carried to the end
    assert got.remaining == pytest.approx(2 * 0.9 ** 39 / 10.5, rel=0.3)
