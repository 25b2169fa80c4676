"""Hostile project and data files: every one is refused with exit 2 at file:line: key, and its side
effect never happens (no marker file, nothing written outside the project, no traceback).

derate gates pull requests, so derate.yaml, parts, policies, waivers, BOMs and baselines come from
untrusted contributors just like the netlist (README, "Running on untrusted input").
"""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import pytest

from derate.cli import main

NETLIST = "untrusted board\nV1 in 0 SIN(0 5 1k)\nR1 in out 100\nC1 out 0 1u\n.tran 1u 3m\n.end\n"
PARTS = "parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 50}\n"


@pytest.fixture
def project(tmp_path):
    """A small clean project in its own git repository; returns a writer for derate.yaml."""
    root = tmp_path / "repo"
    (root / ".git" / "hooks").mkdir(parents=True)
    (root / "board.cir").write_text(NETLIST)
    (root / "parts.yaml").write_text(PARTS)

    def write(extra: str, name: str = "derate.yaml") -> Path:
        path = root / name
        path.write_text("netlist: board.cir\nparts: parts.yaml\n" + extra)
        return path
    write.root = root
    return write


def run(args, capsys) -> tuple[int, str]:
    code = main(args)
    captured = capsys.readouterr()
    assert "Traceback" not in captured.err + captured.out
    return code, captured.err


# ---------------------------------------------------------------- deck injection (was: command execution)
INJECTIONS = {
    "source newline .control": ('scenarios:\n  - name: a\n    sources: {V1: "5\\n.control\\nshell touch %s\\n.endc"}\n',
                                "scenarios[0].sources.V1", "not allowed in a source value"),
    "source newline *#": ('scenarios:\n  - name: a\n    sources: {V1: "SIN(0 5 1k)\\n*# shell touch %s"}\n',
                          "scenarios[0].sources.V1", "not allowed"),
    "source backquote": ('scenarios:\n  - name: a\n    sources: {V1: "DC {`touch %s`}"}\n',
                         "scenarios[0].sources.V1", "not allowed"),
    "source trailing word": ('scenarios:\n  - name: a\n    sources: {V1: "SIN(0 5 1k) shell touch %s"}\n',
                             "scenarios[0].sources.V1", "cannot read 'shell'"),
    "source file keyword": ('scenarios:\n  - name: a\n    sources: {V1: "PWL(file=%s)"}\n',
                            "scenarios[0].sources.V1", "is not allowed inside PWL"),
    "option newline": ('analysis:\n  options: {reltol: "1m\\n.control\\nshell touch %s\\n.endc"}\n',
                       "analysis.options.reltol", "expected a number"),
    "option word": ('analysis:\n  options: {method: "gear\\n*# shell touch %s"}\n',
                    "analysis.options.method", "expected one of gear"),
    "unknown option": ('analysis:\n  options: {"noinit\\n.control\\nshell touch %s": 1}\n',
                       "analysis.options", "unknown ngspice option"),
}


@pytest.mark.parametrize("case", sorted(INJECTIONS))
def test_project_values_never_reach_the_deck_as_text(project, case, capsys, tmp_path):
    marker = tmp_path / "pwned"
    text, key, message = INJECTIONS[case]
    path = project(text % marker)
    code, err = run(["check", "--no-color", "--no-cache", str(path)], capsys)
    assert code == 2
    assert "derate.yaml:" in err and key in err and message in err
    assert not marker.exists()


def test_positive_control_pasted_source_text_would_run_a_command(tmp_path):
    """What the old deck builder did (paste the value after the source's nodes): ngspice runs it."""
    ngspice = shutil.which("ngspice")
    assert ngspice, "ngspice is not installed; run `make test`"
    marker = tmp_path / "pwned"
    value = f"5\n.control\nshell touch {marker}\n.endc"
    deck = tmp_path / "pasted.cir"
    deck.write_text(f"pasted\nV1 in 0 {value}\nR1 in 0 1k\n.tran 1u 10u\n.end\n")
    subprocess.run([ngspice, "-b", str(deck)], cwd=tmp_path, capture_output=True, timeout=60,
                   env=dict(os.environ, HOME=str(tmp_path)))
    assert marker.exists()


