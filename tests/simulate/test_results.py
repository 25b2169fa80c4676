"""Reading a capacitor with its terminals reversed turns every voltage and the mean current; magnitudes stay."""

from __future__ import annotations

import numpy as np

from derate.measure import Envelope, Stress
from derate.project import Scenario
from derate.simulate.results import ScenarioResult, SimulationRun, with_reversed_terminals


def test_reversed_terminals_swap_the_start_up_peaks_the_surge_and_reverse_checks_read():
    s = Stress("C1", "c1", "s", v_dc_v=-12.0, v_max_v=-11.0, v_min_v=-13.0, v_peak_abs_v=13.0, v_mean_v=-12.0,
               v_rms_v=12.0, i_mean_a=-0.1, i_rms_a=0.5, startup_v_peak_v=0.5, startup_v_min_v=-16.0,
               startup_i_peak_a=2.0)
    other = Stress("C2", "c2", "s", v_max_v=5.0, startup_v_peak_v=6.0)
    env = Envelope(np.array([0.0, 1.0]), np.array([-13.0, -12.5]), np.array([-11.0, -11.5]), np.array([-1.0, -2.0]),
                   np.array([1.0, 2.0]), np.array([0.5, 0.5]))
    run = SimulationRun((ScenarioResult(Scenario("s"), True, (s, other), {"C1": env}, {"C1": env}),
                         ScenarioResult(Scenario("t"), False, error="failed")))
    turned = with_reversed_terminals(run, {"C1"})
    c1, c2 = turned.results[0].stresses
    # the card's second node is +: the start-up dip to -16 V is a 16 V surge peak, the 0.5 V peak a 0.5 V dip
    assert (c1.startup_v_peak_v, c1.startup_v_min_v) == (16.0, -0.5)
    assert (c1.v_max_v, c1.v_min_v, c1.v_dc_v, c1.v_mean_v, c1.i_mean_a) == (13.0, 11.0, 12.0, 12.0, 0.1)
    assert (c1.v_peak_abs_v, c1.v_rms_v, c1.i_rms_a, c1.startup_i_peak_a) == (13.0, 12.0, 0.5, 2.0)
    assert "terminals reversed" in c1.notes[-1] and c2 == other
    e = turned.results[0].waves["C1"]
    assert list(e.v_min_v) == [11.0, 11.5] and list(e.v_max_v) == [13.0, 12.5] and list(e.i_max_a) == [1.0, 2.0]
    assert list(turned.results[0].run_waves["C1"].v_max_v) == [13.0, 12.5]
    assert turned.results[1] is run.results[1] and with_reversed_terminals(run, set()) is run
