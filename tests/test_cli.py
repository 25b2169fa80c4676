"""The command line: exit codes, formats, error messages without tracebacks."""

from __future__ import annotations

import json
import subprocess
import sys

from derate.cli import main
from tests.conftest import NETLISTS


def test_lint_clean_exits_0(capsys):
    assert main(["lint", "--no-color", str(NETLISTS / "hierarchy.cir")]) == 0
    out = capsys.readouterr().out
    assert "0 error(s)" in out


def test_lint_errors_exit_1_and_json(write, capsys):
    p = write("f.cir", "f\nV1 a 0 5\nR1 a 0 1k\nC1 a x 1u\nC2 x 0 1u\n.end\n")
    assert main(["lint", "--format", "json", str(p)]) == 1
    doc = json.loads(capsys.readouterr().out)
    assert doc["findings"][0]["rule"] == "topology.no-dc-path"
    assert doc["findings"][0]["line"] == 4 and doc["elements"] == 4


def test_bad_netlist_exits_2_with_file_line_and_no_traceback(write, capsys):
    p = write("bad.cir", "t\nR1 a\n.end\n")
    assert main(["lint", str(p)]) == 2
    err = capsys.readouterr().err
    assert "bad.cir:2:" in err and "R1 a" in err and "Traceback" not in err


def test_missing_file_exits_2(tmp_path, capsys):
    assert main(["lint", str(tmp_path / "nope.cir")]) == 2
    assert "not found" in capsys.readouterr().err


def test_no_color_env_and_quiet(write, monkeypatch, capsys):
    p = write("f.cir", "f\nV1 a 0 5\nR1 a 0 1k\nC1 a x 1u\nC2 x 0 1u\n.end\n")
    monkeypatch.setenv("NO_COLOR", "1")
    main(["lint", str(p)])
    assert "\x1b[" not in capsys.readouterr().out
    # --quiet: silent when clean, one line per error otherwise (a pre-commit hook's log says why)
    assert main(["lint", "--quiet", str(p)]) == 1
    assert capsys.readouterr().out.splitlines() == [f"{p}:4: error topology.no-dc-path: " + _no_dc_message(p)]
    assert main(["lint", "--quiet", str(NETLISTS / "hierarchy.cir")]) == 0
    assert capsys.readouterr().out == ""


def _no_dc_message(p):
    from derate.api import lint
    return lint(p).errors[0].message


def test_lint_takes_many_netlists(write, capsys):
    """The pre-commit hook passes every changed netlist at once (issue 13)."""
    good = NETLISTS / "hierarchy.cir"
    bad = write("f.cir", "f\nV1 a 0 5\nR1 a 0 1k\nC1 a x 1u\nC2 x 0 1u\n.end\n")
    assert main(["lint", "--no-color", str(good), str(good)]) == 0
    assert capsys.readouterr().out.count("0 error(s)") == 2
    assert main(["lint", "--no-color", str(good), str(bad)]) == 1
    out = capsys.readouterr().out
    assert "hierarchy.cir" in out and "f.cir" in out and "topology.no-dc-path" in out
    assert main(["lint", "--format", "json", str(good), str(bad)]) == 1
    docs = json.loads(capsys.readouterr().out)
    assert [any(f["severity"] == "error" for f in d["findings"]) for d in docs] == [False, True]


def test_python_dash_m_and_help_lists_exit_codes():
    res = subprocess.run([sys.executable, "-m", "derate", "lint", "--help"], capture_output=True, text=True)
    assert res.returncode == 0
    assert "exit codes" in res.stdout and "simulation failure" in res.stdout


def test_example_board_lints_without_errors(capsys):
    from pathlib import Path
    board = Path(__file__).parents[1] / "examples" / "irrigation-controller" / "board.cir"
    assert main(["lint", "--no-color", str(board)]) == 0
    out = capsys.readouterr().out
    assert "0 error(s)" in out


def test_report_url_must_be_a_web_address(capsys):
    import pytest
    for bad in ("javascript:alert(1)", "file:///etc/passwd", "https://ok.example/a b", "reports/"):
        with pytest.raises(SystemExit) as exc:
            main(["check", "--report-url", bad, "derate.yaml"])
        assert exc.value.code == 2
        assert "expected an http:// or https:// address" in capsys.readouterr().err


