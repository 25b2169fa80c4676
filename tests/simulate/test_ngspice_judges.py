"""ngspice is the judge of what it can run: each construct another tool writes into a deck that ngspice
runs is measured by derate as ngspice measures it (DESIGN.md, "Untrusted input"; README, "Netlists derate
reads").

One minimal reproduction per construct.  The truth is bare ngspice's own ``.meas`` in batch mode on the
same circuit: the deck as written where ngspice reads it (POLY node pairs in parentheses, a PSpice model
in ngspice's PSpice mode, an unused broken subcircuit), else the same circuit with the construct written
the ngspice way (a series resistor for a source's ``Rser=``, a quoted include path).  derate's v_max,
v_min and RMS current must agree within 0.5 % (the corpus tolerance of test_real_netlists.py).
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest
import yaml

import derate
from derate.cli import main
from derate.errors import NetlistError, UnsafeNetlistError
from derate.netlist import ReadOptions, load_circuit, read_netlist
from derate.pipeline import LintStop
from derate.units import parse_number
from tests.boards import bare_ngspice_vectors, exact_rms

pytestmark = pytest.mark.ngspice

D4148 = ".model D1N4148 D(Is=4.352n N=1.906 Rs=0.6458 Cjo=7.048p M=0.285 Vj=0.75 Bv=110 Ibv=0.0001)\n"


def _measure(folder: Path, netlist: str, window: tuple[str, str], files: dict[str, str | bytes] | None = None):
    """derate's stresses per capacitor for ``netlist`` (a project in ``folder`` with ``files`` beside it)."""
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in (files or {}).items():
        path = folder / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(text if isinstance(text, bytes) else text.encode())
    (folder / "board.cir").write_bytes(netlist.encode("latin-1") if isinstance(netlist, str) else netlist)
    (folder / "derate.yaml").write_text(yaml.safe_dump({
        "netlist": "board.cir", "analysis": {"window": {"from": window[0], "to": window[1]}, "power_up": "off",
                                             "settle_budget": 1}}))
    project = derate.load_project(folder / "derate.yaml")
    run = derate.measure(project, derate.ReviewOptions(use_cache=False))
    assert not run.failed, [r.error for r in run.failed]
    (res,) = run.results
    return {s.capacitor: s for s in res.stresses}, res


def _truth(folder: Path, deck: str, caps: dict[str, tuple[str, str]], window: tuple[str, str],
           mode: str | None = None, files: dict[str, str] | None = None) -> dict[str, dict[str, float]]:
    """Bare ngspice's .meas MAX/MIN of each capacitor's voltage and the exact RMS of its current from
    ngspice's own samples, in the window; ``mode`` is written to the folder's .spiceinit as ngspice's
    compatibility mode."""
    ngspice = shutil.which("ngspice")
    assert ngspice, "ngspice is not installed; run `make test`"
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in (files or {}).items():
        (folder / name).parent.mkdir(parents=True, exist_ok=True)
        (folder / name).write_text(text)
    if mode:
        (folder / ".spiceinit").write_text(f"set ngbehavior={mode}\n")
    rng = f"from={window[0]} to={window[1]}"
    lines = [deck.rstrip("\n")]
    for k, (v, _) in enumerate(caps.values()):
        lines += [f".meas tran vmax{k} MAX {v} {rng}", f".meas tran vmin{k} MIN {v} {rng}"]
    (folder / "truth.cir").write_text("\n".join(lines) + "\n.end\n")
    out = subprocess.run([ngspice, "-b", "truth.cir"], cwd=folder, capture_output=True, text=True, timeout=300,
                         env={"PATH": os.environ.get("PATH", "/usr/bin:/bin"), "HOME": str(folder)})
    got = {m.group(1): float(m.group(2)) for m in re.finditer(r"^(\w+)\s*=\s*([-+0-9.eE]+)", out.stdout, re.M)}
    assert got, out.stdout[-2000:] + out.stderr[-2000:]
    samples = bare_ngspice_vectors(folder, deck, [i for _, i in caps.values()]) if not mode else None
    a, b = (parse_number(w).value for w in window)
    truth = {}
    for k, (cap, (_, current)) in enumerate(caps.items()):
        truth[cap] = {"vmax": got[f"vmax{k}"], "vmin": got[f"vmin{k}"]}
        if samples is not None:
            truth[cap]["irms"] = exact_rms(*samples[current], a, b)
    return truth


