"""Whole runs on hostile input: bounded front end, tidy processes and files, and property tests that
every loader either loads or raises the project's own error (never another exception)."""

from __future__ import annotations

import os
import signal
import string
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, given, settings, strategies as st

from derate.cli import main
from derate.errors import DerateError

REPO = Path(__file__).parents[2]


def run(args, capsys):
    code = main(args)
    out = capsys.readouterr()
    assert "Traceback" not in out.err + out.out
    return code, out.err


# ---------------------------------------------------------------- bounded front end
def _diamond(folder: Path) -> Path:
    for i in range(18):
        body = f"R{i} n{i} 0 1k\n.include d{i + 1}.inc\n.include d{i + 1}.inc\n" if i < 17 else "R17 n 0 1\n"
        (folder / f"d{i}.inc").write_text(body)
    top = folder / "diamond.cir"
    top.write_text("diamond\nV1 a 0 1\nR1 a 0 1k\n.include d0.inc\n.end\n")
    return top


def _chain(folder: Path) -> Path:
    lines = ["chain", "V1 a 0 1", "R1 a 0 1k"]
    for i in range(1000):
        lines += [f".subckt s{i} p", f"X1 p s{i + 1}" if i < 999 else "R1 p 0 1k", ".ends"]
    top = folder / "chain.cir"
    top.write_text("\n".join(lines + ["X1 a s0", ".end"]) + "\n")
    return top


def _fan(folder: Path) -> Path:
    defs = "".join(f".subckt f{i} p\n" + "".join(f"X{j} p f{i + 1}\n" for j in range(10)) + ".ends\n"
                   for i in range(7))
    top = folder / "fan.cir"
    top.write_text("fan\nV1 a 0 1\n" + defs + ".subckt f7 p\nR1 p 0 1k\n.ends\nX1 a f0\n.end\n")
    return top


def _text(name: str, body: str):
    def make(folder: Path) -> Path:
        top = folder / f"{name}.cir"
        top.write_text(body)
        return top
    return make


BOUNDED = {
    "include diamond": (_diamond, "include expansions"),
    "subcircuit chain": (_chain, "nest more than 100 levels"),
    "subcircuit fan-out": (_fan, "element instances"),
    "deep parentheses": (_text("p", "p\n.param x={" + "(" * 150 + "1" + ")" * 150 + "}\nV1 a 0 {x}\nR1 a 0 1\n.end\n"),
                         "nested more than 100 levels"),
    "recursive func": (_text("f", "f\n.func f(x) {f(x)+1}\n.param y={f(1)}\nV1 a 0 {y}\nR1 a 0 1\n.end\n"),
                       "calls itself"),
    "cyclic params": (_text("c", "c\n.param a={b+1}\n.param b={a+1}\nV1 x 0 {a}\nR1 x 0 1\n.end\n"),
                      "defined in terms of itself"),
    "pulse ic=": (_text("u", "u\nV1 a 0 PULSE(0 1 0 1u 1u 1 2 ic=)\nR1 a 0 1\n.end\n"), "PULSE"),
    "nul in include": (_text("n", "n\n.include \"a\x00b\"\nV1 a 0 1\nR1 a 0 1\n.end\n"), "control character"),
    "overflowing literal": (_text("o", "o\nV1 a 0 1\nR1 a 0 {1e999}\n.end\n"), "too large"),
}


@pytest.mark.parametrize("case", sorted(BOUNDED))
def test_front_end_work_is_bounded(tmp_path, capsys, case):
    make, message = BOUNDED[case]
    code, err = run(["lint", "--no-color", str(make(tmp_path))], capsys)
    assert code == 2 and message in err, err


def test_long_but_honest_constructs_still_read(tmp_path, capsys):
    """Limits stop abuse, not real netlists: a 200-deep parameter chain and a 5,000-term sum read."""
    chain = "".join(f".param p{i}={{p{i + 1}+1}}\n" for i in range(200)) + ".param p200=1\n"
    total = "+".join(["1"] * 5000)
    path = tmp_path / "long.cir"
    path.write_text(f"long\n{chain}.param s={{{total}}}\nV1 a 0 {{p0+s}}\nR1 a 0 1k\n.end\n")
    code, err = run(["lint", "--no-color", str(path)], capsys)
    assert code == 0, err


