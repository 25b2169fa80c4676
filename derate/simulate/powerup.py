"""Switching the circuit on: the start-up that the surge check judges.

ngspice starts a transient from the DC operating point: a circuit fed by a DC source is already
charged at t = 0, so its run holds no power-up at all (an LC input filter switched onto 24 V rings
to about 35 V; started from the operating point it sits at 24 V).  Where a source starts above zero
and the netlist does not start the run itself (``uic``), derate runs the scenario a second time
with ``.tran ... uic``: every node and inductor current starts at zero (or at the netlist's own IC=)
and every source steps to its value at t = 0, the hardest switch-on.  Only the start-up extremes of
that run are used; the steady-state figures come from the main run.
"""

from __future__ import annotations

from dataclasses import replace

from ..measure import Stress
from ..netlist.flatten import Circuit, source_value
from ..project import Scenario

POWER_UP_KEY = "\x1fpower-up"  # appended to a scenario's name for its switch-on job (names never hold it)

# the argument that gives a source function's value at t = 0
_START_ARG = {"sin": 0, "pulse": 0, "pwl": 1, "exp": 0}


def starts_above_zero(circuit: Circuit, scenario: Scenario) -> list[str]:
    """The independent sources whose value at t = 0 is not zero (or cannot be told): they switch on."""
    overrides = {k.lower(): v for k, v in scenario.sources}
    out = []
    for el in circuit.elements:
        if el.kind not in "vi":
            continue
        spec = overrides.get(el.path.lower(), el.source) if not el.instance else el.source
        if spec is None:
            continue
        function = (spec.function or "").lower()
        if not function:
            texts = [spec.dc] if spec.dc is not None else []
        elif function in _START_ARG:
            k = _START_ARG[function]
            texts = [spec.args[k]] if len(spec.args) > k else ["?"]
        else:
            texts = ["?"]  # another waveform (SFFM, AM, a behavioural one): taken as switching on
        if any(_nonzero(t, circuit, el) for t in texts):
            out.append(el.path)
    return out


def _nonzero(text: str, circuit: Circuit, el) -> bool:
    x = source_value(circuit, el, text) if text != "?" else None
    return True if x is None else x != 0.0  # cannot tell: switch it on to be sure


def merge_power_up(stresses: tuple[Stress, ...], switched_on: tuple[Stress, ...] | None, state: str) -> tuple[Stress, ...]:
    """The main run's stresses with the switch-on run's start-up extremes (the worse of the two) and what
    the start-up figures rest on (``state``: simulated, failed, off, in-run)."""
    by_cap = {s.capacitor: s for s in switched_on or ()}
    out = []
    for s in stresses:
        on = by_cap.get(s.capacitor)
        if on is None:
            out.append(replace(s, power_up=state))
            continue
        out.append(replace(s, power_up=state, startup_v_peak_v=max(s.startup_v_peak_v, on.startup_v_peak_v),
                           startup_v_min_v=min(s.startup_v_min_v, on.startup_v_min_v),
                           startup_i_peak_a=max(s.startup_i_peak_a, on.startup_i_peak_a)))
    return tuple(out)
