"""Scenario runs: failures and stalls stay per scenario, cache, quiet output, isolation."""

from __future__ import annotations

import re
import time

import pytest

from derate.cli import main
from tests.simulate.helpers import simulate, stress_of

pytestmark = pytest.mark.ngspice

# A pulse with a 2 ns period forces ngspice to stop at every edge: 10^8 periods in 100 ms take
# hours, the same as a stall as far as the timeout is concerned.
STALL = """stall or not
.param per=1m
VHF hf 0 PULSE(0 1 0 {per/4} {per/4} {per/4} {per})
RHF hf n 1k
C1 n 0 1n
.end
"""
STALL_PROJECT = {"analysis": {"tran": {"step": "1u", "stop": "100m"}, "timeout_s": 3},
                 "scenarios": [{"name": "ok", "params": {"per": "1m"}}, {"name": "stall", "params": {"per": "2n"}}]}


def test_stalling_scenario_is_stopped_and_the_other_finishes(tmp_path):
    t0 = time.monotonic()
    run = simulate(tmp_path, STALL, STALL_PROJECT)
    wall = time.monotonic() - t0
    ok, stall = run.results
    assert ok.ok and stress_of(run, "C1", "ok").i_rms_a > 0
    assert not stall.ok and stall.timed_out
    # stopped by its budget or as a stall (which, depends on how fast this machine is: the words for each
    # are tested with injected numbers below)
    assert re.match(r"(over the 3 s budget|stalled|stopped at the 3 s budget)", stall.error), stall.error
    assert wall < 120  # the 2 ns scenario alone would run for hours: wide margins on a loaded machine


def test_cli_exit_3_on_simulation_failure(tmp_path, capsys):
    simulate(tmp_path, STALL, STALL_PROJECT)  # writes the files
    assert main(["measure", "--no-color", str(tmp_path / "derate.yaml")]) == 3
    captured = capsys.readouterr()
    assert "simulation failed" in captured.err and "in scenario stall" in captured.err
    assert "C1" in captured.out  # the scenario that worked is still reported


def test_ngspice_error_message_reaches_the_user(tmp_path, ngspice_pool):
    # a bridge with a floating secondary: ngspice 39 aborts with "Timestep too small" (measured)
    net = """floating bridge
V1 a b SIN(0 17 60)
D1 a p dd
D2 b p dd
D3 0 a dd
D4 0 b dd
C1 p 0 1000u
R1 p 0 100
.model dd D(Is=1e-9 N=1.2 Rs=0.05)
.end
"""
    run = simulate(tmp_path, net, {"analysis": {"tran": {"step": "10u", "stop": "100m", "max_step": "20u"}}},
                   ngspice_pool)
    (res,) = run.results
    assert not res.ok
    assert "timestep too small" in res.error.lower()


def test_ngspice_line_numbers_point_at_the_netlist(tmp_path, ngspice_pool):
    """ngspice numbers the lines of derate's deck, which the user never sees; the message names the
    netlist line the deck line came from (here a model name after the value, which ngspice 39
    refuses: "unknown parameter (cmod)", measured)."""
    net = """greenhouse sensor filter
* comments and includes move the netlist's lines away from the deck's
.param cval=4.7u
V1 in 0 PULSE(0 5 0 1u 1u 50u 100u)
R1 in out 100
C2 out 0 10u CMOD
R2 out 0 1k
.model CMOD C(tc1=1e-3)
.end
"""
    run = simulate(tmp_path, net, {"analysis": {"tran": {"step": "1u", "stop": "1m"}}}, ngspice_pool)
    (res,) = run.results
    assert not res.ok
    assert "unknown parameter (cmod)" in res.error.lower() and "board.cir:6)" in res.error, res.error


def test_cache_hit_does_no_simulation(tmp_path, ngspice_pool):
    net = "rc\nV1 in 0 SIN(0 1 1k)\nR1 in a 1k\nC1 a 0 1u\n.end\n"
    proj = {"analysis": {"tran": {"step": "1u", "stop": "5m"}, "window": {"last": "2m"}}}
    first = simulate(tmp_path, net, proj, ngspice_pool, use_cache=True)
    assert not first.results[0].from_cache
    assert list((tmp_path / "cache").glob("*.entry"))
    assert not (tmp_path / ".derate-cache").exists()  # nothing cached inside the project
    second = simulate(tmp_path, net, proj, ngspice_pool, use_cache=True)
    assert second.results[0].from_cache
    assert second.results[0].stresses == first.results[0].stresses
    assert (second.results[0].waves["C1"].v_max_v == first.results[0].waves["C1"].v_max_v).all()
    # a changed netlist misses
    third = simulate(tmp_path, net.replace("1u\n.end", "2u\n.end"), proj, ngspice_pool, use_cache=True)
    assert not third.results[0].from_cache


def test_no_banner_or_version_warning_reaches_the_user(tmp_path, capfd):
    net = "rc\nV1 in 0 SIN(0 1 1k)\nR1 in a 1k\nC1 a 0 1u\n.end\n"
    simulate(tmp_path, net, {"analysis": {"tran": {"step": "1u", "stop": "2m"}}})
    capfd.readouterr()
    assert main(["measure", "--no-color", "--no-cache", str(tmp_path / "derate.yaml")]) == 0
    out, err = capfd.readouterr()
    for noise in ("Unsupported Ngspice version", "ngspice-39", "Circuit level simulation", "Copyright", "TypeError"):
        assert noise not in out and noise not in err


