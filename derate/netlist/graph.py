"""The circuit as a graph (nets are vertices, element pin pairs are edges) and the topology checks on it.

Each element contributes one edge per pin pair, labelled with how that pair behaves at DC:

- ``linear``: a resistive or shorting path (R, L, switches, transmission-line conductors, ...);
- ``source``: a voltage-defined branch (V, E and H outputs, B with V=) - also a DC path;
- ``junction``: a semiconductor path (diode, BJT and JFET junctions, MOSFET channel and body);
- ``open``: no DC path (C, I, G and F outputs, B with I=, MOSFET gate);
- ``sense``: a controlling input that draws no current (E/G/S control pins).

XSPICE ``A`` devices are opaque: their pins are treated as ``linear`` so they never cause a
false "no DC path" error (a documented limitation).
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field
from typing import Iterable

from ..findings import Finding
from ..units import NumberError, format_number, parse_number
from .flatten import Circuit, Element
from .lexer import split_assignment
from .lint_rules import LINT_RULES

# pin-pair tables: (pin index a, pin index b, class)
_PAIRS: dict[str, tuple[tuple[int, int, str], ...]] = {
    "r": ((0, 1, "linear"),),
    "l": ((0, 1, "linear"),),
    "c": ((0, 1, "open"),),
    "v": ((0, 1, "source"),),
    "i": ((0, 1, "open"),),
    "h": ((0, 1, "source"),),
    "f": ((0, 1, "open"),),
    "d": ((0, 1, "junction"),),
    "q": ((0, 1, "junction"), (1, 2, "junction"), (0, 3, "junction")),
    "j": ((0, 1, "junction"), (1, 2, "junction"), (0, 2, "junction")),
    "m": ((0, 2, "junction"), (0, 3, "junction"), (2, 3, "junction"), (1, 2, "open")),
    "s": ((0, 1, "linear"), (2, 3, "sense")),
    "w": ((0, 1, "linear"),),
    "t": ((0, 2, "linear"), (1, 3, "linear")),
    "o": ((0, 2, "linear"), (1, 3, "linear")),
    "u": ((0, 1, "linear"), (0, 2, "open")),
}
DC_PATH = frozenset({"linear", "source", "junction"})


def source_resistance(el: Element) -> bool:
    """True when a V card gives a non-zero Rser= (simulated as a series resistor, simulate/deck.py)."""
    spec = el.source
    for tok in (spec.extra if spec is not None else ()):
        kv = split_assignment(tok)
        if kv and kv[0].lower() == "rser":
            try:
                return parse_number(kv[1]).value != 0
            except NumberError:
                return True  # an expression: ngspice evaluates it; not a bare source
    return False


def index_pairs(el: Element) -> tuple[tuple[int, int, str], ...]:
    """Return ``(pin index a, pin index b, class)`` for an element's pin pairs (module docstring)."""
    n = len(el.nodes)
    k = el.kind
    if k in ("e", "g"):
        out = [(0, 1, "source" if k == "e" else "open")] if n >= 2 else []
        out += [(i, i + 1, "sense") for i in range(2, n - 1, 2)]
        return tuple(out)
    if k == "b":
        is_v = any(key == "v" for key, _ in el.params)
        return ((0, 1, "source" if is_v else "open"),)
    if k == "v" and source_resistance(el):
        return ((0, 1, "linear"),)  # Rser= on the card (another simulator's form): a source with a resistor
    if k == "a":
        return tuple((0, i, "linear") for i in range(1, n))
    return tuple(p for p in _PAIRS.get(k, ()) if p[0] < n and p[1] < n)


def pin_pairs(el: Element, cache: dict | None = None) -> list[tuple[str, str, str]]:
    """Return ``(net a, net b, class)`` for every pin pair of an element.

    ``cache`` (a dict owned by the caller) remembers the index pairs per element card.
    """
    if cache is None:
        pairs = index_pairs(el)
    else:
        key = id(el.proto)
        pairs = cache.get(key)
        if pairs is None:
            pairs = cache[key] = index_pairs(el)
    n = el.nodes
    return [(n[a], n[b], cls) for a, b, cls in pairs]


