"""The reader: cards, continuations, comments, includes, subcircuits, models, errors with file:line."""

from __future__ import annotations

import pytest

from derate.errors import NetlistError
from derate.netlist import load_circuit, read_netlist
from derate.netlist.lexer import split_tokens, strip_inline_comment
from tests.conftest import NETLISTS


def test_title_comments_continuations():
    nl = read_netlist(NETLISTS / "all_elements.cir")
    assert nl.title.startswith("Every element letter")
    c2 = next(c for c in nl.top.elements if c.keyword == "c2")
    assert c2.tokens == ("C2", "n1", "n2", "4.7u", "IC=0", "m=2")
    assert c2.loc.line == 12  # a continued card keeps the line where it starts
    v1 = next(c for c in nl.top.elements if c.keyword == "v1")
    assert "comment" not in v1.text


@pytest.mark.parametrize("line,kept", [
    ("R1 a b 1k ; note", "R1 a b 1k "),
    ("R1 a b 1k $ note", "R1 a b 1k "),
    ("R1 a b 1k // note", "R1 a b 1k "),
    ("B1 a 0 V={v(x)$y}", "B1 a 0 V={v(x)$y}"),  # '$' inside an expression is not a comment
    ("R1 a b 1k$x", "R1 a b 1k$x"),
])
def test_inline_comments(line, kept):
    assert strip_inline_comment(line) == kept


def test_tokens_keep_groups_and_fold_equals():
    assert split_tokens("C1 a b C = {x * 2} IC= 0") == ["C1", "a", "b", "C={x * 2}", "IC=0"]
    assert split_tokens("V1 a 0 SIN(0 1 50)") == ["V1", "a", "0", "SIN(0 1 50)"]
    assert split_tokens("A1 [a b] c m") == ["A1", "[a b]", "c", "m"]


def test_includes_and_lib_sections():
    nl = read_netlist(NETLISTS / "includes.cir")
    assert any(f.endswith("parts.inc") for f in nl.files)
    assert any(f.endswith("params.inc") for f in nl.files)
    assert nl.top.models["dfast"].params["rs"] == "0.5"  # section 'typ', not 'slow'
    circuit = load_circuit(NETLISTS / "includes.cir")
    c1 = next(e for e in circuit.elements if e.spice_name == "c.xf.c1")
    assert c1.value == pytest.approx(33e-9)
    assert c1.loc.file.endswith("parts.inc") and c1.loc.line == 4


def test_sources_parsed():
    circuit = load_circuit(NETLISTS / "sources.cir")
    src = {e.path: e.source for e in circuit.elements if e.source}
    assert src["V1"].dc == "12"
    assert (src["V2"].dc, src["V2"].ac_mag, src["V2"].ac_phase) == ("5", "1", "90")
    assert src["V3"].function == "pulse" and src["V3"].args == ("0", "5", "1u", "10n", "10n", "5u", "10u")
    assert src["V4"].function == "sin" and src["V4"].args[1] == "{24*sqrt(2)}"
    assert src["V5"].function == "pwl" and len(src["V5"].args) == 6
    assert src["V6"].function == "exp"
    assert (src["I1"].dc, src["I1"].ac_mag, src["I1"].function) == ("1m", "1", "sin")


def test_hierarchy_names_nets_and_values():
    circuit = load_circuit(NETLISTS / "hierarchy.cir")
    by = {e.path: e for e in circuit.elements}
    assert by["X1.C5"].spice_name == "c.x1.c5" and by["X1.C5"].value == pytest.approx(2e-6)
    assert by["X2.C5"].value == pytest.approx(1e-6)  # subcircuit default
    assert by["X1.R1"].value == pytest.approx(10e3)  # instance parameter from a global
    # 'inner' is defined inside 'stage': ngspice expands it there first (see flatten.py)
    assert by["X1.X2.C1"].spice_name == "c.x1.c.x2.c1"
    # 'tail' is defined at the top level: one instance path
    assert by["X1.X3.C7"].spice_name == "c.x1.x3.c7"
    assert by["X1.X3.C7"].nodes == ("x1.x3.nt", "0")
    assert by["X1.X2.C1"].nodes == ("x1.mid", "o1")
    assert by["X1.RPU"].nodes == ("vdd", "x1.mid")  # .global net stays global
    assert by["X1.X2.R9"].value == pytest.approx(2e3)  # .func half(4) = 2 -> 1k*gain
    assert by["VDD"].nodes == ("vdd", "0")  # gnd is ground
    assert by["C9"].value == pytest.approx(2e-9)


def test_param_overrides():
    circuit = load_circuit(NETLISTS / "hierarchy.cir", param_overrides={"rtop": 4.7e3})
    assert next(e for e in circuit.elements if e.path == "X1.R1").value == pytest.approx(4.7e3)
    with pytest.raises(NetlistError, match="unknown parameter"):
        load_circuit(NETLISTS / "hierarchy.cir", param_overrides={"nosuch": 1})