# ---------------------------------------------------------------- paths (was: arbitrary write)
def test_outputs_outside_the_project_are_refused(project, capsys, tmp_path):
    outside = tmp_path / "outside"
    outside.mkdir()
    cases = {
        f"outputs: {{json: {outside / 'r.json'}}}\n": "is outside the project root",
        "outputs: {json: ../outside/r.json}\n": "is outside the project root",
        "outputs: {annotate: .git/hooks/pre-commit.cir}\n": "inside a .git folder",
        "outputs: {annotate: .git/hooks/pre-commit}\n": "inside a .git folder",
        "outputs: {annotate: build.sh}\n": "must end in .cir",
        "outputs: {html: .bashrc}\n": "must end in .html",
    }
    (project.root / "linked").symlink_to(outside)
    cases["outputs: {json: linked/r.json}\n"] = "is outside the project root"
    for text, message in cases.items():
        code, err = run(["check", "--no-color", "--no-cache", str(project(text))], capsys)
        assert code == 2 and message in err and "derate.yaml:3: outputs." in err, (text, err)
    assert list(outside.iterdir()) == []
    assert sorted(p.name for p in (project.root / ".git" / "hooks").iterdir()) == []


def test_files_named_in_data_files_stay_inside_the_project(project, capsys, tmp_path):
    secret = tmp_path / "secret.yaml"
    secret.write_text("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 50}\n# the first line leaks\n")
    cases = {
        f"netlist_override: {secret}\n": None,  # unknown key: schema error, still exit 2
        f"waivers: {secret}\n": "waivers: ",
        "waivers: ../secret.yaml\n": "waivers: ",
        f"policy: {secret}\n": "policy: ",
        f"bom: {{file: {secret}}}\n": "bom.file: ",
        "root: /\n": "root: ",
        "allow_outside_includes: true\n": "cannot widen its own trust",
    }
    for text, message in cases.items():
        code, err = run(["check", "--no-color", "--no-cache", str(project(text))], capsys)
        assert code == 2, (text, err)
        assert message is None or message in err, (text, err)
        assert "the first line leaks" not in err
    # a parts file naming a library outside, and a policy extending a file outside
    (project.root / "parts.yaml").write_text(f"library: {secret}\n" + PARTS)
    code, err = run(["check", "--no-color", "--no-cache", str(project(""))], capsys)
    assert code == 2 and "parts.yaml:1: library: " in err and "outside the project root" in err
    (project.root / "parts.yaml").write_text(PARTS)
    (project.root / "org.yaml").write_text(f"name: org\nextends: {secret}\n")
    code, err = run(["check", "--no-color", "--no-cache", str(project("policy: org.yaml\n"))], capsys)
    assert code == 2 and "org.yaml:2: extends: " in err and "outside the project root" in err


def test_netlist_includes_follow_the_same_root(project, capsys, tmp_path):
    (tmp_path / "model.lib").write_text("* a model outside\n.model dx D\n")
    (project.root / "board.cir").write_text(NETLIST.replace(".end", f".include {tmp_path / 'model.lib'}\n.end"))
    code, err = run(["check", "--no-color", "--no-cache", str(project(""))], capsys)
    assert code == 2 and "leaves the project root" in err and "a model outside" not in err
    # only the person running derate widens it, with a flag
    code, err = run(["lint", "--no-color", "--allow-outside-includes", str(project.root / "board.cir")], capsys)
    assert code == 0


