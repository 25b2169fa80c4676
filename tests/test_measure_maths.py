"""The maths under the stress figures and the steady-state judgement, on synthetic waveforms and
per-period statistics (pure maths: no simulator), each against an outside truth named beside it:
Parseval's theorem and the DFT of a Nyquist-rate cosine, a geometric series, least-squares lines
fitted by numpy.polyfit, and per-period statistics worked by hand.

Survivors of the mutation run (scripts/mutation.py) showed where the earlier tests did not reach.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from derate.measure import (SpectrumPlan, Stress, _at, drift, envelope, harmonics_of, measure, period_stats,
                            trend)

TOL = 0.01


# ---------------------------------------------------------------- spectrum
def test_a_cosine_at_the_nyquist_rate_has_its_amplitude_as_rms():
    """Samples alternating +A, -A (a cosine at half the sampling rate) have an RMS of A, all in the
    Nyquist bin: its DFT coefficient is n*A, not n*A/2 like every other bin (one-sided spectrum)."""
    n = 64
    plan = SpectrumPlan.make(0.0, 1.0, n)
    y = 0.7 * np.cos(math.pi * np.arange(n))
    rms = plan.rms_bins(plan.grid, y)
    assert rms[-1] == pytest.approx(0.7, rel=1e-12)
    assert np.sum(rms[:-1] ** 2) == pytest.approx(0.0, abs=1e-20)
    # an ordinary bin: a sine of amplitude 1 at bin 5 has RMS 1/sqrt2
    rms5 = plan.rms_bins(plan.grid, np.sin(2 * math.pi * 5 * plan.grid))
    assert rms5[4] == pytest.approx(1 / math.sqrt(2), rel=1e-12)
    # an odd number of points has no Nyquist bin: every bin doubled (Parseval: sum of bin powers =
    # the variance of the samples)
    odd = SpectrumPlan.make(0.0, 1.0, 63)
    y = np.random.default_rng(3).normal(size=63)
    assert np.sum(odd.rms_bins(odd.grid, y) ** 2) == pytest.approx(np.var(y), rel=1e-12)
    y = np.random.default_rng(4).normal(size=64)
    assert np.sum(plan.rms_bins(plan.grid, y) ** 2) == pytest.approx(np.var(y), rel=1e-12)


def test_bands_are_twelfth_octaves_holding_every_bin_once():
    """Bins grouped by floor(12 log2 f): every bin in exactly one band, each band one twelfth-octave,
    and the band powers add up to the total (Parseval)."""
    plan = SpectrumPlan.make(0.0, 0.01, 4096)  # bins every 100 Hz up to 204.8 kHz
    groups = np.split(plan.freqs[plan.band_order], plan.band_starts[1:])
    assert sum(len(g) for g in groups) == len(plan.freqs)
    assert sorted(np.concatenate(groups).tolist()) == sorted(plan.freqs.tolist())
    keys = [set(np.floor(12 * np.log2(g)).astype(int).tolist()) for g in groups]
    assert all(len(k) == 1 for k in keys)  # one twelfth-octave per band
    assert len({next(iter(k)) for k in keys}) == len(groups)  # never the same band twice
    t = plan.grid
    i = 2.0 * np.sin(2 * math.pi * 1000 * t) + 0.5 * np.sin(2 * math.pi * 30000 * t)
    bands = plan.bands(plan.rms_bins(t, i))
    assert [round(f) for f, _ in bands] == [1000, 30000]
    assert [r for _, r in bands] == pytest.approx([2 / math.sqrt(2), 0.5 / math.sqrt(2)], rel=1e-9)
    assert plan.bands(np.zeros(len(plan.freqs))) == ()


def test_harmonics_collect_the_bins_within_half_a_fundamental():
    """A 1 kHz fundamental with a 2 kHz harmonic; bins every 250 Hz.  Harmonic 1 takes 500 (inclusive)
    to 1500 Hz (exclusive): a bin exactly at 500 Hz belongs to it, one at 1500 Hz to harmonic 2."""
    freqs = np.arange(1, 41) * 250.0
    rms = np.zeros(40)
    rms[3] = 1.0  # 1000 Hz
    rms[1] = 0.3  # 500 Hz: the lower edge of harmonic 1
    rms[5] = 0.4  # 1500 Hz: the lower edge of harmonic 2
    rms[7] = 0.5  # 2000 Hz
    f0, harm = harmonics_of(freqs, rms, 3)
    assert f0 == 1000.0
    assert harm[0] == (1, 1000.0, pytest.approx(math.sqrt(1.0 + 0.09)))
    assert harm[1] == (2, 2000.0, pytest.approx(math.sqrt(0.16 + 0.25)))


# ---------------------------------------------------------------- per-period statistics
def _two_periods(first: tuple[float, float, float], second: tuple[float, float, float], points: int = 20001,
                 shape=None):
    """t over [0, 2] s (period 1 s); v = c + a sin in each period; i = A sin (A per period)."""
    t = np.linspace(0.0, 2.0, points)
    first_half = t < 1.0
    c = np.where(first_half, first[0], second[0])
    a = np.where(first_half, first[1], second[1])
    amp = np.where(first_half, first[2], second[2])
    v = c + a * np.sin(2 * math.pi * t)
    if shape is not None:
        v = shape(t, v)
    return t, v, amp * np.sin(2 * math.pi * t)


@pytest.mark.parametrize("first,second,expected", [
    # mean, max and min change; scale the larger |extreme| or the ripple (floor 1 mV)
    ((-10, 1, 1), (-10, 3, 1), 2 / 13),  # |min| of the last period is the scale
    ((10, 3, 1), (10, 1, 1), 2 / 13),  # max of the first
    ((-10, 3, 1), (-10, 1, 1), 2 / 13),  # |min| of the first
    ((0, 5, 1), (0.5, 5, 1), 0.5 / 10.5),  # the ripple (5.5 - -5) is the scale
    ((1e-4, 0, 0), (2e-4, 0, 0), 1e-4 / 1e-3),  # millivolt floor
])
def test_drift_of_the_voltage_against_its_scale(first, second, expected):
    t, v, i = _two_periods(first, second)
    assert drift(t, v, i, 0.0, 2.0, 1.0) == pytest.approx(expected, rel=2e-3)


def test_drift_sees_a_change_of_the_mean_alone_and_of_the_minimum_alone():
    """A sine (mean 0, extremes +-1) then a wave at +1 for 65 % of the period and -1 for 35 % (mean 0.3,
    the same extremes): 0.3 against the ripple scale 2 = 0.15.  Then a sine whose negative half is
    1.5 V deep: mean -0.5 x 2/pi = -0.318, min -1.5: the min moves most, 0.5 against 2.5 = 0.2."""
    def pulse(t, v):
        second = t >= 1.0
        return np.where(second, np.where((t - 1.0) < 0.65, 1.0, -1.0), v)
    t, v, i = _two_periods((0, 1, 1), (0, 1, 1), shape=pulse)
    assert drift(t, v, i, 0.0, 2.0, 1.0) == pytest.approx(0.15, rel=3e-3)

    def deeper(t, v):
        return np.where((t >= 1.0) & (v < 0), 1.5 * v, v)
    t, v, i = _two_periods((0, 1, 1), (0, 1, 1), shape=deeper)
    assert drift(t, v, i, 0.0, 2.0, 1.0) == pytest.approx(0.2, rel=3e-3)


def test_drift_of_a_falling_current_is_relative_to_the_larger_rms():
    """0.2 A then 0.1 A amplitude: RMS 0.1414 then 0.0707; the change is half the larger."""
    t, v, i = _two_periods((5, 0, 0.2), (5, 0, 0.1))
    assert drift(t, v, i, 0.0, 2.0, 1.0) == pytest.approx(0.5, rel=1e-3)


def test_period_stats_of_a_ramp_that_starts_late():
    """v = t from 2 s to 6 s, period 1 s: four whole periods, each with mean at its middle (2.5 ... 5.5),
    max at its end, min at its start; i = 1 A constant (RMS 1)."""
    t = np.linspace(2.0, 6.0, 4001)
    rows = period_stats(t, t.copy(), np.ones_like(t), 6.0, 1.0, 60)
    assert rows.shape == (4, 4)
    assert rows[:, 0] == pytest.approx([2.5, 3.5, 4.5, 5.5])
    assert rows[:, 1] == pytest.approx([3, 4, 5, 6]) and rows[:, 2] == pytest.approx([2, 3, 4, 5])
    assert rows[:, 3] == pytest.approx([1, 1, 1, 1])


def test_a_value_at_a_repeated_time_point_is_the_one_after_it():
    """ngspice can write two points at one time (a breakpoint, a step); at that time the value is the
    later sample (the value after the step), before it the line to the first."""
    t = np.array([0.0, 1.0, 1.0, 2.0])
    y = np.array([0.0, 1.0, 3.0, 3.0])
    assert _at(t, y, 1.0) == 3.0
    assert _at(t, y, 0.5) == 0.5 and _at(t, y, 1.5) == 3.0


def test_envelope_running_rms_over_a_twentieth_of_the_window_without_a_period():
    """No current for the first half of 1 s, then 1 A amplitude at 1 kHz: at the end, the RMS over the
    last 50 ms is 1/sqrt2; over the whole run it would be a half."""
    t = np.linspace(0.0, 1.0, 100001)
    i = np.where(t >= 0.5, np.sin(2 * math.pi * 1000 * t), 0.0)
    env = envelope(t, np.zeros_like(t), i, 0.0, 1.0)
    assert env.i_rms_a[-1] == pytest.approx(1 / math.sqrt(2), rel=1e-3)


# ---------------------------------------------------------------- the trend of per-period values
def _stats(mean, vmax=None, vmin=None, irms=None, n=20):
    """Rows of (mean v, max v, min v, rms i) from per-period sequences (constants are repeated)."""
    cols = []
    for x, default in ((mean, 0.0), (vmax, 12.0), (vmin, 8.0), (irms, 1.0)):
        x = default if x is None else x
        cols.append(np.broadcast_to(np.asarray(x, dtype=float), (n,)).copy() if np.ndim(x) == 0 else np.asarray(x, float))
    return np.column_stack(cols)


K = np.arange(20.0)


def test_a_quantity_that_stopped_does_not_hide_one_still_drifting():
    """The mean voltage moved in the first half and stopped; the current RMS still rises 1 % per period:
    not settled (every quantity is looked at, not only the first that stopped)."""
    mean = np.where(K < 10, 9.0 + 0.1 * K, 10.0)
    tr = trend(_stats(mean, irms=1.0 + 0.01 * K), TOL)
    assert tr.remaining > TOL and tr.more_periods is None  # linear: not slowing


def test_a_quantity_that_turned_back_within_the_tolerance_does_not_hide_one_still_drifting():
    """The mean rose 3 % in the first half and falls back 0.7 % in the second (scatter within the 1 %
    tolerance); the current still rises 1 % per period: not settled."""
    mean = np.where(K < 10, 11.4 + 0.036 * K, 11.76 - 0.0096 * (K - 10))
    tr = trend(_stats(mean, irms=1.0 + 0.01 * K), TOL)
    assert tr.remaining > TOL


def test_a_slow_steady_drift_is_not_scatter():
    """The current rises 0.04 % per period (0.4 % over the later half, inside the tolerance, but still
    in the same direction): a drift, not scatter; its remaining estimate is the line carried on."""
    irms = 1.0 + 0.0004 * K
    tr = trend(_stats(10.0, irms=irms), TOL)
    slope = np.polyfit(K, irms / irms.max(), 1)[0]
    assert tr.more_periods is None and tr.remaining == pytest.approx(abs(slope) * 20, rel=1e-6)


def test_a_quantity_that_starts_moving_late_is_not_scatter():
    """Flat for ten periods, then rising 0.05 % per period: not settled, whatever its late spread."""
    irms = np.where(K < 10, 1.0, 1.0 + 0.0005 * (K - 9))
    tr = trend(_stats(10.0, irms=irms), TOL)
    assert tr.remaining > 0 and tr.ratio is None


def test_a_quantity_that_stopped_with_a_small_late_slope_has_settled():
    """The mean rose 2 % per period in the first half; in the later half it moves 0.02 % per period
    (0.2 % over the half: less than a quarter of the tolerance): settled."""
    mean = np.where(K < 10, 10.0 + 0.2 * K, 12.0 + 0.0024 * (K - 10))
    tr = trend(_stats(mean, vmax=12.1, vmin=8.0), TOL)
    assert tr.remaining == 0.0 and tr.more_periods == 0


def test_a_settled_record_names_the_steepest_quantity():
    """Settled quantities: the record keeps the steepest line's slope and scatter (numpy.polyfit)."""
    mean = 10.0 + 0.001 * K  # 0.001/12 per period of the 12 V scale: the steepest
    vmax = 12.0 + 0.0005 * K
    tr = trend(_stats(mean, vmax=vmax), TOL)
    scale = max(12.0 + 0.0005 * 19, 12.0 + 0.0005 * 19 - 8.0)
    slope, icpt = np.polyfit(K, mean / scale, 1)
    assert tr.remaining == 0.0 and tr.more_periods == 0
    assert tr.slope == pytest.approx(slope, rel=1e-9)
    assert tr.noise == pytest.approx(np.std(mean / scale - (slope * K + icpt)), abs=1e-15)


