"""Waveforms to Stress records: what each capacitor sees in one scenario.

Everything here is pure numpy on (time, voltage, current) arrays.  ngspice's transient output has
a variable timestep, so means and RMS values are time integrals (trapezoid rule over the real time
axis, with the window edges interpolated), never plain means of samples.  RMS values are exact for
the piecewise-linear waveform the samples describe: over a segment from a to b of length dt the
integral of y^2 is dt (a^2 + ab + b^2) / 3 (the trapezoid rule on y^2 reads high on coarse steps).  The spectrum is taken
from a uniform resampling of the window (linear interpolation) with an FFT; its bins are summed
into twelfth-octave bands (frequency multipliers change by well under 1 % inside one band) and
into the harmonics of the strongest component.

Sign convention: v = v(n+) - v(n-); i is positive flowing into n+ (ngspice's ``@c[i]``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields
from typing import Any

import numpy as np

_trapezoid = getattr(np, "trapezoid", None) or np.trapz  # numpy 2 renamed trapz

MEASURE_VERSION = 5  # bump when a measured quantity changes meaning (part of the cache key)
BANDS_PER_OCTAVE = 12
SETTLE_WINDOWS = 10  # a circuit without a period: its window is cut into this many parts for the steady-state trend


@dataclass(frozen=True)
class Stress:
    """The stress one capacitor sees in one scenario (SI units, named in every field)."""

    capacitor: str
    spice_name: str
    scenario: str
    model: str = "ideal"  # what was simulated: ideal, C+ESR, C+ESR+ESL
    esr_ohm: float | None = None
    esl_h: float | None = None
    window_start_s: float = 0.0
    window_end_s: float = 0.0
    v_dc_v: float = 0.0  # operating point
    v_max_v: float = 0.0
    v_min_v: float = 0.0
    v_peak_abs_v: float = 0.0
    v_mean_v: float = 0.0
    v_rms_v: float = 0.0  # over the window (exact for the piecewise-linear waveform): AC ratings are RMS
    v_ripple_pp_v: float = 0.0
    i_rms_a: float = 0.0
    i_ac_rms_a: float = 0.0
    i_mean_a: float = 0.0
    i_peak_a: float = 0.0
    dvdt_max_v_per_s: float = 0.0
    f_fundamental_hz: float | None = None
    harmonics: tuple[tuple[int, float, float], ...] = ()  # (order, f_hz, i_rms_a)
    bands: tuple[tuple[float, float], ...] = ()  # (f_hz power-weighted, i_rms_a) per band, AC only
    startup_v_peak_v: float = 0.0  # whole run
    startup_v_min_v: float = 0.0
    startup_i_peak_a: float = 0.0
    steady_state: bool | None = None  # None: not checked (a record made by hand); False: not settled
    drift_ratio: float | None = None  # how far from settled (fraction of the stress scale still moving)
    settle_more_s: float | None = None  # simulated time still needed to settle (0: settled; None: unknown)
    power_up: str = "in-run"  # start-up peaks from: in-run (the run starts from zero), simulated (a switch-on
    # run), from-op (the run starts at the operating point: no switch-on), off, failed
    notes: tuple[str, ...] = ()

    def as_dict(self) -> dict[str, Any]:
        d = {name: getattr(self, name) for name in _STRESS_FIELDS}
        d["harmonics"] = [list(h) for h in self.harmonics]
        d["bands"] = [list(b) for b in self.bands]
        d["notes"] = list(self.notes)
        return d

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "Stress":
        kw = {k: v for k, v in d.items() if k in _STRESS_FIELDS}
        kw["harmonics"] = tuple(tuple(h) for h in d.get("harmonics", ()))
        kw["bands"] = tuple(tuple(b) for b in d.get("bands", ()))
        kw["notes"] = tuple(d.get("notes", ()))
        return cls(**kw)


_STRESS_FIELDS = tuple(f.name for f in fields(Stress))


@dataclass(frozen=True)
class Envelope:
    """A waveform decimated for plotting: per time bucket, the minimum and maximum of v and i.

    Short waveforms keep their own samples (then minimum = maximum).  A plot draws the band
    between the two, so no peak is lost however much the waveform was decimated.
    """

    t_s: np.ndarray
    v_min_v: np.ndarray
    v_max_v: np.ndarray
    i_min_a: np.ndarray
    i_max_a: np.ndarray
    i_rms_a: np.ndarray  # running RMS over one period (or a twentieth of the span) ending at each point

    def as_arrays(self) -> dict[str, np.ndarray]:
        return {"t": self.t_s, "vmin": self.v_min_v, "vmax": self.v_max_v, "imin": self.i_min_a, "imax": self.i_max_a,
                "irms": self.i_rms_a}

    @classmethod
    def from_arrays(cls, d: dict[str, np.ndarray]) -> "Envelope":
        t = np.asarray(d["t"])
        return cls(t, np.asarray(d["vmin"]), np.asarray(d["vmax"]), np.asarray(d["imin"]), np.asarray(d["imax"]),
                   np.asarray(d["irms"]) if "irms" in d else np.full(len(t), np.nan))


# ---------------------------------------------------------------- integrals over real time
def time_mean(t: np.ndarray, y: np.ndarray) -> float:
    """Return the time average of y over t (trapezoid rule)."""
    span = t[-1] - t[0]
    return float(_trapezoid(y, t) / span) if span > 0 else float(y[0])


def square_integral(t: np.ndarray, y: np.ndarray) -> float:
    """The integral of y^2 over t for the piecewise-linear y through the samples (exact)."""
    a, b = y[:-1], y[1:]
    return float(np.sum(np.diff(t) * (a * a + a * b + b * b)) / 3.0)


def segment_squares(t: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Per segment (along axis 0) the exact integral of y^2 of the piecewise-linear y (columns kept)."""
    a, b = y[:-1], y[1:]
    dt = np.diff(t)
    if y.ndim > 1:
        dt = dt[:, None]
    return dt * (a * a + a * b + b * b) / 3.0


