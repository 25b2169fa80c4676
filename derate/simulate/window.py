"""Where to measure: the steady-state period of a circuit's sources and the measuring window."""

from __future__ import annotations

from ..netlist.flatten import Circuit, source_value
from ..project import Analysis, Window


def source_periods(circuit: Circuit, notes: list[str] | None = None) -> list[float]:
    """Return the periods of the periodic independent sources (SIN frequency, PULSE period).

    A source whose period cannot be evaluated sets none; that is said in ``notes`` when given.
    """
    out = []
    for el in circuit.elements:
        src = el.source
        if el.kind not in "vi" or src is None or not src.function:
            continue
        k = 2 if src.function == "sin" else 6 if src.function == "pulse" else None
        if k is None or len(src.args) <= k:
            continue
        x = source_value(circuit, el, src.args[k])
        if x is None:
            if notes is not None:
                notes.append(f"{el.path} ({el.loc}): the period of its {src.function.upper()} source cannot be "
                             f"evaluated ('{src.args[k]}'); it sets no steady-state period")
            continue
        if x > 0:
            out.append(1.0 / x if src.function == "sin" else x)
    return out


def common_period(periods: list[float], max_multiple: int = 10000, rel_tol: float = 1e-9) -> float | None:
    """Return the shortest time that is a whole number of every period (None if over the limit)."""
    if not periods:
        return None
    common = max(periods)
    for p in sorted(set(periods), reverse=True):
        for k in range(1, max_multiple + 1):
            ratio = k * common / p
            if abs(ratio - round(ratio)) <= rel_tol * ratio:
                common *= k
                break
        else:
            return None
    return common


def steady_period(analysis: Analysis, circuit: Circuit, notes: list[str] | None = None) -> float | None:
    """Return the period for the steady-state check.

    The configured ``analysis.period``, else the common period of the periodic sources (SIN,
    PULSE), else the longest of them when they have no common period within 10 000 cycles.
    """
    if analysis.period_s:
        return analysis.period_s
    periods = source_periods(circuit, notes)
    if not periods:
        return None
    return common_period(periods) or max(periods)


def effective_window(analysis: Analysis, period: float | None, stop_s: float) -> Window:
    """Return the configured window, or by default the last two periods (else the second half)."""
    w = analysis.window
    if w.last_s is not None or w.from_s is not None or w.to_s is not None:
        return w
    if period and 2 * period < stop_s:
        return Window(last_s=2 * period)
    return Window(last_s=stop_s / 2)
