"""Netlists as users bring them, measured by derate and checked against bare ngspice.

Each corpus netlist in tests/data/netlists/real/ is written in one real-world style (numbered
nodes; KiCad 5 and KiCad 6+ exports with their net names, model includes by another machine's
absolute or Windows path, control blocks; another simulator's Rser=/Lser=/Rpar=, .step and
one-argument .tran; a capacitor database's V=/Irms=/mfg=/pn=/type= on the cards, one-word
.lib of a library file on the exporting machine, model libraries with maker and rating
parameters, .tran ... startup; a PSpice-style export (C_C1 names, TC=a,b, .EXTERNAL, an
.ALIASES file, .TRAN 0 ... SKIPBP, 24Vdc); behavioural capacitors and TIME-dependent resistors; a wrapper deck with two
.tran cards; a vendor GaN macro-model with internal capacitors, a three-terminal VDMOS and an
unused broken .model); and public decks written outside this project, with their source and
licence in public/SOURCES.md (a push-pull converter: a display-only control block, two .tran cards,
XSPICE models).  derate measures each as written.  The outside reference is ngspice's own
`.meas tran MAX/MIN` in batch mode on a plain deck of the same circuit written by hand (plain
net names, the parasitics as elements, a 0 V source for the behavioural capacitor's current), and
ngspice's own samples of the current (``wrdata``) integrated exactly for the RMS: derate's v_max,
v_min and i_rms must agree within 0.5 %.
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
from derate.units import parse_number
from tests.boards import bare_ngspice_vectors, exact_rms
from tests.conftest import NETLISTS

pytestmark = pytest.mark.ngspice
REAL = NETLISTS / "real"

D4007 = ".model D1N4007 D(Is=7.02767n Rs=0.0341512 N=1.80803 Cjo=10p M=0.3 Vj=0.5 Bv=1000 Ibv=5u)\n"
D4148 = ".model D1N4148 D(Is=4.352n N=1.906 Rs=0.6458 Cjo=7.048p M=0.285 Vj=0.75 Bv=110 Ibv=0.0001)\n"

# name: (netlist, window (from, to), {scenario: reference deck}, {capacitor: (voltage expr, current vector)})
CASES = {
    "numbered": ("numbered.cir", ("80m", "120m"), {"default": (
        "ref\nV1 1 5 SIN(0 17 50)\nRB 5 0 100k\nD1 1 2 DB\nD2 5 2 DB\nD3 0 1 DB\nD4 0 5 DB\nC1 2 0 470u\n"
        "R1 2 4 0.5\nC2 4 0 100u\nR2 4 0 220\n.model DB D(Is=2n N=1.8 Rs=0.02)\n.tran 20u 120m\n")},
        {"C1": ("v(2)", "@c1[i]"), "C2": ("v(4)", "@c2[i]")}),
    "kicad5": ("kicad5.cir", ("66.667m", "100m"), {"default": (
        "ref\nV1 ac 0 SIN(0 12 60)\nD1 ac n1 D1N4007\nC1 n1 0 1000u\nR1 n1 n2 2.2\nC2 n2 0 220u\nR2 n2 0 150\n"
        + D4007 + ".options reltol=1e-4\n.tran 20u 100m\n")},
        {"C1": ("v(n1)", "@c1[i]"), "C2": ("v(n2)", "@c2[i]")}),
    "kicad6": ("kicad6.cir", ("2m", "3m"), {"default": (
        "ref\nV1 vin 0 PULSE(0 12 0 100n 100n 4u 10u)\nR1 vin da 10\nD1 da out D1N4148\nXD2 0 out SMBR0540\n"
        "C1 out 0 47u\nR2 out 0 47\n" + D4148 + ".subckt SMBR0540 A K\nDX A K DCORE\nCPKG A K 15p\nRPKG A K 10meg\n"
        ".model DCORE D(Is=2u N=1.05 Rs=0.1 Cjo=120p)\n.ends\n.tran 50n 3m\n")},
        {"C1": ("v(out)", "@c1[i]")}),
    "ltspice_style": ("ltspice_style.cir", ("3m", "4m"), {
        f"rload={r}": (f"ref\nV1 sw 0 PULSE(0 12 0 20n 20n 2.1u 5u)\nL1 sw x1 22u\nRL1 x1 out 30m\n"
                       f"C1 out c1a 100u\nRC1 c1a c1b 20m\nLC1 c1b 0 2n\nC2 out c2a 10u\nRC2 c2a 0 5m\nRP2 out 0 1meg\n"
                       f"Rload out 0 {r}\n.tran 4u 4m\n") for r in (2, 4)},
        {"C1": ("v(out)", "@c1[i]"), "C2": ("v(out)", "@c2[i]")}),
    # '.tran 2m startup' (one argument): the step resolves the 100 kHz gate drive (a hundredth of its period),
    # as the reference deck's does; a 2 us step would read the output 7 % higher
    "ltspice_database": ("ltspice_database.cir", ("1.5m", "2m"), {"default": (
        "ref\nV1 n001 0 24\nL1 n001 x1 22u\nRL1 x1 n002 15m\nD1 n002 out MBRS360\nC1 out c1a 100u\nRC1 c1a 0 0.05\n"
        "C2 out c2a 10u\nRC2 c2a 0 0.003\nM1 n002 n003 0 GHN7413\nV2 n003 0 PULSE(0 10 0 10n 10n 4u 10u)\nR1 out 0 47\n"
        ".model MBRS360 D(Is=22.6u Rs=.042 N=1.094 Cjo=480p M=.61 Eg=.69 Xti=2)\n"
        ".model GHN7413 VDMOS(Rg=3 Vto=2.5 Rd=5m Rs=4m Rb=6m Kp=50 lambda=.05 Cgdmax=1.2n Cgdmin=.1n Cgs=1.4n "
        "Cjo=.6n Is=10p)\n.tran 0.1u 2m 0 0.1u\n")},
        {"C1": ("v(out)", "@c1[i]"), "C2": ("v(out)", "@c2[i]")}),
    "pspice_export": ("pspice_export.cir", ("4m", "5m"), {"default": (
        "ref\nV1 n112 0 24\nL1 n112 n230 33u\nD1 n230 vout D1N5819\nC1 0 vout 220u IC=0\nC2 0 vout 1u\n"
        "R1 vout 0 47\nM1 n230 n345 0 0 GHN530\nV2 n345 0 PULSE 0 10 0 10n 10n 4u 10u\n"
        ".model D1N5819 D(Is=390n Rs=.035 N=1.3 Cjo=190p M=.6 Vj=.38 Bv=40 Ibv=1m)\n"
        ".model GHN530 NMOS(Level=3 Gamma=0 Delta=0 Eta=0 Theta=0 Kappa=0.2 Vmax=0 Xj=0 Tox=100n Uo=600 Phi=.6 "
        "Rs=19.1m Kp=20.77u W=.71 L=2u Vto=3.546 Rd=10.66m Cbd=1.033n Pb=.8 Mj=.5 Fc=.5 Cgso=613.7p Cgdo=157.1p "
        "Is=1.217p N=1 Tt=116n)\n.tran 1u 5m 0 1u uic\n")},
        {"C_C1": ("par('-v(vout)')", "@c1[i]"), "C_C2": ("par('-v(vout)')", "@c2[i]")}),
    # a public deck (tests/data/netlists/real/public/SOURCES.md): a wrapper with a display-only control
    # block and its own .tran including a KiCad export with another; the reference is the circuit with the
    # measured analysis alone (KiCad's '/o' and '/r1' written o and r1, which ngspice's .meas can read)
    "pushpull": ("public/pushpull/PushPull.cir", ("4m", "5m"), {"default": (
        "ref\n.option reltol = 0.2 abstol = 0.2\n.include public/pushpull/edt01.sub\n.model __D1 D\n.model __D2 D\n"
        "D1 Net-_D1-A_ Net-_D1-K_ __D1\nVid1 Net-_Vid1-Pad1_ Net-_D1-A_ DC 0\nL1 Net-_D1-K_ o 1m\n"
        "D2 Net-_D2-A_ Net-_D1-K_ __D2\nVid2 Net-_Vid2-Pad1_ Net-_D2-A_ DC 0\n"
        "Xfmpush1 Net-_Viq2-Pad1_ Net-_Vse1-Pad1_ Net-_Viq1-Pad1_ Net-_Vid1-Pad1_ r1 Net-_Vid2-Pad1_ xfmpush Np=10 "
        "Ns=20 C=100uF\nC1 o r1 100u\nR1 o r1 10\nXxSW2 Net-_Viq1-Pad2_ 0 /g1 power_sw\n"
        "Viq1 Net-_Viq1-Pad1_ Net-_Viq1-Pad2_ DC 0\nXxSW1 Net-_Viq2-Pad2_ 0 /g3 power_sw\n"
        "Viq2 Net-_Viq2-Pad1_ Net-_Viq2-Pad2_ DC 0\nVc1 Net-_Vc1-Pad1_ 0 DC 0.5\n"
        "XPWM_B1 Net-_Vc1-Pad1_ /g1 /g2 /g3 /g4 PWMbridge fs=10000\nVse1 Net-_Vse1-Pad1_ 0 DC 10\n"
        ".tran 0.1us 5ms uic\n")},
        {"C1": ("par('v(o)-v(r1)')", "@c1[i]")}),
    # the same author's flyback: instance parameters after PARAMS:, a PWM subcircuit whose PULSE period is
    # {1/fs} with fs given per instance (the steady-state period comes from it)
    "flyback": ("public/flyback/FlyBack.cir", ("4m", "5m"), {"default": (
        "ref\n.option reltol = 0.2 abstol = 0.2\n.include public/flyback/edt01.sub\n.model __D1 D\n"
        "Vc1 Net-_Vc1-Pad1_ 0 DC -0.5\nVip1 a Net-_Vip1-Pad2_ DC 0\nVse1 a 0 DC 15\n"
        "XxSW1 q 0 Net-_xPWM1-Out_ power_sw\nVis1 r Net-_Vis1-Pad2_ DC 0\nD1 s Net-_D1-K_ __D1\n"
        "Rs1 o Net-_D1-K_ 0.001\nXfmer1 Net-_Vip1-Pad2_ q Net-_Vis1-Pad2_ s xfmer PARAMS: Np=10 Ns=20 C=100uF\n"
        "R0 o r 10\nC1 o r 10u\nXxPWM1 Net-_Vc1-Pad1_ Net-_xPWM1-Out_ PWMtri fs=10000\n.tran 0.1us 5ms uic\n")},
        {"C1": ("par('v(o)-v(r)')", "@c1[i]")}),
    "kicad8": ("kicad8.cir", ("10m", "20m"), {"default": (
        "ref\nXD1 da vout GH5819\nV1 vin 0 SIN(0 17 50)\nR1 vin da 1\nC1 vout 0 470u\nR2 vout 0 100\nC2 vout 0 100n\n"
        ".subckt GH5819 A K\nD1 A K DS\n.model DS D(IS=31.7u RS=0.051 N=1.373 CJO=110p M=0.35 BV=40 IBV=1m)\n.ends\n"
        ".tran 1u 20m\n")},
        {"C1": ("v(vout)", "@c1[i]"), "C2": ("v(vout)", "@c2[i]")}),
    "behavioural": ("behavioural.cir", ("2m", "4m"), {"default": (
        "ref\n.param Clo=1u Chi=2u\nV1 in 0 SIN(0 8 1k)\nR1 in b 100\nC1 b bs c='(v(b) < {5}) ? {Clo} : {Chi}'\n"
        "VS bs 0 0\nR4 b 0 R='TIME > 1m ? 10k : 25k'\nB1 sense 0 V=v(ref)*2\nVref ref 0 2.5\nR5 sense 0 1k\n"
        ".tran 1u 4m\n")},
        {"C1": ("v(b)", "vs#branch")}),
    # two .tran cards: ngspice runs them last to first and leaves the first one's (the exported board's 10 ms)
    # results current, the ones a user's plots show: that is the run derate measures
    "wrapper": ("wrapper.cir", ("5m", "10m"), {"default": (
        "ref\nV1 in 0 SIN(5 1 100)\nR1 in out 10\nC1 out 0 220u\nR2 out 0 100\n.tran 5u 10m\n")},
        {"C1": ("v(out)", "@c1[i]")}),
    "gan_stage": ("gan_stage.cir", ("300u", "400u"), {"default": (
        "ref\n.subckt GANFET D G S\nRG G GI 1\nCGS GI S 200p\nCGD GI D 5p\nCDS D S 150p\n"
        "B1 D S I=v(D,S)*2/(1+exp(-(v(GI,S)-1.5)*8))\nRLEAK D S 100meg\n.ends GANFET\n"
        "V1 vin 0 48\nV2 g 0 PULSE(0 6 100n 10n 10n 2u 5u)\nXQ1 vin g sw GANFET\nM2 sw g2 0 qlowside\n"
        "V3 g2 0 PULSE(6 0 50n 10n 10n 2.1u 5u)\n"
        ".model qlowside vdmos(Rd=20m Rs=5m Vto=2.5 Kp=20 Cgdmax=200p Cgdmin=20p Cgs=500p)\n"
        "L1 sw out 10u\nC1 out 0 22u\nR1 out 0 5\nC2 vin 0 4.7u\n.tran 20n 400u\n")},
        {"C1": ("v(out)", "@c1[i]"), "C2": ("v(vin)", "@c2[i]")}),
}


@pytest.fixture(scope="module")
def corpus(tmp_path_factory):
    folder = tmp_path_factory.mktemp("real") / "board"
    shutil.copytree(REAL, folder)
    return folder


def _ngspice_meas(folder: Path, deck: str, caps: dict, window: tuple[str, str]) -> dict[str, float]:
    ngspice = shutil.which("ngspice")
    assert ngspice, "ngspice is not installed; run `make test`"
    lines = [deck.rstrip("\n"), ".save all " + " ".join(i for _, i in caps.values())]
    rng = f"from={window[0]} to={window[1]}"
    for k, (v, i) in enumerate(caps.values()):
        lines += [f".meas tran vmax{k} MAX {v} {rng}", f".meas tran vmin{k} MIN {v} {rng}",
                  f".meas tran irms{k} RMS {i} {rng}"]
    path = folder / "reference.cir"
    path.write_text("\n".join(lines) + "\n.end\n")
    out = subprocess.run([ngspice, "-b", str(path)], cwd=folder, capture_output=True, text=True, timeout=300,
                         env=dict(os.environ, HOME=str(folder))).stdout
    return {m.group(1): float(m.group(2)) for m in re.finditer(r"^(\w+)\s*=\s*([-+0-9.eE]+)", out, re.M)}


@pytest.mark.parametrize("case", sorted(CASES))
def test_real_netlist_measured_as_ngspice_measures_it(corpus, case):
    netlist, window, references, caps = CASES[case]
    (corpus / "derate.yaml").write_text(yaml.safe_dump({
        "netlist": netlist, "model_path": ["models"],
        "analysis": {"window": {"from": window[0], "to": window[1]}}}))
    project = derate.load_project(corpus / "derate.yaml")
    run = derate.measure(project, derate.ReviewOptions(use_cache=False))
    assert not run.failed, [r.error for r in run.failed]
    assert {r.scenario.name for r in run.results} == set(references)
    for res in run.results:
        got = _ngspice_meas(corpus, references[res.scenario.name], caps, window)
        by_cap = {s.capacitor: s for s in res.stresses}
        assert set(caps) <= set(by_cap), (case, sorted(by_cap))
        samples = bare_ngspice_vectors(corpus, references[res.scenario.name],  # includes relative to the corpus
                                       [i for _, i in caps.values()])
        a, b = (parse_number(w).value for w in window)
        for k, cap in enumerate(caps):
            s = by_cap[cap]
            for ours, name in ((s.v_max_v, f"vmax{k}"), (s.v_min_v, f"vmin{k}")):
                theirs = got[name]
                scale = max(abs(theirs), 1e-3 * max(abs(s.v_max_v), abs(s.v_min_v)), 1e-9)
                assert abs(ours - theirs) <= 0.005 * scale, (case, res.scenario.name, cap, name, ours, theirs)
            # RMS: ngspice's own samples (wrdata) integrated exactly for a piecewise-linear waveform, within
            # 0.5 %; ngspice's .meas RMS squares the trapezoid way, which can only read higher (by
            # dt (a - b)^2 / 6 per segment: up to 14 % here, on a spiky current with coarse steps)
            exact = exact_rms(*samples[caps[cap][1]], a, b)
            assert s.i_rms_a == pytest.approx(exact, rel=0.005), (case, res.scenario.name, cap, s.i_rms_a, exact)
            meas = got[f"irms{k}"]
            assert exact <= meas * (1 + 1e-4), (case, cap, exact, meas)


def test_what_the_corpus_reads_and_notes(corpus):
    """The constructs are read as documented (README, 'Netlists derate reads')."""
    def lint_of(name: str):
        (corpus / "derate.yaml").write_text(yaml.safe_dump({"netlist": name, "model_path": ["models"]}))
        project = derate.load_project(corpus / "derate.yaml")
        return derate.lint(project)
    notes = " | ".join(f.message for f in lint_of("kicad5.cir").findings)
    assert "control command 'wrdata' ignored" in notes and "sets derate's run (tran 20u 100m)" in notes
    kicad6 = lint_of("kicad6.cir")
    text = " | ".join(f.message for f in kicad6.findings)
    assert "resolved by file name to" in text and "1N4148.lib" in text and "MBR0540.mod" in text
    assert not kicad6.errors
    gan = lint_of("gan_stage.cir")
    assert [f.rule for f in gan.findings if f.rule == "netlist.bad-model"] == ["netlist.bad-model"]
    assert not gan.errors
    pushpull = lint_of("public/pushpull/PushPull.cir")
    text = " | ".join(f.message for f in pushpull.findings)
    assert not pushpull.errors and "control 'set' of display variables ignored" in text
    assert "control commands 'gnuplot' ignored (7x)" in text and "'echo' ignored" in text
    behavioural = lint_of("behavioural.cir")
    assert not [f for f in behavioural.findings if f.rule == "topology.single-pin-net"]  # ref is read by B1


def test_model_internals_are_listed_not_reviewed(corpus):
    (corpus / "derate.yaml").write_text(yaml.safe_dump({
        "netlist": "gan_stage.cir", "model_path": ["models"], "exclude": ["C2"],
        "analysis": {"window": {"from": "300u", "to": "400u"}}}))
    review = derate.review(derate.load_project(corpus / "derate.yaml"), derate.ReviewOptions(use_cache=False))
    reviewed = [c.path for c in review.assessment.capacitors]
    skipped = dict((el.path, why) for el, why in review.assessment.not_reviewed)
    assert reviewed == ["C1"]
    assert set(skipped) == {"XQ1.CGS", "XQ1.CGD", "XQ1.CDS", "C2"}
    assert skipped["XQ1.CGS"].startswith("model internal") and "excluded" in skipped["C2"]
    assert review.record["summary"]["not_reviewed"] == 4
    assert all(f.subject not in skipped for f in review.findings)  # never unrated


def test_compatibility_mode_reaches_the_simulator(ngspice_pool):
    from derate.simulate.job import InspectJob

    deck = "mode\nV1 a 0 1\nR1 a 0 1k\n.end\n"
    with_mode, without = ngspice_pool.run([("a", InspectJob(deck, dialect="ps"), 30), ("b", InspectJob(deck), 30)])
    assert any("Compatibility modes selected: ps" in m for m in with_mode.data["messages"])
    assert not any("modes selected: ps" in m for m in without.data["messages"])


def test_part_data_on_the_cards_is_read_and_kept_out_of_the_deck(corpus):
    """V=, Irms=, mfg=, pn= and type= on capacitor cards become part data (a BOM would override
    them); the deck ngspice reads has none of them, nor the libraries' maker and rating parameters."""
    from derate.simulate.scenarios import prepare

    (corpus / "derate.yaml").write_text(yaml.safe_dump({"netlist": "ltspice_database.cir", "model_path": ["models"],
                                                        "analysis": {"window": {"from": "1.5m", "to": "2m"}},
                                                        "scenarios": [{"name": "default", "ambient_c": 25}]}))
    project = derate.load_project(corpus / "derate.yaml")
    netlist, circuit = derate.read_circuit(project)
    (_, _, deck, _), = prepare(project, netlist, circuit)
    text = deck.text.lower()
    for word in ("irms=", "mfg=", "pn=", "type=", " v=63", "iave=", "vpk=", "startup", "lderate_esl"):
        assert word not in text, word
    assert "vds=30" in text  # VDMOS parameters ngspice knows stay
    review = derate.review(project, derate.ReviewOptions(use_cache=False))
    caps = {c["reference"]: c for c in review.record["capacitors"]}
    assert caps["C1"]["technology"] == "aluminum-electrolytic" and caps["C1"]["v_rated_v"] == 63
    assert caps["C1"]["part_number"] == "GH-AE-101-63"
    assert caps["C2"]["technology"] == "ceramic-class2" and caps["C2"]["v_rated_v"] == 50
    c1_ripple = next(f for f in review.record["findings"] if f["subject"] == "C1" and f["rule"] == "stress.ripple")
    assert c1_ripple["limit"] == pytest.approx(0.8 * 1.2)  # the industrial policy's 80 % of the card's Irms=1.2
    notes = " ".join(review.record["summary"]["notes"] + review.record.get("data_notes", []))
    assert "read from their netlist cards" in notes and "'startup' of another simulator ignored" in (
        notes + " ".join(review.record.get("analysis_notes", [])))