def time_rms(t: np.ndarray, y: np.ndarray) -> float:
    """Return the RMS of y over t (exact for the piecewise-linear waveform through the samples)."""
    span = t[-1] - t[0]
    return float(math.sqrt(max(0.0, square_integral(t, y) / span))) if span > 0 else abs(float(y[0]))


# ---------------------------------------------------------------- spectrum
def harmonics_of(freqs: np.ndarray, rms: np.ndarray, order: int) -> tuple[float | None, tuple[tuple[int, float, float], ...]]:
    """Return the strongest component's frequency and the RMS of its harmonics 1..order.

    Harmonic n collects the power of the bins within half a fundamental of n * f0 (so spectral
    leakage of a window that is not a whole number of periods stays with its harmonic).
    """
    if len(rms) == 0 or float(rms.max()) == 0.0:
        return None, ()
    k0 = int(np.argmax(rms))
    f0 = float(freqs[k0])
    out = []
    power = rms * rms
    for n in range(1, order + 1):
        lo, hi = (n - 0.5) * f0, (n + 0.5) * f0
        sel = (freqs >= lo) & (freqs < hi)
        if not sel.any():
            break
        out.append((n, n * f0, float(math.sqrt(power[sel].sum()))))
    return f0, tuple(out)


# ---------------------------------------------------------------- steady state
TREND_PERIODS = 60  # periods before the end of the run whose per-period values show a trend
MIN_TREND = 6  # periods (or parts of the window) a trend needs
PERIOD_SLACK = 1e-3  # a run of 5.9999 periods (a period written to 6 digits) holds 6: the oldest edge is clamped


def settle_spacing(period: float | None, t0: float, t1: float) -> float:
    """The span the steady-state check compares: the circuit's period, or without one (a DC source,
    a step, a free-running oscillator) a tenth of the measuring window."""
    return period if period and period > 0 else (t1 - t0) / SETTLE_WINDOWS
def _pct(fraction: float, digits: int) -> str:
    """A fraction as the reports write percentages: '0.41 %'."""
    return f"{100 * fraction:.{digits}f} %"