def test_a_geometric_settling_is_estimated_as_a_geometric_series():
    """The current RMS approaches 1 A as 1 - 0.5 q^k, q = 0.9 (a first-order settling sampled once a
    period).  After period 19 the change still to come is 0.5 q^19 / (1 - ...) = sum over k > 19 of
    0.5 q^(k-1) (1 - q) = 0.5 q^19 of the final value: 0.0676 relative to the last RMS (0.9324 A).
    The trend's ratio is q, and its estimate of what remains is the series', within 10 %."""
    q = 0.9
    irms = 1.0 - 0.5 * q ** K
    tr = trend(_stats(10.0, irms=irms), TOL)
    truth = 0.5 * q ** 19 / irms.max()
    assert tr.ratio == pytest.approx(q, rel=0.01)
    assert tr.remaining == pytest.approx(truth, rel=0.10)
    assert tr.more_periods == math.ceil(math.log(TOL / tr.remaining) / math.log(tr.ratio))
    slope, icpt = np.polyfit(K, irms / irms.max(), 1)
    assert tr.slope == pytest.approx(slope, rel=1e-9)
    assert tr.noise == pytest.approx(np.std(irms / irms.max() - (slope * K + icpt)), rel=1e-9)


def test_a_settling_already_within_the_tolerance_needs_no_more_periods():
    irms = 1.0 - 0.5 * 0.7 ** K  # what remains after period 19: 0.5 x 0.7^19 = 0.0006 of the value
    tr = trend(_stats(10.0, irms=irms), TOL)
    assert 0 < tr.remaining <= TOL and tr.more_periods == 0