class _UnionFind:
    __slots__ = ("parent",)

    def __init__(self) -> None:
        self.parent: dict[str, str] = {}

    def find(self, x: str) -> str:
        parent = self.parent
        root = x
        while parent.get(root, root) != root:
            root = parent[root]
        while parent.get(x, x) != root:  # path compression
            parent[x], x = root, parent[x]
        return root

    def union(self, a: str, b: str) -> bool:
        """Join the sets of a and b; return False when they were already one set."""
        ra, rb = self.find(a), self.find(b)
        if ra == rb:
            return False
        self.parent[ra] = rb
        return True


@dataclass(frozen=True, slots=True)
class Edge:
    """One pin pair of an element: the two nets it joins and how it conducts at DC."""

    a: str
    b: str
    element: Element
    conduction: str  # linear, source, junction, open, sense


@dataclass
class CircuitGraph:
    """The circuit as a multigraph: nets are vertices, element pin pairs are labelled edges.

    Built in one pass; lint asks it which nets are joined by which kinds of edge
    (``components``) instead of walking the elements itself.
    """

    nets: set[str] = field(default_factory=set)
    edges: list[Edge] = field(default_factory=list)
    degree: dict[str, int] = field(default_factory=lambda: defaultdict(int))  # element pins per net
    sensed: set[str] = field(default_factory=set)  # nets expressions read through v(...)

    def components(self, conduction: frozenset[str], kinds: frozenset[str] = frozenset()) -> "_UnionFind":
        """Union-find of the nets joined by edges of the given conduction classes (or element kinds)."""
        uf = _UnionFind()
        for e in self.edges:
            if e.conduction in conduction or e.element.kind in kinds:
                uf.union(e.a, e.b)
        return uf


def circuit_graph(circuit: Circuit) -> CircuitGraph:
    """Return the graph of a flattened circuit."""
    g = CircuitGraph()
    cache: dict = {}
    for el in circuit.elements:
        for node in el.nodes:
            g.degree[node] += 1
        for a, b, cls in pin_pairs(el, cache):
            g.edges.append(Edge(a, b, el, cls))
        g.sensed.update(el.sense)
    g.nets.update(g.degree)
    return g


# ---------------------------------------------------------------- lint
_NET_LIST_MAX = 6


def _f(rule: str, message: str, el: Element | None, subject: str | None = None,
       severity: str | None = None, **details) -> Finding:
    sev = severity or LINT_RULES[rule].severity
    return Finding(rule, sev, message, subject=subject or (el.path if el else None),
                   file=el.loc.file if el else None, line=el.loc.line if el else None, details=details)


def _names(nets: Iterable[str]) -> str:
    nets = sorted(nets)
    shown = ", ".join(nets[:_NET_LIST_MAX])
    return shown + (f" and {len(nets) - _NET_LIST_MAX} more" if len(nets) > _NET_LIST_MAX else "")


