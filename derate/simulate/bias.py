"""Class-2 ceramics simulated at the capacitance they keep under their DC bias.

A class-2 ceramic (X5R, X7R ...) loses capacitance as its DC voltage rises: a 10 µF part may keep
half of it at 12 V.  Simulated at its nominal value it takes too large a share of the ripple from the
parts beside it, and an electrolytic in parallel passes when it fails.  So a scenario is simulated,
each class-2 ceramic with a DC-bias curve gets the capacitance its curve gives at the mean voltage it
measured, and the scenario is simulated again with those values, until no biased value moves by more
than 1 % (three rounds at most; the second round nearly always settles it, since the mean voltages
are set by the sources, not by the capacitances).

This is the operating-point iteration, not a large-signal voltage-dependent capacitor: the capacitance
is fixed through each run at its value for the mean voltage.  It is right where the DC voltage is
steady over the measuring window (a converter's input or output bank); a capacitor whose voltage
sweeps over its curve during the window (a PFC bulk over a mains cycle, a start-up) is simulated at
the capacitance of its mean voltage, which the README states as the limit of the model.

Only capacitors on top-level cards are biased: a card inside a subcircuit is one card for all its
instances, whose biases differ; those stay at their nominal value, with a note.
"""

from __future__ import annotations

import re
from dataclasses import replace
from typing import Mapping

from ..netlist.flatten import Circuit
from ..parts import Part
from ..project import Scenario
from ..thermal import interp
from ..units import format_number
from .results import ScenarioResult

BIAS_TOLERANCE = 0.01  # a biased fraction moving less than this (relative) ends the iteration
MAX_BIAS_ROUNDS = 3  # re-simulations at most
PREFIX = "bias:"  # a scenario's scale entry: bias:C5 = the fraction of its nominal value simulated


def biasable(parts: Mapping[str, Part | None], circuit: Circuit) -> tuple[set[str], set[str]]:
    """(top-level class-2 ceramics with a DC-bias curve, those inside subcircuits that cannot be biased)."""
    top, inside = set(), set()
    for cap in circuit.capacitors():
        part = parts.get(cap.path)
        if part is None or part.technology != "ceramic-class2" or not part.dc_bias:
            continue
        (inside if cap.instance else top).add(cap.path)
    return top, inside


def fractions(result: ScenarioResult, parts: Mapping[str, Part | None], paths: set[str]) -> dict[str, float]:
    """{capacitor: the fraction of its capacitance it keeps at the |mean| voltage this run measured}
    (held at the curve's last row beyond it: the DC-bias check reports that voltage as unrated)."""
    return {s.capacitor: interp(parts[s.capacitor].dc_bias, abs(s.v_mean_v))
            for s in result.stresses if s.capacitor in paths}


def simulated(scenario: Scenario) -> dict[str, float]:
    """The bias fractions a scenario was simulated with."""
    return {k[len(PREFIX):]: v for k, v in scenario.scale if k.startswith(PREFIX)}


def moved(want: dict[str, float], have: dict[str, float]) -> bool:
    return any(abs(want.get(c, 1.0) - have.get(c, 1.0)) > BIAS_TOLERANCE * have.get(c, 1.0)
               for c in set(want) | set(have))


def with_bias(scenario: Scenario, want: dict[str, float]) -> Scenario:
    scale = tuple((k, v) for k, v in scenario.scale if not k.startswith(PREFIX))
    return replace(scenario, scale=scale + tuple(sorted((PREFIX + c, f) for c, f in want.items())))


def _natural(name: str) -> list:
    return [int(t) if t.isdigit() else t.lower() for t in re.split(r"(\d+)", name)]


def describe(results: list[ScenarioResult], circuit: Circuit, inside: set[str]) -> list[str]:
    """One note per biased capacitor: the capacitance simulated over the scenarios, and why."""
    values = {c.path: c.value / (c.multiplicity or 1.0) for c in circuit.capacitors() if c.value}
    spans: dict[str, list[tuple[float, float]]] = {}
    for res in results:
        if not res.ok:
            continue
        means = {s.capacitor: abs(s.v_mean_v) for s in res.stresses}
        for cap, f in simulated(res.scenario).items():
            spans.setdefault(cap, []).append((f, means.get(cap, 0.0)))
    notes = []

    def span(lo: float, hi: float, show) -> str:
        a, b = show(lo), show(hi)
        return a if a == b else f"{a} to {b}"
    parts = []
    for cap in sorted(spans, key=_natural):
        fs = [f for f, _ in spans[cap]]
        vs = [v for _, v in spans[cap]]
        nominal = values.get(cap)
        pct = span(min(fs), max(fs), lambda x: f"{100 * x:.0f} %")
        volts = span(min(vs), max(vs), lambda x: format_number(x, "V"))
        parts.append(f"{cap} {pct} of {format_number(nominal, 'F')} at {volts}" if nominal else f"{cap} {pct} at {volts}")
    if parts:
        notes.append("class-2 ceramics simulated at the capacitance their DC-bias curves give at each scenario's mean "
                     "voltage: " + "; ".join(parts))
    if inside:
        notes.append(f"{', '.join(sorted(inside)[:8])}{' ...' if len(inside) > 8 else ''}: class-2 ceramic(s) inside "
                     "a subcircuit simulated at their nominal value (one card serves every instance, whose DC "
                     "biases differ); their DC-bias check still judges each one's own voltage")
    return notes