def _at(t: np.ndarray, y: np.ndarray, x: float) -> float:
    """y at time x by linear interpolation (as np.interp, without copying the arrays: a binary search)."""
    k = int(np.searchsorted(t, x, side="right")) - 1
    if k < 0:
        return float(y[0])
    if k >= len(t) - 1:
        return float(y[-1])
    ta, tb = t[k], t[k + 1]
    return float(y[k] + (x - ta) * (y[k + 1] - y[k]) / (tb - ta)) if tb > ta else float(y[k])


def _span_stats(t: np.ndarray, v: np.ndarray, i: np.ndarray, a: float, b: float) -> tuple[float, float, float, float]:
    """Return (mean v, max v, min v, rms i) over [a, b], clipping v and i with one index search."""
    i0 = int(np.searchsorted(t, a, side="right"))
    i1 = int(np.searchsorted(t, b, side="left"))
    tt = np.concatenate(([a], t[i0:i1], [b]))
    vv = np.concatenate(([_at(t, v, a)], v[i0:i1], [_at(t, v, b)]))
    ii = np.concatenate(([_at(t, i, a)], i[i0:i1], [_at(t, i, b)]))
    return time_mean(tt, vv), float(vv.max()), float(vv.min()), time_rms(tt, ii)


def drift(t: np.ndarray, v: np.ndarray, i: np.ndarray, t0: float, t1: float, period: float) -> float:
    """Return how much the window's last period differs from its first, as a fraction.

    First against last (not last against the one before) so a slow settling over many short
    periods still shows.
    Voltage: the largest change of the per-period mean, maximum or minimum, relative to the
    larger of the peak voltage and the ripple (floor 1 mV) - the same scale the voltage checks
    compare against.  Current: the relative change of the per-period RMS.  Per-period statistics
    are insensitive to switching edges that are not synchronous with the period.
    """
    m1, x1, n1, r1 = _span_stats(t, v, i, t0, t0 + period)
    m2, x2, n2, r2 = _span_stats(t, v, i, t1 - period, t1)
    scale = max(abs(x1), abs(x2), abs(n1), abs(n2), max(x1, x2) - min(n1, n2), 1e-3)
    dv = max(abs(m2 - m1), abs(x2 - x1), abs(n2 - n1)) / scale
    di = abs(r2 - r1) / max(r1, r2, 1e-9)
    return float(max(dv, di))


@dataclass(frozen=True)
class Trend:
    """How the per-period values move over the last periods of the run (fractions of their scale)."""

    periods: int  # periods looked at
    slope: float  # change per period of the quantity that moves most (fraction of its scale)
    noise: float  # scatter of that quantity about its straight line
    ratio: float | None  # per-period decay of the change (geometric), None when not decaying
    remaining: float  # drift still to come, estimated (fraction); inf when not settling
    more_periods: int | None  # periods to simulate until the remaining drift is within the tolerance


def period_stats(t: np.ndarray, v: np.ndarray, i: np.ndarray, t_end: float, period: float,
                 max_periods: int) -> np.ndarray:
    """Per-period (mean v, max v, min v, rms i) for whole periods ending at ``t_end``, oldest first."""
    n = int(min(max_periods, math.floor((t_end - t[0]) / period + PERIOD_SLACK)))
    rows = [_span_stats(t, v, i, t_end - (k + 1) * period, t_end - k * period) for k in range(n)]
    return np.array(rows[::-1]) if rows else np.zeros((0, 4))


def _line(x: np.ndarray, y: np.ndarray) -> tuple[float, float]:
    """Least-squares straight line y = a x + b (closed form; np.polyfit's result at a tenth of its cost)."""
    xm, ym = float(x.mean()), float(y.mean())
    dx = x - xm
    sxx = float(dx @ dx)
    a = float(dx @ (y - ym)) / sxx if sxx > 0 else 0.0
    return a, ym - a * xm