def lint(circuit: Circuit, graph: CircuitGraph | None = None) -> list[Finding]:
    """Return topology and value findings for a flattened circuit, sorted by file and line.

    Findings met while reading and expanding (duplicate names, undefined models ...) and the
    reader's notes (ignored or redefined constructs, as ``netlist.note``) come first.
    """
    findings: list[Finding] = list(circuit.findings)
    findings += [Finding(LINT_RULES["netlist.note"].id, LINT_RULES["netlist.note"].severity, text,
                         file=loc.file, line=loc.line) for loc, text in circuit.netlist.notes]
    g = graph or circuit_graph(circuit)
    touching: dict[str, list[Element]] = defaultdict(list)
    for el in circuit.elements:
        for node in el.nodes:
            lst = touching[node]
            if len(lst) < 3:
                lst.append(el)
        if el.kind == "c":
            findings.extend(_value_findings(el))
        else:
            findings.extend(_f(f"value.{code}", f"{el.path}: {msg}", el) for code, msg in el.value_notes)

    # loops of voltage-defined branches and inductors: an edge that joins two nets already joined
    vl = _UnionFind()
    for e in g.edges:
        if e.conduction == "source" or e.element.kind == "l":
            if not vl.union(e.a, e.b) and e.a != e.b:
                el = e.element
                kind = "voltage sources" if e.conduction == "source" and el.kind != "l" else \
                    "voltage sources and inductors"
                findings.append(_f("topology.source-loop",
                                   f"{el.path} closes a loop made only of {kind} "
                                   f"(nets {e.a} and {e.b} are already joined by them): the DC solution is singular",
                                   el))

    nets = g.nets
    if "0" not in nets:
        first = circuit.elements[0] if circuit.elements else None
        findings.append(_f("topology.no-ground", "no element connects to ground (node 0 or gnd); "
                           "every SPICE circuit needs one", first, subject="0"))
    else:
        dc = g.components(DC_PATH)
        linear = g.components(DC_PATH - {"junction"})
        ground_dc, ground_lin = dc.find("0"), linear.find("0")
        floating: dict[str, list[str]] = defaultdict(list)
        junction_only: dict[str, list[str]] = defaultdict(list)
        for net in nets:
            if dc.find(net) != ground_dc:
                floating[dc.find(net)].append(net)
            elif linear.find(net) != ground_lin:
                junction_only[linear.find(net)].append(net)
        for group in floating.values():
            el = _first_element(group, touching)
            findings.append(_f("topology.no-dc-path",
                               f"no DC path to ground from net(s) {_names(group)} (capacitors and current "
                               f"sources are open at DC): add a resistive path, e.g. a large resistor to ground",
                               el, subject=sorted(group)[0], nets=sorted(group)))
        for group in junction_only.values():
            el = _first_element(group, touching)
            findings.append(_f("topology.junction-only",
                               f"net(s) {_names(group)} reach ground only through semiconductor junctions "
                               f"(e.g. a floating diode bridge): ngspice may crawl for minutes; add a "
                               f"high-value resistor to ground", el, subject=sorted(group)[0], nets=sorted(group)))

    for net, count in g.degree.items():
        if count == 1 and net != "0" and net not in g.sensed:  # read by an expression: a connection too
            el = touching[net][0]
            findings.append(_f("topology.single-pin-net",
                               f"net {net} has a single connection ({el.path}); is a wire missing?",
                               el, subject=net))

    vsrc = g.components(frozenset({"source"}))
    for el in circuit.capacitors():
        a, b = el.nodes
        if a == b:
            findings.append(_f("topology.shorted-capacitor", f"{el.path} has both pins on net {a}", el))
        elif vsrc.find(a) == vsrc.find(b) and not dict(el.parasitics).get("rser"):
            findings.append(_f("topology.source-capacitor-loop",
                               f"{el.path} sits directly across voltage source(s) between {a} and {b}: with no "
                               f"series resistance its current is set only by the source's edges",
                               el))
    findings.sort(key=lambda f: (f.file or "", f.line or 0, f.rule, f.subject or ""))
    return findings


def _first_element(group: list[str], touching: dict[str, list[Element]]) -> Element | None:
    best = None
    for net in group:
        for el in touching.get(net, ()):
            if best is None or (el.loc.file, el.loc.line) < (best.loc.file, best.loc.line):
                best = el
    return best


def _value_findings(el: Element) -> list[Finding]:
    out = [_f(f"value.{code}", f"{el.path}: {msg}", el) for code, msg in el.value_notes]
    if el.value is not None and not (1e-15 <= abs(el.value) <= 10.0):
        out.append(_f("value.capacitance-range",
                      f"{el.path} = {format_number(el.value, 'F')} ('{el.value_text}') is outside 1 fF ... 10 F: "
                      f"check the unit", el))
    return out
