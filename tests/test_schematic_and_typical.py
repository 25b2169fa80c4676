"""KiCad schematic fields as part data, the typical-parts library against its stated sources, and
what each policy requires."""

from __future__ import annotations

import re

import pytest

import derate
from derate.errors import DataError
from derate.netlist import load_circuit
from derate.parts import Part, PartTable
from derate.policy import load_policy
from derate.schematic import load_schematic
from derate.trust import Confinement
from derate.typical import fill, library, without_typical
from tests.conftest import DATA

SCH = DATA / "kicad" / "greenhouse_power.kicad_sch"
NET = "b\nV1 a 0 5\nC1 a 0 10u\nC2 a 0 100n\nC3 a 0 470u\nC4 a 0 1n\n.end\n"


def test_schematic_fields_become_part_data(write):
    circuit = load_circuit(write("b.cir", NET))
    table = PartTable()
    load_schematic(SCH, table, Confinement(SCH.parent.resolve()))
    parts = table.assign(circuit)
    c1, c2, c3 = parts["C1"], parts["C2"], parts["C3"]
    assert (c1.capacitance_f, c1.rated_voltage_v, c1.dielectric, c1.case_size, c1.part_number) == \
        (10e-6, 25.0, "X7R", "1206", "GH-C1206-106K25")
    assert (c2.technology, c2.rated_voltage_v, c2.case_size) == ("ceramic-class1", 50.0, "0603")
    assert (c3.technology, c3.rated_voltage_v, c3.rated_temperature_c) == ("aluminum-electrolytic", 35.0, 105.0)
    assert "c4" in table.dnp and parts["C4"] is None
    assert "greenhouse_power.kicad_sch" in c1.source


@pytest.mark.parametrize("text", ["(kicad_sch (version 2023", "not a schematic", "(kicad_sch " + "(" * 5000,
                                  "(kicad_sch (symbol (lib_id 42) (property)))"])
def test_broken_schematics_are_input_errors(write, text):
    path = write("bad.kicad_sch", text)
    with pytest.raises(DataError) as info:
        load_schematic(path, PartTable(), Confinement(path.parent.resolve()))
    assert "bad.kicad_sch" in str(info.value)


# the EIA class-2 code: the digit is the upper category temperature (5: +85, 6: +105, 7: +125,
# 8: +150 degC); Y5x/Z5x: +85; class 1 C0G/NP0 to +125 degC (typical.yaml names this source)
_EIA_DIGIT = {"5": 85, "6": 105, "7": 125, "8": 150}


def test_typical_values_against_their_stated_sources():
    lib = library()
    for name, table in lib.items():
        assert re.search(r"from memory|common practice|EIA", table["source"]), name
    for code, temp in lib["rated_temperature_by_dielectric"]["value"].items():
        expected = 125 if code in ("C0G", "NP0", "U2J") else _EIA_DIGIT[code[1]]
        assert temp == expected, code
    for case, curve in lib["dc_bias_by_case"]["value"].items():
        fractions = [c for _, c in curve]
        assert curve[0] == [0, 1.0] and fractions == sorted(fractions, reverse=True), case
    at_rated = [lib["dc_bias_by_case"]["value"][c][-1][1] for c in ("0402", "0603", "0805", "1206", "1210")]
    assert at_rated == sorted(at_rated)  # larger cases keep more capacitance (the source's stated trend)
    rth = [lib["mlcc_thermal_resistance_c_per_w"]["value"][c] for c in ("0402", "0603", "0805", "1206", "1210")]
    assert rth == sorted(rth, reverse=True)
    # REFERENCE-FACTS: dT0 about 5 degC at rated ripple (makers' notes); 2000 h at 105 degC is common
    assert lib["electrolytic"]["value"] == {"rated_temperature_c": 105, "base_life_h": 2000, "ripple_rise_c": 5}


def test_typical_fills_only_what_is_missing_and_says_so():
    own = Part(technology="ceramic-class2", dielectric="X5R", case_size="0603", rated_voltage_v=16,
               capacitance_f=10e-6, rated_temperature_c=105)
    got = fill(own)
    assert got.rated_temperature_c == 105 and "rated_temperature_c" not in got.typical  # the record's own value
    assert got.dc_bias[-1] == (16, 0.33) and "dc_bias" in got.typical
    assert without_typical(got) == own


