"""The HTML report opened in headless Chromium: it renders on a 1024x768 screen with every status in
view, it prints (print stylesheet) with each table starting a page, and it runs nothing."""

from __future__ import annotations

import re
import shutil
import subprocess

import pytest

pytestmark = pytest.mark.ngspice

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--enable-logging=stderr", "--v=0"]

# Measures, in the browser, where each status cell ends on the screen.  Added to a copy of the
# report only: the report itself carries no script.
PROBE = """<script>
const width = window.innerWidth;
const cells = [...document.querySelectorAll('#stress-table tbody td:nth-child(2), #attention-table tbody td:nth-child(2)')];
const inside = cells.filter(c => { const b = c.getBoundingClientRect(); return b.left >= 0 && b.right <= width; });
const order = [...document.querySelectorAll('#stress-table tbody tr')].map(tr => tr.id.replace('row-', ''));
document.body.setAttribute('data-probe', JSON.stringify({width, cells: cells.length, inside: inside.length, order}));
</script>"""


def _chromium():
    path = shutil.which("chromium") or shutil.which("chromium-browser")
    if not path:
        pytest.skip("Chromium is not installed (make test installs Debian's chromium; it could not here)")
    return path


def _run(args, profile):
    return subprocess.run([_chromium(), *FLAGS, f"--user-data-dir={profile}", *args], capture_output=True, text=True,
                          timeout=120)


def _console_errors(*runs):
    return [ln for run in runs for ln in run.stderr.splitlines()
            if "CONSOLE" in ln and ("error" in ln.lower() or "Uncaught" in ln)]


def test_html_report_renders_with_status_in_view_at_1024(irrigation, tmp_path):
    import json

    report = irrigation.reports / "derate-report.html"
    text = report.read_text()
    assert "<script" not in text  # self-contained, nothing to run
    profile, shot = tmp_path / "profile", tmp_path / "report.png"
    run = _run(["--window-size=1024,768", f"--screenshot={shot}", report.resolve().as_uri()], profile)
    assert shot.exists() and shot.stat().st_size > 30_000, run.stderr[-2000:]
    probed = tmp_path / "probed.html"
    probed.write_text(text.replace("</body>", PROBE + "</body>"))
    dom = _run(["--window-size=1024,768", "--dump-dom", probed.resolve().as_uri()], profile)
    probe = json.loads(re.search(r"data-probe=\"([^\"]+)\"", dom.stdout).group(1).replace("&quot;", '"'))
    assert probe["width"] <= 1024
    assert probe["cells"] == 18 + 5 and probe["inside"] == probe["cells"]  # every status visible without scrolling
    # worst first: the two failures, the unrated one, the two near ones, then passes by falling stress
    assert probe["order"][:5] == ["C3", "C14", "C16", "C5", "C6"]
    html = dom.stdout
    assert "<svg" in html[html.index('id="stress-chart"'):][:2000]
    figures = re.findall(r'class="waveform" id="wave-([^"]+)"', html)
    assert figures == ["C3", "C14", "C5", "C6"]  # every failing and near capacitor, worst first
    # each figure shows the governing quantity: voltage for C3 and C14, the DC-bias curve for C5 and C6
    c3 = html[html.index('id="wave-C3"'):html.index('id="wave-C14"')]
    assert "peak 34.9 V" in c3 and "allowed 28 V" in c3
    c5 = html[html.index('id="wave-C5"'):html.index('id="wave-C6"')]
    assert "capacitance under DC bias" in c5 and "65 % at 34.3 V" in c5
    assert _console_errors(run, dom) == []


def test_html_report_prints_each_table_on_its_own_page(irrigation, tmp_path):
    pypdf = pytest.importorskip("pypdf")
    report = irrigation.reports / "derate-report.html"
    pdf = tmp_path / "report.pdf"
    run = _run(["--no-pdf-header-footer", f"--print-to-pdf={pdf}", report.resolve().as_uri()], tmp_path / "profile")
    assert pdf.exists(), run.stderr[-2000:]
    pages = pypdf.PdfReader(str(pdf)).pages
    width, height = float(pages[0].mediabox.width), float(pages[0].mediabox.height)
    assert (round(width), round(height)) in ((612, 792), (595, 842))  # Letter or A4, the printer's paper
    texts = [p.extract_text() for p in pages]
    assert "Needs attention" in texts[0] and "Verdict: fail" in texts[0]
    starts = {name: next(k for k, t in enumerate(texts) if name in t)
              for name in ("Stress table", "Stress per capacitor and check", "Findings", "Scenarios")}
    assert starts["Stress table"] == 1 and len(set(starts.values())) == 4  # every section on a page of its own
    table = texts[starts["Stress table"]]
    # the whole stress table fits the page: every row with its status and its part number
    for ref, status, part in (("C3", "fail", "AE-470U-35V-105"), ("C16", "unrated", "—"), ("C20", "pass", "FE-47N-100V")):
        line = next(ln for ln in table.splitlines() if ln.startswith(ref + " "))
        assert status in line, line
    flat = "".join(table.split())
    assert "AE-470U-35V-105" in flat and "MC-4U7-100V-X7R-1210" in flat