# ---------------------------------------------------------------- processes and files
SLOW = ("slow board\nV1 in 0 PULSE(0 5 0 1n 1n 1n 2n)\nR1 in out 10\nC1 out 0 1u\n.tran 1p 1\n.end\n")


def _descendants(pid: int) -> list[int]:
    out = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                stat = (entry / "stat").read_text()
            except OSError:
                continue
            fields = stat[stat.rindex(")") + 2:].split()
            if int(fields[1]) == pid and fields[0] != "Z":
                out.append(int(entry.name))
    return out


def _running(pid: int) -> bool:
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return False
    return stat[stat.rindex(")") + 2] not in "ZX"


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGKILL])
def test_killed_run_leaves_no_worker_and_no_temporary_file(tmp_path, sig):
    (tmp_path / "board.cir").write_text(SLOW)
    (tmp_path / "derate.yaml").write_text("netlist: board.cir\noutputs: {json: out/r.json}\n")
    proc = subprocess.Popen([sys.executable, "-m", "derate", "check", "--no-cache", str(tmp_path / "derate.yaml")],
                            cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            env=dict(os.environ, PYTHONPATH=str(REPO)))
    workers: list[int] = []
    deadline = time.monotonic() + 60
    while not workers and time.monotonic() < deadline:  # wait until ngspice runs in a worker
        time.sleep(0.2)
        workers = _descendants(proc.pid)
    assert workers, "no worker started"
    time.sleep(1.0)
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=30)
    if sig == signal.SIGTERM:
        assert proc.returncode == 130 and b"interrupted" in err and b"Traceback" not in err
    time.sleep(1.0)
    assert not any(_running(w) for w in workers), "a worker outlived derate"
    assert not list(tmp_path.rglob("*.tmp"))
    left = list(Path(tempfile.gettempdir()).glob(f"derate-ngspice-{proc.pid}-*"))
    if sig == signal.SIGTERM:
        assert not left  # an interruption removes its worker folders
    else:  # kill -9 cannot; the next run sweeps what a dead run left
        from derate.simulate.worker import sweep_stale_folders
        assert left and sweep_stale_folders() >= 1
        assert not list(Path(tempfile.gettempdir()).glob(f"derate-ngspice-{proc.pid}-*"))


def _catches_sigterm(pid: int) -> bool:
    """Whether the process has a handler for SIGTERM (its SigCgt mask in /proc)."""
    try:
        status = Path(f"/proc/{pid}/status").read_text()
    except OSError:
        return False
    mask = int(next(line.split()[1] for line in status.splitlines() if line.startswith("SigCgt:")), 16)
    return bool(mask & (1 << (signal.SIGTERM - 1)))


def test_sigterm_from_the_first_moment_it_can_be_caught_is_an_interruption(tmp_path):
    """A cancelled CI job sends SIGTERM, often while derate is still importing: from the moment the
    process catches it (its handler is set before the heavy imports) it ends as interrupted (130),
    not killed (143)."""
    (tmp_path / "board.cir").write_text(SLOW)
    (tmp_path / "derate.yaml").write_text("netlist: board.cir\n")
    proc = subprocess.Popen([sys.executable, "-m", "derate", "check", "--no-cache", str(tmp_path / "derate.yaml")],
                            cwd=tmp_path, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            env=dict(os.environ, PYTHONPATH=str(REPO)))
    deadline = time.monotonic() + 60
    while not _catches_sigterm(proc.pid):
        assert proc.poll() is None and time.monotonic() < deadline, "derate never set its SIGTERM handler"
        time.sleep(0.001)
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 130 and b"interrupted" in err and b"Traceback" not in err


# ---------------------------------------------------------------- every loader: loads or raises DerateError
scalars = st.one_of(st.none(), st.booleans(), st.integers(-10**6, 10**6), st.floats(allow_nan=True),
                    st.text(string.printable, max_size=12), st.sampled_from(
                        ["board.cir", "../x", "/etc/passwd", "1e999", "nan", "4u7", "16V", "2027-03-31", "C1",
                         "ceramic-class2", "industrial", "stress.voltage"]))
keys = st.sampled_from(["netlist", "parts", "policy", "scenarios", "analysis", "name", "technologies", "value",
                        "source", "waivers", "reference", "rule", "expires", "C1", "rated_voltage_v", "library",
                        "extends", "tran", "stop", "window", "options", "sources", "outputs", "json", "bom", "file",
                        "owner", "reason", "ceramic-class1", "voltage_factor", "mission", "life_h", "esr"])