def test_policies_say_what_they_require_and_whether_typical_data_counts():
    commercial, spaceflight = load_policy("commercial"), load_policy("spaceflight")
    assert commercial.accepts_typical and not spaceflight.accepts_typical
    assert commercial.required("ceramic-class2", "dc-bias") and not commercial.required("ceramic-class2", "hotspot")
    assert commercial.required("ceramic-class2", "hotspot", ripple_a=1.5)  # above 1 A rms of ripple
    assert spaceflight.required("ceramic-class1", "self-heating")


def test_same_board_commercial_judges_on_typical_data_spaceflight_does_not(tmp_path):
    folder = tmp_path / "board"
    folder.mkdir()
    (folder / "b.cir").write_text("b\nV1 a 0 SIN(5 0.5 10k)\nR1 a b 1\nC1 b 0 10u\nR2 b 0 100\n.tran 1u 1m\n.end\n")
    (folder / "bom.csv").write_text("Reference,Value,Footprint\nC1,10u 16V X7R,C_0805_2012Metric\n")
    project = derate.load_project(folder / "b.cir")
    commercial = derate.review(project, derate.ReviewOptions(policy="commercial", bom=(folder / "bom.csv",)))
    (row,) = commercial.record["capacitors"]
    assert row["status"] in ("pass", "near") and "dc_bias" in row["typical"]
    flight = derate.review(project, derate.ReviewOptions(policy="spaceflight", bom=(folder / "bom.csv",)))
    (row,) = flight.record["capacitors"]
    assert row["status"] == "unrated" and row["typical"] == []
    (finding,) = [f for f in flight.findings if f.rule == "data.unrated"]
    assert "dc-bias needs dc_bias" in finding.message
    # measured even when it cannot be judged; by hand: DC 5 x 100/101 = 4.950 V plus AC 0.5 x |Zc / (1 + Zc)| with
    # Zc = 1 / (2 pi 10 kHz 10 uF) = 1.59 ohm -> 0.423 V (R2 = 100 ohm barely loads it): 5.373 V
    assert row["measured"]["v_peak_v"] == pytest.approx(5.373, rel=0.005)


def test_sub_sheets_are_followed_and_a_reused_sheet_gives_every_use_its_capacitors(tmp_path):
    """A root sheet with one capacitor and a probe-channel sheet used twice (two capacitors each, referenced
    C10/C11 in one use and C20/C21 in the other, as KiCad 7 keeps them): five capacitors in all."""
    import shutil

    from derate.parts import PartTable
    from derate.schematic import load_schematic
    from derate.trust import Confinement

    folder = tmp_path / "hub"
    shutil.copytree(DATA / "kicad" / "hub", folder)
    table = PartTable()
    load_schematic(folder / "hub.kicad_sch", table, Confinement(folder))
    assert sorted(table.soft) == ["c1", "c10", "c11", "c20", "c21"]
    assert table.soft["c21"][0].dielectric == "X5R" and table.soft["c20"][0].rated_voltage_v == 50.0
    assert "probe_channel.kicad_sch:C20" in table.soft["c20"][1]


def test_a_sheet_outside_the_project_or_too_deep_is_refused(tmp_path):
    import shutil

    from derate.errors import DataError
    from derate.parts import PartTable
    from derate.schematic import MAX_SHEET_DEPTH, load_schematic
    from derate.trust import Confinement

    folder = tmp_path / "hub"
    shutil.copytree(DATA / "kicad" / "hub", folder)
    root = (folder / "hub.kicad_sch").read_text()
    (folder / "hub.kicad_sch").write_text(root.replace('"probe_channel.kicad_sch"', '"../outside.kicad_sch"'))
    with pytest.raises(DataError):
        load_schematic(folder / "hub.kicad_sch", PartTable(), Confinement(folder))
    # a chain of sheets deeper than the limit: refused with the file named, quickly (each file read once)
    sheet = root.split("(symbol", 1)[0]
    chain = folder / "chain"
    chain.mkdir()
    for k in range(MAX_SHEET_DEPTH + 3):
        body = sheet + (f'  (sheet (at 50.8 80) (size 25.4 12.7) (uuid 7d1e3c52-0000-4a7b-8c11-{k:012d})\n'
                        f'    (property "Sheetname" "s{k}" (at 50.8 79 0))\n'
                        f'    (property "Sheetfile" "s{k + 1}.kicad_sch" (at 50.8 93 0))\n  )\n)\n')
        (chain / f"s{k}.kicad_sch").write_text(body)
    with pytest.raises(DataError, match="more than 20 levels deep"):
        load_schematic(chain / "s0.kicad_sch", PartTable(), Confinement(chain))