def test_an_accelerating_or_oscillating_change_has_no_decay_ratio():
    accelerating = 1.0 + 0.001 * K + 0.0002 * K ** 2
    assert trend(_stats(10.0, irms=accelerating), TOL).ratio is None
    ringing = 1.0 + 0.05 * np.sin(K / 3.0)  # turned back, beyond the tolerance
    tr = trend(_stats(10.0, irms=ringing), TOL)
    assert tr.ratio is None and tr.remaining > TOL


def test_small_voltages_and_currents_are_judged_on_their_own_scale():
    """Millivolt rails and milliampere currents: a 5 % drift over the run is a drift (scales floor at
    1 mV and 1 nA, not at 1 V or 1 A, and the voltage scale is not the current's)."""
    small_v = 0.040 + 0.0001 * K
    tr = trend(_stats(small_v, vmax=small_v + 0.001, vmin=small_v - 0.001, irms=10.0), TOL)
    assert tr.remaining > TOL
    tr = trend(_stats(10.0, irms=0.010 + 0.000025 * K), TOL)
    assert tr.remaining > TOL


# ---------------------------------------------------------------- measure(): what it records
def _sine_run(periods: float, t_start: float = 0.0, points_per_period: int = 200, amp_i=None):
    t = np.linspace(t_start, t_start + periods * 1e-3, int(periods * points_per_period) + 1)
    v = 10.0 + np.sin(2 * math.pi * 1000 * t)
    i = (amp_i(t) if amp_i else 1.0) * np.cos(2 * math.pi * 1000 * t)
    return t, v, i


