"""Tolerances, Monte Carlo samples and worst-case extremes (issue 15): the draws are reproducible
from the seed alone, stay inside the tolerance, and reach the deck as scaled values; the
distribution figures are the nearest-rank percentiles (a value some sample really had)."""

from __future__ import annotations

import numpy as np
import pytest

from derate.netlist import flatten, read_netlist
from derate.project import Analysis, Parasitics, Scenario, Tran
from derate.simulate.deck import build_deck
from derate.tolerance import Tolerances, Varying, distribution, extremes, percentile, sample, varying

ITEMS = (Varying("value:R1", 0.05), Varying("value:C1", 0.2, -0.1), Varying("source:V1", 0.02))


def test_samples_are_reproducible_from_the_seed_alone():
    a = sample(ITEMS, "normal", 7, 0, 1)
    assert a == sample(ITEMS, "normal", 7, 0, 1)  # whatever ran before, in whatever order
    assert a != sample(ITEMS, "normal", 7, 0, 2) and a != sample(ITEMS, "normal", 8, 0, 1)
    assert a != sample(ITEMS, "normal", 7, 1, 1)  # another corner, another stream
    assert [k for k, _ in a] == ["value:R1", "value:C1", "source:V1"]


@pytest.mark.parametrize("dist", ["normal", "uniform"])
def test_draws_stay_inside_the_tolerance(dist):
    factors = np.array([[f for _, f in sample(ITEMS, dist, 3, 0, k)] for k in range(1, 2001)])
    assert np.all(np.abs(factors[:, 0] - 1.0) <= 0.05 + 1e-12)
    assert np.all(np.abs(factors[:, 1] / 0.9 - 1.0) <= 0.2 + 1e-12)  # ageing moves the nominal to 90 %
    spread = np.std(factors[:, 0] - 1.0)
    # normal: the tolerance is a 3-sigma bound (sigma 1/3 of it; truncation trims a little);
    # uniform: sigma = tolerance / sqrt(3)
    expected = 0.05 / 3 if dist == "normal" else 0.05 / np.sqrt(3)
    assert spread == pytest.approx(expected, rel=0.08)


def test_extremes_put_every_quantity_at_its_bounds():
    (hi_name, hi), (lo_name, lo) = extremes(ITEMS)
    assert (hi_name, lo_name) == ("max", "min")
    assert dict(hi) == pytest.approx({"value:R1": 1.05, "value:C1": 0.9 * 1.2, "source:V1": 1.02})
    assert dict(lo) == pytest.approx({"value:R1": 0.95, "value:C1": 0.9 * 0.8, "source:V1": 0.98})


def test_nearest_rank_percentiles_and_share_over_the_limit():
    ratios = [0.9, 1.1, 0.8, 1.02, 0.95, 0.7, 0.99, 1.3, 0.85, 0.92]
    d = distribution(ratios, 90.0)
    # nearest rank (NIST handbook, "percentile"): rank ceil(p/100 n) of the sorted values
    assert d["p50"] == 0.92 and d["p95"] == 1.3 and d["at_gate"] == 1.1 and d["max"] == 1.3
    assert d["p_exceed"] == pytest.approx(0.3) and d["mean"] == pytest.approx(np.mean(ratios))
    assert percentile(np.array([1.0]), 99.73) == 1.0


BOARD = """valve supply with a sub-block
V1 in 0 SIN(1 {amp} 60)
V2 aux 0 PULSE(0 5 0 1u 1u 4u 10u)
R1 in mid 1k
C1 mid 0 10u m=2
RL mid 0 {rl}
X1 aux sub
.subckt sub a
R5 a b 470
C5 b 0 1u
.ends
.param amp=10 rl=1k
.tran 1u 1m
.end
"""


def test_what_varies_and_how_it_reaches_the_deck(tmp_path):
    path = tmp_path / "board.cir"
    path.write_text(BOARD)
    netlist = read_netlist(path)
    circuit = flatten(netlist)
    notes: list[str] = []
    tol = Tolerances(elements=(("R*", 1.0), ("V1", 2.0), ("V2", 5.0)), capacitors=10.0, esr_pct=20.0)
    items = varying(tol, circuit, {}, notes=notes)
    assert [v.key for v in items] == ["source:V1", "source:V2", "value:C1", "value:R1", "value:RL"]
    assert "X1.R5" in notes[0]  # inside a subcircuit: not varied, and said so
    scale = (("value:R1", 1.01), ("value:C1", 0.9), ("source:V1", 1.02), ("source:V2", 0.95), ("value:RL", 0.99),
             ("esr:C1", 1.2))
    deck = build_deck(netlist, circuit, Analysis(tran=Tran(1e-6, 1e-3)), Scenario("s~01", corner="s", scale=scale),
                      {"C1": Parasitics(esr_ohm=0.1)})
    lines = deck.text.splitlines()
    r1 = next(ln for ln in lines if ln.lower().startswith("r1 "))
    assert r1.split()[3] == repr(1000.0 * 1.01)
    rl = next(ln for ln in lines if ln.lower().startswith("rl "))
    assert float(rl.split()[3]) == pytest.approx(990.0)  # {rl} evaluated, then scaled
    v1 = next(ln for ln in lines if ln.lower().startswith("v1 "))
    assert "SIN(" in v1 and "1.02 10.2 60.0" in v1.replace(repr(1.0 * 1.02), "1.02").replace(repr(10 * 1.02), "10.2")
    v2 = next(ln for ln in lines if ln.lower().startswith("v2 "))
    assert "PULSE(0.0 4.75 " in v2  # both levels scaled, times kept
    c1 = [ln for ln in lines if "c1" in ln.lower().split()[0]]
    assert any(repr(10e-6 * 0.9) in ln and "m=2" in ln for ln in c1)  # the per-part value, m= kept
    assert any(repr(0.1 * 1.2) in ln for ln in lines)  # the ESR spread
    assert next(ln for ln in lines if ln.lower().startswith("r5 ")).split()[3] == "470"  # subcircuit card as written