@pytest.mark.parametrize("text,message,line", [
    ("t\nR1 a\n.end\n", "expected two nodes", 2),
    ("t\n.subckt s a b\nR1 a b 1\n", "has no .ends", 2),
    ("t\n.ends\n", ".ends without .subckt", 2),
    ("t\n+ R1 a b 1\n", "continuation line", 2),
    ("t\nR1 a b {x+}\n", "cannot evaluate", 2),
    ("t\nR1 a b {nosuch*2}\n", "unknown parameter 'nosuch'", 2),
    ("t\n.param a={b} b={a}\nR1 x 0 {a}\n", "defined in terms of itself", 2),
    ("t\nZ1 a b c m\n", "unknown element type 'Z'", 2),
    ("t\n.frobnicate x 1 2 1\n", "unsupported dot card", 2),
    ("t\n.include missing.inc\n", "not found", 2),
    ("t\nR1 a b {(1}\n", "cannot split card", 2),
    ("t\n.lib inc.lib\nR1 a 0 1\n", "included file 'inc.lib' not found", 2),  # one word, no .endl: a file
    ("t\n.aliases\nC_C1 C1(1=0 2=out )\nR1 a 0 1\n", "has no .endaliases", 2),
])
def test_errors_name_file_and_line(write, text, message, line):
    path = write("bad.cir", text)
    with pytest.raises(NetlistError) as info:
        load_circuit(path)
    err = info.value
    assert message in str(err)
    assert err.line == line and err.file.endswith("bad.cir")
    assert str(err).startswith(f"{err.file}:{line}: ")


def test_include_cycle_detected(write):
    write("a.inc", ".include b.inc\n")
    write("b.inc", ".include a.inc\n")
    top = write("top.cir", "t\n.include a.inc\nR1 a 0 1\n.end\n")
    with pytest.raises(NetlistError, match="include cycle"):
        read_netlist(top)


def test_recursive_subckt_detected(write):
    top = write("top.cir", "t\n.subckt s a\nX1 a s\n.ends\nX1 n s\nR1 n 0 1\n.end\n")
    with pytest.raises(NetlistError, match="instantiates itself"):
        load_circuit(top)


def test_latin1_micro_sign(tmp_path):
    path = tmp_path / "latin.cir"
    path.write_bytes(b"t\nV1 a 0 1\nC1 a 0 2.2\xb5F\n.end\n")
    c = load_circuit(path)
    assert c.capacitors()[0].value == pytest.approx(2.2e-6)


def test_end_stops_reading(write):
    c = load_circuit(write("t.cir", "t\nV1 a 0 1\nR1 a 0 1\n.end\nR2 a 0 junk junk\n"))
    assert [e.path for e in c.elements] == ["V1", "R1"]


def test_one_word_lib_includes_a_whole_file_and_sections_still_work(write):
    """`.lib file` with no .endl after it includes the file (another simulator's form); inside a
    library file `.lib name` ... `.endl` is still a section."""
    write("parts.lib", ".model DX D(Is=1n)\n.lib fast\n.model DF D(Is=9n)\n.endl fast\n")
    path = write("top.cir", "t\n.lib parts.lib\n.lib parts.lib fast\nD1 a 0 DX\nD2 a 0 DF\nV1 a 0 1\n.end\n")
    from derate.netlist import read_netlist
    nl = read_netlist(path)
    models = sorted(c.tokens[1].lower() for c in nl.cards if c.keyword == ".model")
    assert models == ["df", "dx"]  # the whole file gives DX (not the section), the section gives DF


def test_temperature_coefficient_pairs_stay_one_token_and_reach_the_deck_as_tc1_tc2():
    """`TC=0,0` (another simulator's pair): ngspice 39 refuses the comma form (checked with
    `ngspice -b`: "unknown parameter (0)"), so the deck writes tc1= and tc2=."""
    from derate.netlist.lexer import split_tokens
    from derate.simulate.deck import without_database_attributes

    assert split_tokens("C_C1 0 VOUT 220u TC=0,0 IC=0") == ["C_C1", "0", "VOUT", "220u", "TC=0,0", "IC=0"]
    assert split_tokens("R1 a b 47 tc=1m, 20u") == ["R1", "a", "b", "47", "tc=1m,20u"]
    assert without_database_attributes(["R1", "a", "b", "47", "tc=1m,20u"], "r") == [
        "R1", "a", "b", "47", "tc1=1m", "tc2=20u"]
    assert without_database_attributes(["C1", "a", "0", "1u", "V=25", "Irms=0", "tc=1m", "m=2"], "c") == [
        "C1", "a", "0", "1u", "tc=1m", "m=2"]


def test_lines_split_at_newlines_only_as_ngspice_reads_them(tmp_path):
    """ngspice reads a deck line by line at '\\n' (a CR before it dropped); Python's splitlines() also
    splits at U+2028, form feed and others, which turned part of a title into a card of its own."""
    path = tmp_path / "board.cir"
    path.write_bytes("greenhouse hub\u2028.include /etc/passwd\u2029 end\r\nC1 a 0 1u\r\nR1 a 0 1k\n.end\n".encode())
    nl = read_netlist(path)
    assert nl.title == "greenhouse hub\u2028.include /etc/passwd\u2029 end"
    assert [c.tokens[0] for c in nl.cards] == ["C1", "R1"]
    (tmp_path / "mac.cir").write_bytes(b"old deck\rC1 a 0 1u\r.end\r")
    with pytest.raises(NetlistError, match="carriage return alone"):
        read_netlist(tmp_path / "mac.cir")
