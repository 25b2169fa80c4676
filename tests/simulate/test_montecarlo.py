"""Monte Carlo and worst case through the real simulator (issue 15): a scaled resistor moves a
divider's voltage as the divider formula says; the same seed gives the same review, on the local
runner and on Dask; a corner's samples are judged together."""

from __future__ import annotations

import dataclasses
import json
import shutil
from pathlib import Path

import pytest

from derate.cli import main
from derate.project import Scenario
from tests.simulate.helpers import simulate, stress_of

pytestmark = pytest.mark.ngspice

EXAMPLE = Path(__file__).parents[2] / "examples" / "irrigation-controller"

DIVIDER = """sensor supply divider
V1 in 0 DC 10
R1 in mid 1k
R2 mid 0 1k
C1 mid 0 100n
.end
"""


def test_a_scaled_resistor_moves_the_divider_as_the_formula_says(tmp_path):
    """V_C1 = V1 R2 / (R1 + R2) (voltage divider): R1 at +10 % and V1 at -2 % give 9.8 / 2.1 V."""
    from derate.project import load_project
    from derate.netlist import flatten, read_netlist
    from derate.simulate.scenarios import simulate_scenarios

    simulate(tmp_path, DIVIDER, {"analysis": {"tran": {"step": "1u", "stop": "1m"}}})  # writes the files
    project = load_project(tmp_path / "derate.yaml")
    project = dataclasses.replace(project, scenarios=(
        Scenario("nominal"), Scenario("nominal~1", corner="nominal", sample="1",
                                      scale=(("value:R1", 1.1), ("source:V1", 0.98)))))
    netlist = read_netlist(project.netlist)
    run = simulate_scenarios(project, netlist, flatten(netlist))
    assert stress_of(run, "C1", "nominal").v_max_v == pytest.approx(5.0, rel=1e-6)
    assert stress_of(run, "C1", "nominal~1").v_max_v == pytest.approx(9.8 / 2.1, rel=1e-6)


ONE_CORNER = "scenarios:\n  - {name: high-line-hot, params: {vac_rms: 26.4}, temperature_c: 60}\n"


LINE_ONLY = "tolerances:\n  elements: {VAC: 5}\n  capacitors: none\n"


def _board(tmp_path, corners: str = ONE_CORNER, tolerances: str | None = None) -> Path:
    """The example board with its scenarios replaced by ``corners`` (one corner keeps a test short;
    the load and the line vary, capacitors by their parts, unless ``tolerances`` replaces that) and no
    mission profile."""
    folder = tmp_path / "board"
    shutil.copytree(EXAMPLE, folder, ignore=shutil.ignore_patterns(".derate-cache", "out"))
    text = (folder / "derate.yaml").read_text()
    head, tail = text[:text.index("scenarios:")], text[text.index("parts: parts.yaml"):]
    tail = tail.replace("  profile: {low-line-cold: 0.15, nominal: 0.60, high-line-hot: 0.25}   # share of the "
                        "years in each corner\n", "")
    if tolerances is not None:
        tail = tail[:tail.index("tolerances:")] + tolerances
    (folder / "derate.yaml").write_text(head + corners + tail)
    return folder


def test_same_seed_same_review_on_the_local_runner_and_on_dask(tmp_path, capsys):
    pytest.importorskip("dask.distributed")
    folder = _board(tmp_path)
    docs = {}
    for name, extra in (("local", []), ("again", []), ("dask", ["--runner", "dask"]), ("other", ["--seed", "8"])):
        out = tmp_path / f"{name}.json"
        seed = [] if "--seed" in extra else ["--seed", "7"]
        main(["check", "--quiet", "--no-cache", "--jobs", "2", "--samples", "3", *seed, *extra,
              str(folder / "derate.yaml"), "--format", "json", "--output", str(out)])
        docs[name] = json.loads(out.read_text())
    capsys.readouterr()
    assert [s["name"] for s in docs["local"]["scenarios"]] == ["high-line-hot~1", "high-line-hot~2", "high-line-hot~3"]
    for other in ("again", "dask"):
        assert docs[other]["capacitors"] == docs["local"]["capacitors"]
        assert docs[other]["findings"] == docs["local"]["findings"]
    assert docs["other"]["findings"] != docs["local"]["findings"]  # another seed, other samples
    c3 = next(f for f in docs["local"]["findings"] if f["subject"] == "C3" and f["rule"] == "stress.voltage")
    dist = c3["details"]["distribution"]
    assert dist["samples"] == 3 and len(dist["ratios"]) == 3 and dist["p_exceed"] == 1.0
    assert c3["scenario"] == "high-line-hot" and c3["ratio"] == max(dist["ratios"])  # judged on the worst sample
    assert set(dist["worst_factors"]) >= {"source:VAC", "value:RL5", "value:C3"}