documents = st.recursive(scalars, lambda inner: st.one_of(st.lists(inner, max_size=4),
                                                          st.dictionaries(keys, inner, max_size=5)), max_leaves=25)


def _loaders(folder: Path):
    from derate.gate import Baseline, load_waivers
    from derate.bom import load_bom
    from derate.parts import PartTable, load_parts
    from derate.policy import load_policy
    from derate.project import load_project
    return {
        "project": lambda p: load_project(p),
        "parts": lambda p: load_parts(p),
        "policy": lambda p: load_policy(str(p)),
        "waivers": lambda p: load_waivers(p),
        "baseline": lambda p: Baseline.load(p),
        "bom": lambda p: load_bom(p, PartTable(), {"reference": "Reference", "rated_voltage_v": "Voltage"}),
        "bom-detected": lambda p: load_bom(p, PartTable()),
    }


@settings(max_examples=int(os.environ.get("DERATE_FUZZ_EXAMPLES", 150)), deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(doc=documents, raw=st.text(max_size=80), as_text=st.booleans())
def test_every_loader_loads_or_raises_its_own_error(tmp_path, doc, raw, as_text):
    (tmp_path / "board.cir").write_text("b\nV1 a 0 1\nR1 a 0 1\nC1 a 0 1u\n.end\n")
    path = tmp_path / "data.yaml"
    path.write_text(raw if as_text else yaml.safe_dump(doc))
    for name, load in _loaders(tmp_path).items():
        try:
            load(path)
        except DerateError as exc:
            assert str(exc), name


csv_cells = st.text(alphabet=string.printable + "µé;\t", max_size=15)


@settings(max_examples=int(os.environ.get("DERATE_FUZZ_EXAMPLES", 100)), deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(st.lists(csv_cells, min_size=1, max_size=4), max_size=5),
       sep=st.sampled_from([",", ";", "\t"]), encoding=st.sampled_from(["utf-8", "utf-8-sig", "cp1252", "latin-1"]))
def test_bom_loader_loads_or_raises_its_own_error(tmp_path, rows, sep, encoding):
    from derate.bom import load_bom
    from derate.parts import PartTable
    text = "Reference" + sep + "Voltage\n" + "\n".join(sep.join(r) for r in rows)
    path = tmp_path / "bom.csv"
    path.write_bytes(text.encode(encoding, errors="replace"))
    try:
        load_bom(path, PartTable(), {"reference": "Reference", "rated_voltage_v": "Voltage"})
        load_bom(path, PartTable())
    except DerateError as exc:
        assert str(exc)


# ---------------------------------------------------------------- netlist fuzzing, whole runs
_WORDS = ["R1", "C1", "C2", "V1", "X1", "B1", "a", "b", "0", "1k", "1u", "{x}", "SIN(0 1 1k)", ".subckt s p",
          ".ends", ".param x=1", "params:", "value={v(a)}", ".tran 1u 1m", ".tran 1u", "PULSE(0 1 0 1n 1n 1u 2u)",
          "*", ";", "`", "*#", ".control", ".endc", "shell", "\x1b[31m"]
_nodes = st.sampled_from(["in", "a", "b", "0", "1", "2", "Net-(C1-Pad1)", "/out"])
_values = st.sampled_from(["1k", "10", "1u", "100n", "{x}", "4k7", "1e3", "0.5", "-1", "1F", "10uF"])
element = st.one_of(
    st.builds(lambda k, n, a, b, v: f"{k}{n} {a} {b} {v}", st.sampled_from("RCL"), st.integers(1, 5),
              _nodes, _nodes, _values),
    st.builds(lambda n, a, b: f"B{n} {a} {b} V=v({a})*0.5", st.integers(1, 3), _nodes, _nodes),
    st.builds(lambda n, a, f: f"V{n} {a} 0 SIN(0 1 {f})", st.integers(1, 3), _nodes, st.sampled_from(["1k", "10k", "0"])),
    st.just(".param x=2"))
junk = st.lists(st.sampled_from(_WORDS), min_size=1, max_size=6).map(" ".join)
fuzz_netlist = st.lists(st.one_of(element, element, element, junk), max_size=8).map(
    lambda ls: "fuzz run\nV9 in 0 SIN(0 1 1k)\nR9 in 0 1k\nC9 in 0 1u\n" + "\n".join(ls) + "\n.tran 1u 1m\n.end\n")


@settings(max_examples=int(os.environ.get("DERATE_FUZZ_RUNS", 25)), deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(text=fuzz_netlist)
def test_whole_runs_on_fuzzed_netlists_end_in_a_documented_exit_code(tmp_path, capsys, text):
    marker = tmp_path / "pwned"
    path = tmp_path / "fuzz.cir"
    path.write_text(text.replace("shell", f"shell touch {marker}"))
    code = main(["measure", "--no-color", "--no-cache", "--timeout", "20", str(path)])
    out = capsys.readouterr()
    assert code in (0, 1, 2, 3), out.err
    assert "Traceback" not in out.err and "internal error" not in out.err
    assert "\x1b[31m" not in out.err  # text from the netlist cannot drive the terminal
    assert not marker.exists()


@pytest.mark.skipif(not Path("/proc/self/environ").exists(), reason="reads a process environment from /proc")
def test_simulation_processes_get_a_minimal_environment(monkeypatch):
    """A CI job's tokens never reach a derate worker: its environment is an allowlist (PATH, library
    paths, a private HOME, the C locale), not a copy of the caller's."""
    from derate.simulate.worker import WorkerPool

    monkeypatch.setenv("GITHUB_TOKEN", "ghp_not_for_ngspice")
    monkeypatch.setenv("AWS_SECRET_ACCESS_KEY", "not-for-ngspice")
    monkeypatch.setenv("SPICE_SCRIPTS", "/tmp/elsewhere")
    with WorkerPool(1) as pool:
        assert pool.version()  # started and answering
        proc = pool.workers[0].proc
        env = dict(item.split("=", 1) for item in
                   Path(f"/proc/{proc.pid}/environ").read_bytes().decode().split("\0") if "=" in item)
    assert "GITHUB_TOKEN" not in env and "AWS_SECRET_ACCESS_KEY" not in env and "SPICE_SCRIPTS" not in env
    assert env["PATH"] == os.environ["PATH"] and env["LC_ALL"] == "C"
    assert "derate-ngspice-" in env["HOME"]  # its own empty folder


@pytest.mark.skipif(not hasattr(signal, "SIGXFSZ"), reason="needs a file-size limit (POSIX)")
def test_reports_that_cannot_all_be_written_leave_the_previous_ones_untouched(tmp_path):
    """A full disk (here: a file-size limit the largest report does not fit under) once left this run's
    small reports beside the last run's large ones, and exit 2.  Now no report changes, no temporary
    file is left, the exit is 4 and the message keeps the review's own verdict."""
    import resource

    (tmp_path / "board.cir").write_text("hub filter\nV1 in 0 SIN(0 20 1k)\nR1 in out 10\nC1 out 0 1u\n.tran 1u 3m\n.end\n")
    (tmp_path / "parts.yaml").write_text("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 10}\n")
    (tmp_path / "derate.yaml").write_text(
        "netlist: board.cir\nparts: parts.yaml\nscenarios: [{name: warm, temperature_c: 40}]\n"
        "outputs: {json: out/r.json, sarif: out/r.sarif, csv: out/r.csv, html: out/r.html}\n")
    cmd = [sys.executable, "-m", "derate", "check", "--no-cache", "--no-color", str(tmp_path / "derate.yaml")]
    env = dict(os.environ, PYTHONPATH=str(REPO), PYTHONDONTWRITEBYTECODE="1")
    first = subprocess.run(cmd, cwd=tmp_path, env=env, capture_output=True, text=True, timeout=300)
    assert first.returncode == 1, first.stderr  # C1 fails its voltage check
    reports = sorted((tmp_path / "out").iterdir())
    before = {p.name: p.read_bytes() for p in reports}
    sizes = sorted(len(b) for b in before.values())
    limit = (sizes[0] + sizes[-1]) // 2  # the small reports fit, the largest does not
    (tmp_path / "parts.yaml").write_text("parts:\n  C1: {technology: ceramic-class1, rated_voltage_v: 16}\n")

    def limited():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))
    second = subprocess.run(cmd, cwd=tmp_path, env=env, capture_output=True, text=True, timeout=300,
                            preexec_fn=limited)
    assert second.returncode == 4, second.stderr
    assert "no report was changed" in second.stderr and "(exit 1)" in second.stderr
    assert "Traceback" not in second.stderr
    assert {p.name: p.read_bytes() for p in sorted((tmp_path / "out").iterdir())} == before  # nothing moved
