"""Project file loading: validation messages name file, line and key."""

from __future__ import annotations

from pathlib import Path

import pytest

from derate.errors import DataError
from derate.project import find_project, load_project

EXAMPLE = Path(__file__).parents[1] / "examples" / "irrigation-controller" / "derate.yaml"


def test_example_project_loads():
    p = load_project(EXAMPLE)
    assert p.netlist.name == "board.cir"
    assert [s.name for s in p.scenarios] == ["low-line-cold", "nominal", "high-line-hot"]
    assert p.analysis.tran.stop_s == pytest.approx(0.1) and p.analysis.tran.max_step_s == pytest.approx(5e-7)
    assert p.analysis.window.last_s == pytest.approx(33.333e-3)
    assert dict(p.scenarios[0].params) == {"vac_rms": 20.4} and p.scenarios[2].ambient_c == 60


@pytest.mark.parametrize("text,where,message", [
    ("netlist: b.cir\nanalysis:\n  tran: {stop: 1m}\n  windw: {last: 1m}\n", ":4: analysis.windw",
     "unknown key(s) 'windw'"),
    ("netlist: b.cir\nanalysis:\n  tran: {stop: ten}\n", ":3: analysis.tran.stop", "expected a number"),
    ("netlist: b.cir\nscenarios:\n  - name: a\n  - name: a\n", ":4: scenarios[1].name", "used twice"),
    ("netlist: b.cir\nanalysis:\n  timeout_s: -1\n", ":3: analysis.timeout_s", "above 0"),
    ("netlist: b.cir\nscenarios:\n  - {name: 'bad name'}\n", ":3: scenarios[0].name", "letters, digits"),
    ("analysis: {}\n", "derate.yaml: ", "expected either 'netlist' (one deck) or 'netlists'"),
    ("netlist: [unclosed\n", "derate.yaml:2", "invalid YAML"),
    ("netlist: b.cir\nanalysis:\n  window: {last: 1m, from: 2m}\n", "analysis.window", "either 'last' or 'from'"),
])
def test_errors(tmp_path, text, where, message):
    path = tmp_path / "derate.yaml"
    path.write_text(text)
    with pytest.raises(DataError) as info:
        load_project(path)
    assert where in str(info.value) and message in str(info.value)


def test_find_project_in_parent(tmp_path):
    (tmp_path / "derate.yaml").write_text("netlist: b.cir\n")
    sub = tmp_path / "a" / "b"
    sub.mkdir(parents=True)
    assert find_project(sub) == tmp_path / "derate.yaml"
