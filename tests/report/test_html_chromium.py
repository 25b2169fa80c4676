"""The HTML report opened in headless Chromium: it renders, has the table and the plots, no console errors."""

from __future__ import annotations

import re
import shutil
import subprocess

import pytest

pytestmark = pytest.mark.ngspice

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--enable-logging=stderr", "--v=0"]


def _chromium():
    path = shutil.which("chromium") or shutil.which("chromium-browser")
    if not path:
        pytest.skip("Chromium is not installed (make test installs Debian's chromium; it could not here)")
    return path


def test_html_report_in_headless_chromium(irrigation, tmp_path):
    chromium = _chromium()
    report = irrigation.reports / "derate-report.html"
    url = report.resolve().as_uri()
    profile = tmp_path / "profile"
    shot = tmp_path / "report.png"
    run = subprocess.run([chromium, *FLAGS, f"--user-data-dir={profile}", "--window-size=1300,2600",
                          f"--screenshot={shot}", url], capture_output=True, text=True, timeout=120)
    assert shot.exists() and shot.stat().st_size > 50_000, run.stderr[-2000:]
    dom = subprocess.run([chromium, *FLAGS, f"--user-data-dir={profile}", "--dump-dom", url],
                         capture_output=True, text=True, timeout=120)
    html = dom.stdout
    assert 'id="stress-table"' in html
    assert html.count("<tr>") >= 18
    chart = html[html.index('id="stress-chart"'):]
    assert "<svg" in chart[:2000]
    waveforms = re.findall(r'class="waveform" id="wave-([^"]+)"', html)
    assert set(waveforms) == {"C3", "C14", "C5", "C6"}  # every capacitor that fails or is near a limit
    assert html.count("<svg") >= 5
    console_errors = [ln for ln in (run.stderr + dom.stderr).splitlines()
                      if "CONSOLE" in ln and ("error" in ln.lower() or "Uncaught" in ln)]
    assert console_errors == []
    assert "<script" not in report.read_text()  # self-contained, nothing to run
