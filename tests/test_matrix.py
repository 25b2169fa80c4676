"""Corners as a matrix (issue 15): axes combined as a product, named by their levels, filtered by
exclude; the errors name the file, line and key; `.step` sweeps become the same axes."""

from __future__ import annotations

import shutil
import textwrap
from pathlib import Path

import pytest

import derate
from derate.errors import DataError
from derate.project import load_project

EXAMPLE = Path(__file__).parents[1] / "examples" / "irrigation-controller"

MATRIX = """\
netlist: board.cir
matrix:
  axes:
    line:
      - {name: low, params: {vac_rms: 20.4}, description: 24 V AC -15 %}
      - {name: high, params: {vac_rms: 26.4}, description: 24 V AC +10 %}
    iload5: [0.3, 0.6]
    climate:
      - {name: cold, temperature_c: -20}
      - {name: hot, temperature_c: 60, ambient_c: 65, description: enclosure in full sun}
  exclude:
    - {line: low, climate: hot}
"""


def _project(tmp_path, text):
    (tmp_path / "board.cir").write_text("t\nV1 a 0 5\nR1 a b 1k\nC1 b 0 1u\n.tran 1u 1m\n.end\n")
    (tmp_path / "derate.yaml").write_text(textwrap.dedent(text))
    return load_project(tmp_path / "derate.yaml")


def test_axes_combine_as_a_product_named_by_their_levels(tmp_path):
    project = _project(tmp_path, MATRIX)
    names = [s.name for s in project.scenarios]
    assert names == ["low_iload5=0.3_cold", "low_iload5=0.6_cold", "high_iload5=0.3_cold", "high_iload5=0.3_hot",
                     "high_iload5=0.6_cold", "high_iload5=0.6_hot"]
    hot = project.scenarios[3]
    assert dict(hot.params) == {"vac_rms": 26.4, "iload5": 0.3}
    assert hot.temperature_c == 60 and hot.ambient_c == 65
    assert hot.description == "24 V AC +10 %, enclosure in full sun"
    cold = project.scenarios[0]
    assert cold.ambient_c == -20  # the ambient follows the simulation temperature unless given
    assert project.scenarios_given


def test_listed_scenarios_come_first_and_names_stay_unique(tmp_path):
    text = MATRIX + "scenarios:\n  - {name: bench, params: {vac_rms: 24}}\n"
    assert [s.name for s in _project(tmp_path, text).scenarios][0] == "bench"
    with pytest.raises(DataError, match="which the scenarios list has too"):
        _project(tmp_path, MATRIX + "scenarios:\n  - {name: low_iload5=0.3_cold}\n")


@pytest.mark.parametrize("text, message, where", [
    (MATRIX.replace("    iload5: [0.3, 0.6]\n", "    iload5: [0.3, 0.6]\n    more:\n      - {name: x, params: "
                    "{vac_rms: 1}}\n"), "axes 'line' and 'more' both set parameter 'vac_rms'", "derate.yaml:3: matrix.axes"),
    (MATRIX.replace("{line: low, climate: hot}", "{line: low, climate: warm}"),
     "axis 'climate' has no level 'warm' (levels: cold, hot)", "derate.yaml:12: matrix.exclude[0].climate"),
    (MATRIX.replace("{line: low, climate: hot}", "{feed: low}"), "no axis 'feed'", "derate.yaml:12: matrix.exclude[0]"),
    (MATRIX.replace("[0.3, 0.6]", str(list(range(1, 100))) + "\n    rl: " + str(list(range(1, 11)))),
     "combines into 3960 scenarios (at most 1000)", "matrix.axes"),
    (MATRIX.replace("    - {line: low, climate: hot}\n", "    - {line: low}\n    - {line: high}\n"),
     "every combination of the matrix is excluded", None),
])
def test_matrix_errors_name_file_line_and_key(tmp_path, text, message, where):
    with pytest.raises(DataError) as exc:
        _project(tmp_path, text)
    assert message in str(exc.value)
    if where:
        assert where in str(exc.value)


def test_step_cards_are_axes_of_the_same_matrix(tmp_path):
    (tmp_path / "swept.cir").write_text("valve supply sweep\n.param vin=24 rl=10\nV1 a 0 {vin}\nR1 a b 1\n"
                                        "C1 b 0 10u\nRL b 0 {rl}\n.step param vin list 20 28\n.step temp list -20 60\n"
                                        ".tran 1u 1m\n.end\n")
    stepped = derate.load_project(tmp_path / "swept.cir")
    netlist, _ = derate.read_circuit(stepped)
    stepped = derate.api.with_netlist(stepped, netlist)
    (tmp_path / "derate.yaml").write_text("netlist: swept.cir\nmatrix:\n  axes:\n    vin: [20, 28]\n"
                                          "    temperature_c: [-20, 60]\n")
    listed = load_project(tmp_path / "derate.yaml")
    assert [s.name for s in stepped.scenarios] == ["vin=20_temp=-20", "vin=20_temp=60", "vin=28_temp=-20",
                                                   "vin=28_temp=60"]
    assert [(dict(s.params), s.temperature_c, s.ambient_c) for s in stepped.scenarios] == \
        [(dict(s.params), s.temperature_c, s.ambient_c) for s in listed.scenarios]


@pytest.mark.ngspice
def test_a_matrix_runs_end_to_end_on_the_example(tmp_path):
    folder = tmp_path / "board"
    shutil.copytree(EXAMPLE, folder, ignore=shutil.ignore_patterns(".derate-cache", "out"))
    text = (folder / "derate.yaml").read_text()
    head = text[:text.index("scenarios:")]
    tail = text[text.index("parts: parts.yaml"):].replace(
        "  profile: {low-line-cold: 0.15, nominal: 0.60, high-line-hot: 0.25}   # share of the years in each corner\n", "")
    (folder / "derate.yaml").write_text(head + "matrix:\n  axes:\n    line:\n      - {name: low, params: {vac_rms: "
                                        "20.4}}\n      - {name: high, params: {vac_rms: 26.4}}\n    temperature_c: [60]\n"
                                        + tail)
    review = derate.review(derate.load_project(folder / "derate.yaml"), derate.ReviewOptions(use_cache=False))
    assert [r.scenario.name for r in review.run.results] == ["low_temperature_c=60", "high_temperature_c=60"]
    assert all(r.ok for r in review.run.results)
    # the high-line corner decides C3's voltage (34.9 V, as with the listed scenarios); with both
    # corners at 60 °C all year and no profile, its life (about 44,700 h against 60,000 h) governs
    voltage = next(f for f in review.record["findings"] if f["subject"] == "C3" and f["rule"] == "stress.voltage")
    assert voltage["scenario"] == "high_temperature_c=60" and voltage["measured"] == pytest.approx(34.9, abs=0.05)
    c3 = next(c for c in review.record["capacitors"] if c["reference"] == "C3")
    assert c3["governing"]["check"] == "life" and c3["governing"]["measured"] == pytest.approx(44_700, rel=0.01)
