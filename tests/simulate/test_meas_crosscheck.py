"""Outside reference for the measurements: ngspice's own `.meas tran MAX/MIN/RMS`.

The deck derate builds for a corpus netlist is run again by ngspice in batch mode (`ngspice -b`,
a separate process and a separate reader of the results) with `.meas` cards over the same window.
For every capacitor, derate's v_max, v_min and i_rms must equal ngspice's within 0.5 %.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess

import pytest

from derate.netlist import flatten, read_netlist
from derate.project import load_project
from derate.simulate.runner import LocalRunner
from derate.simulate.scenarios import prepare, simulate_scenarios
from tests.conftest import NETLISTS

pytestmark = pytest.mark.ngspice

PROJECT = """netlist: {netlist}
analysis:
  tran: {{step: 0.2u, stop: 2m, max_step: 1u}}
  window: {{from: 1m, to: 2m}}
"""


def _meas_deck(deck_text: str, probes, t0: float, t1: float) -> str:
    lines = [ln for ln in deck_text.splitlines() if not ln.lower().startswith(".save") and ln.lower() != ".end"]
    lines.append(".save all " + " ".join(p.current for p in probes))
    for k, p in enumerate(probes):
        if p.v_minus:
            v = f"par('v({p.v_plus})-v({p.v_minus})')" if p.v_plus else f"par('-v({p.v_minus})')"
        else:
            v = f"v({p.v_plus})"
        rng = f"from={t0!r} to={t1!r}"
        lines.append(f".meas tran vmax{k} MAX {v} {rng}")
        lines.append(f".meas tran vmin{k} MIN {v} {rng}")
        lines.append(f".meas tran irms{k} RMS {p.current} {rng}")
    lines.append(".end")
    return "\n".join(lines) + "\n"


def test_measurements_equal_ngspice_meas(tmp_path, ngspice_pool):
    ngspice = shutil.which("ngspice")
    assert ngspice, "ngspice is not installed; run `make test`"
    shutil.copy(NETLISTS / "measure_corpus.cir", tmp_path)
    (tmp_path / "derate.yaml").write_text(PROJECT.format(netlist="measure_corpus.cir"))
    project = load_project(tmp_path / "derate.yaml")
    netlist = read_netlist(project.netlist)
    circuit = flatten(netlist)
    run = simulate_scenarios(project, netlist, circuit, runner=LocalRunner(pool=ngspice_pool))
    (res,) = run.results
    assert res.ok, res.error
    (_, _, deck, _), = prepare(project, netlist, circuit)
    meas_deck = tmp_path / "meas.cir"
    meas_deck.write_text(_meas_deck(deck.text, deck.probes, 1e-3, 2e-3))
    out = subprocess.run([ngspice, "-b", str(meas_deck)], cwd=tmp_path, capture_output=True, text=True,
                         timeout=120, env=dict(os.environ, HOME=str(tmp_path))).stdout
    got = {m.group(1): float(m.group(2)) for m in re.finditer(r"^(\w+)\s*=\s*([-+0-9.eE]+)", out, re.M)}
    by_cap = {s.capacitor: s for s in res.stresses}
    assert set(by_cap) == {"C1", "C2", "C3", "C4", "X1.CF", "X2.CF"}
    for k, p in enumerate(deck.probes):
        s = by_cap[p.path]
        for ours, theirs in ((s.v_max_v, got[f"vmax{k}"]), (s.v_min_v, got[f"vmin{k}"]), (s.i_rms_a, got[f"irms{k}"])):
            scale = max(abs(theirs), 1e-3 * max(abs(s.v_max_v), abs(s.v_min_v)))  # a 0 V minimum has no relative size
            assert abs(ours - theirs) <= 0.005 * scale, (p.path, ours, theirs)
