"""The HTML report's figures, drawn as SVG straight from the measured envelopes (report/svg.py).

Each capacitor that fails or is near a limit gets the figure of the quantity that decided it:
voltage (or the start-up surge, or the reverse voltage) against its allowed line with the peak
marked; the running RMS of the ripple current against the allowed RMS; the hot spot per scenario
against its maximum; the part's DC-bias curve with the operating point and the minimum; the life
curve against hot-spot temperature with each scenario's point and the required life.
"""

from __future__ import annotations

import math

from ..review import Review
from ..thermal import LIFE_MODELS, interp
from .svg import Chart, matrix
from .words import STATUS_COLOUR as COLOURS, quantity

VOLT = "#2b5797"
AMP = "#6b3fa0"


MAX_BARS = 80  # a bar per capacitor up to this many; the rest are in the table


CHECK_ORDER = ("voltage", "ac-voltage", "surge", "reverse", "ripple", "hotspot", "self-heating", "life", "dc-bias")


def stress_bars(review: Review, rows: list[dict], limit: int = MAX_BARS) -> str:
    """Every capacitor's checks as a capacitor x check grid (ratio in % of what the policy allows,
    tinted by status), worst capacitor first (the worst ``limit``)."""
    by_path = {s.path: s for s in review.assessment.capacitors}
    data, seen = [], set()
    for r in rows[:limit]:
        cells: dict = {}
        summary = by_path.get(r["reference"])
        for f in (summary.findings if summary else []):
            check = f.details.get("check", f.rule)
            name = check.split(".", 1)[-1] if check.startswith("stress.") else None
            if name is None or f.status is None:
                continue
            got = (f.ratio, str(f.status), f.scenario or "")
            old = cells.get(name)
            if old is None or (got[0] or -1) > (old[0] or -1):
                cells[name] = got
            seen.add(name)
        data.append((r["reference"], cells))
    columns = [c for c in CHECK_ORDER if c in seen] + sorted(seen - set(CHECK_ORDER))
    return matrix(data, columns or ["voltage"], COLOURS)


def figure(review: Review, row: dict) -> str | None:
    """The SVG figure for a capacitor row's governing check, or None when there is nothing to draw."""
    g = row.get("governing") or {}
    check = g.get("check")
    summary = next(s for s in review.assessment.capacitors if s.path == row["reference"])
    rule = g.get("rule")
    f = summary.finding(rule) if rule else None
    if f is not None and f.details.get("distribution"):  # Monte Carlo: the spread over the samples
        return _histogram(summary, f, g)
    if check in ("voltage", "surge", "reverse"):
        return _voltage(review, summary, check, g)
    if check == "ripple":
        return _ripple(review, summary, g)
    if check in ("hotspot", "self-heating"):
        return _hotspot(summary, check)
    if check == "dc-bias":
        return _dc_bias(summary, g)
    if check == "life":
        return _life(summary, g)
    return None


def _histogram(summary, f, g: dict) -> str | None:
    """The governing check's stress over a corner's samples, % of the allowed, against the limit."""
    import numpy as np

    dist = f.details["distribution"]
    pct = np.asarray(dist["ratios"], dtype=float) * 100.0
    if not len(pct):
        return None
    lo, hi = float(pct.min()), float(pct.max())
    bins = max(5, min(30, int(round(math.sqrt(len(pct))))))
    lo_edge = min(lo, 100.0) - 1e-9
    hi_edge = max(hi, 100.0) + 1e-9
    counts, edges = np.histogram(pct, bins=bins, range=(lo_edge, hi_edge))
    x, y = [], []
    for c, a, b in zip(counts, edges[:-1], edges[1:]):  # a stepped outline of the bins
        x += [float(a), float(a), float(b), float(b)]
        y += [0.0, float(c), float(c), 0.0]
    chart = Chart(x_label=f"{g.get('check')} stress, % of what the policy allows", y_label="samples",
                  title=f"{summary.path}: {g.get('check')} over {dist['samples']} samples of {g.get('scenario')}",
                  y_range=(0.0, float(counts.max()) * 1.25 + 0.5), x_range=(lo_edge, hi_edge))
    chart.band(x, [0.0] * len(y), y, AMP, "samples per bin")
    chart.vline(100.0, COLOURS["fail"], "limit 100 %")
    at = 100.0 * dist["at_gate"]
    label = "worst sample" if dist["gate_percentile"] >= 100 else f"{dist['gate_percentile']:g} th percentile"
    chart.mark(at, float(counts.max()) * 1.05, COLOURS["fail"] if at > 100 else COLOURS["near"],
               f"{label} {at:.0f} %; {100 * dist['p_exceed']:.1f} % over")
    return chart.svg()