def test_a_run_too_short_for_a_trend_asks_for_the_missing_periods():
    """A run of 5 periods before the window's end: the trend needs 6, one more period is asked for
    (at least one); a run that starts at 0.5 ms with 4.5 periods holds 4: two more."""
    t, v, i = _sine_run(5.0)
    s = measure("C1", "c1", "s", t, v, i, 10.0, (3e-3, 5e-3), period=1e-3, points=1024)
    assert not s.steady_state and s.settle_more_s == pytest.approx(1e-3)
    t, v, i = _sine_run(4.5, t_start=0.5e-3, points_per_period=2)
    s = measure("C1", "c1", "s", t, v, i, 10.0, (3e-3, 5e-3), period=1e-3, points=1024)
    assert not s.steady_state and s.settle_more_s == pytest.approx(2e-3)


def test_streamed_statistics_are_judged_not_the_window_alone():
    """A streamed run gives the per-period statistics of its last periods; measure() judges those (here
    a current still rising 1 % per period) even though the window it holds looks steady."""
    t, v, i = _sine_run(4.0)
    stats = _stats(10.0, vmax=11.0, vmin=9.0, irms=0.7 + 0.007 * K)
    s = measure("C1", "c1", "s", t, v, i, 10.0, (2e-3, 4e-3), period=1e-3, points=1024, stats=stats)
    assert not s.steady_state


