"""matplotlib figures for the HTML report, returned as inline SVG text."""

from __future__ import annotations

import io

from ..review import Review

from .words import STATUS_COLOUR as COLOURS


def _plt():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    plt.rcParams.update({"svg.fonttype": "none", "font.size": 9, "axes.grid": True, "grid.alpha": 0.3})
    return plt


def _svg(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight")
    text = buf.getvalue()
    start = text.find("<svg")
    return text[start:]


def stress_bars(review: Review) -> str:
    """Horizontal bars: each capacitor's worst stress ratio (and which check), against 100 % and the near line."""
    plt = _plt()
    rows = []
    for s in review.assessment.capacitors:
        rated = [f for f in s.findings if f.ratio is not None and f.status in ("pass", "near", "fail")]
        if rated:
            worst = max(rated, key=lambda f: f.ratio)
            rows.append((s.path, 100 * worst.ratio, worst.details.get("check", worst.rule).split(".")[-1], s.status))
        else:
            rows.append((s.path, 0.0, "no data", "unrated"))
    fig, ax = plt.subplots(figsize=(8, 0.32 * len(rows) + 1.2))
    names = [r[0] for r in rows][::-1]
    values = [min(r[1], 250.0) for r in rows][::-1]
    colours = [COLOURS[r[3]] for r in rows][::-1]
    bars = ax.barh(names, values, color=colours)
    for bar, row in zip(bars, rows[::-1]):
        label = f"{row[1]:.0f} % {row[2]}" if row[3] != "unrated" else "unrated: no part data for a check"
        ax.text(bar.get_width() + 2, bar.get_y() + bar.get_height() / 2, label, va="center", fontsize=8)
    near = 100 * review.policy.near_ratio
    ax.axvline(100, color=COLOURS["fail"], linestyle="-", linewidth=1.2, label="limit (100 %)")
    ax.axvline(near, color=COLOURS["near"], linestyle="--", linewidth=1, label=f"near the limit ({near:.0f} %)")
    ax.set_xlabel("worst stress ratio of any check (measured / allowed), %")
    ax.set_xlim(0, max(130, max(values) + 40))
    ax.legend(loc="lower right", fontsize=8)
    fig.tight_layout()
    svg = _svg(fig)
    plt.close(fig)
    return svg


def waveforms(review: Review, path: str) -> str | None:
    """Voltage and current of a capacitor in its worst scenario, with the limit lines drawn."""
    summary = next(s for s in review.assessment.capacitors if s.path == path)
    scenario = summary.worst_scenario
    res = next((r for r in review.run.results if r.scenario.name == scenario and r.ok), None)
    if res is None or path not in res.waves:
        return None
    env = res.waves[path]
    run_env = res.run_waves.get(path)
    plt = _plt()
    panels = 3 if run_env is not None else 2
    fig, axes = plt.subplots(panels, 1, figsize=(8, 2.3 * panels))
    t_ms = env.t_s * 1e3
    ax = axes[0]
    ax.fill_between(t_ms, env.v_min_v, env.v_max_v, color="#2b5797", alpha=0.6, linewidth=0.6, label="voltage")
    v = summary.finding("stress.voltage")
    if v is not None and v.limit is not None:
        ax.axhline(v.limit, color=COLOURS["fail"], linewidth=1.2, label=f"allowed {v.limit:.3g} V")
        polarized = summary.part.is_polarized if summary.part else False
        if not polarized:
            ax.axhline(-v.limit, color=COLOURS["fail"], linewidth=1.2)
    rev = summary.finding("stress.reverse")
    if rev is not None and rev.limit:
        ax.axhline(-rev.limit, color=COLOURS["near"], linewidth=1, linestyle="--", label=f"reverse limit -{rev.limit:.3g} V")
    ax.set_ylabel("V")
    ax.set_title(f"{path} in scenario {scenario}: steady-state window", fontsize=9)
    ax.legend(loc="upper right", fontsize=7)
    ax = axes[1]
    ax.fill_between(t_ms, env.i_min_a, env.i_max_a, color="#6b3fa0", alpha=0.6, linewidth=0.6, label="current")
    r = summary.finding("stress.ripple")
    if r is not None and r.limit is not None:
        ax.axhline(r.limit, color=COLOURS["fail"], linewidth=1.0, linestyle="-.", label=f"allowed ripple {r.limit:.3g} A rms")
        ax.axhline(-r.limit, color=COLOURS["fail"], linewidth=1.0, linestyle="-.")
    ax.set_ylabel("A")
    ax.set_xlabel("time, ms")
    ax.legend(loc="upper right", fontsize=7)
    if run_env is not None:
        ax = axes[2]
        ax.fill_between(run_env.t_s * 1e3, run_env.v_min_v, run_env.v_max_v, color="#2b5797", alpha=0.6,
                        linewidth=0.6, label="voltage, whole run")
        sg = summary.finding("stress.surge")
        if sg is not None and sg.limit is not None:
            ax.axhline(sg.limit, color=COLOURS["fail"], linewidth=1.2, label=f"surge limit {sg.limit:.3g} V")
        ax.set_ylabel("V")
        ax.set_xlabel("time, ms")
        ax.set_title("start-up (whole run)", fontsize=9)
        ax.legend(loc="lower right", fontsize=7)
    fig.tight_layout()
    svg = _svg(fig)
    plt.close(fig)
    return svg
