"""A board is often more than one deck: a 50 Hz front end and a 100 kHz buck need different time steps.
``netlists:`` in derate.yaml gives each deck its own analysis and scenarios; one review judges the board
(README, "Several decks of one board").

The truth for each deck's figures is bare ngspice's own .meas on the same deck; the board's verdict is
the worst of its decks' (a designator in two decks is one part on the board, judged over both).
"""

from __future__ import annotations

import pytest
import yaml

import derate
from derate.cli import main
from derate.errors import DataError
from derate.status import Status
from tests.boards import bare_ngspice

pytestmark = pytest.mark.ngspice

# the greenhouse hub's offline front end: a bridge into the bulk capacitor C9 (16 V part)
FRONT_END = """greenhouse hub front end
V1 l n SIN(0 15 50)
RN n 0 100k
D1 l p DB
D2 n p DB
D3 0 l DB
D4 0 n DB
C9 p 0 470u
RL p 0 30
.model DB D(Is=2n N=1.8 Rs=0.05)
.tran 20u 200m
.end
"""
# the buck the bulk capacitor feeds, its input seen as a 14 V source with some resistance: C9 again, with
# the switching current, and the output capacitor C12
BUCK = """greenhouse hub buck
VIN src 0 14
RIN src p 0.2
C9 p 0 470u
S1 p sw g 0 SW
VG g 0 PULSE(0 5 0 10n 10n 4u 10u)
D1 0 sw DS
L1 sw out 47u
C12 out 0 100u
RL out 0 5
.model SW SW(Ron=0.05 Roff=1Meg Vt=2.5)
.model DS D(Is=10u N=1.05 Rs=0.02)
.tran 100n 8m
.end
"""
PARTS = {"C9": {"technology": "aluminum-electrolytic", "capacitance_f": "470u", "rated_voltage_v": 16,
                "ripple_current_a": 1.0, "rated_temperature_c": 105, "esr_ohm": 0.1, "base_life_h": 5000},
         "C12": {"technology": "ceramic-class1", "capacitance_f": "100u", "rated_voltage_v": 10}}


def _with_esr(deck: str) -> str:
    return deck.replace("C9 p 0 470u\n", "C9 p c9e 470u\nRC9 c9e 0 0.1\n")


def _board(folder):
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "front_end.cir").write_text(FRONT_END)
    (folder / "buck.cir").write_text(BUCK)
    (folder / "parts.yaml").write_text(yaml.safe_dump({"parts": PARTS}))
    (folder / "derate.yaml").write_text(yaml.safe_dump({
        "parts": "parts.yaml", "policy": "industrial",
        "analysis": {"power_up": "off", "settle_budget": 2},
        "netlists": [
            {"name": "front-end", "netlist": "front_end.cir", "analysis": {"window": {"from": "160m", "to": "200m"},
                                                                         "power_up": "off", "settle_budget": 2},
             "scenarios": [{"name": "warm", "ambient_c": 40}]},
            {"netlist": "buck.cir", "analysis": {"window": {"from": "7m", "to": "8m"}, "power_up": "off",
                                                 "settle_budget": 2},
             "scenarios": [{"name": "warm", "ambient_c": 40}, {"name": "hot", "ambient_c": 60}]}]},
        sort_keys=False))
    return folder / "derate.yaml"


