"""docs/worked-example.md: C3 of the example board computed by hand, equal to the tool's own numbers.

The hand calculation here is written independently of derate's thermal and check code (its own
interpolation and sums), from the part record and the measured spectrum of a real ngspice run;
sources of the rules: GE application data (DC plus peak AC), capacitor makers' ripple notes
(I_eq), TDK electronics primer vol. 7 (10 degC rule), Miner's rule for the profile.
"""

from __future__ import annotations

import math
import shutil
from pathlib import Path

import pytest

import derate

REPO = Path(__file__).parents[1]
DOC = (REPO / "docs" / "worked-example.md").read_text()


@pytest.fixture(scope="module")
def c3(tmp_path_factory):
    folder = tmp_path_factory.mktemp("worked") / "board"
    shutil.copytree(REPO / "examples" / "irrigation-controller", folder, ignore=shutil.ignore_patterns("out"))
    review = derate.review(derate.load_project(folder / "derate.yaml"))
    cap = next(c for c in review.assessment.capacitors if c.path == "C3")
    stresses = {r.scenario.name: next(s for s in r.stresses if s.capacitor == "C3") for r in review.run.results}
    return cap, stresses


def _interp_log_x(table, x, log_y=False):
    xs = [math.log(a) for a, _ in table]
    ys = [math.log(b) if log_y else b for _, b in table]
    lx = math.log(x)
    if lx <= xs[0]:
        y = ys[0]
    elif lx >= xs[-1]:
        y = ys[-1]
    else:
        k = next(j for j in range(1, len(xs)) if lx <= xs[j])
        y = ys[k - 1] + (ys[k] - ys[k - 1]) * (lx - xs[k - 1]) / (xs[k] - xs[k - 1])
    return math.exp(y) if log_y else y


def test_every_step_equals_the_tool(c3):
    cap, st = c3
    part = cap.part
    # 1. voltage at high-line-hot: 0.8 x 35 V
    v = st["high-line-hot"].v_max_v
    f = cap.finding("stress.voltage")
    assert f.limit == pytest.approx(0.8 * 35.0) and f.ratio == pytest.approx(v / 28.0, rel=1e-12)
    assert f"{v:.3f} V" in DOC and f"{v / 28:.3f}" in DOC
    # 2. ripple at low-line-cold
    cold = st["low-line-cold"]
    i_eq = math.sqrt(sum((i / _interp_log_x(part.ripple_frequency_multipliers, fb)) ** 2 for fb, i in cold.bands))
    r = cap.finding("stress.ripple")
    assert r.scenario == "low-line-cold" and r.measured == pytest.approx(i_eq, rel=1e-12)
    assert r.limit == pytest.approx(0.9 * 2.1 * 0.8)
    assert f"{i_eq:.4f} A" in DOC and f"{i_eq / 1.512:.3f}" in DOC
    # 3. hot spot at high-line-hot
    hot = st["high-line-hot"]
    loss = sum(i * i * _interp_log_x(part.esr_table, fb, log_y=True) for fb, i in hot.bands)
    t_hot = 60.0 + loss * 20.0
    h = cap.finding("stress.hotspot")
    assert h.measured == pytest.approx(t_hot, rel=1e-12) and h.limit == 85.0
    assert f"{loss * 1e3:.3f} mW" in DOC and f"{t_hot:.2f} °C" in DOC and f"{(t_hot - 25) / 60:.3f}" in DOC
    # 4. life over the mission profile by Miner's rule
    shares = {"low-line-cold": 0.15, "nominal": 0.60, "high-line-hot": 0.25}
    consumed = 0.0
    for name, share in shares.items():
        # capped at the policy's 131 400 h (15 years: no extrapolation past a capacitor's service life)
        life = min(2000.0 * 2 ** ((105.0 - cap.thermal[name].hotspot_c) / 10.0), 131400.0)
        consumed += share * 60000.0 / life
    life_f = cap.finding("stress.life")
    assert life_f.ratio == pytest.approx(consumed, rel=1e-9)
    assert life_f.measured == pytest.approx(60000.0 / consumed, rel=1e-9)
    assert f"{60000 / consumed:,.0f}".replace(",", " ") in DOC and f"{consumed:.3f}" in DOC
