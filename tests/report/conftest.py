"""One real `derate check` of each example (real ngspice), shared by the report tests."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from derate.cli import main

EXAMPLES = Path(__file__).parents[2] / "examples"
FORMATS = ["json", "csv", "markdown", "html", "sarif", "junit"]


class CheckRun:
    def __init__(self, folder: Path, code: int, out: str, err: str):
        self.folder, self.code, self.out, self.err = folder, code, out, err
        self.reports = folder / "reports"

    def report(self, ext: str) -> str:
        return (self.reports / f"derate-report.{ext}").read_text()


def _run(tmp_path_factory, name: str, capsys_holder) -> CheckRun:
    folder = tmp_path_factory.mktemp(name) / name
    shutil.copytree(EXAMPLES / name, folder, ignore=shutil.ignore_patterns(".derate-cache", "out"))
    args = ["check", "--no-color", str(folder / "derate.yaml"), "--output", str(folder / "reports"),
            "--annotate", str(folder / "reports" / "annotated.cir")]
    for fmt in FORMATS:
        args += ["--format", fmt]
    (folder / "reports").mkdir()
    code = main(args)
    return CheckRun(folder, code, "", "")


@pytest.fixture(scope="session")
def irrigation(tmp_path_factory):
    return _run(tmp_path_factory, "irrigation-controller", None)


@pytest.fixture(scope="session")
def sensor_hub(tmp_path_factory):
    return _run(tmp_path_factory, "greenhouse-sensor-hub", None)