def test_command_line_root_widens_the_trust(project, capsys, tmp_path):
    out = tmp_path / "reports" / "r.json"
    code, err = run(["check", "--no-color", "--no-cache", str(project(f"outputs: {{json: {out}}}\n"))], capsys)
    assert code == 2
    code, err = run(["check", "--no-color", "--no-cache", "--root", str(tmp_path), str(project(""))], capsys)
    assert code in (0, 1), err


# ---------------------------------------------------------------- nonsense data (was: passed the gate)
NONSENSE = {
    "parts.yaml": [
        ("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: .nan}\n", "parts.C1.rated_voltage_v", "finite"),
        ("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: .inf}\n", "parts.C1.rated_voltage_v", "finite"),
        ("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 1e999}\n", "parts.C1.rated_voltage_v", ""),
        ("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: \"1e999\"}\n", "rated_voltage_v", "number"),
        ("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: -16}\n", "parts.C1.rated_voltage_v", ""),
        ("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 50, esr_ohm: -1}\n", "esr_ohm", ""),
        ("parts:\n  C1: {technology: tantalum-mno2, rated_voltage_v: 10, category_voltage: [[85, 1], [125, -0.5]]}\n",
         "category_voltage", "above 0"),
        ("parts:\n  C1: {technology: tantalum-mno2, rated_voltage_v: 10, category_voltage: [[85, 0.5], [125, 1]]}\n",
         "category_voltage", "must not rise"),
        ("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 50, rated_temperature_c: -1000}\n",
         "rated_temperature_c", "above -273.15"),
    ],
    "policy.yaml": [
        ("name: p\nextends: industrial\ntechnologies:\n  ceramic-class1:\n    voltage_factor: {value: -0.6, source: x y z}\n",
         "voltage_factor.value", "above 0"),
        ("name: p\nextends: industrial\ntechnologies:\n  ceramic-class1:\n    voltage_factor: {value: 60, source: x y z}\n",
         "voltage_factor.value", "at most 1"),
        ("name: p\nextends: industrial\ntechnologies:\n  ceramic-class1:\n    voltage_factor: {value: .nan, source: x y z}\n",
         "voltage_factor.value", "finite"),
        ("name: p\nextends: industrial\nnear_limit_pct: {value: 200, source: x y z}\n", "near_limit_pct.value", "below 100"),
        ("name: p\nextends: industrial\ntechnologies:\n  tantalum-mno2:\n    category_voltage: {value: [[85, 1], [125, -1]], source: x y z}\n",
         "category_voltage", "above 0"),
    ],
    "derate.yaml": [
        ("scenarios: [{name: a, ambient_c: -1000}]\n", "scenarios[0].ambient_c", "above -273.15"),
        ("scenarios: [{name: a, ambient_c: .nan}]\n", "scenarios[0].ambient_c", "finite"),
        ("analysis: {window: {last: .nan}}\n", "analysis.window.last", "finite"),
        ("analysis: {window: {last: -1m}}\n", "analysis.window.last", "above 0"),
        ("analysis: {timeout_s: .nan}\n", "analysis.timeout_s", "finite"),
        ("analysis: {timeout_s: 0}\n", "analysis.timeout_s", "above 0"),
        ("analysis: {timeout_s: -5}\n", "analysis.timeout_s", "above 0"),
        ("esr: {C1: {esr_ohm: -1}}\n", "esr.C1.esr_ohm", "above 0"),
        ("mission: {life_h: .inf}\n", "mission.life_h", "finite"),
        ("scenarios: [{name: a, params: {x: .nan}}]\n", "scenarios[0].params.x", "finite"),
    ],
}


@pytest.mark.parametrize("file,index", [(f, i) for f, cases in NONSENSE.items() for i in range(len(cases))])
def test_nonsense_numbers_are_input_errors(project, capsys, file, index):
    text, key, message = NONSENSE[file][index]
    if file == "derate.yaml":
        path = project(text)
    else:
        (project.root / file).write_text(text)
        path = project("policy: policy.yaml\n" if file == "policy.yaml" else "")
    code, err = run(["check", "--no-color", "--no-cache", str(path)], capsys)
    assert code == 2, err
    assert f"{file}:" in err and key in err and message in err, err