def _agree(ours, theirs: dict[str, float]) -> None:
    scale = max(abs(theirs["vmax"]), abs(theirs["vmin"]))
    assert abs(ours.v_max_v - theirs["vmax"]) <= 0.005 * scale, (ours.v_max_v, theirs)
    assert abs(ours.v_min_v - theirs["vmin"]) <= 0.005 * scale, (ours.v_min_v, theirs)
    if "irms" in theirs:
        assert ours.i_rms_a == pytest.approx(theirs["irms"], rel=0.005)


def test_poly_node_pairs_in_parentheses(tmp_path):
    # E1 b 0 POLY(2) (a,0) (c,0) 0 1 1: b = v(a) + v(c); ngspice treats the parentheses and commas as
    # separators, so the deck as written is the truth
    deck = ("summing amplifier of a sensor bias\nV1 a 0 SIN(0 5 1k)\nV2 c 0 1\nE1 b 0 POLY(2) (a,0) (c,0) 0 1 1\n"
            "R1 b d 1\nC1 d 0 10u\nR2 d 0 1k\n.tran 10u 5m\n")
    window = ("3m", "5m")
    ours, _ = _measure(tmp_path / "derate", deck + ".end\n", window)
    truth = _truth(tmp_path / "truth", deck, {"C1": ("v(d)", "@c1[i]")}, window)
    _agree(ours["C1"], truth["C1"])
    assert truth["C1"]["vmax"] > 5.5  # the 1 V of V2 is in it: the pairs were read as nodes, not nets


def test_source_rser_and_cpar_and_database_columns(tmp_path):
    # another simulator's V source with Rser=/Cpar=, and its capacitor database's MTBF=/ppPkg= columns;
    # the truth is the same circuit with the resistor and capacitor as elements
    deck = ("valve coil supply\nV1 a 0 SIN(0 10 1k) Rser=5 Cpar=1n\nC1 a 0 10u MTBF=1000000 ppPkg=1\n"
            "R1 a 0 1k\n.tran 2u 5m\n")
    ref = "valve coil supply\nV1 s 0 SIN(0 10 1k)\nRS s a 5\nCP s 0 1n\nC1 a 0 10u\nR1 a 0 1k\n.tran 2u 5m\n"
    window = ("3m", "5m")
    ours, _ = _measure(tmp_path / "derate", deck + ".end\n", window)
    truth = _truth(tmp_path / "truth", ref, {"C1": ("v(a)", "@c1[i]")}, window)
    _agree(ours["C1"], truth["C1"])
    # without the 5 ohm the current would be 10 / 15.9 / sqrt 2 = 0.445 A; with it 0.42 A (circuit theory)
    assert truth["C1"]["irms"] == pytest.approx(10 / abs(complex(5, -1 / (2e3 * 3.14159265 * 10e-6))) / 2 ** 0.5,
                                               rel=0.01)
    lint = derate.lint(derate.load_project(tmp_path / "derate" / "derate.yaml"))
    assert not [f for f in lint.findings if f.rule == "topology.source-capacitor-loop"]  # Rser is a resistor


def test_include_path_with_spaces_unquoted(tmp_path):
    files = {"vendor models/diodes.lib": D4148}
    deck = "soil probe bias\n{inc}\nV1 a 0 SIN(0 5 1k)\nD1 a b D1N4148\nC1 b 0 10u\nR1 b 0 1k\n.tran 10u 5m\n"
    window = ("3m", "5m")
    ours, _ = _measure(tmp_path / "derate", deck.format(inc=".lib vendor models/diodes.lib") + ".end\n", window,
                       files)
    truth = _truth(tmp_path / "truth", deck.format(inc='.include "vendor models/diodes.lib"'),
                   {"C1": ("v(b)", "@c1[i]")}, window, files=files)
    _agree(ours["C1"], truth["C1"])
    netlist = read_netlist(tmp_path / "derate" / "board.cir")
    assert any("read as one path" in text for _, text in netlist.notes)


_GAN_LIB = """* vendor GaN model, PSpice style: the channel resistance rises with TEMP
.subckt GHGAN d g s
.param rth={0.05*(1+(Temp-25)*0.008)}
Rch d s {rth}
Cds d s 200p
.ends GHGAN
"""