def trend(stats: np.ndarray, tolerance: float) -> Trend | None:
    """The trend of per-period values (rows of period_stats), or None with fewer than 6 periods.

    Each quantity is normalised like ``drift`` and fitted with least-squares lines: over all the
    periods, and over their earlier and later halves.  A quantity has settled when its line over all
    periods rises no more than its scatter (or a quarter of the tolerance), when its later half is
    flat in the same sense and moves less than its earlier half did (the start-up is over), or when
    its later half turned back and its values there lie within the tolerance (scatter).  Of the
    quantities still moving, the one whose later half moves most decides: when it decelerates (the
    later half's slope a fraction of the earlier half's) the change is taken as geometric with ratio
    r per period and the drift still to come is slope_end x r / (1 - r), slope_end being the later
    half's slope carried from the middle of that half to its end.
    """
    n = len(stats)
    if n < MIN_TREND:
        return None
    v = stats[:, :3]
    scale_v = max(float(np.max(np.abs(v))), float(v[:, 1].max() - v[:, 2].min()), 1e-3)
    scale_i = max(float(np.max(stats[:, 3])), 1e-9)
    series = [stats[:, 0] / scale_v, stats[:, 1] / scale_v, stats[:, 2] / scale_v, stats[:, 3] / scale_i]
    k = np.arange(n, dtype=float)
    half = n // 2
    floor = tolerance / 4
    steepest = None  # (slope, noise) of the steepest quantity, for the record
    moving = None  # (late slope, early slope, slope, noise) of the quantity still moving most
    for y in series:
        a, b = _line(k, y)
        noise = float(np.std(y - (a * k + b)))
        if steepest is None or abs(a) > abs(steepest[0]):
            steepest = (a, noise)
        if abs(a) * n <= max(3 * noise, floor):
            continue  # no trend beyond the scatter
        s1 = _line(k[:half], y[:half])[0]
        s2, b2 = _line(k[half:], y[half:])
        late_noise = float(np.std(y[half:] - (s2 * k[half:] + b2)))
        if abs(s2) * (n - half) <= max(3 * late_noise, floor) and abs(s2) < abs(s1):
            continue  # it moved early (the start-up) and has stopped
        if s1 * s2 < 0 and float(np.ptp(y[half:])) <= tolerance:
            continue  # it turned back and its later values lie within the tolerance: scatter, not a drift
        if moving is None or abs(s2) > abs(moving[0]):
            moving = (s2, s1, a, noise)
    if moving is None:
        return Trend(n, steepest[0], steepest[1], None, 0.0, 0)
    s2, s1, slope, noise = moving
    ratio = None
    if s1 != 0 and 0 < s2 / s1 < 1:
        ratio = (s2 / s1) ** (1.0 / max(1, n - half))
    if ratio is None or ratio >= 0.999:
        # not slowing: at least as much again as over the periods looked at is still to come
        return Trend(n, slope, noise, ratio, max(abs(slope), abs(s2)) * n, None)
    # the later half's slope is its slope about its middle: at the end it is r^(half/2) of that
    remaining = abs(s2) * ratio ** ((n - half) / 2) * ratio / (1 - ratio)
    more = 0 if remaining <= tolerance else int(math.ceil(math.log(tolerance / remaining) / math.log(ratio)))
    return Trend(n, slope, noise, ratio, remaining, more)


# ---------------------------------------------------------------- envelope for plots
def envelope(t: np.ndarray, v: np.ndarray, i: np.ndarray, t0: float, t1: float, buckets: int = 400,
             rms_period: float | None = None) -> Envelope:
    """Return the min/max-per-bucket decimation of v and i over [t0, t1], with the running RMS of i
    over ``rms_period`` (one period of the circuit; a twentieth of the span without one)."""
    a = int(np.searchsorted(t, t0, side="left"))
    b = int(np.searchsorted(t, t1, side="right"))
    tt, vv, ii = t[a:b], v[a:b], i[a:b]
    span = rms_period if rms_period and rms_period > 0 else (t1 - t0) / 20
    # the integral of i^2 over real time up to each sample; the running RMS differences it over a span
    cum = np.concatenate(([0.0], np.cumsum(segment_squares(t, i))))
    if len(tt) <= 2 * buckets:
        at = tt
        env = (tt.copy(), vv.copy(), vv.copy(), ii.copy(), ii.copy())
    else:
        which = np.minimum(((tt - t0) / (t1 - t0) * buckets).astype(np.int64), buckets - 1)
        starts = np.flatnonzero(np.r_[True, which[1:] != which[:-1]])
        at = t0 + (which[starts] + 0.5) * (t1 - t0) / buckets
        env = (at, np.minimum.reduceat(vv, starts), np.maximum.reduceat(vv, starts),
               np.minimum.reduceat(ii, starts), np.maximum.reduceat(ii, starts))
    back = np.maximum(at - span, t[0])
    width = np.maximum(at - back, 1e-30)
    rms = np.sqrt(np.maximum(0.0, (np.interp(at, t, cum) - np.interp(back, t, cum)) / width))
    return Envelope(*env, rms)