BOM_NONSENSE = {
    "negative rating": "Reference,Voltage\nC1,-16\n",
    "zero rating": "Reference,Voltage\nC1,0\n",
    "nan rating": "Reference,Voltage\nC1,nan\n",
    "huge rating": "Reference,Voltage\nC1,1e999\n",
}


@pytest.mark.parametrize("case", sorted(BOM_NONSENSE))
def test_bom_values_pass_the_same_validation(project, capsys, case):
    (project.root / "bom.csv").write_text(BOM_NONSENSE[case])
    path = project("bom: {file: bom.csv, columns: {reference: Reference, rated_voltage_v: Voltage}}\n")
    (project.root / "parts.yaml").write_text("parts: {}\n")
    code, err = run(["check", "--no-color", "--no-cache", str(path)], capsys)
    assert code == 2 and "bom.csv:2" in err and "rated_voltage_v" in err, err


# ---------------------------------------------------------------- malformed files: exit 2, never a traceback
MALFORMED_YAML = {
    "list as a key": "? [1, 2]\n: 3\n",
    "unterminated quote": "netlist: \"board.cir\nparts: parts.yaml\n",
    "tab indentation": "netlist: board.cir\n\tparts: x\n",
    "binary": "\x00\x01\x02",
    "latin-1": "netlist: board.cir # caf\xe9\n",
    "alias bomb": "a: &a [x,x,x,x,x,x,x,x,x]\nb: &b [*a,*a,*a,*a,*a,*a,*a,*a,*a]\nc: &c [*b,*b,*b,*b,*b,*b,*b,*b,*b]\n"
                  "d: &d [*c,*c,*c,*c,*c,*c,*c,*c,*c]\ne: &e [*d,*d,*d,*d,*d,*d,*d,*d,*d]\n"
                  "f: &f [*e,*e,*e,*e,*e,*e,*e,*e,*e]\ng: &g [*f,*f,*f,*f,*f,*f,*f,*f,*f]\n",
    "deep nesting": "a: " + "[" * 5000 + "]" * 5000 + "\n",
    "recursive alias": "a: &x [1, *x]\n",
    "empty": "",
    "a list": "- 1\n- 2\n",
}


@pytest.mark.parametrize("case", sorted(MALFORMED_YAML))
def test_malformed_project_file(tmp_path, capsys, case):
    path = tmp_path / "derate.yaml"
    path.write_bytes(MALFORMED_YAML[case].encode("latin-1"))
    code, err = run(["check", "--no-color", "--no-cache", str(path)], capsys)
    assert code == 2 and "derate.yaml" in err, err


MALFORMED_BASELINES = {
    "not json": "{findings: [",
    "a list": "[1, 2, 3]",
    "findings not a list": '{"findings": {"a": 1}}',
    "finding not a record": '{"findings": [1, 2]}',
    "bad severity": '{"findings": [{"subject": "C1", "rule": "stress.voltage", "severity": "fatal"}]}',
    "ratio text": '{"findings": [{"subject": "C1", "rule": "stress.voltage", "ratio": "high"}]}',
    "NaN ratio": '{"findings": [{"subject": "C1", "rule": "stress.voltage", "ratio": NaN}]}',
    "deep": "[" * 100000 + "]" * 100000,
}


@pytest.mark.parametrize("case", sorted(MALFORMED_BASELINES))
def test_malformed_baseline(project, tmp_path, capsys, case):
    baseline = tmp_path / "main-report.json"
    baseline.write_text(MALFORMED_BASELINES[case])
    code, err = run(["check", "--no-color", "--no-cache", "--baseline", str(baseline), str(project(""))], capsys)
    assert code == 2 and "main-report.json" in err, err


