"""The Dask runner (issue 15): a real LocalCluster of worker processes; one simulation job is one
task; the answers are the local runner's, to the last digit; the client-side cache still serves."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

import derate
from derate.cli import main

pytest.importorskip("dask.distributed")
pytestmark = pytest.mark.ngspice

EXAMPLE = Path(__file__).parents[2] / "examples" / "irrigation-controller"


def _stresses(review):
    return [s.as_dict() for res in review.run.results for s in res.stresses]


def test_dask_local_cluster_gives_the_local_answers(tmp_path):
    from derate.simulate.dask_runner import DaskRunner

    project = derate.load_project(EXAMPLE / "derate.yaml")
    local = derate.review(project, derate.ReviewOptions(use_cache=False, jobs=2))
    with DaskRunner(workers=2) as runner:
        assert runner.version() == local.run.ngspice_version
        dask = derate.review(project, derate.ReviewOptions(use_cache=False), runner=runner)
        # the cache stays with the client: a second run with it sends no task at all
        cache = tmp_path / "cache"
        derate.review(project, derate.ReviewOptions(cache_dir=cache), runner=runner)
        again = derate.review(project, derate.ReviewOptions(cache_dir=cache), runner=runner)
        tasks = runner.client.run_on_scheduler(lambda dask_scheduler: len(dask_scheduler.task_prefixes))
    assert [r.ok for r in dask.run.results] == [True, True, True]
    assert _stresses(dask) == _stresses(local)
    assert dask.record["capacitors"] == local.record["capacitors"]
    assert all(r.from_cache for r in again.run.results) and _stresses(again) == _stresses(local)
    assert tasks >= 1


def test_cli_runner_dask(tmp_path, capsys):
    folder = tmp_path / "board"
    shutil.copytree(EXAMPLE, folder, ignore=shutil.ignore_patterns(".derate-cache", "out"))
    out = {}
    for runner in ("local", "dask"):
        path = tmp_path / f"{runner}.json"
        code = main(["check", "--quiet", "--no-cache", "--jobs", "2", "--runner", runner, str(folder / "derate.yaml"),
                     "--format", "json", "--output", str(path)])
        assert code == 1
        out[runner] = json.loads(path.read_text())
    capsys.readouterr()
    assert out["dask"]["capacitors"] == out["local"]["capacitors"]
    assert out["dask"]["findings"] == out["local"]["findings"]


def test_unreachable_scheduler_is_a_clear_error(capsys):
    code = main(["check", "--quiet", "--scheduler", "tcp://127.0.0.1:9", str(EXAMPLE / "derate.yaml"),
                 "--no-cache"])
    assert code == 2
    err = capsys.readouterr().err
    assert "cannot reach the Dask scheduler 'tcp://127.0.0.1:9'" in err and "Traceback" not in err