# ---------------------------------------------------------------- spectrum plan (shared by all capacitors)
@dataclass(frozen=True)
class SpectrumPlan:
    """The resampling grid and band layout of one window, computed once for every capacitor."""

    grid: np.ndarray
    freqs: np.ndarray  # bin frequencies, DC excluded
    band_starts: np.ndarray
    band_order: np.ndarray

    @classmethod
    def make(cls, t0: float, t1: float, points: int) -> "SpectrumPlan":
        n = int(points)
        grid = t0 + (t1 - t0) * np.arange(n) / n
        freqs = np.fft.rfftfreq(n, d=(t1 - t0) / n)[1:]
        idx = np.floor(BANDS_PER_OCTAVE * np.log2(freqs)).astype(np.int64)
        order = np.argsort(idx, kind="stable")
        idx_s = idx[order]
        starts = np.flatnonzero(np.r_[True, idx_s[1:] != idx_s[:-1]])
        return cls(grid, freqs, starts, order)

    def rms_bins(self, t: np.ndarray, y: np.ndarray) -> np.ndarray:
        """Return the RMS of each frequency bin (DC excluded) of y on this plan's grid."""
        n = len(self.grid)
        spec = np.fft.rfft(np.interp(self.grid, t, y))
        rms = np.abs(spec[1:]) * (math.sqrt(2.0) / n)
        if n % 2 == 0:
            rms[-1] /= math.sqrt(2.0)  # the Nyquist bin is not doubled
        return rms

    def bands(self, rms: np.ndarray, floor_ratio: float = 1e-6) -> tuple[tuple[float, float], ...]:
        """Sum bin powers into 1/12-octave bands: (power-weighted frequency, RMS) per band."""
        power = (rms * rms)[self.band_order]
        total = float(power.sum())
        if total <= 0:
            return ()
        p_band = np.add.reduceat(power, self.band_starts)
        pf_band = np.add.reduceat(power * self.freqs[self.band_order], self.band_starts)
        keep = p_band > floor_ratio * total
        return tuple((float(pf / p), float(math.sqrt(p))) for p, pf in zip(p_band[keep], pf_band[keep]))


