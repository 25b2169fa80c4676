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
    import os
    import tempfile
    with DaskRunner(workers=2) as runner:
        dask_pids = list(runner.client.run(os.getpid).values())
        assert runner.version() == local.run.ngspice_version
        dask = derate.review(project, derate.ReviewOptions(use_cache=False), runner=runner)
        # the cache stays with the client: a second run with it sends no task at all
        cache = tmp_path / "cache"
        derate.review(project, derate.ReviewOptions(cache_dir=cache), runner=runner)
        again = derate.review(project, derate.ReviewOptions(cache_dir=cache), runner=runner)
        tasks = runner.client.run_on_scheduler(lambda dask_scheduler: len(dask_scheduler.task_prefixes))
    assert [r.ok for r in dask.run.results] == [True, True, True]
    for pid in dask_pids:  # the embedded cluster's worker folders go with it
        assert not list(Path(tempfile.gettempdir()).glob(f"derate-ngspice-{pid}-*"))
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


def _free_port() -> int:
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_a_real_scheduler_started_apart_gives_the_local_answers(tmp_path, capsys):
    """--scheduler tcp:// against a Dask scheduler and worker started as their own processes (as a team
    would run them), on loopback: the same review as the local runner."""
    import os
    import subprocess
    import sys
    import time

    from distributed import Client

    port = _free_port()
    address = f"tcp://127.0.0.1:{port}"
    bin_dir = Path(sys.executable).parent
    env = dict(os.environ, DASK_DISTRIBUTED__DIAGNOSTICS__NVML="False")
    scheduler = subprocess.Popen([str(bin_dir / "dask"), "scheduler", "--host", "127.0.0.1", "--port", str(port),
                                  "--no-dashboard"], cwd=tmp_path, env=env, stdout=subprocess.DEVNULL,
                                 stderr=subprocess.DEVNULL)
    worker = subprocess.Popen([str(bin_dir / "dask"), "worker", address, "--nworkers", "1", "--nthreads", "1",
                               "--no-dashboard", "--host", "127.0.0.1"], cwd=tmp_path, env=env,
                              stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 120  # a loaded machine may take a while to start them
        while True:
            try:
                with Client(address, timeout=5) as client:
                    if client.scheduler_info()["workers"]:
                        break
            except OSError:
                pass
            assert time.monotonic() < deadline, "the Dask scheduler or worker did not start"
            time.sleep(0.5)
        folder = tmp_path / "board"
        folder.mkdir()
        (folder / "board.cir").write_text("rc\nV1 in 0 SIN(0 5 1k)\nR1 in out 100\nC1 out 0 1u\n.tran 1u 8m\n.end\n")
        (folder / "parts.yaml").write_text("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 50}\n")
        (folder / "derate.yaml").write_text("netlist: board.cir\nparts: parts.yaml\npolicy: commercial\n"
                                            "scenarios: [{name: room, ambient_c: 25}]\n")
        out = {}
        for name, extra in (("local", []), ("remote", ["--scheduler", address])):
            path = tmp_path / f"{name}.json"
            code = main(["check", "--quiet", "--no-cache", *extra, str(folder / "derate.yaml"), "--format", "json",
                         "--output", str(path)])
            assert code == 0, capsys.readouterr().err
            out[name] = json.loads(path.read_text())
        capsys.readouterr()
        assert out["remote"]["capacitors"] == out["local"]["capacitors"]
        assert out["remote"]["scenarios"][0]["ok"]
    finally:
        for proc in (worker, scheduler):
            proc.terminate()
        for proc in (worker, scheduler):
            try:
                proc.wait(timeout=30)
            except subprocess.TimeoutExpired:
                proc.kill()


def _listening(pids: set[int]) -> list[tuple[str, int]]:
    """(address, port) of every listening TCP socket the processes own, read from /proc (Linux)."""
    import os
    inodes = set()
    for pid in pids:
        try:
            for fd in os.listdir(f"/proc/{pid}/fd"):
                target = os.readlink(f"/proc/{pid}/fd/{fd}")
                if target.startswith("socket:["):
                    inodes.add(target[8:-1])
        except OSError:
            continue
    found = []
    for table, width in (("/proc/net/tcp", 8), ("/proc/net/tcp6", 32)):
        for line in Path(table).read_text().splitlines()[1:]:
            cols = line.split()
            if cols[3] == "0A" and cols[9] in inodes:  # 0A: LISTEN
                addr, port = cols[1].split(":")
                found.append((addr, int(port, 16)))
    return found


@pytest.mark.skipif(not Path("/proc/net/tcp").exists(), reason="reads listening sockets from /proc (Linux)")
def test_the_embedded_cluster_is_reachable_by_derate_alone():
    """Every socket of the embedded cluster listens on loopback; its HTTP servers serve no routes (no
    dashboard, logs, call stacks, metrics); a client without this run's certificate, or with a
    certificate of its own, is refused.  (Before: an HTTP server on all interfaces, no TLS.)"""
    import os
    import urllib.error
    import urllib.request

    from distributed import Client
    from distributed.security import Security

    from derate.simulate.dask_runner import DaskRunner

    pytest.importorskip("cryptography")
    os.environ["GITHUB_TOKEN"] = os.environ["CI_JOB_TOKEN"] = "not-for-workers"
    try:
        runner = DaskRunner(workers=1)
    finally:
        del os.environ["GITHUB_TOKEN"], os.environ["CI_JOB_TOKEN"]
    with runner:
        assert runner.cluster.scheduler_address.startswith("tls://127.0.0.1:")
        pids = {os.getpid(), *runner.client.run(os.getpid).values()}
        sockets = _listening(pids)
        assert len(sockets) >= 3  # scheduler, worker, and the HTTP servers
        loopback = {"0100007F", "00000000000000000000000001000000"}  # 127.0.0.1 and ::1 as /proc writes them
        assert all(addr in loopback for addr, _ in sockets), sockets
        info = runner.client.scheduler_info()
        http = [info["services"]["dashboard"]] + [w["services"]["dashboard"] for w in info["workers"].values()]
        for port in http:
            for path in ("/status", "/health", "/metrics", "/info/main/workers.html", "/info/call-stacks"):
                with pytest.raises(urllib.error.HTTPError) as exc:
                    urllib.request.urlopen(f"http://127.0.0.1:{port}{path}", timeout=10)
                assert exc.value.code == 404
        for security in (None, Security.temporary()):
            with pytest.raises(Exception):
                Client(runner.cluster.scheduler_address, timeout="5s", security=security).close()
        assert runner.client.submit(sum, [1, 2], pure=False).result() == 3  # derate itself still works
        leaked = runner.client.run(lambda: sorted(k for k in os.environ if k in ("GITHUB_TOKEN", "CI_JOB_TOKEN")))
        assert all(v == [] for v in leaked.values())  # the workers' environment is the allowlist