def test_malformed_boms(project, capsys):
    cases = {
        "unterminated quote": 'Reference,Voltage\n"C1,16\n',
        "200 kB field": "Reference,Voltage\nC1," + '"' + "x" * 200_000 + '"\n',
        "utf-16": "Reference,Voltage\nC1,16\n".encode("utf-16"),
    }
    for name, text in cases.items():
        data = text if isinstance(text, bytes) else text.encode()
        (project.root / "bom.csv").write_bytes(data)
        path = project("bom: {file: bom.csv, columns: {reference: Reference, rated_voltage_v: Voltage}}\n")
        (project.root / "parts.yaml").write_text("parts: {}\n")
        code, err = run(["check", "--no-color", "--no-cache", str(path)], capsys)
        assert code == 2 and "bom.csv" in err, (name, err)


def test_bom_in_latin1_with_semicolons_loads(project, capsys):
    (project.root / "bom.csv").write_bytes("Référence;Voltage;Comment\nC1;50;Kondensator für 5 µF\n".encode("cp1252"))
    path = project("bom: {file: bom.csv, columns: {reference: Référence, rated_voltage_v: Voltage}}\n")
    (project.root / "parts.yaml").write_text("parts: {}\n")
    code, err = run(["check", "--no-color", "--no-cache", "--format", "json", "--output",
                     str(project.root / "r.json"), str(path)], capsys)
    assert code in (0, 1), err  # judged (C1 lacks a technology: a finding, not an input error)


# ---------------------------------------------------------------- flags
@pytest.mark.parametrize("flag", [["--timeout", "nan"], ["--timeout", "0"], ["--timeout", "-3"],
                                  ["--timeout", "inf"], ["--jobs", "0"], ["--mission-life", "nan"]])
def test_bad_numeric_flags_exit_2(project, capsys, flag):
    with pytest.raises(SystemExit) as info:
        main(["check", "--no-cache", *flag, str(project(""))])
    assert info.value.code == 2
    assert "expected" in capsys.readouterr().err


# ---------------------------------------------------------------- checked before simulating
def test_unwritable_outputs_are_found_before_simulating(project, capsys):
    (project.root / "out").write_text("a file where a folder should be")
    code, err = run(["check", "--no-color", "--no-cache", str(project("outputs: {json: out/r.json}\n"))], capsys)
    assert code == 2 and "is a file, not a folder" in err
    assert "simulat" not in err  # stopped before any simulation


def test_cache_folder_that_is_a_file_is_an_input_error(project, capsys, tmp_path):
    bad = tmp_path / "cachefile"
    bad.write_text("x")
    code, err = run(["check", "--no-color", "--cache-dir", str(bad), str(project(""))], capsys)
    assert code == 2 and "cannot use the cache folder" in err


def test_reports_honour_the_umask(project, capsys):
    old = os.umask(0o022)
    try:
        code, err = run(["check", "--no-color", "--no-cache", str(project("outputs: {json: out/r.json}\n"))], capsys)
    finally:
        os.umask(old)
    assert code in (0, 1), err
    assert (project.root / "out" / "r.json").stat().st_mode & 0o777 == 0o644


def test_a_file_size_limit_is_an_input_error_not_a_traceback(project):
    import resource
    import sys

    def limit():
        resource.setrlimit(resource.RLIMIT_FSIZE, (1024, 1024))
    res = subprocess.run([sys.executable, "-m", "derate", "check", "--no-color", "--no-cache",
                          str(project("outputs: {json: out/r.json}\n"))], capture_output=True, text=True,
                         preexec_fn=limit, env=dict(os.environ, PYTHONPATH=str(Path(__file__).parents[2])))
    assert res.returncode == 4 and "File too large" in res.stderr and "no report was changed" in res.stderr
    assert "Traceback" not in res.stderr
    assert not list(project.root.rglob("*.tmp"))