# ---------------------------------------------------------------- one capacitor
def measure(capacitor: str, spice_name: str, scenario: str, t: np.ndarray, v: np.ndarray, i: np.ndarray,
            v_dc: float, window: tuple[float, float], *, harmonics: int = 10, points: int = 32768,
            period: float | None = None, tolerance: float = 0.01, model: str = "ideal",
            esr_ohm: float | None = None, esl_h: float | None = None, plan: SpectrumPlan | None = None,
            extremes: tuple[float, float, float] | None = None, stats: np.ndarray | None = None) -> Stress:
    """Return the Stress record of one capacitor from its waveforms.

    ``t, v, i`` must cover the window (and a sample before it).  A streamed run keeps only that:
    it then gives the whole run's ``extremes`` (max v, min v, max |i|) and the per-period
    ``stats`` of the last periods (rows of ``period_stats``), which are otherwise computed here
    from the arrays."""
    t0, t1 = window
    plan = plan or SpectrumPlan.make(t0, t1, points)
    k0 = int(np.searchsorted(t, t0, side="right"))
    k1 = int(np.searchsorted(t, t1, side="left"))
    tv = np.concatenate(([t0], t[k0:k1], [t1]))
    vv = np.concatenate(([np.interp(t0, t, v)], v[k0:k1], [np.interp(t1, t, v)]))
    ii = np.concatenate(([np.interp(t0, t, i)], i[k0:k1], [np.interp(t1, t, i)]))
    span = t1 - t0
    v_mean = float(_trapezoid(vv, tv) / span)
    i_mean = float(_trapezoid(ii, tv) / span)
    i_rms = float(math.sqrt(max(0.0, square_integral(tv, ii) / span)))
    v_rms = float(math.sqrt(max(0.0, square_integral(tv, vv) / span)))
    i_ac = math.sqrt(max(0.0, i_rms * i_rms - i_mean * i_mean))
    dt = np.diff(tv)
    ok = dt > 0
    dvdt = float(np.max(np.abs(np.diff(vv)[ok] / dt[ok]))) if ok.any() else 0.0
    rms = plan.rms_bins(t, i)
    f0, harm = harmonics_of(plan.freqs, rms, harmonics)
    notes: list[str] = []
    spacing = settle_spacing(period, t0, t1)
    unit = "periods" if period else f"parts of a tenth of the window (no periodic source)"
    steady, ratio, more_s = True, 0.0, 0.0
    if period and t1 - t0 >= 2 * period * (1 - 1e-3):  # a window of "33.333m" covers two 60 Hz periods
        # the window's two ends (without a period the trend over its tenths says more than its ends)
        ratio = drift(t, v, i, t0, t1, period)
        if ratio > tolerance:
            steady, more_s = False, None
            notes.append(f"not in steady state: the window's last period differs from its first by {_pct(ratio, 1)} "
                         f"(tolerance {_pct(tolerance, 1)})")
    # the trend of per-period values over the run (up to 60 periods) catches a slow settling that the
    # window's two ends do not show
    tr = trend(stats if stats is not None else period_stats(t, v, i, t1, spacing, TREND_PERIODS), tolerance)
    if tr is None:
        have = int(math.floor((t1 - t[0]) / spacing + PERIOD_SLACK))
        steady, more_s = False, max(MIN_TREND - have, 1) * spacing
        notes.append(f"steady state cannot be judged: the run holds {have} {unit} before the window's end, the trend "
                     f"needs {MIN_TREND}")
    elif tr.remaining > tolerance:
        steady = False
        ratio = max(ratio, min(tr.remaining, 10.0))
        if tr.more_periods:
            more_s = tr.more_periods * spacing
            notes.append(f"still settling: over the last {tr.periods} {unit} the values move "
                         f"{_pct(abs(tr.slope), 2)} each, about {_pct(tr.remaining, 1)} more to come; about "
                         f"{more_s:.3g} s more of simulated time would settle it")
        else:
            more_s = None
            notes.append(f"still drifting: over the last {tr.periods} {unit} the values move "
                         f"{_pct(abs(tr.slope), 2)} each without slowing; look for a slow time constant (a large "
                         "inductor or capacitor, a soft-start) or lengthen the run a lot")
    elif not steady and tr.more_periods == 0:
        more_s = 2 * spacing  # the ends differ but the trend is flat: two more spans show which is right
    return Stress(
        capacitor=capacitor, spice_name=spice_name, scenario=scenario, model=model, esr_ohm=esr_ohm, esl_h=esl_h,
        window_start_s=float(t0), window_end_s=float(t1), v_dc_v=float(v_dc),
        v_max_v=float(vv.max()), v_min_v=float(vv.min()), v_peak_abs_v=float(np.abs(vv).max()),
        v_mean_v=v_mean, v_rms_v=v_rms, v_ripple_pp_v=float(vv.max() - vv.min()), i_rms_a=i_rms, i_ac_rms_a=i_ac,
        i_mean_a=i_mean, i_peak_a=float(np.abs(ii).max()), dvdt_max_v_per_s=dvdt,
        f_fundamental_hz=f0, harmonics=harm, bands=plan.bands(rms),
        startup_v_peak_v=float(extremes[0] if extremes else np.max(v)),
        startup_v_min_v=float(extremes[1] if extremes else np.min(v)),
        startup_i_peak_a=float(extremes[2] if extremes else np.max(np.abs(i))), steady_state=steady, drift_ratio=ratio, settle_more_s=more_s, notes=tuple(notes))
