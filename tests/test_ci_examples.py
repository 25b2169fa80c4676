"""The pipeline files in examples/ci/ (issue 13): valid for their CI system according to the schemas
check-jsonschema ships (SchemaStore's GitHub workflow and GitLab CI schemas), and every derate command
in them is one derate accepts."""

from __future__ import annotations

import os
import re
import shlex
import subprocess
import sys
from pathlib import Path

import pytest
import yaml

from derate.cli.args import build_parser

CI = Path(__file__).parents[1] / "examples" / "ci"
FILES = {"github-derate.yml": "vendor.github-workflows", "gitlab-derate.yml": "vendor.gitlab-ci"}


def _validate(path: Path, schema: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "check_jsonschema", "--builtin-schema", schema, str(path)],
                          capture_output=True, text=True, timeout=120, env={**os.environ, "NO_COLOR": "1"})


@pytest.mark.parametrize("name", sorted(FILES))
def test_pipeline_file_is_valid_for_its_ci(name):
    run = _validate(CI / name, FILES[name])
    assert run.returncode == 0, run.stdout + run.stderr


@pytest.mark.parametrize("name", sorted(FILES))
def test_the_validator_has_teeth(name, tmp_path):
    broken = tmp_path / name
    text = (CI / name).read_text()
    # a misspelt key the CI system would reject
    broken.write_text(text.replace("runs-on:", "run-on:") if name.startswith("github") else
                      text.replace("  artifacts:", "  artefacts:"))
    assert _validate(broken, FILES[name]).returncode != 0


def _derate_commands(doc) -> list[str]:
    found = []
    if isinstance(doc, dict):
        for v in doc.values():
            found += _derate_commands(v)
    elif isinstance(doc, list):
        for v in doc:
            found += _derate_commands(v)
    elif isinstance(doc, str) and re.match(r"\s*derate ", doc):
        found.append(doc)
    return found


@pytest.mark.parametrize("name", sorted(FILES))
def test_every_derate_command_parses(name):
    doc = yaml.safe_load((CI / name).read_text())
    commands = _derate_commands(doc)
    assert commands, "the file runs derate"
    for command in commands:
        # CI expressions and variables become plain values before parsing
        text = re.sub(r"\$\{\{[^}]*\}\}", "x", command).replace('"$PROJECT"', "derate.yaml")
        text = text.replace("x/x/actions/runs/x", "https://github.example/o/r/actions/runs/1")
        text = re.sub(r"\$CI_JOB_URL", "https://gitlab.example/job/1", text)
        argv = shlex.split(text)[1:]
        args = build_parser().parse_args(argv)
        assert args.command == "check" and args.quiet and args.output == "reports/"
        assert {"html", "markdown", "json"} <= set(args.formats)
        assert ("sarif" if name.startswith("github") else "junit") in args.formats
        assert args.report_url.startswith("https://")


@pytest.mark.parametrize("name", sorted(FILES))
def test_derate_is_never_installed_by_its_bare_name_from_the_index(name):
    """On the public package index "derate" is an unrelated project: a pipeline that installs that
    name runs a stranger's code.  The files install a wheel kept in the repository (or a pinned
    commit), named by a variable the reader sets."""
    text = (CI / name).read_text()
    installs = re.findall(r"pip install\s+(.+)", text)
    assert installs, "the file installs derate somewhere"
    for spec in installs:
        spec = spec.strip().strip('"').strip("'")
        assert not re.match(r"derate\b", spec), spec  # not "derate", "derate==0.2.0", "derate[dask]"
        assert spec.startswith("$") or spec.startswith((".", "/", "git+")), spec
    assert "DERATE_WHEEL:" in text