def test_measure_records_the_settling_estimate_and_caps_a_runaway():
    """A geometric settling: the time asked for is the periods the series needs times the period; the
    note gives the slope per period and what remains.  A runaway asks for no time: it will not settle."""
    q = 0.9
    t, v, i = _sine_run(4.0)
    stats = _stats(10.0, vmax=11.0, vmin=9.0, irms=1.0 - 0.5 * q ** K)
    s = measure("C1", "c1", "s", t, v, i, 10.0, (2e-3, 4e-3), period=1e-3, points=1024, stats=stats)
    tr = trend(stats, 0.01)
    assert s.settle_more_s == pytest.approx(tr.more_periods * 1e-3)
    assert s.notes[-1] == (f"still settling: over the last 20 periods the values move {100 * abs(tr.slope):.2f} % each, "
                           f"about {100 * tr.remaining:.1f} % more to come; about {tr.more_periods * 1e-3:.3g} s more "
                           "of simulated time would settle it")
    runaway = _stats(10.0, vmax=11.0, vmin=9.0, irms=np.exp(0.5 * K))
    s = measure("C1", "c1", "s", t, v, i, 10.0, (2e-3, 4e-3), period=1e-3, points=1024, stats=runaway)
    assert s.drift_ratio == pytest.approx(trend(runaway, 0.01).remaining) and s.settle_more_s is None
    tr = trend(runaway, 0.01)
    assert s.notes[-1].startswith(f"still drifting: over the last 20 periods the values move {100 * abs(tr.slope):.2f} % "
                                  "each without slowing")


def test_a_stress_record_from_an_older_cache_entry_without_spectra():
    """Cached records written before bands, harmonics or notes existed still load, with empty ones."""
    full = Stress(capacitor="C1", spice_name="c1", scenario="s", v_max_v=1.0, v_min_v=0.0, v_peak_abs_v=1.0,
                  v_mean_v=0.5, i_rms_a=0.1, i_ac_rms_a=0.1, startup_v_peak_v=1.0, startup_v_min_v=0.0)
    d = full.as_dict()
    for key in ("bands", "harmonics", "notes"):
        d.pop(key, None)
    back = Stress.from_dict(d)
    assert back.bands == () and back.harmonics == () and back.notes == ()


def test_the_quantity_moving_most_at_the_end_decides():
    """The mean voltage rose fast and is slowing (0.36 then 0.036 V per period); the current RMS rises a
    steady 0.4 % per period and moves more at the end: it decides, and it is not slowing."""
    mean = np.where(K < 10, 9.0 + 0.36 * K, 12.24 + 0.036 * (K - 9))
    irms = 1.0 + 0.004 * K
    tr = trend(_stats(mean, irms=irms), TOL)
    slope = np.polyfit(K, irms / irms.max(), 1)[0]
    assert tr.more_periods is None and tr.slope == pytest.approx(slope, rel=1e-9)


def test_a_barely_slowing_drift_records_its_decay_ratio():
    """1 % per period, slowing by 2e-6 per period squared: the later half's slope is 0.996 of the
    earlier's (polyfit), a ratio of 0.9996 per period: too slow to count on, recorded as found."""
    irms = 1.0 + 0.01 * K - 2e-6 * K ** 2
    y = irms / irms.max()
    s1, s2 = np.polyfit(K[:10], y[:10], 1)[0], np.polyfit(K[10:], y[10:], 1)[0]
    tr = trend(_stats(10.0, irms=irms), TOL)
    assert tr.more_periods is None and tr.ratio == pytest.approx((s2 / s1) ** 0.1, rel=1e-12)


def test_a_late_rise_above_its_own_scatter_is_still_moving():
    """The current rose 1 % per period, then 0.1 % per period with +-0.2 % scatter: over the later half
    it rises 1.5 % (of its scale), more than three times the scatter of the later points about their
    own line (numpy.polyfit residuals: 0.33 %), so it has not stopped; it is slowing geometrically and
    a small remainder is estimated."""
    alt = np.where(K % 2 == 0, 0.002, -0.002)
    y = np.where(K < 10, 0.5 + 0.01 * K, 0.59 + 0.001 * (K - 9)) + np.where(K >= 10, alt, 0)
    irms = y / y.max()
    s2, b2 = np.polyfit(K[10:], irms[10:], 1)
    scatter = np.std(irms[10:] - (s2 * K[10:] + b2))
    assert abs(s2) * 10 > 3 * scatter  # the premise, from polyfit
    tr = trend(_stats(10.0, irms=irms), TOL)
    assert tr.remaining > 0 and tr.ratio is not None and tr.more_periods == 0