def _result(review: Review, scenario: str | None):
    return next((r for r in review.run.results if r.scenario.name == scenario and r.ok), None)


def _voltage(review, summary, check: str, g: dict) -> str | None:
    res = _result(review, g.get("scenario"))
    if res is None:
        return None
    env = res.run_waves.get(summary.path) if check == "surge" else res.waves.get(summary.path)
    if env is None or not len(env.t_s):
        return None
    scale, unit = _time_scale(env.t_s)
    t = [x * scale for x in env.t_s]
    what = {"voltage": "steady-state window", "surge": "whole run (start-up)", "reverse": "steady-state window"}[check]
    chart = Chart(x_label=f"time, {unit}", y_label="voltage across the capacitor", y_unit="V",
                  title=f"{summary.path}: {check} in scenario {g.get('scenario')} ({what})")
    chart.band(t, env.v_min_v, env.v_max_v, VOLT, "voltage (min-max per time step)")
    limit = g.get("limit")
    if check == "reverse":
        if limit is not None:
            chart.limit(-limit, COLOURS["fail"], f"reverse limit -{limit:.3g} V")
        k = int(min(range(len(env.v_min_v)), key=lambda j: env.v_min_v[j]))
        chart.mark(t[k], env.v_min_v[k], COLOURS["fail"], f"{env.v_min_v[k]:.3g} V")
    else:
        part = summary.part
        bipolar = part is None or not part.is_polarized  # judged on |v|: the negative side counts as much
        colour = COLOURS["fail"] if (g.get("ratio") or 0) > 1 else COLOURS["near"]
        if limit is not None and g.get("unit") == "V" and "peak-to-peak" not in (_applied(summary, check) or ""):
            chart.limit(limit, COLOURS["fail"], f"allowed {limit:.3g} V")
            if bipolar and float(min(env.v_min_v)) < 0:
                chart.limit(-limit, COLOURS["fail"], f"allowed -{limit:.3g} V")
        hi = int(max(range(len(env.v_max_v)), key=lambda j: env.v_max_v[j]))
        lo = int(min(range(len(env.v_min_v)), key=lambda j: env.v_min_v[j]))
        if bipolar and -env.v_min_v[lo] > env.v_max_v[hi]:
            chart.mark(t[lo], env.v_min_v[lo], colour, f"peak |v| {-env.v_min_v[lo]:.3g} V")
        else:
            chart.mark(t[hi], env.v_max_v[hi], colour, f"peak {env.v_max_v[hi]:.3g} V")
        if _applied(summary, check) == "peak-to-peak":
            chart.mark(t[lo], env.v_min_v[lo], colour, f"{env.v_max_v[hi] - env.v_min_v[lo]:.3g} V peak-to-peak "
                       f"against {limit:.3g} V allowed" if limit is not None else "peak-to-peak")
    return chart.svg()


def _applied(summary, check: str) -> str | None:
    f = summary.finding(f"stress.{check}")
    return f.details.get("applied") if f is not None else None


def _ripple(review, summary, g: dict) -> str | None:
    res = _result(review, g.get("scenario"))
    env = res.waves.get(summary.path) if res else None
    if env is None or not len(env.t_s):
        return None
    scale, unit = _time_scale(env.t_s)
    t = [x * scale for x in env.t_s]
    chart = Chart(x_label=f"time, {unit}", y_label="capacitor current", y_unit="A",
                  title=f"{summary.path}: ripple current in scenario {g.get('scenario')}")
    # the instantaneous current only as a faint background: the limit is an RMS value and is judged
    # against the running RMS and the frequency-weighted equivalent, drawn over it
    chart.band(t, env.i_min_a, env.i_max_a, "#c4c4d4", "instantaneous current (min-max per step)")
    rms = [x for x in env.i_rms_a]
    if rms and all(math.isfinite(x) for x in rms):
        chart.line(t, rms, AMP, "RMS over one period (unweighted)")
    if g.get("limit") is not None:
        chart.limit(g["limit"], COLOURS["fail"], f"allowed {quantity(g['limit'], 'A')} equivalent RMS (after "
                    "frequency and temperature multipliers)")
    if g.get("measured") is not None:
        chart.mark(t[-1], g["measured"], COLOURS["fail"] if g.get("ratio", 0) > 1 else COLOURS["near"],
                   f"equivalent {quantity(g['measured'], 'A')}")
    return chart.svg()


