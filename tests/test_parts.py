"""Parts files, libraries and BOM import: validation and assignment to capacitors."""

from __future__ import annotations

from pathlib import Path

import pytest

from derate.errors import DataError
from derate.netlist import load_circuit
from derate.bom import load_bom
from derate.parts import PartTable, expand_reference, load_parts, simulation_parasitics

EXAMPLE = Path(__file__).parents[1] / "examples" / "irrigation-controller"
NET = "t\nV1 a 0 5\nR1 a b 1\nC1 b 0 1u\nC2 b 0 1u\nC4 b 0 1u\nC5 b 0 1u\nC6 b 0 1u\nC7 b 0 1u\nX1 b sub\n" \
      ".subckt sub p\nC5 p 0 1n\n.ends\n.end\n"


def test_expand_reference():
    assert expand_reference("C1,C4-C7") == (["c1", "c4", "c5", "c6", "c7"], [])
    assert expand_reference("X*.C5, C9") == (["c9"], ["x*.c5"])


def test_example_parts_assign():
    circuit = load_circuit(EXAMPLE / "board.cir")
    parts = load_parts(EXAMPLE / "parts.yaml").assign(circuit)
    assert parts["C3"].rated_voltage_v == 35 and parts["C3"].part_number == "AE-470U-35V-105"
    assert parts["C7"].part_number == parts["C8"].part_number == "AP-220U-10V-105"
    assert parts["C16"] is None
    assert parts["C2"].ripple_frequency_multipliers[0] == (50.0, 0.8)
    assert parts["C2"].source.endswith("parts.yaml:7")
    para = simulation_parasitics(parts)
    assert para["C2"].esr_ohm == pytest.approx(0.065) and para["C2"].esl_h == pytest.approx(15e-9)


def test_exact_beats_glob_and_overrides(write):
    circuit = load_circuit(write("b.cir", NET))
    write("lib.yaml", "parts:\n  P1: {technology: ceramic-class2, rated_voltage_v: 16, esr_ohm: 0.01}\n")
    p = write("parts.yaml", "library: lib.yaml\nparts:\n  'C*': {part: P1}\n  C1: {part: P1, rated_voltage_v: 25}\n"
                            "  X1.C5: {technology: ceramic-class1, rated_voltage_v: 50}\n")
    parts = load_parts(p).assign(circuit)
    assert parts["C1"].rated_voltage_v == 25 and parts["C2"].rated_voltage_v == 16
    assert parts["X1.C5"].technology == "ceramic-class1"


@pytest.mark.parametrize("text,where,message", [
    ("parts:\n  C1: {rated_voltage_v: sixteen}\n", "parts.yaml:2: parts.C1.rated_voltage_v", "expected a positive number"),
    ("parts:\n  C1: {rated_votage_v: 16}\n", "parts.yaml:2: parts.C1.rated_votage_v", "unknown key(s) 'rated_votage_v'"),
    ("parts:\n  C1: {technology: ceramic}\n", "parts.C1.technology", "expected one of"),
    ("parts:\n  C1: {rated_voltage_v: 16}\n  'C1,C2': {rated_voltage_v: 25}\n", "parts.yaml:3", "assigned twice"),
    ("parts:\n  C1: {part: NOPE}\n", "parts.yaml:2: parts.C1.part", "not in the library"),
    ("parts:\n  C9: {rated_voltage_v: 16}\n", "parts.yaml:2", "no capacitor named C9"),
    ("parts:\n  C1: {dc_bias: [[0, 0.5], [10, 0.9]]}\n", "parts.C1.dc_bias", "must not rise"),
    ("parts:\n  C1: {rated_voltage_v: -5}\n", "rated_voltage_v", "positive"),
])
def test_errors_name_file_line_key(write, text, where, message):
    circuit = load_circuit(write("b.cir", NET))
    p = write("parts.yaml", text)
    with pytest.raises(DataError) as info:
        load_parts(p).assign(circuit)
    assert where in str(info.value) and message in str(info.value)


def test_bom_import(write):
    circuit = load_circuit(write("b.cir", NET))
    write("lib.yaml", "parts:\n  GRM-1U-16V: {technology: ceramic-class2, rated_voltage_v: 16, capacitance_f: 1u}\n")
    bom = write("bom.csv", "Designator,MPN,Volts,Type\n\"C1,C4-C7\",GRM-1U-16V,,\nC2,,25V,ceramic-class1\n")
    table = PartTable()
    load_bom(bom, table, {"reference": "Designator", "part": "MPN", "rated_voltage_v": "Volts",
                          "technology": "Type"}, [bom.parent / "lib.yaml"])
    parts = table.assign(circuit)
    assert parts["C5"].rated_voltage_v == 16 and parts["C1"].source.endswith("bom.csv:2")
    assert parts["C2"].rated_voltage_v == 25 and parts["C2"].technology == "ceramic-class1"
    assert parts["X1.C5"] is None
    with pytest.raises(DataError, match="column 'Voltage'"):
        load_bom(bom, PartTable(), {"reference": "Designator", "rated_voltage_v": "Voltage"})
    bad = write("bad.csv", "Designator,Volts\nC1,lots\n")
    with pytest.raises(DataError) as info:
        load_bom(bad, PartTable(), {"reference": "Designator", "rated_voltage_v": "Volts"})
    assert "bad.csv:2" in str(info.value) and "expected a number" in str(info.value)