def test_pspice_style_export_with_its_bom(corpus):
    """An exporter that names parts C_C1 while the BOM says C1: the BOM's data reaches the
    capacitor; TC=0,0, .EXTERNAL, .ALIASES and SKIPBP are read as documented."""
    (corpus / "derate.yaml").write_text(yaml.safe_dump({
        "netlist": "pspice_export.cir", "bom": {"file": "pspice_bom.csv"}, "analysis": {"window": {"from": "4m", "to": "5m"}}}))
    review = derate.review(derate.load_project(corpus / "derate.yaml"), derate.ReviewOptions(use_cache=False))
    caps = {c["reference"]: c for c in review.record["capacitors"]}
    assert caps["C_C1"]["technology"] == "aluminum-electrolytic" and caps["C_C1"]["v_rated_v"] == 63
    assert caps["C_C2"]["technology"] == "ceramic-class2" and caps["C_C2"]["v_rated_v"] == 50
    # the card puts ground first: the electrolytic is reverse-biased as written, and the finding says
    # how derate reads the node order
    rev = next(f for f in review.record["findings"] if f["subject"] == "C_C1" and f["rule"] == "stress.reverse")
    assert rev["status"] == "fail" and "first node as the + terminal" in rev["message"]
    lint = derate.lint(derate.load_project(corpus / "derate.yaml"))
    text = " | ".join(f.message for f in lint.findings)
    assert ".external card ignored" in text and ".aliases card ignored" in text and not lint.errors
    # declared: the card lists the - terminal first; the same run is read with the sign turned
    c1_before = next(s for s in review.run.results[0].stresses if s.capacitor == "C_C1")
    (corpus / "derate.yaml").write_text(yaml.safe_dump({
        "netlist": "pspice_export.cir", "bom": {"file": "pspice_bom.csv"}, "reversed_terminals": ["c_c1"],
        "analysis": {"window": {"from": "4m", "to": "5m"}}}))
    turned = derate.review(derate.load_project(corpus / "derate.yaml"), derate.ReviewOptions(use_cache=False))
    c1 = next(s for s in turned.run.results[0].stresses if s.capacitor == "C_C1")
    assert (c1.v_max_v, c1.v_min_v, c1.i_rms_a) == (-c1_before.v_min_v, -c1_before.v_max_v, c1_before.i_rms_a)
    assert turned.run.results[0].waves["C_C1"].v_max_v.max() == pytest.approx(-c1_before.v_min_v, rel=1e-3)
    findings = {f["rule"]: f for f in turned.record["findings"] if f["subject"] == "C_C1"}
    assert findings["stress.reverse"]["status"] == "pass"
    assert findings["stress.voltage"]["measured"] == pytest.approx(c1.v_max_v)
    (corpus / "derate.yaml").write_text(yaml.safe_dump({"netlist": "pspice_export.cir", "reversed_terminals": ["C9"]}))
    with pytest.raises(derate.DataError, match="'C9' matches no capacitor"):
        derate.review(derate.load_project(corpus / "derate.yaml"), derate.ReviewOptions(use_cache=False))


