"""The library API: a plain Python session gets the same review as the command line (real ngspice)."""

from __future__ import annotations

import ast
import json
import shutil
import subprocess
import sys
from dataclasses import FrozenInstanceError, replace
from pathlib import Path

import pytest

import derate
from derate.review import worst_first
from derate.cli import main

REPO = Path(__file__).parents[2]
EXAMPLE = REPO / "examples" / "irrigation-controller"


@pytest.fixture(scope="module")
def board(tmp_path_factory):
    folder = tmp_path_factory.mktemp("api") / "irrigation-controller"
    shutil.copytree(EXAMPLE, folder, ignore=shutil.ignore_patterns("out"))
    return folder


def test_review_from_python_equals_the_command_line(board, capsys):
    review = derate.review(derate.load_project(board / "derate.yaml"))
    code = main(["check", "--no-color", "--format", "json", str(board / "derate.yaml")])
    cli = json.loads(capsys.readouterr().out)
    assert review.verdict.exit_code == code == 1  # the example fails its review by design
    ours = {c.path: str(c.status) for c in review.assessment.capacitors}
    assert ours == {row["reference"]: row["status"] for row in cli["capacitors"]}
    assert sorted((f.subject, f.rule) for f in review.findings) == sorted((f["subject"], f["rule"]) for f in cli["findings"])


def test_in_a_fresh_interpreter_exactly_as_the_issue_says(board):
    code = ("import derate; r = derate.review(derate.load_project('derate.yaml')); "
            "print(r.verdict.exit_code, r.assessment.counts()[derate.Status.FAIL])")
    out = subprocess.run([sys.executable, "-c", code], cwd=board, capture_output=True, text=True, timeout=300,
                         env={"PATH": "/usr/bin:/bin", "PYTHONPATH": str(REPO), "HOME": str(board),
                              "DERATE_CACHE_DIR": str(board / ".." / "cache")})
    assert out.returncode == 0, out.stderr
    assert out.stdout.split() == ["1", "2"]


def test_options_override_and_records_are_frozen(board):
    project = derate.load_project(board / "derate.yaml")
    with pytest.raises(FrozenInstanceError):
        project.policy = "commercial"
    options = derate.ReviewOptions(policy="commercial", mission_life_h=1000.0, use_cache=True)
    review = derate.review(project, options)
    assert review.policy.name == "commercial"
    stricter = derate.review(project, replace(options, fail_on="warning"))
    assert stricter.verdict.fail_on == "warning"
    with pytest.raises(derate.DataError):
        derate.ReviewOptions(fail_on="sometimes")


def test_progress_and_a_custom_runner(board):
    from derate.simulate.runner import LocalRunner

    events = []
    with LocalRunner(jobs=1) as runner:
        run = derate.measure(derate.load_project(board / "derate.yaml"), derate.ReviewOptions(use_cache=False),
                             runner=runner, on_progress=events.append)
    ended = [e for e in events if e.result is not None and e.stage == "simulate"]
    assert [e.done for e in ended] == [1, 2, 3] and {e.total for e in events if e.stage == "simulate"} == {3}
    again = [e for e in events if e.result is not None and e.stage == "bias"]  # the board's X5R/X7R parts
    assert [e.done for e in again] == list(range(1, len(again) + 1))
    within = [e for e in events if e.fraction is not None]
    # ngspice reports simulated-time progress within each scenario (issue 13).
    assert within and all(0.0 <= e.fraction <= 1.0 and e.scenario for e in within)
    assert not run.failed and len(run.results) == 3


def test_lint_stops_measure_and_review_keeps_going(tmp_path):
    net = tmp_path / "float.cir"
    net.write_text("floating\nV1 a 0 SIN(0 1 1k)\nR1 a 0 1k\nC1 a x 1u\nC2 x 0 1u\n.tran 1u 2m\n.end\n")
    result = derate.lint(net)
    assert [f.rule for f in result.errors] == ["topology.no-dc-path"]
    project = derate.load_project(net)
    with pytest.raises(derate.LintStop):
        derate.measure(project)
    review = derate.review(project)
    assert review.halted_by_lint and review.verdict.exit_code == 1
    assert "topology.no-dc-path" in {g.finding.rule for g in review.verdict.gating}
    assert all(c.status != derate.Status.PASS for c in review.assessment.capacitors)  # never a silent pass
    assert "topology.no-dc-path" in {f["rule"] for f in review.record["findings"]}


# ---------------------------------------------------------------- structure
def _imports(path: Path, package: str) -> set[str]:
    """Modules of derate a file imports (absolute names), from its syntax tree."""
    tree = ast.parse(path.read_text())
    here = package.split(".")
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:  # relative to the module's package
                base = here[: len(here) - (node.level - 1)]
                name = ".".join(base + ([node.module] if node.module else []))
            else:
                name = node.module or ""
            out.add(name)
            out.update(f"{name}.{a.name}" for a in node.names)
        elif isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
    return {n for n in out if n == "derate" or n.startswith("derate.")}


def test_no_library_module_imports_the_command_line():
    pkg = REPO / "derate"
    offenders = []
    for path in pkg.rglob("*.py"):
        rel = path.relative_to(REPO).with_suffix("")
        parts = list(rel.parts)
        if parts[1] == "cli" or parts[-1] in ("__main__", "entry"):  # the command line and its entry points
            continue
        module = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        package = module if parts[-1] == "__init__" else module.rsplit(".", 1)[0]
        if any(n == "derate.cli" or n.startswith("derate.cli.") for n in _imports(path, package)):
            offenders.append(str(rel))
    assert offenders == []


def test_every_module_imports_on_its_own():
    """No import cycle: each module imports first in a fresh interpreter."""
    modules = []
    for path in (REPO / "derate").rglob("*.py"):
        parts = list(path.relative_to(REPO).with_suffix("").parts)
        if parts[-1] == "__main__":
            continue
        modules.append(".".join(parts[:-1] if parts[-1] == "__init__" else parts))
    code = "import importlib, sys\nfor m in sys.argv[1:]:\n    importlib.import_module(m)\n"
    for m in sorted(modules):
        res = subprocess.run([sys.executable, "-c", code, m], capture_output=True, text=True, cwd=REPO)
        assert res.returncode == 0, (m, res.stderr[-500:])


def test_the_stress_table_for_a_notebook(board):
    """review.table(): the rows the reports show, worst first, with the deciding check and figures
    (a list of dicts without pandas, a DataFrame with it)."""
    review = derate.review(derate.load_project(board / "derate.yaml"), derate.ReviewOptions(use_cache=False))
    table = review.table()
    rows = table.to_dict("records") if hasattr(table, "to_dict") else table
    record = {r["reference"]: r for r in review.record["capacitors"]}
    assert [r["capacitor"] for r in rows] == [r["reference"] for r in worst_first(review.record["capacitors"])]
    for row in rows:
        g = record[row["capacitor"]]["governing"] or {}
        assert (row["check"], row["ratio"], row["limit"]) == (g.get("check"), g.get("ratio"), g.get("limit"))
    assert set(rows[0]) == {"capacitor", "status", "check", "scenario", "value", "limit", "unit", "ratio", "part",
                            "technology"}
