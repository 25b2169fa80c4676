"""Hand-made Stress records, parts and contexts for testing checks without the simulator."""

from __future__ import annotations

from derate.checks.base import Context
from derate.measure import Stress
from derate.parts import Part
from derate.policy import Policy, Sourced
from derate.project import Scenario
from derate.thermal import thermal_state


def stress(**kw) -> Stress:
    base = dict(capacitor="C1", spice_name="c1", scenario="s", v_max_v=10.0, v_min_v=9.0, v_peak_abs_v=10.0,
                v_mean_v=9.5, i_rms_a=0.5, i_ac_rms_a=0.5, startup_v_peak_v=10.0, startup_v_min_v=0.0,
                bands=((120.0, 0.5),), f_fundamental_hz=120.0)
    base.update(kw)
    return Stress(**base)


def policy(technology: str = "aluminum-electrolytic", near_pct: float = 10.0, **values) -> Policy:
    return Policy(name="test", near_limit_pct=Sourced(near_pct, "test"),
                  technologies={technology: {k: Sourced(v, "test") for k, v in values.items()}})


def context(s: Stress, part: Part, pol: Policy, ambient_c: float | None = 25.0, mission_life_h=None, duty=1.0) -> Context:
    sc = Scenario("s", ambient_c=ambient_c)
    return Context("C1", s, part, pol, sc, thermal_state(s, part, ambient_c), mission_life_h, duty)