def _hotspot(summary, check: str) -> str | None:
    f = summary.finding(f"stress.{check}")
    if f is None or not summary.thermal:
        return None
    names = list(summary.thermal)
    xs = list(range(1, len(names) + 1))
    chart = Chart(x_label="scenario: " + ", ".join(f"{k} = {n}" for k, n in zip(xs, names)),
                  y_label="temperature" if check == "hotspot" else "self-heating", y_unit="°C",
                  title=f"{summary.path}: {'hot spot' if check == 'hotspot' else 'self-heating'} per scenario",
                  x_range=(0.5, len(names) + 0.5))
    values = [(th.hotspot_c if check == "hotspot" else (th.rise_c or 0.0)) for th in summary.thermal.values()]
    if check == "hotspot":
        chart.line(xs, [th.ambient_c for th in summary.thermal.values()], "#888888", "ambient", dashed=True)
    chart.line(xs, values, COLOURS["near"], "hot spot" if check == "hotspot" else "rise from ripple")
    if f.limit is not None:
        chart.limit(f.limit, COLOURS["fail"], f"allowed {f.limit:.3g} °C")
    k = max(range(len(values)), key=lambda j: values[j])
    chart.mark(xs[k], values[k], COLOURS["fail"] if (f.ratio or 0) > 1 else COLOURS["near"], f"{values[k]:.1f} °C")
    return chart.svg()


def _dc_bias(summary, g: dict) -> str | None:
    part = summary.part
    f = summary.finding("stress.dc-bias")
    if part is None or not part.dc_bias or f is None:
        return None
    v = [p[0] for p in part.dc_bias]
    c = [100 * p[1] for p in part.dc_bias]
    chart = Chart(x_label="DC voltage across the capacitor", x_unit="V", y_label="capacitance kept, %",
                  title=f"{summary.path}: capacitance under DC bias" + (" (typical curve)" if "dc_bias" in part.typical
                                                                        else ""), y_range=(0, 105))
    chart.line(v, c, VOLT, "the part's DC-bias curve")
    if g.get("limit") is not None:
        chart.limit(100 * g["limit"], COLOURS["fail"], f"minimum {100 * g['limit']:.0f} %")
    v_dc = f.details.get("v_dc_v")
    if v_dc is not None:
        kept = 100 * interp(part.dc_bias, abs(v_dc))
        chart.mark(abs(v_dc), kept, COLOURS["fail"] if (f.ratio or 0) > 1 else COLOURS["near"],
                   f"{kept:.0f} % at {abs(v_dc):.3g} V")
    return chart.svg()


def _life(summary, g: dict) -> str | None:
    part = summary.part
    f = summary.finding("stress.life")
    if part is None or f is None or part.base_life_h is None:
        return None
    model = f.details.get("model", "arrhenius-10")
    t0 = f.details.get("t0_c", part.rated_temperature_c)
    if model not in LIFE_MODELS or t0 is None:
        return None
    base, step = LIFE_MODELS[model]
    hot = [th.hotspot_c for th in summary.thermal.values()] or [t0 - 40]
    temps = [min(hot) - 10 + k * (t0 + 5 - min(hot) + 10) / 60 for k in range(61)]
    chart = Chart(x_label="hot-spot temperature", x_unit="°C", y_label="expected life", y_unit="h", log_y=True,
                  title=f"{summary.path}: life against hot spot ({model})")
    chart.line(temps, [part.base_life_h * base ** ((t0 - t) / step) for t in temps], VOLT, "the part's life model")
    if f.limit is not None:
        chart.limit(f.limit, COLOURS["fail"], f"required {f.limit:,.0f} h")
    for name, th in summary.thermal.items():
        life = part.base_life_h * base ** ((t0 - th.hotspot_c) / step)
        chart.mark(th.hotspot_c, life, "#555555", f"{name} {life:,.0f} h")
    if f.details.get("profile"):
        chart.limit(f.measured, COLOURS["near"], f"over the mission profile {f.measured:,.0f} h", dashed=True)
    return chart.svg()


def _time_scale(t) -> tuple[float, str]:
    span = float(t[-1]) if len(t) else 1.0
    for factor, unit in ((1.0, "s"), (1e3, "ms"), (1e6, "µs"), (1e9, "ns")):
        if span * factor >= 1:
            return factor, unit
    return 1e9, "ns"
