"""BOM exports as tools write them, read with no column map (bom.py, notation.py)."""

from __future__ import annotations

import pytest

from derate.bom import detect_columns, load_bom, read_rows
from derate.errors import DataError
from derate.netlist import load_circuit
from derate.notation import read_value
from derate.parts import PartTable
from tests.conftest import DATA

BOMS = DATA / "bom"
NET = "b\nV1 a 0 5\n" + "".join(f"C{k} a 0 1u\n" for k in (1, 2, 3, 4, 5, 6)) + "R1 a 0 1k\n.end\n"


# IEC 60062 letter-as-decimal-point codes (4u7, 6V3; from memory) and the usual BOM spellings
@pytest.mark.parametrize("text,expect", [
    ("10u/25V/X7R", dict(capacitance_f=10e-6, rated_voltage_v=25.0, dielectric="X7R", technology="ceramic-class2")),
    ("4u7", dict(capacitance_f=4.7e-6)),
    ("6V3", dict(rated_voltage_v=6.3)),
    ("100n 50V C0G 0603", dict(capacitance_f=100e-9, rated_voltage_v=50.0, dielectric="C0G",
                               technology="ceramic-class1", case_size="0603")),
    ("470uF 35V 105C", dict(capacitance_f=470e-6, rated_voltage_v=35.0, rated_temperature_c=105.0)),
    ("0.1 µF 16 V", dict(capacitance_f=0.1e-6, rated_voltage_v=16.0)),
    ("2n2 1kV", dict(capacitance_f=2.2e-9, rated_voltage_v=1000.0)),
    ("CAP CER 4.7UF 6.3V X5R 0805", dict(capacitance_f=4.7e-6, rated_voltage_v=6.3, dielectric="X5R",
                                         technology="ceramic-class2", case_size="0805")),
    ("22u 6.3V tantalum ±10%", dict(capacitance_f=22e-6, rated_voltage_v=6.3, technology="tantalum-mno2",
                                    tolerance_pct=10.0)),
])
def test_trade_notation(text, expect):
    got = read_value(text).fields()
    for key, value in expect.items():
        assert got[key] == (pytest.approx(value) if isinstance(value, float) else value), (text, key, got)


def test_header_synonyms():
    cols = detect_columns(["Ref Des", "Comment", "Rated Voltage (V)", "Temperature Characteristic", "Case/Package",
                           "Mfr. Part #", "Do Not Populate"])
    assert cols["reference"] == "Ref Des" and cols["value"] == "Comment" and cols["dnp"] == "Do Not Populate"
    assert cols["dielectric"] == "Temperature Characteristic" and cols["case_size"] == "Case/Package"


@pytest.mark.parametrize("name", ["kicad_grouped.csv", "tab_separated_crlf.txt"])
def test_exports_without_a_column_map(write, name):
    circuit = load_circuit(write("b.cir", NET))
    table = PartTable()
    notes = load_bom(BOMS / name, table)
    parts = table.assign(circuit)
    c1, c2, c5 = parts["C1"], parts["C2"], parts["C5"]
    assert (c1.capacitance_f, c1.rated_voltage_v, c1.technology, c1.case_size) == (10e-6, 25.0, "ceramic-class2", "1206")
    assert parts["C3"] == parts["C4"] and parts["C3"].rated_voltage_v == 25.0  # grouped references
    assert (c2.rated_voltage_v, c2.technology) == (50.0, "ceramic-class1")
    assert (c5.capacitance_f, c5.rated_voltage_v, c5.dielectric) == (pytest.approx(4.7e-6), 6.3, "X5R")
    if name == "kicad_grouped.csv":
        assert "c6" in table.dnp and parts["C6"] is None  # do not populate: not reviewed (pipeline.not_reviewed)
        assert any("C12" in n for n in table.notes)  # in the BOM, not in the netlist: a note, not an error
    else:
        assert c1.part_number == "IC-1206X7R106K25" and c1.manufacturer == "Invented Ceramics"
    assert not notes


def test_latin1_semicolon_export_with_a_column_map(write):
    circuit = load_circuit(write("b.cir", NET))
    table = PartTable()
    load_bom(BOMS / "latin1_semicolon_german.csv", table,
             {"reference": "Bezeichner", "capacitance_f": "Wert", "rated_voltage_v": "Spannung",
              "dielectric": "Dielektrikum", "case_size": "Gehäuse"})
    parts = table.assign(circuit)
    assert parts["C1"].capacitance_f == pytest.approx(10e-6) and parts["C1"].rated_voltage_v == 25.0
    assert parts["C5"].capacitance_f == pytest.approx(4.7e-6) and parts["C5"].rated_voltage_v == 6.3


def test_electrolytics_tantalum_polymer_and_fitted_column(write):
    circuit = load_circuit(write("b.cir", NET))
    table = PartTable()
    load_bom(BOMS / "electrolytics.csv", table)
    parts = table.assign(circuit)
    assert (parts["C1"].technology, parts["C1"].rated_temperature_c, parts["C1"].tolerance_pct) == \
        ("aluminum-electrolytic", 105.0, 20.0)
    assert parts["C3"].technology == "tantalum-mno2" and parts["C3"].rated_voltage_v == 10.0
    assert "c4" in table.dnp  # Fitted: no


def test_bom_errors_name_row_and_field(write):
    bad = write("bad.csv", "Reference,Value,Voltage\nC1,10u,-16V\n")
    with pytest.raises(DataError) as info:
        load_bom(bad, PartTable())
    assert "bad.csv:2" in str(info.value) and "rated_voltage_v" in str(info.value)
    noref = write("noref.csv", "Part,Value\nC1,10u\n")
    with pytest.raises(DataError, match="no reference column"):
        read_rows(noref)


def test_an_unreadable_type_is_a_note_not_a_stop(write):
    """A Type cell derate cannot place ('ceramic' says neither class 1 nor class 2) is noted and the
    rest of the row is used; before, the raw text reached the technology field and the whole BOM
    was refused."""
    circuit = load_circuit(write("b.cir", NET))
    bom = write("types.csv", "Reference,Value,Voltage,Type\nC1,10u,16V,ceramic\nC2,100n,50V,X7R\n")
    table = PartTable()
    notes = load_bom(bom, table)
    parts = table.assign(circuit)
    assert parts["C1"].technology is None and parts["C1"].rated_voltage_v == 16.0
    assert parts["C2"].technology == "ceramic-class2"
    assert any("'ceramic'" in n for n in notes)


def test_parts_file_refines_bom_data(write):
    circuit = load_circuit(write("b.cir", NET))
    from derate.parts import load_parts
    table = PartTable()
    load_parts(write("parts.yaml", "parts:\n  C1: {ripple_current_a: 2.5, technology: aluminium-electrolytic}\n"), table)
    load_bom(BOMS / "electrolytics.csv", table)
    c1 = table.assign(circuit)["C1"]
    assert (c1.ripple_current_a, c1.rated_voltage_v, c1.technology) == (2.5, 35.0, "aluminum-electrolytic")
    assert "parts.yaml" in c1.source and "electrolytics.csv" in c1.source
