"""SPICE number reading, checked against the ngspice manual and against ngspice 39 itself.

Reference: ngspice manual, section 2.1.1 "Some naming conventions", Table 2.2 (scale factors T G
Meg K mil m u n p f; letters after a number or a scale factor are ignored; M is milli).  The
expected values in READ_BY_NGSPICE were measured with ngspice 39 (`show c : capacitance`), and
test_values_match_ngspice re-measures them on every run.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, strategies as st

from derate.units import NumberError, format_number, parse_number

# text -> value as ngspice 39 reads it (measured; see module docstring)
READ_BY_NGSPICE = {
    "10uF": 1e-5, "1M": 1e-3, "1MEG": 1e6, "1mil": 2.54e-5, "1F": 1e-15, "1.0e-6F": 1e-21,
    "4k7": 4000.0, "2.2\u00b5F": 2.2e-6, "2.2\u03bcF": 2.2, "1a": 1.0, "1x": 1.0, "1e3k": 1e6,
    ".5e-3u": 5e-10, "1T": 1e12, "3G": 3e9, "2MILLI": 5.08e-5, "1e": 1.0, "1.5.3": 1.5,
    "+3.3n": 3.3e-9, "1Meg2": 1e6, "1E+2P": 1e-10, "5Mega": 5e6, "7mi": 7e-3, "10Ohm": 10.0,
    "4.7p": 4.7e-12, "100n": 1e-7, "2.2K": 2200.0,
}


@pytest.mark.parametrize("text,value", sorted(READ_BY_NGSPICE.items()))
def test_reads_like_ngspice(text, value):
    assert parse_number(text).value == pytest.approx(value, rel=1e-12)


def test_manual_table_2_2_scale_factors():
    # ngspice manual Table 2.2
    table = {"T": 1e12, "G": 1e9, "Meg": 1e6, "K": 1e3, "mil": 25.4e-6, "m": 1e-3, "u": 1e-6,
             "n": 1e-9, "p": 1e-12, "f": 1e-15}
    for suffix, factor in table.items():
        for variant in (suffix, suffix.lower(), suffix.upper()):
            assert parse_number("3" + variant).value == pytest.approx(3 * factor)


def test_manual_same_number_examples():
    # ngspice manual 2.1.1: "1000, 1000.0, 1000Hz, 1e3, 1.0e3, 1kHz, and 1k all represent the same number"
    for text in ("1000", "1000.0", "1000Hz", "1e3", "1.0e3", "1kHz", "1k"):
        assert parse_number(text).value == 1000.0
    # "10, 10V, 10Volts, and 10Hz all represent the same number"
    assert {parse_number(t).value for t in ("10", "10V", "10Volts", "10Hz")} == {10.0}
    # "M, MA, MSec, and MMhos all represent the same scale factor"
    assert {parse_number("1" + t).value for t in ("M", "MA", "MSec", "MMhos")} == {1e-3}


def test_pitfalls_are_reported():
    assert [c for c, _ in parse_number("4k7").pitfalls] == ["digits-after-scale"]
    assert [c for c, _ in parse_number("1F").pitfalls] == ["femto-suffix"]
    assert [c for c, _ in parse_number("1.0e-6F").pitfalls] == ["femto-suffix"]
    assert [c for c, _ in parse_number("2.2\u03bcF").pitfalls] == ["greek-mu"]
    for clean in ("4.7k", "10uF", "1fF", "2.2\u00b5F", "1MEG"):
        assert parse_number(clean).pitfalls == ()


def test_not_a_number():
    with pytest.raises(NumberError):
        parse_number("abc")


@given(st.floats(min_value=-1e15, max_value=1e15, allow_nan=False, allow_infinity=False))
def test_plain_floats_round_trip(x):
    assert parse_number(repr(x)).value == pytest.approx(x, rel=1e-15, abs=0)


@given(st.text(max_size=12))
def test_fuzz_never_crashes(text):
    try:
        res = parse_number(text)
    except NumberError:
        return
    assert math.isfinite(res.value) or "e" in text.lower()


def test_format_number():
    assert format_number(4.7e-6, "F") == "4.7 \u00b5F"
    assert format_number(16, "V") == "16 V"
    assert format_number(1.234, "A") == "1.23 A"
    assert format_number(0.0346, "A") == "34.6 mA"
    assert format_number(0, "V") == "0 V"
    assert format_number(32000, "h") == "32 kh"


@pytest.mark.ngspice
def test_values_match_ngspice(ngspice_pool):
    """Re-measure READ_BY_NGSPICE with the installed ngspice (reference: ngspice `show c`)."""
    names = {}
    lines = ["values", "V1 a 0 1", "R1 a 0 1k"]
    for i, text in enumerate(sorted(READ_BY_NGSPICE), start=1):
        names[f"c{i}"] = text
        lines.append(f"C{i} a 0 {text}")
    deck = "\n".join(lines + [".end"]) + "\n"
    res = ngspice_pool.run([("v", {"type": "inspect", "deck": deck, "commands": ["show c : capacitance"]}, 30)])[0]
    assert res.ok, res.error
    from tests.netlist.ngspice_text import parse_show
    measured = parse_show(res.data["outputs"]["show c : capacitance"], "capacitance")
    assert set(measured) == set(names)
    for dev, text in names.items():
        assert measured[dev] == pytest.approx(parse_number(text).value, rel=1e-5), text
