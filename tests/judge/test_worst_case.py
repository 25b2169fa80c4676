"""A worst case that is one: the worst vertex of the tolerance box, not only all-high and all-low.

Truth: every vertex of the tolerance box simulated in bare ngspice with the parts' values written
out (discrete elements, no derate involved); the largest ripple current a part sees there is what
derate's worst case must find.
"""

from __future__ import annotations

import itertools

import pytest

from derate.status import Status
from tests.boards import bare_ngspice, finding, review_board

pytestmark = pytest.mark.ngspice

# a 100 kHz square current shared by an electrolytic (C1, with ESR) and a ceramic (C2): C1 carries most when
# its own capacitance is high, its ESR low and the ceramic small: a mixed corner
_SOURCE = "I1 0 a PULSE(0 2 0 100n 100n 4.9u 10u)\nRL a 0 5\n"
_TRAN = ".tran 20n 3m 0 50n\n"


def _deck(c1: float, esr1: float, c2: float, esr2: float, meas: bool) -> str:
    text = (f"vertex\n{_SOURCE}C1 a n1 {c1!r}\nR1 n1 s1 {esr1!r}\nV1 s1 0 0\nC2 a n2 {c2!r}\nR2 n2 0 {esr2!r}\n"
            + _TRAN)
    if meas:
        text += ".meas tran i1 RMS i(V1) from=2.98m to=3m\n"
    return text + ".end\n"


PARTS = {"C1": {"technology": "aluminum-polymer", "capacitance_f": "100u", "tolerance_pct": 20, "rated_voltage_v": 16,
                "esr_ohm": 0.05, "ripple_current_a": 0.9, "rated_temperature_c": 105},
         "C2": {"technology": "ceramic-class1", "capacitance_f": "22u", "tolerance_pct": 20, "rated_voltage_v": 50,
                "esr_ohm": 0.005}}
PROJECT = {"scenarios": [{"name": "warm", "ambient_c": 40}], "tolerances": {"capacitors": "parts", "esr_pct": 20}}
NETLIST = "bank\n" + _SOURCE + "C1 a 0 100u\nC2 a 0 22u\n" + _TRAN + ".end\n"


@pytest.fixture(scope="module")
def truth(tmp_path_factory):
    """C1's RMS current at every vertex (C1, ESR1, C2, ESR2 each at +/-20 %), in bare ngspice."""
    folder = tmp_path_factory.mktemp("vertices")
    out = {}
    for k, signs in enumerate(itertools.product((1, -1), repeat=4)):
        c1, e1, c2, e2 = (nominal * (1 + 0.2 * s) for nominal, s in zip((100e-6, 0.05, 22e-6, 0.005), signs))
        out[signs] = bare_ngspice(folder / str(k), _deck(c1, e1, c2, e2, True))["i1"]
    return out


def test_the_worst_vertex_is_found_where_all_high_and_all_low_miss_it(tmp_path, ngspice_pool, truth):
    worst = max(truth.values())
    corners = max(truth[(1, 1, 1, 1)], truth[(-1, -1, -1, -1)])
    assert worst > corners * 1.05  # the mixed vertex is worse than both all-high and all-low
    for method in ("vertices", "sensitivity"):
        review = review_board(tmp_path / method, NETLIST, PROJECT, PARTS, pool=ngspice_pool, worst_case=method)
        ripple = finding(review, "C1", "stress.ripple")
        # industrial: 80 % of 0.9 A = 0.72 A allowed, judged on the worst vertex
        assert ripple.measured == pytest.approx(worst, rel=0.01), method
        assert ripple.ratio == pytest.approx(worst / 0.72, rel=0.01) and ripple.status == Status.FAIL
    names = [r.scenario.name for r in review.run.results]
    assert "warm~nom" in names and any(n.startswith("warm~v") for n in names)


def test_all_high_and_all_low_alone_would_have_passed(truth):
    # the old two-corner worst case: C1 within 80 % of its rating at both, over it at the mixed vertex
    corners = max(truth[(1, 1, 1, 1)], truth[(-1, -1, -1, -1)])
    assert corners < 0.72 < max(truth.values())
