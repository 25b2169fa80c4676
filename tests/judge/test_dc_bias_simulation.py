"""Class-2 ceramics simulated at their capacitance under DC bias (issue 23; derate/simulate/bias.py).

The truth comes from outside derate: the bias fraction is read by hand from the part's DC-bias curve
at the mean voltage bare ngspice measures, and a bare ngspice deck with the ceramics fixed at that
capacitance, each part discrete with its own ESR, gives the current every part carries.

The buck input bank of the issue: a 100 µF electrolytic beside two 10 µF X5R ceramics on a 12 V rail
that a 200 kHz switch draws 5 A pulses from.  At nominal capacitance the ceramics take more of the
ripple than they can at 12 V, and the electrolytic looks easier than it is.  The DC-bias curve below
is invented test data shaped like makers' published X5R curves (80 % at half the rating, 55 % at the
12 V rail); it is the part's input, not the truth.
"""

from __future__ import annotations

import pytest

from tests.boards import bare_ngspice, finding, review_board

pytestmark = pytest.mark.ngspice

CURVE = [[0, 1.0], [6, 0.8], [12, 0.55], [16, 0.45]]  # (V, fraction kept): invented, X5R-shaped
PARTS = {
    "C1": {"technology": "aluminum-electrolytic", "capacitance_f": "100u", "rated_voltage_v": 25, "esr_ohm": 0.1,
           "ripple_current_a": 0.65, "rated_temperature_c": 105},
    "C2": {"technology": "ceramic-class2", "capacitance_f": "10u", "rated_voltage_v": 16, "esr_ohm": 0.005,
           "dielectric": "X5R", "dc_bias": CURVE},
    "C3": {"technology": "ceramic-class2", "capacitance_f": "10u", "rated_voltage_v": 16, "esr_ohm": 0.005,
           "dielectric": "X5R", "dc_bias": CURVE},
}
SOURCE = """VIN in 0 12
RSRC in bus 50m
ISW bus 0 PULSE(0 5 0 20n 20n 2.2u 5u)
"""
TRAN = ".tran 20n 1m 0 20n\n"


def _fraction(v: float) -> float:
    """The curve read by hand: linear between its rows."""
    for (v0, f0), (v1, f1) in zip(CURVE, CURVE[1:]):
        if v0 <= v <= v1:
            return f0 + (f1 - f0) * (v - v0) / (v1 - v0)
    raise AssertionError(v)


def _truth(folder, c_ceramic: float, t0: float, t1: float) -> dict[str, float]:
    """Bare ngspice, every part discrete with its ESR, the ceramics fixed at ``c_ceramic``."""
    return bare_ngspice(folder, "input bank, discrete parts\n" + SOURCE + f"""C1 bus n1 100u
R1 n1 s1 0.1
V1 s1 0 0
C2 bus n2 {c_ceramic:.6g}
R2 n2 s2 0.005
V2 s2 0 0
C3 bus n3 {c_ceramic:.6g}
R3 n3 s3 0.005
V3 s3 0 0
""" + TRAN + f""".meas tran vbus AVG v(bus) from={t0:.9g} to={t1:.9g}
.meas tran i1 RMS i(V1) from={t0:.9g} to={t1:.9g}
.meas tran i2 RMS i(V2) from={t0:.9g} to={t1:.9g}
.end
""")


def test_the_electrolytic_carries_what_it_carries_beside_biased_ceramics(tmp_path, ngspice_pool):
    review = review_board(tmp_path / "board", "buck input bank\n" + SOURCE + "C1 bus 0 100u\nC2 bus 0 10u\n"
                          "C3 bus 0 10u\n" + TRAN + ".end\n", {"scenarios": [{"name": "warm", "ambient_c": 40}]},
                          PARTS, policy="industrial", pool=ngspice_pool)
    (res,) = review.run.results
    by = {s.capacitor: s for s in res.stresses}
    t0, t1 = by["C1"].window_start_s, by["C1"].window_end_s
    # the truth: the rail's mean voltage from bare ngspice, the curve read there by hand, the bank
    # simulated with those fixed values
    nominal = _truth(tmp_path / "nominal", 10e-6, t0, t1)
    f = _fraction(nominal["vbus"])
    assert 0.5 < f < 0.6  # about 55 % at 11.9 V
    truth = _truth(tmp_path / "biased", 10e-6 * f, t0, t1)
    assert truth["vbus"] == pytest.approx(nominal["vbus"], rel=1e-3)  # the bias does not move the rail
    # derate simulated the ceramics at the biased value, and the shares match the truth within 3 %
    assert dict(res.scenario.scale)["bias:C2"] == pytest.approx(f, rel=0.01)
    assert by["C1"].i_rms_a == pytest.approx(truth["i1"], rel=0.03)
    assert by["C2"].i_rms_a == pytest.approx(truth["i2"], rel=0.03)
    # and the difference matters: at nominal capacitance the electrolytic would carry noticeably less
    assert nominal["i1"] < 0.93 * truth["i1"]
    ripple = finding(review, "C1", "stress.ripple")
    assert ripple.measured == pytest.approx(truth["i1"], rel=0.03)
    # the review says what was simulated
    notes = " ".join(review.run.notes)
    assert "class-2 ceramics simulated at the capacitance their DC-bias curves give" in notes
    assert f"C2 {100 * f:.0f} % of 10 µF at 11.9 V; C3 {100 * f:.0f} % of 10 µF at 11.9 V" in notes
    # the DC-bias check judges the operating point that was simulated
    bias = finding(review, "C2", "stress.dc-bias")
    assert bias.measured == pytest.approx(f, rel=0.01)


def test_a_ceramic_inside_a_subcircuit_is_simulated_nominal_with_a_note(tmp_path, ngspice_pool):
    netlist = ("bank in a block\n" + SOURCE + ".subckt bank p\nC2 p 0 10u\n.ends\nX1 bus bank\nC1 bus 0 100u\n"
               + TRAN + ".end\n")
    parts = {"C1": PARTS["C1"], "X1.C2": PARTS["C2"]}
    review = review_board(tmp_path / "board", netlist, {"scenarios": [{"name": "warm", "ambient_c": 40}]}, parts,
                          policy="industrial", pool=ngspice_pool)
    (res,) = review.run.results
    assert not any(k.startswith("bias:") for k, _ in res.scenario.scale)
    assert any("X1.C2: class-2 ceramic(s) inside a subcircuit simulated at their nominal value" in n
               for n in review.run.notes)