def test_pspice_temp_in_a_vendor_model_is_run_in_pspice_mode(tmp_path):
    # derate cannot evaluate TEMP; ngspice can in its PSpice mode ('ps' applies to included files): the
    # truth is bare ngspice in that mode on the same deck
    deck = ("pump driver clamp\n.include models/gan.lib\nV1 a 0 SIN(0 10 1k)\nR1 a b 1\nXQ1 b 0 0 GHGAN\n"
            "C1 b 0 10u\nR2 b 0 1k\n.tran 10u 5m\n")
    window = ("3m", "5m")
    files = {"models/gan.lib": _GAN_LIB}
    ours, _ = _measure(tmp_path / "derate", deck + ".end\n", window, files)
    netlist = read_netlist(tmp_path / "derate" / "board.cir")
    assert netlist.dialect == "psa"  # derate's deck holds the library's text: ngspice's 'ps' must cover it all
    truth = _truth(tmp_path / "truth", deck, {"C1": ("v(b)", "")}, window, mode="ps", files=files)
    _agree(ours["C1"], truth["C1"])
    # the model matters: with the 0.05 ohm channel C1 sees a fraction of the source
    assert truth["C1"]["vmax"] < 1.0


def test_vswitch_in_the_netlist_is_run_in_pspice_mode_for_all_files(tmp_path):
    deck = ("irrigation valve switch\nV1 a 0 12\nV2 g 0 PULSE(0 5 0 1u 1u 50u 100u)\nS1 a b g 0 SMOD\n"
            ".model SMOD VSWITCH(RON=0.1 ROFF=1MEG VON=3 VOFF=1)\nR1 b c 10\nC1 c 0 10u\nR2 c 0 100\n.tran 1u 3m\n")
    window = ("2m", "3m")
    ours, _ = _measure(tmp_path / "derate", deck + ".end\n", window)
    assert read_netlist(tmp_path / "derate" / "board.cir").dialect == "psa"
    truth = _truth(tmp_path / "truth", deck, {"C1": ("v(c)", "")}, window, mode="psa")
    _agree(ours["C1"], truth["C1"])


def test_dos_end_of_file_and_an_unused_broken_subcircuit(tmp_path):
    files = {"models/opamp.lib": ".subckt GHOPA inp inn out PARAMS: gain\nE1 out 0 inp inn {gain}\n.ends\n"
                                 ".subckt GHBUF in out\nE1 out 0 in 0 1\n.ends\n\x1a"}
    deck = ("greenhouse sensor buffer\n.include models/opamp.lib\nV1 a 0 SIN(2 1 1k)\nXU1 a b GHBUF\nR1 b c 100\n"
            "C1 c 0 1u\nR2 c 0 10k\n.tran 5u 5m\n")
    window = ("3m", "5m")
    ours, _ = _measure(tmp_path / "derate", deck + ".end\n\x1a", window, files)
    truth = _truth(tmp_path / "truth", deck, {"C1": ("v(c)", "@c1[i]")}, window, files=files)
    _agree(ours["C1"], truth["C1"])
    lint = derate.lint(derate.load_project(tmp_path / "derate" / "derate.yaml"))
    bad = [f for f in lint.findings if f.rule == "netlist.bad-subckt"]
    assert len(bad) == 1 and bad[0].severity == "warning" and "GHOPA" in bad[0].message
    assert bad[0].file.endswith("opamp.lib") and bad[0].line == 1
    # used, it is an error naming both places
    (tmp_path / "derate" / "board.cir").write_text(deck.replace("XU1 a b GHBUF", "XU1 a 0 b GHOPA gain=2") + ".end\n")
    with pytest.raises(NetlistError, match=r"header \(.*models/opamp.lib:1\) cannot be read"):
        load_circuit(tmp_path / "derate" / "board.cir")


def test_a_failed_run_says_ngspice_s_reason_at_the_netlist_line(tmp_path):
    # a function derate's evaluator does not have is left to ngspice (which may have it); here ngspice
    # has none either, and the failure names ngspice's reason and the user's line
    folder = tmp_path / "fn"
    folder.mkdir()
    (folder / "board.cir").write_text("heater\nV1 a 0 SIN(0 5 1k)\nR1 a b {clampx(5,1,10)}\nC1 b 0 10u\n"
                                      ".tran 10u 5m\n.end\n")
    (folder / "derate.yaml").write_text(yaml.safe_dump({"netlist": "board.cir",
                                                        "analysis": {"power_up": "off", "settle_budget": 1}}))
    run = derate.measure(derate.load_project(folder / "derate.yaml"), derate.ReviewOptions(use_cache=False))
    (failed,) = run.failed
    assert re.search(r"line no. 3 \(from \S*board.cir:3\): Undefined parameter \[clampx\]", failed.error), failed.error
    assert "cannot recover" not in failed.error