def test_a_run_of_one_mains_period_says_steady_state_was_not_checked(corpus):
    """KiCad 8 export (`.title` first line, `Net-(D1-A)` names): 20 ms of a 50 Hz supply cannot show
    a steady state; the review says so instead of passing silently."""
    (corpus / "derate.yaml").write_text(yaml.safe_dump({"netlist": "kicad8.cir", "model_path": ["models"]}))
    review = derate.review(derate.load_project(corpus / "derate.yaml"), derate.ReviewOptions(use_cache=False))
    assert review.record["project"]["title"] == "KiCad schematic"
    notes = " ".join(review.record.get("analysis_notes", []))
    assert "shorter than two periods of the circuit (20 ms)" in notes


def test_review_models_true_reviews_the_capacitors_inside_device_models(corpus):
    (corpus / "derate.yaml").write_text(yaml.safe_dump({
        "netlist": "gan_stage.cir", "model_path": ["models"], "review_models": True,
        "analysis": {"window": {"from": "300u", "to": "400u"}}}))
    review = derate.review(derate.load_project(corpus / "derate.yaml"), derate.ReviewOptions(use_cache=False))
    reviewed = {c.path: c for c in review.assessment.capacitors}
    assert {"XQ1.CGS", "XQ1.CGD", "XQ1.CDS", "C1", "C2"} <= set(reviewed)
    assert not review.assessment.not_reviewed
    # reviewed, they need part data like any other capacitor: never a silent pass
    assert reviewed["XQ1.CGS"].status == "unrated"
    measured = {s.capacitor for r in review.run.results for s in r.stresses}
    assert "XQ1.CGS" in measured


