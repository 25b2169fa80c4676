"""Topology questions about the flattened circuit, answered with networkx graph algorithms.

- ``mains_sources``: the independent voltage sources that are a mains line: a sine above the safety
  extra-low-voltage limit (50 V RMS, IEC 61140: above it a circuit is hazardous) at a line frequency
  (45-65 Hz, or 360-440 Hz on aircraft).
- ``across_line``: the capacitors connected across such a line, directly or through what is a short
  at line frequency (small resistors, fuses, inductors such as a common-mode choke, closed switches,
  0 V sense sources): the "X" position of a mains filter, which needs a safety-rated capacitor.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import networkx as nx

from .flatten import Circuit, Element, source_value

SELV_RMS_V = 50.0  # IEC 61140: AC above 50 V RMS is not extra-low voltage
LINE_BANDS_HZ = ((45.0, 65.0), (360.0, 440.0))
SHORT_OHM = 10.0  # a resistor up to this is a short at line frequency (fuse, NTC, sense resistor): common practice


@dataclass(frozen=True)
class MainsLine:
    source: Element
    v_rms: float
    f_hz: float


def mains_sources(circuit: Circuit) -> list[MainsLine]:
    """The voltage sources that are a mains line (a SIN above 50 V RMS at a line frequency)."""
    out = []
    for el in circuit.elements:
        spec = el.source
        if el.kind != "v" or spec is None or (spec.function or "").lower() != "sin" or len(spec.args) < 3:
            continue
        amplitude, freq = source_value(circuit, el, spec.args[1]), source_value(circuit, el, spec.args[2])
        if amplitude is None or freq is None:
            continue
        rms = abs(amplitude) / math.sqrt(2.0)
        if rms > SELV_RMS_V and any(lo <= freq <= hi for lo, hi in LINE_BANDS_HZ):
            out.append(MainsLine(el, rms, freq))
    return out


def _is_short(el: Element, circuit: Circuit) -> bool:
    if el.kind == "l" or el.kind == "s" or el.kind == "w":
        return True
    if el.kind == "r":
        return el.value is not None and el.value <= SHORT_OHM
    if el.kind == "v":
        spec = el.source
        if spec is None or spec.function:
            return False
        dc = _value(spec.dc, circuit) if spec.dc is not None else 0.0
        return dc == 0.0  # a 0 V source: an ammeter
    return False


def line_graph(circuit: Circuit) -> nx.Graph:
    """Nets joined by what is a short at line frequency."""
    g = nx.Graph()
    for el in circuit.elements:
        g.add_nodes_from(el.nodes)
        if len(el.nodes) >= 2 and _is_short(el, circuit):
            g.add_edge(el.nodes[0], el.nodes[1])
    return g


def across_line(circuit: Circuit) -> dict[str, MainsLine]:
    """{capacitor path: the mains line it is across} (its two terminals on the line's two sides)."""
    lines = mains_sources(circuit)
    if not lines:
        return {}
    g = line_graph(circuit)
    side = {}
    for comp in nx.connected_components(g):
        for net in comp:
            side[net] = frozenset(comp)
    out: dict[str, MainsLine] = {}
    for line in lines:
        a, b = (side.get(n, frozenset({n})) for n in line.source.nodes[:2])
        if a == b:
            continue
        for cap in circuit.capacitors():
            ends = {side.get(n, frozenset({n})) for n in cap.nodes[:2]}
            if ends == {a, b}:
                out.setdefault(cap.path, line)
    return out