def test_line_100_is_a_line_number_not_an_emoji(write, capsys):
    """':100:' in 'f.cir:100: error' must print as written (the console renders no emoji codes)."""
    filler = "".join(f"R{k} a 0 1k\n" for k in range(97))
    p = write("f.cir", "f\nV1 a 0 5\n" + filler + "C1 a x 1u\nC2 x 0 1u\n.end\n")
    assert main(["lint", "--quiet", "--no-color", str(p)]) == 1
    out = capsys.readouterr().out
    assert f"{p}:100: error topology.no-dc-path" in out and "\U0001f4af" not in out


def test_output_and_format_that_disagree_are_refused_before_simulating(tmp_path, capsys):
    """`-o single.json` with two formats once made a folder named single.json; `--format json -o x.html`
    wrote JSON into x.html.  Both are now input errors (exit 2) naming the output."""
    project = tmp_path / "derate.yaml"
    (tmp_path / "board.cir").write_text("t\nV1 a 0 SIN(0 1 1k)\nR1 a b 1k\nC1 b 0 1u\n.tran 1u 2m\n.end\n")
    project.write_text("netlist: board.cir\n")
    for args, says in ((["--format", "json", "--format", "sarif", "-o", str(tmp_path / "single.json")],
                        "2 formats need a folder"),
                       (["--format", "json", "-o", str(tmp_path / "x.html")], "--format json writes json")):
        assert main(["check", "--no-color", "--no-cache", str(project), *args]) == 2
        err = capsys.readouterr().err
        assert says in err and "Traceback" not in err
    assert not (tmp_path / "single.json").exists() and not (tmp_path / "x.html").exists()
    # what agrees is written: a SARIF file named .sarif.json, several formats into a folder
    assert main(["check", "--no-color", "--no-cache", str(project), "--format", "sarif", "-o",
                 str(tmp_path / "r.sarif.json")]) in (0, 1)
    assert json.loads((tmp_path / "r.sarif.json").read_text())["version"] == "2.1.0"


def test_one_scenario_one_capacitor_and_a_report_that_never_fails_the_job(tmp_path, capsys):
    """--scenario and --only narrow a run while iterating; --fail-on never writes the reports and exits 0;
    names that match nothing are input errors listing what exists."""
    (tmp_path / "board.cir").write_text("greenhouse vent filter\nV1 a 0 SIN(0 20 1k)\nR1 a b 10\nC1 b 0 1u\n"
                                        "R2 b c 10\nC2 c 0 1u\n.tran 1u 3m\n.end\n")
    (tmp_path / "parts.yaml").write_text("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 10}\n"
                                         "  C2: {technology: ceramic-class1, rated_voltage_v: 100}\n")
    (tmp_path / "derate.yaml").write_text("netlist: board.cir\nparts: parts.yaml\nscenarios:\n"
                                          "  - {name: cold, temperature_c: -20}\n  - {name: hot, temperature_c: 60}\n")
    project = str(tmp_path / "derate.yaml")
    out = tmp_path / "r.json"
    assert main(["check", "--no-color", "--quiet", project, "--scenario", "h*", "--only", "C2",
                 "--format", "json", "-o", str(out)]) == 0  # C2 passes; C1 (which fails) is not selected
    record = json.loads(out.read_text())
    assert [sc["name"] for sc in record["scenarios"]] == ["hot"]
    assert [c["reference"] for c in record["capacitors"]] == ["C2"]
    capsys.readouterr()
    main(["check", "--no-color", project, "--scenario", "hot", "--only", "C2"])
    assert "not reviewed: C1 (not selected (--only))" in capsys.readouterr().out  # named, not only counted
    assert main(["check", "--no-color", "--quiet", project, "--format", "json", "-o", str(out)]) == 1
    assert main(["check", "--no-color", "--quiet", project, "--fail-on", "never", "--format", "json",
                 "-o", str(out)]) == 0
    record = json.loads(out.read_text())
    # the report does not pretend: the verdict is fail, only the exit code is 0
    assert record["summary"]["verdict"] == "fail" and record["summary"]["exit_code"] == 0
    assert record["project"]["fail_on"] == "never"
    capsys.readouterr()
    assert main(["check", "--no-color", project, "--scenario", "warm"]) == 2
    assert "--scenario warm matches no scenario (scenarios: cold, hot)" in capsys.readouterr().err
    assert main(["check", "--no-color", project, "--only", "C9"]) == 2
    assert "--only c9 names no capacitor of the netlist" in capsys.readouterr().err


