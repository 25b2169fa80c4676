"""Measurement maths on synthetic waveforms (pure numpy; no simulator needed)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from derate.measure import SpectrumPlan, drift, envelope, harmonics_of, measure, time_mean, time_rms
from derate.simulate.window import common_period


def nonuniform_time(t_end, n, seed=1):
    rng = np.random.default_rng(seed)
    dt = rng.uniform(0.2, 1.8, n)
    t = np.concatenate(([0.0], np.cumsum(dt)))
    return t * (t_end / t[-1])


def test_rms_and_mean_are_time_integrals_not_sample_means():
    # a waveform that is 1 for 10 % of the time but has 90 % of the samples there
    t = np.concatenate((np.linspace(0, 0.1, 900, endpoint=False), np.linspace(0.1, 1.0, 100)))
    y = np.where(t < 0.1, 1.0, 0.0)
    assert np.mean(y) > 0.8  # what a sample mean would say
    assert time_mean(t, y) == pytest.approx(0.1, abs=0.01)
    assert time_rms(t, y) == pytest.approx(math.sqrt(0.1), abs=0.02)


def test_sine_rms_on_variable_timestep():
    # RMS of A sin(wt) over whole periods is A / sqrt(2) (textbook)
    t = nonuniform_time(0.1, 20000)
    y = 3.0 * np.sin(2 * np.pi * 50 * t)
    assert time_rms(t, y) == pytest.approx(3.0 / math.sqrt(2), rel=1e-4)
    assert time_mean(t, y) == pytest.approx(0.0, abs=1e-4)


def test_spectrum_finds_harmonics_and_bands_keep_power():
    t = nonuniform_time(0.05, 40000, seed=3)
    # 1 A rms at 100 Hz, 0.5 A rms at 300 Hz, 0.2 A rms at 10 kHz, DC 0.1 A
    y = (0.1 + math.sqrt(2) * np.sin(2 * np.pi * 100 * t) + 0.5 * math.sqrt(2) * np.sin(2 * np.pi * 300 * t)
         + 0.2 * math.sqrt(2) * np.cos(2 * np.pi * 1e4 * t))
    plan = SpectrumPlan.make(0.0, 0.05, 8192)
    rms = plan.rms_bins(t, y)
    f0, harm = harmonics_of(plan.freqs, rms, 5)
    assert f0 == pytest.approx(100.0)
    h = {n: a for n, _, a in harm}
    assert h[1] == pytest.approx(1.0, rel=2e-3) and h[3] == pytest.approx(0.5, rel=2e-3)
    assert h[2] < 0.01
    bands = plan.bands(rms)
    total_ac = math.sqrt(sum(a * a for _, a in bands))
    assert total_ac == pytest.approx(math.sqrt(1 + 0.25 + 0.04), rel=2e-3)  # Parseval
    near_10k = [a for f, a in bands if 9e3 < f < 1.1e4]
    assert near_10k and near_10k[0] == pytest.approx(0.2, rel=5e-3)


def test_envelope_keeps_extremes():
    t = np.linspace(0, 1, 100001)
    v = np.sin(2 * np.pi * 7 * t)
    v[12345] = 5.0  # a single-sample spike
    env = envelope(t, v, -v, 0.0, 1.0, buckets=100)
    assert len(env.t_s) == 100
    assert env.v_max_v.max() == 5.0 and env.i_min_a.min() == -5.0


def test_drift_zero_for_periodic_and_large_for_charging():
    t = np.linspace(0, 0.1, 50001)
    periodic = 10 + np.sin(2 * np.pi * 100 * t)
    assert drift(t, periodic, np.cos(2 * np.pi * 100 * t), 0.05, 0.1, 0.01) < 1e-3
    charging = 10 * (1 - np.exp(-t / 0.05))
    assert drift(t, charging, np.gradient(charging, t), 0.05, 0.1, 0.01) > 0.02


def test_measure_record():
    t = nonuniform_time(0.08, 80000)
    v = 12 + 0.5 * np.sin(2 * np.pi * 100 * t)
    i = 1e-3 * 2 * np.pi * 100 * 0.5 * np.cos(2 * np.pi * 100 * t)  # C = 1 mF: i = C dv/dt
    s = measure("C1", "c1", "nominal", t, v, i, 12.0, (0.06, 0.08), harmonics=3, points=4096, period=0.01)
    assert s.v_max_v == pytest.approx(12.5, rel=1e-5) and s.v_min_v == pytest.approx(11.5, rel=1e-5)
    assert s.v_ripple_pp_v == pytest.approx(1.0, rel=1e-4) and s.v_mean_v == pytest.approx(12.0, rel=1e-6)
    assert s.i_rms_a == pytest.approx(0.3141593 / math.sqrt(2), rel=1e-4)
    assert s.i_ac_rms_a == pytest.approx(s.i_rms_a, rel=1e-6)
    assert s.dvdt_max_v_per_s == pytest.approx(2 * np.pi * 100 * 0.5, rel=1e-3)
    assert s.f_fundamental_hz == pytest.approx(100.0) and s.steady_state is True and s.settle_more_s == 0.0
    # four periods cannot show a trend (six are needed): not settled, with the time still to simulate
    short = measure("C1", "c1", "nominal", t[t <= 0.04], v[t <= 0.04], i[t <= 0.04], 12.0, (0.02, 0.04), harmonics=3,
                    points=4096, period=0.01)
    assert short.steady_state is False and short.settle_more_s == pytest.approx(0.02)
    assert "cannot be judged" in short.notes[0]


def test_rms_is_exact_for_piecewise_linear_samples():
    # a triangle wave sampled only at its corners: the piecewise-linear waveform is exact, and its RMS is
    # peak / sqrt(3) (textbook); the trapezoid rule on y^2 would read sqrt(1/2) = 0.707 instead of 0.577
    t = np.arange(0, 11) * 1e-3
    y = np.array([0, 1, 0, -1, 0, 1, 0, -1, 0, 1, 0], dtype=float)
    assert time_rms(t, y) == pytest.approx(1 / math.sqrt(3), rel=1e-12)


def test_settling_without_a_period_is_seen_over_parts_of_the_window():
    # an RC charging after a step (no periodic source): the trend over tenths of the window sees it
    t = np.linspace(0, 0.01, 20001)
    v = 10 * (1 - np.exp(-t / 0.004))
    i = 1e-6 * np.gradient(v, t)
    s = measure("C1", "c1", "step", t, v, i, 0.0, (0.005, 0.01), points=1024)
    assert s.steady_state is False and "tenth of the window" in " ".join(s.notes)
    flat = measure("C1", "c1", "dc", t, np.full_like(t, 5.0), np.zeros_like(t), 5.0, (0.005, 0.01), points=1024)
    assert flat.steady_state is True


@settings(max_examples=50, deadline=None)
@given(st.floats(0.1, 10), st.floats(1, 1000))
def test_rms_scales_linearly(amplitude, freq):
    t = np.linspace(0, 10 / freq, 4001)
    y = np.sin(2 * np.pi * freq * t)
    assert time_rms(t, amplitude * y) == pytest.approx(amplitude * time_rms(t, y), rel=1e-9)


def test_common_period():
    assert common_period([1 / 60, 1 / 480]) == pytest.approx(1 / 60)
    assert common_period([1 / 60, 20e-6]) == pytest.approx(0.05)
    assert common_period([1e-3, 1 / 60]) == pytest.approx(0.05)
    assert common_period([1.0, 1 / math.sqrt(2)]) is None  # incommensurate within 10 000 cycles


def test_trend_tells_settling_from_noise_and_says_how_much_longer():
    """Per-period values approaching their end value geometrically (r = 0.95 per period, 10 % to go at
    the start) are flagged with the periods still needed; pure scatter of the same size is not."""
    from derate.measure import trend
    n = 40
    k = np.arange(n)
    settling = np.column_stack([10 - 1.0 * 0.95 ** k, 10.5 - 1.0 * 0.95 ** k, 9.5 - 1.0 * 0.95 ** k, np.ones(n)])
    tr = trend(settling, 0.01)
    assert tr.ratio == pytest.approx(0.95, abs=0.01)
    # still to come after the last period, by the geometric series: 0.95^39 / 10.5 (the voltage scale) = 1.29 %;
    # the estimate works from least-squares slopes, so within a factor of two
    assert 0.0129 / 2 < tr.remaining < 0.0129 * 2
    assert tr.more_periods and tr.more_periods > 0
    rng = np.random.default_rng(1)
    noisy = np.column_stack([10 + 0.01 * rng.standard_normal(n), 10.5 + 0.01 * rng.standard_normal(n),
                             9.5 + 0.01 * rng.standard_normal(n), 1 + 0.001 * rng.standard_normal(n)])
    assert trend(noisy, 0.01).remaining == 0.0
