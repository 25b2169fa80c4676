"""The HTML figures show the quantity that decides each capacitor (issue 13): the running RMS against
the ripple limit, life against hot spot over the mission, the DC-bias curve with its operating point,
peaks annotated, legends outside the plot.  The board is the irrigation example with two parts made
weak on purpose (a ripple rating and a base life cut), simulated with real ngspice."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

from derate.cli import main
from derate.report.svg import Chart

EXAMPLE = Path(__file__).parents[2] / "examples" / "irrigation-controller"


def _weaken(text: str, part: str, **values) -> str:
    block = re.search(rf"\n  {re.escape(part)}:\n(?:    .*\n)+", text)
    new = block.group(0)
    for key, value in values.items():
        new, n = re.subn(rf"(\n    {key}: ).*", rf"\g<1>{value}", new)
        assert n == 1, key
    return text.replace(block.group(0), new)


@pytest.fixture(scope="module")
def weak_board(tmp_path_factory):
    folder = tmp_path_factory.mktemp("weak") / "board"
    shutil.copytree(EXAMPLE, folder, ignore=shutil.ignore_patterns(".derate-cache", "out"))
    parts = folder / "parts-library.yaml"
    text = parts.read_text()
    # C3: a 63 V part (voltage passes) rated only 120 mA ripple; C2: a 400 h base life
    text = _weaken(text, "AE-470U-35V-105", rated_voltage_v=63, surge_voltage_v=72, ripple_current_a=0.12)
    text = _weaken(text, "AE-470U-50V-105", base_life_h=400)
    parts.write_text(text)
    out = folder / "review.html"
    assert main(["check", "--quiet", str(folder / "derate.yaml"), "--format", "html", "--output", str(out)]) == 1
    return out.read_text()


def _figure(html: str, ref: str) -> str:
    start = html.index(f'id="wave-{ref}"')
    return html[start:html.index("</figure>", start)]


@pytest.mark.ngspice
def test_ripple_figure_draws_the_running_rms_against_the_limit(weak_board):
    fig = _figure(weak_board, "C3")
    assert "ripple @ low-line-cold" in fig
    assert "RMS over one period (unweighted)" in fig and "equivalent RMS (after frequency and temperature" in fig
    limit = re.search(r"allowed ([\d.]+) mA equivalent RMS", fig)
    peak = re.search(r"equivalent ([\d.]+) mA</text>", fig)
    assert limit and peak and float(peak.group(1)) > float(limit.group(1))  # the failing quantity, annotated


@pytest.mark.ngspice
def test_life_figure_places_each_scenario_on_the_life_curve(weak_board):
    fig = _figure(weak_board, "C2")
    assert "life @ mission profile" in fig and "life against hot spot" in fig
    for scenario in ("low-line-cold", "nominal", "high-line-hot"):
        assert re.search(rf">{scenario} [\d,]+ h</text>", fig), scenario
    assert "required 60,000 h" in fig and "over the mission profile" in fig


@pytest.mark.ngspice
def test_dc_bias_figure_marks_the_operating_point(weak_board):
    fig = _figure(weak_board, "C5")
    assert "capacitance under DC bias" in fig and re.search(r">65 % at 34\.3 V</text>", fig)
    assert "minimum 60 %" in fig


@pytest.mark.ngspice
def test_clip_paths_are_unique_in_the_page(weak_board):
    ids = re.findall(r'<clipPath id="([^"]+)"', weak_board)
    assert len(ids) >= 5 and len(ids) == len(set(ids))


def test_legend_sits_below_the_plot_area():
    chart = Chart(x_label="time, ms", y_label="voltage", y_unit="V", title="C1: voltage")
    chart.band([0, 1, 2], [1, 1, 1], [2, 3, 2], "#88a", "voltage (min-max per time step)")
    chart.limit(2.5, "#b00", "allowed 2.5 V")
    chart.mark(1, 3, "#b00", "peak 3 V")
    svg = chart.svg()
    frame = re.search(r'<rect x="(\d+)" y="(\d+)" width="([\d.]+)" height="([\d.]+)" fill="none"', svg)
    bottom = float(frame.group(2)) + float(frame.group(4))
    for label in ("voltage (min-max per time step)", "allowed 2.5 V"):
        y = float(re.search(rf'<text x="[\d.]+" y="([\d.]+)">{re.escape(label)}</text>', svg).group(1))
        assert y > bottom + 30, label  # below the axis title, never over the data
    mark = re.search(r'<text x="[\d.]+" y="([\d.]+)"[^>]*>peak 3 V</text>', svg)
    assert float(mark.group(1)) > float(frame.group(2))  # the peak's value stays inside the frame (headroom)


def test_long_legend_labels_get_their_own_row():
    chart = Chart(x_label="t", y_label="i", y_unit="A")
    chart.line([0, 1], [0, 1], "#000", "RMS over one period (unweighted)")
    chart.limit(0.5, "#b00", "allowed 202 mA equivalent RMS (after frequency and temperature multipliers)")
    rows = re.findall(r'<text x="([\d.]+)" y="([\d.]+)">(RMS over|allowed 202)', chart.svg())
    assert len({y for _, y, _ in rows}) == 2  # one label per row: the long one cannot run into the next


@pytest.mark.ngspice
def test_figures_limit_draws_failing_and_the_worst_near_ones(irrigation, tmp_path, capsys):
    out = tmp_path / "r.html"
    assert main(["check", "--quiet", str(irrigation.folder / "derate.yaml"), "--format", "html", "--output", str(out),
                 "--figures", "1"]) == 1
    capsys.readouterr()
    html = out.read_text()
    assert re.findall(r'class="waveform" id="wave-([^"]+)"', html) == ["C3", "C14", "C5"]
    assert "1 more near-limit capacitor is not drawn (--figures N draws more): C6" in html


def test_a_bipolar_voltage_figure_shows_the_negative_peak_and_both_limits(tmp_path, ngspice_pool):
    """A film capacitor across +/-60 V: judged on |v|, its figure marks the peak |v| (the negative one
    here, which the signed maximum would miss) and draws the limit on both sides."""
    from derate.report.plots import figure
    from tests.boards import review_board

    net = "bipolar\nV1 a 0 SIN(-5 60 1k)\nR1 a b 10\nC1 b 0 100n\n.tran 1u 10m\n.end\n"
    parts = {"C1": {"technology": "film-polyester", "rated_voltage_v": 63, "capacitance_f": "100n"}}
    review = review_board(tmp_path, net, {"scenarios": [{"name": "room", "ambient_c": 25}]}, parts,
                          pool=ngspice_pool, policy="industrial")
    row = next(r for r in review.record["capacitors"] if r["reference"] == "C1")
    assert row["status"] == "fail" and row["governing"]["check"] == "voltage"
    svg = figure(review, row)
    assert "peak |v| 6" in svg  # about -65 V: the negative side decides
    assert "allowed -37.8 V" in svg and "allowed 37.8 V" in svg  # industrial film: 60 % of 63 V