def test_worst_case_and_a_percentile_gate(tmp_path, capsys):
    folder = _board(tmp_path, tolerances=LINE_ONLY)  # one quantity varies: its two vertices and nominal
    out = tmp_path / "wc.json"
    cache = ["--cache-dir", str(tmp_path / "cache")]  # the second run, at another gate, re-uses the simulations
    main(["check", "--quiet", "--worst-case", *cache, str(folder / "derate.yaml"), "--format", "json",
          "--output", str(out)])
    doc = json.loads(out.read_text())
    assert [s["name"] for s in doc["scenarios"]] == ["high-line-hot~nom", "high-line-hot~v+", "high-line-hot~v-"]
    c3 = next(f for f in doc["findings"] if f["subject"] == "C3" and f["rule"] == "stress.voltage")
    ratios = dict(zip(c3["details"]["distribution"]["names"], c3["details"]["distribution"]["ratios"]))
    # the line 5 % high raises C3's peak (a rectified bus): the upper vertex is the worst
    assert ratios["high-line-hot~v+"] > ratios["high-line-hot~nom"] > ratios["high-line-hot~v-"]
    assert c3["ratio"] == ratios["high-line-hot~v+"]
    # judged at the 50th percentile the same corner gives the middle sample (nearest rank)
    out50 = tmp_path / "wc50.json"
    main(["check", "--quiet", "--worst-case", *cache, "--gate-percentile", "50", str(folder / "derate.yaml"),
          "--format", "json", "--output", str(out50)])
    capsys.readouterr()
    c3_50 = next(f for f in json.loads(out50.read_text())["findings"]
                 if f["subject"] == "C3" and f["rule"] == "stress.voltage")
    assert c3_50["ratio"] == ratios["high-line-hot~nom"]


def test_nothing_to_vary_is_a_clear_error(tmp_path, capsys):
    simulate(tmp_path, DIVIDER, {"analysis": {"tran": {"step": "1u", "stop": "1m"}}})
    assert main(["check", "--quiet", "--samples", "5", str(tmp_path / "derate.yaml")]) == 2
    assert "nothing varies: give 'tolerances:'" in capsys.readouterr().err

def test_tables_carry_the_percentiles_over_the_samples(tmp_path, capsys):
    """The governing check's spread over a corner's samples reaches the JSON record, the terminal,
    Markdown and HTML tables (p50/p95/max by nearest rank, and the share over the limit)."""
    folder = _board(tmp_path, tolerances=LINE_ONLY)
    out = tmp_path / "out"
    main(["check", "--worst-case", "--cache-dir", str(tmp_path / "cache"), str(folder / "derate.yaml"),
          "--format", "json", "--format", "markdown", "--format", "html", "--output", str(out) + "/"])
    terminal = capsys.readouterr().out
    doc = json.loads((out / "derate-report.json").read_text())
    c3 = next(c for c in doc["capacitors"] if c["reference"] == "C3")
    g = c3["governing"]
    finding = next(f for f in doc["findings"] if f["subject"] == "C3" and f["rule"] == g["rule"]
                   and f["scenario"] == g["scenario"])
    ratios = sorted(finding["details"]["distribution"]["ratios"])
    assert len(ratios) == 3
    # nearest rank over 3 samples: p50 is the 2nd, p95 and the maximum the 3rd
    assert g["spread"]["p50"] == ratios[1] and g["spread"]["p95"] == ratios[2] and g["spread"]["max"] == ratios[2]
    assert g["spread"]["p_exceed"] == sum(r > 1 for r in ratios) / 3
    text = f"{100 * ratios[1]:.0f}/{100 * ratios[2]:.0f}/{100 * ratios[2]:.0f} %"
    assert "p50/p95/max" in terminal and text in terminal
    md = (out / "derate-report.md").read_text()
    assert "| p50/p95/max | over |" in md and text in md
    html = (out / "derate-report.html").read_text()
    assert "<th>p50/p95/max</th>" in html and text in html


def test_a_matrix_with_monte_carlo_gives_the_same_review_locally_and_on_dask(tmp_path, capsys):
    """The issue's end-to-end case: corners from a matrix (line low / high at 60 °C), two seeded
    samples of each, on the local worker pool and on a Dask LocalCluster: the same review."""
    pytest.importorskip("dask.distributed")
    folder = _board(tmp_path, "matrix:\n  axes:\n    line:\n      - {name: low, params: {vac_rms: 20.4}}\n"
                    "      - {name: high, params: {vac_rms: 26.4}}\n    climate:\n      - {name: hot, temperature_c: 60}\n")
    docs = {}
    for name, extra in (("local", []), ("dask", ["--runner", "dask"])):
        out = tmp_path / f"{name}.json"
        main(["check", "--quiet", "--no-cache", "--jobs", "2", "--samples", "2", "--seed", "11", *extra,
              str(folder / "derate.yaml"), "--format", "json", "--output", str(out)])
        docs[name] = json.loads(out.read_text())
    capsys.readouterr()
    local, dask = docs["local"], docs["dask"]
    assert [s["name"] for s in local["scenarios"]] == ["low_hot~1", "low_hot~2", "high_hot~1", "high_hot~2"]
    assert all(s["ok"] for s in local["scenarios"])
    assert dask["capacitors"] == local["capacitors"] and dask["findings"] == local["findings"]
    # a corner's samples are judged together; the high line raises C3's peak (a rectified bus), so
    # its voltage finding is that corner's, over both of its samples, judged on the worse one
    c3 = [f for f in local["findings"] if f["subject"] == "C3" and f["rule"] == "stress.voltage"]
    assert [f["scenario"] for f in c3] == ["high_hot"]
    dist = c3[0]["details"]["distribution"]
    assert dist["names"] == ["high_hot~1", "high_hot~2"] and c3[0]["ratio"] == max(dist["ratios"])