def test_a_run_outside_a_terminal_logs_each_scenario_as_it_ends(tmp_path, capsys):
    """CI systems kill jobs that print nothing for a while, and people watch logs: one line per
    scenario on stderr as it ends (none with --quiet)."""
    (tmp_path / "board.cir").write_text("t\nV1 a 0 SIN(0 1 1k)\nR1 a b 1k\nC1 b 0 1u\n.tran 1u 3m\n.end\n")
    (tmp_path / "derate.yaml").write_text("netlist: board.cir\nscenarios: [{name: cold, temperature_c: -20}, "
                                          "{name: hot, temperature_c: 60}]\n")
    main(["check", "--no-color", "--no-cache", str(tmp_path / "derate.yaml")])
    err = capsys.readouterr().err
    lines = [ln for ln in err.splitlines() if ln.startswith("scenario ")]
    assert sorted(ln.split(" ended")[0] for ln in lines) == ["scenario 1/2 cold", "scenario 2/2 hot"] or \
        sorted(ln.split(" ended")[0].split(" ", 2)[2] for ln in lines) == ["cold", "hot"]
    main(["check", "--no-color", "--quiet", str(tmp_path / "derate.yaml")])
    assert "ended" not in capsys.readouterr().err


def test_a_run_served_from_the_cache_still_names_its_ngspice(tmp_path):
    """Cached results carry the version of the ngspice that made them; the reports' footer said
    'ngspice ?' when every scenario came from the cache."""
    import derate

    (tmp_path / "board.cir").write_text("t\nV1 a 0 SIN(0 1 1k)\nR1 a b 1k\nC1 b 0 1u\n.tran 1u 3m\n.end\n")
    (tmp_path / "derate.yaml").write_text("netlist: board.cir\n")
    options = derate.ReviewOptions(cache_dir=tmp_path / "cache")
    first = derate.review(derate.load_project(tmp_path / "derate.yaml"), options)
    again = derate.review(derate.load_project(tmp_path / "derate.yaml"), options)
    assert all(r.from_cache for r in again.run.results)
    assert again.run.ngspice_version == first.run.ngspice_version != ""


def test_lint_warnings_reach_every_report(tmp_path, capsys):
    """A lint warning (a net with one connection) used to appear in none of the terminal, Markdown and
    HTML reports; it is said in each, once."""
    (tmp_path / "board.cir").write_text("t\nV1 a 0 SIN(0 1 1k)\nR1 a b 1k\nC1 b 0 1u\nR9 b y 1k\n.tran 1u 2m\n.end\n")
    (tmp_path / "derate.yaml").write_text("netlist: board.cir\n")
    project = str(tmp_path / "derate.yaml")
    main(["check", "--no-color", project])
    assert capsys.readouterr().out.count("topology.single-pin-net") == 1
    for fmt in ("markdown", "html"):
        main(["check", "--no-color", "--quiet", project, "--format", fmt])
        assert capsys.readouterr().out.count("topology.single-pin-net") == 1, fmt


def test_the_lint_hook_skips_a_kicad_layout_netlist_with_a_net_suffix(tmp_path, capsys):
    """The pre-commit hook matches .net files, and KiCad's layout netlist is a .net that is no SPICE
    deck: the hook's lint skips it (saying so) and still checks the SPICE decks beside it."""
    import yaml as _yaml
    from pathlib import Path as _Path

    hooks = _yaml.safe_load((_Path(__file__).parents[1] / ".pre-commit-hooks.yaml").read_text())
    entry = next(h["entry"] for h in hooks if h["id"] == "derate-lint").split()
    assert entry[:2] == ["derate", "lint"] and "--skip-other-formats" in entry
    layout = tmp_path / "board.net"
    layout.write_text('(export (version "E")\n  (design (source "hub.kicad_sch"))\n  (components))\n')
    deck = tmp_path / "filter.cir"
    deck.write_text("t\nV1 a 0 SIN(0 1 1k)\nR1 a b 1k\nC1 b 0 1u\n.tran 1u 2m\n.end\n")
    assert main(["lint", *entry[2:], str(layout), str(deck)]) == 0
    assert main(["lint", "--no-color", "--skip-other-formats", str(layout)]) == 0
    assert "skipped" in capsys.readouterr().err
    assert main(["lint", "--no-color", str(layout)]) == 2  # asked for by name without the hook's flag: an error