def test_a_one_argument_tran_is_measured_as_a_fine_run_measures_it(tmp_path):
    """An LTspice-style '.tran 1' on a 50 Hz bridge: derate's step (a hundredth of the line period) gives the
    bus voltage and ripple current that ngspice gives with a step ten times finer (0.5 %)."""
    from tests.boards import bare_ngspice

    deck = ("bridge\nV1 a b SIN(0 17 50)\nRB b 0 10meg\nD1 a p dd\nD2 b p dd\nD3 0 a dd\nD4 0 b dd\n"
            ".model dd D(Is=1e-9 N=1.5 Rs=0.1)\nC1 p 0 2200u\nRL p 0 50\n{tran}\n.end\n")
    (tmp_path / "board.cir").write_text(deck.format(tran=".tran 1"))
    (tmp_path / "derate.yaml").write_text("netlist: board.cir\nanalysis: {settle_budget: 1, power_up: 'off'}\n")
    run = derate.measure(derate.load_project(tmp_path / "derate.yaml"), derate.ReviewOptions(use_cache=False))
    (s,) = run.results[0].stresses
    assert run.results[0].deck.tran.step_s == pytest.approx(0.2e-3)
    truth = bare_ngspice(tmp_path / "truth", deck.format(tran=".tran 20u 1 0 20u") .replace(
        ".end", f".meas tran vmax MAX v(p) from={s.window_start_s!r} to=1\n"
                f".meas tran vmin MIN v(p) from={s.window_start_s!r} to=1\n.end"))
    assert s.v_max_v == pytest.approx(truth["vmax"], rel=0.005)
    assert s.v_min_v == pytest.approx(truth["vmin"], rel=0.005)
