"""Topology and value checks on small netlists, one construct each."""

from __future__ import annotations

import pytest

from derate.netlist import circuit_graph, lint, load_circuit
from tests.conftest import NETLISTS


def rules_of(path):
    return sorted({f.rule for f in lint(load_circuit(path))})


def findings_of(path, rule):
    return [f for f in lint(load_circuit(path)) if f.rule == rule]


def test_clean_netlist_has_no_findings(write):
    p = write("ok.cir", "ok\nV1 a 0 5\nR1 a b 1k\nC1 b 0 1u\nR2 b 0 1k\n.end\n")
    assert lint(load_circuit(p)) == []


def test_no_dc_path_capacitor_island(write):
    p = write("f.cir", "f\nV1 a 0 5\nR1 a 0 1k\nC1 a x 1u\nC2 x 0 1u\n.end\n")
    (f,) = findings_of(p, "topology.no-dc-path")
    assert f.severity == "error" and "x" in f.message and f.line == 4


def test_no_dc_path_current_source(write):
    p = write("f.cir", "f\nI1 0 x 1m\nC1 x 0 1u\nR1 y 0 1\nV1 y 0 1\n.end\n")
    assert findings_of(p, "topology.no-dc-path")


def test_inductor_and_source_are_dc_paths(write):
    p = write("f.cir", "f\nV1 a 0 5\nL1 a b 1u\nC1 b 0 1u\nE1 c 0 b 0 2\nR1 c 0 1k\n.end\n")
    assert not findings_of(p, "topology.no-dc-path")


def test_mosfet_gate_alone_has_no_dc_path(write):
    p = write("g.cir", "g\nV1 d 0 5\nM1 d g 0 0 nm\nC1 g 0 1p\n.model nm NMOS\n.end\n")
    (f,) = findings_of(p, "topology.no-dc-path")
    assert f.details["nets"] == ["g"]


def test_floating_diode_bridge_is_a_junction_only_warning(write):
    # the secondary of a bridge with no reference: ngspice crawls on this (see DEVELOPERS.md)
    p = write("b.cir", "bridge\nV1 a b SIN(0 10 50)\nD1 a p dd\nD2 b p dd\nD3 0 a dd\nD4 0 b dd\n"
                       "C1 p 0 100u\nR1 p 0 100\n.model dd D\n.end\n")
    (f,) = findings_of(p, "topology.junction-only")
    assert f.severity == "warning" and f.details["nets"] == ["a", "b"]
    # with a reference resistor the warning goes away
    q = write("b2.cir", p.read_text().replace("R1 p 0 100", "R1 p 0 100\nRREF b 0 10MEG"))
    assert not findings_of(q, "topology.junction-only")


def test_value_pitfalls():
    rules = rules_of(NETLISTS / "pitfalls.cir")
    for rule in ("value.digits-after-scale", "value.femto-suffix", "value.greek-mu", "value.capacitance-range"):
        assert rule in rules
    (rng,) = findings_of(NETLISTS / "pitfalls.cir", "value.capacitance-range")
    assert rng.subject == "C3"  # 100 F; C2 (2.2 F after the ignored mu) is inside 1 fF ... 10 F


def test_shorted_capacitor_and_single_pin(write):
    p = write("s.cir", "s\nV1 a 0 5\nR1 a 0 1k\nC1 a a 1u\nR2 a dangling 1k\n.end\n")
    rules = rules_of(p)
    assert "topology.shorted-capacitor" in rules and "topology.single-pin-net" in rules


@pytest.mark.parametrize("body,kind", [
    ("V1 a 0 5\nV2 a 0 5\nR1 a 0 1\n", "voltage sources"),
    ("V1 a 0 5\nL1 a 0 1u\n", "inductors"),
    ("V1 a 0 5\nR1 a b 1\nL1 b 0 1u\nL2 b 0 1u\n", "inductors"),
])
def test_source_loops_are_errors(write, body, kind):
    # all three make ngspice 39 report "singular matrix" (measured)
    p = write("l.cir", "loop\n" + body + ".end\n")
    (f,) = findings_of(p, "topology.source-loop")
    assert f.severity == "error" and kind in f.message


def test_capacitor_across_ideal_source(write):
    p = write("c.cir", "c\nV1 a 0 5\nC1 a 0 1u\nR1 a b 1\nC2 b 0 1u\n.end\n")
    (f,) = findings_of(p, "topology.source-capacitor-loop")
    assert f.subject == "C1"


def test_missing_ground(write):
    p = write("n.cir", "n\nV1 a b 5\nR1 a b 1k\n.end\n")
    assert findings_of(p, "topology.no-ground")


def test_duplicate_undefined_and_pin_count(write):
    p = write("d.cir", "d\nV1 a 0 5\nR1 a 0 1k\nr1 a 0 2k\nX1 a nosuch\nD1 a 0 nomodel\n"
                       ".subckt two p q\nR1 p q 1\n.ends\nX2 a two\n.end\n")
    rules = rules_of(p)
    for rule in ("netlist.duplicate-name", "netlist.undefined-subckt", "netlist.undefined-model", "netlist.pin-count"):
        assert rule in rules
    (dup,) = findings_of(p, "netlist.duplicate-name")
    assert dup.line == 4


def test_graph_structure():
    circuit = load_circuit(NETLISTS / "hierarchy.cir")
    g = circuit_graph(circuit)
    (edge,) = [e for e in g.edges if e.element.spice_name == "c.x1.c5"]
    assert {edge.a, edge.b} == {"x1.mid", "0"} and edge.conduction == "open"
    el = edge.element
    assert el.path == "X1.C5" and el.kind == "c"
    assert el.value == pytest.approx(2e-6) and el.loc.line > 0
    assert g.nets == circuit.nets() and g.degree["x1.mid"] >= 2
    # a 4-terminal VCVS: output pair and sense pair
    e = [x for x in g.edges if x.element.spice_name in ("e.x1.c.x2.e1", "e.x1.e.x2.e1")]
    assert {x.conduction for x in e} == {"source", "sense"}
    # components by conduction class: every net reaches ground through DC paths in this corpus file
    dc = g.components(frozenset({"linear", "source", "junction"}))
    assert {dc.find(n) for n in g.nets} == {dc.find("0")}


def test_corpus_lints_clean_of_errors():
    for name in ("all_elements.cir", "hierarchy.cir", "includes.cir", "sources.cir"):
        errors = [f for f in lint(load_circuit(NETLISTS / name)) if f.severity == "error"]
        assert errors == [], (name, errors)
