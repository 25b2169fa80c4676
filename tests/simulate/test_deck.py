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


def test_a_one_argument_tran_resolves_the_fastest_source(tmp_path):
    """'.tran 5' on a 50 Hz rectifier: a step of stop/1000 (5 ms, 4 points a cycle) read 19.3 V from a 17 V
    source; the step must resolve the sine (a hundredth of its period: 0.2 ms), and the note says so."""
    from derate.netlist import flatten, read_netlist
    from derate.simulate.deck import netlist_tran, tran_note

    path = tmp_path / "r.cir"
    path.write_text("rectifier\nV1 a 0 SIN(0 17 50)\nD1 a b dd\n.model dd D\nC1 b 0 1m\nR1 b 0 100\n"
                    "VP p 0 PULSE(0 1 0 1u 1u 5m 40m)\nRP p 0 1k\n.tran 5\n.end\n")
    netlist = read_netlist(path)
    circuit = flatten(netlist)
    tran = netlist_tran(netlist, circuit)
    assert tran.stop_s == 5.0 and tran.step_s == pytest.approx(1 / 50 / 100) and tran.max_step_s == tran.step_s
    note = tran_note(netlist, circuit)
    assert "one-argument .tran" in note and "V1's 50 Hz sine" in note
    # a pulse whose width is the shortest time scale sets it
    path.write_text("p\nVP p 0 PULSE(0 1 0 1u 1u 20u 10m)\nRP p 0 1k\nC1 p 0 1n\n.tran 1\n.end\n")
    netlist = read_netlist(path)
    assert netlist_tran(netlist, flatten(netlist)).step_s == pytest.approx(2e-6)
    # no source with a time scale: a thousandth of the stop time, said so
    path.write_text("dc\nV1 a 0 5\nR1 a b 1k\nC1 b 0 1u\n.tran 1m\n.end\n")
    netlist = read_netlist(path)
    assert netlist_tran(netlist, flatten(netlist)).step_s == pytest.approx(1e-6)
    assert "stop/1000" in tran_note(netlist, flatten(netlist))


def test_of_two_tran_cards_the_first_is_measured_unless_a_control_block_runs_its_own(tmp_path):
    from derate.netlist import read_netlist
    from derate.simulate.deck import netlist_tran, tran_note

    path = tmp_path / "two.cir"
    path.write_text("two\nV1 a 0 SIN(0 1 1k)\nR1 a b 1k\nC1 b 0 1u\n.tran 1u 10m\n.tran 2u 40m\n.end\n")
    netlist = read_netlist(path)
    assert netlist_tran(netlist).stop_s == pytest.approx(10e-3)
    assert "leaves the first one's results current" in tran_note(netlist)
    path.write_text("two\nV1 a 0 SIN(0 1 1k)\nR1 a b 1k\nC1 b 0 1u\n.tran 1u 10m\n.control\ntran 2u 30m\nplot v(b)\n"
                    ".endc\n.end\n")
    netlist = read_netlist(path)
    assert netlist_tran(netlist).stop_s == pytest.approx(30e-3)
    assert "the control block runs it" in tran_note(netlist)
