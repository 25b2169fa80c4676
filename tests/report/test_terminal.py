"""The terminal stress table at 80, 120 and 160 columns: every row shows its status, nothing is cut off.

The review is the real one of the irrigation example (real ngspice, shared with the other report
tests); the long-name cases use rows written like the ones a big hierarchical board produces.
"""

from __future__ import annotations

import io
import json
import re

import pytest
from rich.console import Console

from derate.cli import main
from derate.review import worst_first
from derate.report.terminal import stress_table

pytestmark = pytest.mark.ngspice

STATUS = r"(pass|near|fail|unrated)"


def _render(rows, width, wide=False) -> list[str]:
    out = io.StringIO()
    Console(file=out, width=width, color_system=None, force_terminal=False).print(stress_table(rows, width, wide))
    return out.getvalue().splitlines()


@pytest.fixture(scope="module")
def rows(irrigation):
    return worst_first(json.loads(irrigation.report("json"))["capacitors"])


@pytest.mark.parametrize("width", [80, 120, 160])
def test_every_row_fits_and_shows_its_status(rows, width):
    lines = _render(rows, width)
    assert all(len(ln) <= width for ln in lines), max(lines, key=len)
    head, rule, *body = lines
    assert head.split()[:3] == ["ref", "status", "why"] and set(rule) == {"─"}
    # the demo fits on one line per capacitor from 80 columns up, worst first
    assert [ln.split()[0] for ln in body] == [r["reference"] for r in rows]
    for ln, r in zip(body, rows):
        assert re.match(rf"^{re.escape(r['reference'])}\s+{r['status']}\s", ln), ln
    c3 = next(ln for ln in body if ln.startswith("C3 "))
    assert "voltage @ high-line-hot" in c3 and "34.9 V / 28 V" in c3 and "125 %" in c3 and "AE-470U-35V-105" in c3
    if width >= 120:  # roomy: technology, hot spot and life join
        assert "technology" in head and "hot spot" in head and "life" in head
    else:
        assert "technology" not in head


def test_worst_first_order(rows):
    order = [r["status"] for r in rows]
    assert order == sorted(order, key=["fail", "unrated", "near", "pass"].index)
    passing = [r["governing"]["ratio"] for r in rows if r["status"] == "pass"]
    assert passing == sorted(passing, reverse=True)


def test_wide_shows_every_column(rows):
    lines = _render(rows, 190, wide=True)  # `check --wide` lays the table out on 190 columns
    assert "V peak / rated" in lines[0] and "ripple eq / allowed" in lines[0]
    assert "34.9 V / 35 V" in next(ln for ln in lines if ln.startswith("C3 "))


def _long_row(ref, status, scenario, part):
    return {"reference": ref, "status": status, "part_number": part, "technology": "ceramic-class2", "typical": [],
            "governing": {"check": "voltage", "scenario": scenario, "measured": 47.3, "limit": 40.0, "unit": "V",
                          "ratio": 47.3 / 40.0, "status": status},
            "measured": {"v_peak_v": 47.3}, "hotspot_c": 71.2, "life_h": None, "v_peak_v": 47.3, "v_rated_v": 50.0,
            "ripple_equivalent_a": None, "ripple_allowed_a": None}


@pytest.mark.parametrize("width", [80, 120, 160])
def test_long_names_fold_and_lose_nothing(width):
    ref, scenario = "X_PSU1.X_BUCK3.C_OUT_BULK_12", "brown-out-at-minus-forty-with-full-load"
    part = "GRM32ER72A475KA01-EXTENDED-TEMP-TAPE-AND-REEL"
    lines = _render([_long_row(ref, "fail", scenario, part), _long_row("C1", "pass", "nominal", "MC-1U")], width)
    assert all(len(ln) <= width for ln in lines)
    head, _, *body = lines
    first = [ln for ln in body if not ln.startswith("C1 ")]
    at = {name: head.index(name) for name in ("status", "why", "part")}

    def column(a, b=None):
        return "".join("".join(ln[a:b].split()) for ln in first)
    assert column(0, at["status"]) == ref
    assert column(at["part"]) == part
    why_cells = column(at["why"], at["part"])
    for other in ("47.3V/40V", "118%", "ceramic2", "71.2°C", "—"):  # the cells between 'why' and the part
        why_cells = why_cells.replace(other, "")
    assert why_cells == "voltage@" + scenario
    assert re.match(r"^\S+\s+fail\s", first[0]) and any(re.match(r"^C1\s+pass\s", ln) for ln in body)


def test_fold_never_drops_a_character():
    from derate.report.terminal import _fold
    for text in ("GRM32ER72A475KA01-EXTENDED", "a b c d e f g", "x" * 61, "voltage @ high-line-hot"):
        for width in (3, 7, 10, 26):
            folded = _fold(text, width)
            assert all(len(piece) <= width for piece in folded.splitlines())
            assert "".join(folded.split()) == "".join(text.split())


def test_narrow_terminal_lists_one_capacitor_per_line(rows):
    text = " ".join(" ".join(_render(rows, 50)).split())
    assert "C3 fail: voltage @ high-line-hot, 34.9 V / 28 V (125 %), AE-470U-35V-105 C14 fail:" in text


def test_check_output_in_an_80_column_log(irrigation, capsys, monkeypatch):
    """Piped output (a CI log) is laid out for 80 columns; the table rows all fit."""
    monkeypatch.setenv("COLUMNS", "80")
    code = main(["check", "--no-color", str(irrigation.folder / "derate.yaml")])
    out = capsys.readouterr().out
    assert code == 1
    table = out[out.index("ref "):out.index("18 capacitors:")]
    rows = [ln for ln in table.splitlines()[2:] if ln.strip()]
    assert len(rows) == 18 and all(len(ln) <= 80 for ln in rows)
    assert all(re.match(rf"^C\d+\s+{STATUS}\s", ln) for ln in rows)


def test_measure_tables_fit_80_columns(irrigation, capsys, monkeypatch):
    monkeypatch.setenv("COLUMNS", "80")
    assert main(["measure", "--no-color", str(irrigation.folder / "derate.yaml")]) == 0
    out = capsys.readouterr().out
    rows = [ln for ln in out.splitlines() if re.match(r"^C\d+\s", ln)]
    assert len(rows) == 3 * 18 and all(len(ln) <= 80 for ln in rows)
    assert all(ln.split()[-1] in ("yes", "no", "—") for ln in rows)  # the settled column is never cut
    c3 = next(ln for ln in rows if ln.startswith("C3 "))
    assert re.search(r"\d+(\.\d+)? mA\s+120 Hz\s+yes$", c3.rstrip())