def test_undefined_parameter_caught_by_lint_and_named_by_ngspice(tmp_path, capsys):
    folder = tmp_path / "undef"
    folder.mkdir()
    (folder / "board.cir").write_text("pump supply\nV1 a 0 {vbus}\nR1 a b 1\nC1 b 0 10u\nR2 b 0 1k\n.tran 10u 5m\n"
                                      ".end\n")
    assert main(["lint", str(folder / "board.cir")]) == 1
    out = capsys.readouterr().out
    assert "netlist.undefined-parameter" in out and "'vbus'" in out and "board.cir:2" in out
    (folder / "derate.yaml").write_text(yaml.safe_dump({"netlist": "board.cir",
                                                        "analysis": {"power_up": "off", "settle_budget": 1}}))
    with pytest.raises(LintStop, match="vbus"):  # caught before simulating
        derate.measure(derate.load_project(folder / "derate.yaml"), derate.ReviewOptions(use_cache=False))


def test_ngspice_s_own_reason_comes_first():
    # the messages ngspice 39's shared library gives for an undefined parameter (recorded from a run of
    # the deck above with the lint stop lifted): its reason, with the deck line, not its generic stop
    from derate.simulate.shared import problems_in

    messages = ["Circuit: derate deck, scenario default", "Netlist line no. 2:", "Undefined parameter [vbus]",
                "Netlist line no. 2:", "Cannot compute substitute", "Please check your input netlist.",
                "Error: ngspice.dll cannot recover and awaits to be detached"]
    assert problems_in(messages) == ["line no. 2: Undefined parameter [vbus]", "line no. 2: Cannot compute substitute"]
    assert problems_in(["Error: ngspice.dll cannot recover and awaits to be detached"]) == [
        "Error: ngspice.dll cannot recover and awaits to be detached"]


def test_a_layout_netlist_is_named_for_what_it_is(tmp_path, capsys):
    path = tmp_path / "hub.net"
    path.write_text('(export (version "E")\n  (design\n    (source "/home/grower/hub/hub.kicad_sch")\n'
                    '    (tool "Eeschema 8.0.4"))\n  (components\n    (comp (ref "C1")\n      (value "100u"))))\n')
    assert main(["lint", str(path)]) == 2
    err = capsys.readouterr().err
    assert "hub.net:1" in err and "layout netlist" in err and "SPICE" in err and "Traceback" not in err


def test_an_include_above_the_folder_mentions_root(tmp_path):
    (tmp_path / "models").mkdir()
    (tmp_path / "models" / "d.lib").write_text(D4148)
    board = tmp_path / "board"
    board.mkdir()
    (board / "b.cir").write_text("b\n.include ../models/d.lib\nV1 a 0 1\nD1 a 0 D1N4148\n.end\n")
    with pytest.raises(UnsafeNetlistError, match="--root"):
        load_circuit(board / "b.cir", ReadOptions(root=str(board)))
    assert load_circuit(board / "b.cir", ReadOptions(root=str(tmp_path))).elements


def test_a_netlist_s_own_temp_parameter_is_not_pspice(tmp_path):
    path = tmp_path / "own.cir"
    path.write_text("own temp\n.param temp=40\nV1 a 0 1\nR1 a 0 {1k*(1+temp/100)}\n.end\n")
    assert read_netlist(path).dialect is None
    assert load_circuit(path).elements[1].value == pytest.approx(1400)


def test_a_source_s_period_is_read_in_its_own_instance_s_scope(tmp_path):
    # PULSE(... {1/fs}) in a subcircuit with fs given per instance: two instances, two periods; the
    # one-argument .tran step resolves the faster (a hundredth of 1/50 kHz = 0.2 us)
    from derate.simulate.deck import source_time_step
    from derate.simulate.window import source_periods

    path = tmp_path / "pwm.cir"
    path.write_text("two pwm generators\n.subckt gen out fs=1k\nV1 out 0 PULSE(0 1 0 {0.01/fs} {0.01/fs} {0.4/fs} "
                    "{1/fs})\n.ends\nX1 a gen fs=10k\nX2 b gen fs=50k\nR1 a 0 1k\nR2 b 0 1k\n.end\n")
    circuit = load_circuit(path)
    notes: list[str] = []
    assert sorted(source_periods(circuit, notes)) == pytest.approx([1 / 50e3, 1 / 10e3])
    assert not notes
    step, why = source_time_step(circuit)
    assert step == pytest.approx(1 / 50e3 / 100) and "X2.V1" in why