def test_two_decks_give_one_review(tmp_path):
    project = derate.load_project(_board(tmp_path / "board"))
    assert [d.deck_name for d in project.decks] == ["front-end", "buck"]
    review = derate.review(project, derate.ReviewOptions(use_cache=False))
    names = [r.scenario.name for r in review.run.results]
    assert names == ["front-end/warm", "buck/warm", "buck/hot"]
    assert all(r.ok for r in review.run.results), [r.error for r in review.run.results]
    caps = {c.path: c for c in review.assessment.capacitors}
    assert set(caps) == {"C9", "C12"}

    # each deck's figures are bare ngspice's on that deck (within 0.5 %), C9's ESR from its part data as a
    # resistor of its own
    fe = bare_ngspice(tmp_path / "truth-fe", _with_esr(FRONT_END).replace(".end\n", ".meas tran vmax MAX v(p) from=160m to=200m\n"
                                                                             ".end\n"))
    buck = bare_ngspice(tmp_path / "truth-buck", _with_esr(BUCK).replace(".end\n", ".meas tran vmax MAX v(p) from=7m to=8m\n"
                                                                        ".meas tran vout MAX v(out) from=7m to=8m\n"
                                                                        ".end\n"))
    by = {(st.scenario, st.capacitor): st for st in review.run.stresses()}
    assert by[("front-end/warm", "C9")].v_max_v == pytest.approx(fe["vmax"], rel=0.005)
    assert by[("buck/warm", "C9")].v_max_v == pytest.approx(buck["vmax"], rel=0.005)
    assert by[("buck/hot", "C12")].v_max_v == pytest.approx(buck["vout"], rel=0.005)

    # C9 is one part on the board: each check is judged over the scenarios of both decks, so the board's
    # finding is the worse of the two decks reviewed alone
    alone = {}
    for name, netlist, analysis, scenarios in (
            ("front-end", "front_end.cir", {"window": {"from": "160m", "to": "200m"}}, [{"name": "warm", "ambient_c": 40}]),
            ("buck", "buck.cir", {"window": {"from": "7m", "to": "8m"}},
             [{"name": "warm", "ambient_c": 40}, {"name": "hot", "ambient_c": 60}])):
        own = {k: v for k, v in PARTS.items() if k in (FRONT_END if name == "front-end" else BUCK)}
        (tmp_path / "board" / f"{name}-parts.yaml").write_text(yaml.safe_dump({"parts": own}))
        (tmp_path / "board" / f"{name}.yaml").write_text(yaml.safe_dump({
            "netlist": netlist, "parts": f"{name}-parts.yaml", "policy": "industrial",
            "analysis": {**analysis, "power_up": "off", "settle_budget": 2}, "scenarios": scenarios}))
        alone[name] = derate.review(derate.load_project(tmp_path / "board" / f"{name}.yaml"),
                                    derate.ReviewOptions(use_cache=False))
    for rule in ("stress.voltage", "stress.ripple"):
        board_f = next(f for f in review.findings if f.subject == "C9" and f.rule == rule)
        each = {name: next(f for f in r.findings if f.subject == "C9" and f.rule == rule) for name, r in alone.items()}
        worse_deck, worse = max(each.items(), key=lambda kv: kv[1].ratio)
        assert board_f.ratio == pytest.approx(worse.ratio, rel=1e-9), rule
        assert board_f.scenario == f"{worse_deck}/{worse.scenario}"
    # each capacitor is expected only in its own decks' scenarios: C12 (buck only) has no missing result
    assert not [f for f in review.findings if f.rule == "measure.no-result"]
    assert caps["C9"].status == max((next(c for c in r.assessment.capacitors if c.path == "C9").status
                                     for r in alone.values()), key=lambda st: Status(st).rank)

    rec = review.record
    assert [d["name"] for d in rec["project"]["decks"]] == ["front-end", "buck"]
    assert rec["project"]["decks"][1]["scenarios"] == ["warm", "hot"]
    assert [s["name"] for s in rec["scenarios"]] == names


def test_a_board_from_the_command_line_writes_one_report(tmp_path, capsys):
    path = _board(tmp_path / "board")
    out = tmp_path / "board" / "out" / "review.json"
    code = main(["check", str(path), "--no-cache", "--output", str(out), "--format", "json", "--quiet"])
    assert code in (0, 1)
    import json
    rec = json.loads(out.read_text())
    assert {s["name"] for s in rec["scenarios"]} == {"front-end/warm", "buck/warm", "buck/hot"}
    assert {c["reference"] for c in rec["capacitors"]} == {"C9", "C12"}


def test_board_files_are_checked(tmp_path):
    folder = tmp_path / "bad"
    folder.mkdir()
    (folder / "a.cir").write_text(FRONT_END)
    for doc, message in (
            ({"netlist": "a.cir", "netlists": [{"netlist": "a.cir"}]}, "either 'netlist'"),
            ({}, "either 'netlist'"),
            ({"netlists": [{"netlist": "a.cir"}, {"netlist": "a.cir"}]}, "two decks are named 'a'"),
            ({"netlists": [{"netlist": "a.cir", "name": "bad name"}]}, "netlists"),
            ({"netlists": [{"netlist": "a.cir"}], "mission": {"life_h": 1000, "profile": {"warm": 1}}},
             "deck/scenario")):
        (folder / "derate.yaml").write_text(yaml.safe_dump(doc))
        with pytest.raises(DataError, match=message):
            derate.load_project(folder / "derate.yaml")


def test_init_writes_a_board_project_where_asked(tmp_path, capsys):
    repo = tmp_path / "hub"
    (repo / ".git").mkdir(parents=True)
    (repo / "sims").mkdir()
    (repo / "sims" / "front end.cir").write_text(FRONT_END)
    (repo / "sims" / "buck.cir").write_text(BUCK)
    target = repo / "review" / "board.yaml"
    target.parent.mkdir()
    assert main(["init", str(repo / "sims" / "front end.cir"), str(repo / "sims" / "buck.cir"),
                 "--project", str(target)]) == 0
    project = derate.load_project(target)
    assert [d.deck_name for d in project.decks] == ["front-end", "buck"]
    assert [d.netlist.name for d in project.decks] == ["front end.cir", "buck.cir"]
    assert (repo / "review" / "parts.yaml").exists() and not (repo / "sims" / "derate.yaml").exists()
    # a second init without --force refuses to overwrite, exit 2, nothing changed
    before = target.read_text()
    assert main(["init", str(repo / "sims" / "buck.cir"), "-o", str(target)]) == 2
    assert "exists" in capsys.readouterr().err and target.read_text() == before
    # one netlist, written elsewhere: a plain netlist: key relative to the project file
    assert main(["init", str(repo / "sims" / "buck.cir"), "-o", str(repo / "buck.yaml")]) == 0
    single = derate.load_project(repo / "buck.yaml")
    assert not single.decks and single.netlist == (repo / "sims" / "buck.cir").resolve()
    assert main(["init", str(repo / "sims" / "buck.cir"), "-o", str(repo / "buck.txt")]) == 2