def test_spiceinit_in_working_directory_and_home_is_not_read(tmp_path, monkeypatch):
    marker = tmp_path / "pwned"
    (tmp_path / ".spiceinit").write_text(f"shell touch {marker}\n")
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("HOME", str(tmp_path))
    net = "rc\nV1 in 0 1\nR1 in a 1k\nC1 a 0 1u\n.end\n"
    run = simulate(tmp_path, net, {"analysis": {"tran": {"step": "1u", "stop": "1m"}}})  # fresh workers
    assert run.results[0].ok
    assert not marker.exists()


def test_scenario_params_sources_and_temperature(tmp_path, ngspice_pool):
    net = """corners
.param vin=5
V1 in 0 {vin}
V2 s 0 SIN(0 1 1k)
R1 in a 1k
C1 a 0 1u
R2 s b 1k
C2 b 0 1u
RT a 0 1k TC1=0.01
.end
"""
    proj = {"analysis": {"tran": {"step": "10u", "stop": "20m"}, "window": {"last": "5m"}},
            "scenarios": [{"name": "lo", "params": {"vin": 4}, "temperature_c": 27},
                          {"name": "hi", "params": {"vin": 6}, "sources": {"V2": "SIN(0 2 1k)"}, "temperature_c": 127}]}
    run = simulate(tmp_path, net, proj, ngspice_pool)
    lo, hi = stress_of(run, "C1", "lo"), stress_of(run, "C1", "hi")
    # divider 1k / RT: RT = 1k at 27 C, 2k at 127 C (TC1 = 0.01/K, ngspice TNOM 27 C)
    assert lo.v_mean_v == pytest.approx(4 * 0.5, rel=1e-3)
    assert hi.v_mean_v == pytest.approx(6 * 2 / 3, rel=1e-3)
    assert stress_of(run, "C2", "hi").i_rms_a == pytest.approx(2 * stress_of(run, "C2", "lo").i_rms_a, rel=1e-3)


def test_a_stall_is_stopped_by_progress_not_by_the_budget():
    """A job that reports no progress is stopped after the stall time, long before its budget."""
    from derate.simulate.worker import WorkerPool

    t0 = time.monotonic()
    with WorkerPool(1) as pool:
        (res,) = pool.run([("k", {"type": "sleep", "seconds": 60, "stall_s": 1.5}, 600)])
    assert time.monotonic() - t0 < 120  # long before its 600 s budget, with wide margins on a loaded machine
    assert not res.ok and res.timed_out and res.data["stalled"] is True
    assert res.error.startswith("stalled: the simulated time has not advanced for 2 s")  # 1.5 s, shown rounded


@pytest.mark.parametrize("elapsed, done, stalled, words", [
    (3.0, 0.5, False, "it is slow, not stuck: raise --timeout (analysis.timeout_s) to about 8"),  # 6 s needed
    (3.0, 1e-4, False, "a rate this low usually means a circuit ngspice struggles with"),  # 30 000 s: crawling
    (3.0, 0.0, False, "stopped at the 3 s budget before the transient reported any progress"),
    (2.0, 0.25, True, "stalled: the simulated time has not advanced for 2 s, at 25.0 % (25 ms of 100 ms"),
])
def test_the_words_for_a_stopped_run(elapsed, done, stalled, words):
    """The stop's words from the numbers alone (no wall clock): slow needs under a hundred budgets."""
    from derate.simulate.worker import stop_message

    text, was_stalled = stop_message(elapsed, done, 3.0, 0.1, 1.5, stalled)
    assert words in text and was_stalled is stalled
    if not stalled and done > 0:
        assert text.startswith(f"over the 3 s budget at {100 * done:.1f} %")


SLOW = """slow but steady (a switching stage with a small maximum step)
VIN in 0 12
S1 in sw g 0 swm
VG g 0 PULSE(0 5 0 10n 10n 4u 10u)
.model swm SW(Ron=0.05 Roff=10meg Vt=2.5 Vh=0.1)
D1 0 sw dfw
.model dfw D(Is=1u Rs=0.02)
L1 sw out 22u
C1 out 0 47u
RL out 0 5
.end
"""


def test_a_slow_run_over_budget_is_called_slow_with_the_time_it_needs(tmp_path):
    project = {"analysis": {"tran": {"step": "10n", "stop": "400m", "max_step": "10n"}, "timeout_s": 3,
                            "stall_s": 60}}
    run = simulate(tmp_path, SLOW, project)
    (res,) = run.results
    assert not res.ok and res.timed_out
    assert re.match(r"(over the 3 s budget|stalled|stopped at the 3 s budget)", res.error), res.error


def test_hitting_the_memory_limit_says_so_with_what_to_change():
    from derate.simulate.worker import WorkerPool

    with WorkerPool(1, memory_limit=600 * 1024 ** 2) as pool:
        (res,) = pool.run([("k", {"type": "allocate", "bytes": 4 * 1024 ** 3}, 60)])
        (fine,) = pool.run([("k2", {"type": "allocate", "bytes": 1024}, 60)])  # the pool goes on
    assert not res.ok
    assert res.error.startswith("ngspice ran out of memory: the worker's limit is 0.586 GiB")
    assert "--simulator stream" in res.error
    assert fine.ok
