"""Deck building: what ngspice is given for each scenario (no simulator needed)."""

from __future__ import annotations

import pytest

from derate.errors import DataError
from derate.netlist import flatten, read_netlist
from derate.netlist.values import parse_source_value
from derate.project import Analysis, Parasitics, Scenario, Tran
from derate.simulate.deck import build_deck, parasitics_for

NET = """deck test
.param vin=12 cb=10u
VIN in 0 {vin}
VAC ac 0 SIN(0 1 50)
R1 in a 1
C1 a 0 {cb}
X1 a o stage
X2 a o2 stage
.subckt stage p q
.param local=1
R2 p q 1k
C5 q 0 1u
.ends
.tran 1u 10m uic
.print tran v(a)
.meas tran x MAX v(a)
.four 50 v(a)
.temp 85
.end
"""


@pytest.fixture
def parts(tmp_path):
    path = tmp_path / "n.cir"
    path.write_text(NET)
    nl = read_netlist(path)
    return nl, flatten(nl)


def test_analyses_and_outputs_replaced(parts):
    nl, c = parts
    deck = build_deck(nl, c, Analysis(), Scenario("s"))
    text = deck.text.lower()
    assert ".print" not in text and ".meas" not in text and ".four" not in text
    assert text.count(".tran") == 1 and ".tran 1e-06 0.01 0.0 uic" in text  # the netlist's own, with uic
    assert ".op\n" in text and text.strip().endswith(".end")
    assert ".temp 85" in text  # kept: the scenario sets no temperature
    # derate's own net names (netlist/names.py): a -> dn3, o -> dn4, o2 -> dn5 at the top level
    assert ".save v(dn3) @c1[i] v(dn4) @c.x1.c5[i] v(dn5) @c.x2.c5[i]" in text
    assert "x1 dn3 dn4 stage" in text and ".subckt stage dn1 dn2" in text and "c5 dn2 0 1u" in text
    assert [p.path for p in deck.probes] == ["C1", "X1.C5", "X2.C5"]
    assert deck.probes[0].v_minus is None and deck.probes[0].current == "@c1[i]"


def test_scenario_overrides(parts):
    nl, c = parts
    sc = Scenario("hot", params=(("vin", 13.2),), sources=(("VAC", parse_source_value("SIN(0 2 60)")),),
                  temperature_c=70)
    deck = build_deck(nl, c, Analysis(tran=Tran(1e-6, 5e-3)), sc)
    text = deck.text
    assert ".param vin=13.2 cb=10u" in text
    assert "VAC dn2 0 SIN(0.0 2.0 60.0)" in text  # rendered from the parsed value, never pasted
    assert ".temp 70.0" in text and ".temp 85" not in text
    assert ".param local=1" in text  # subcircuit parameters untouched
    assert ".tran 1e-06 0.005 0.0\n" in text  # the project's analysis replaces the netlist's


def test_unknown_source_is_an_error(parts):
    nl, c = parts
    with pytest.raises(DataError, match="VX"):
        build_deck(nl, c, Analysis(), Scenario("s", sources=(("VX", parse_source_value(1)),)))


def test_esr_and_esl_expansion(parts):
    nl, c = parts
    table = parasitics_for(c, {"C1": Parasitics(0.05, 20e-9), "X*.C5": Parasitics(0.1)})
    deck = build_deck(nl, c, Analysis(), Scenario("s"), table)
    lines = deck.text.splitlines()
    assert "C1 dn3 derate_c1_1 {cb}" in lines
    assert "Rderate_esr_c1 derate_c1_1 derate_c1_2 0.05" in lines
    assert "Lderate_esl_c1 derate_c1_2 0 2e-08" in lines
    assert "C5 dn2 derate_c5_1 1u" in lines and "Rderate_esr_c5 derate_c5_1 0 0.1" in lines
    models = {p.path: (p.model, p.esr_ohm, p.esl_h) for p in deck.probes}
    assert models == {"C1": ("C+ESR+ESL", 0.05, 2e-08), "X1.C5": ("C+ESR", 0.1, None), "X2.C5": ("C+ESR", 0.1, None)}


def test_different_esr_on_one_subcircuit_card_is_refused(parts):
    nl, c = parts
    with pytest.raises(DataError, match="different ESR"):
        build_deck(nl, c, Analysis(), Scenario("s"), {"X1.C5": Parasitics(0.1), "X2.C5": Parasitics(0.2)})


def test_esr_key_must_match(parts):
    nl, c = parts
    with pytest.raises(DataError, match="no capacitor matches 'C9'"):
        parasitics_for(c, {"C9": Parasitics(0.1)})


def test_no_transient_anywhere(tmp_path):
    path = tmp_path / "n.cir"
    path.write_text("t\nV1 a 0 1\nR1 a 0 1\nC1 a 0 1u\n.end\n")
    nl = read_netlist(path)
    with pytest.raises(DataError, match="no transient analysis"):
        build_deck(nl, flatten(nl), Analysis(), Scenario("s"))
