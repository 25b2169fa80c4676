"""Fuzzing the reader: any text either reads or raises a NetlistError - never another exception."""

from __future__ import annotations

import string

from hypothesis import HealthCheck, given, settings, strategies as st

from derate.errors import NetlistError
from derate.netlist import lint, load_circuit

_WORDS = ["R1", "C1", "L1", "V1", "X1", "E1", "Q1", "M1", "D1", "K1", "B1", "a", "b", "0", "gnd", "1k",
          "{x}", "'a*2'", "SIN(0 1 5)", ".subckt", ".ends", ".param", "x=1", ".model", "dm", "D", "+",
          "*", ";", "$", "4k7", "params:", "=", "(", ")", "{", "}", ".end", "poly(2)", "value={v(a)}"]

line = st.lists(st.sampled_from(_WORDS), min_size=1, max_size=7).map(" ".join)
netlist_text = st.lists(st.one_of(line, st.text(alphabet=string.printable, max_size=30)),
                        max_size=12).map(lambda ls: "fuzz\n" + "\n".join(ls) + "\n")


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(netlist_text)
def test_reader_only_raises_netlist_errors(tmp_path, text):
    path = tmp_path / "fuzz.cir"
    path.write_text(text)
    try:
        circuit = load_circuit(path)
    except NetlistError as exc:
        assert str(exc)  # a message for the user
        return
    lint(circuit)
