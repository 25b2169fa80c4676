"""The netlist lint rules (topology, values, structure) in the registry's shape (``derate.registry``)."""

from __future__ import annotations

from ..registry import RuleInfo


def _lint(rule_id: str, severity: str, title: str) -> RuleInfo:
    return RuleInfo(rule_id, "lint", title, severity=severity, sources=("ngspice 39 behaviour (DEVELOPERS.md, "
                    "simulator notes) and circuit theory",))


LINT_RULES: dict[str, RuleInfo] = {r.id: r for r in (
    _lint("topology.no-ground", "error", "no element connects to ground (node 0 or gnd)"),
    _lint("topology.no-dc-path", "error", "net with no DC path to ground: ngspice cannot find an operating point"),
    _lint("topology.junction-only", "warning", "net reaches ground only through semiconductor junctions; ngspice "
                                               "may crawl for minutes on it"),
    _lint("topology.shorted-capacitor", "warning", "capacitor with both pins on one net"),
    _lint("topology.single-pin-net", "warning", "net with a single connection"),
    _lint("topology.source-loop", "error", "loop made only of voltage sources (and inductors): singular at DC"),
    _lint("topology.source-capacitor-loop", "warning", "capacitor directly across voltage sources: its current is "
                                                       "set by the source edge alone, inrush figures are unrealistic"),
    _lint("value.digits-after-scale", "warning", "digits after a scale factor are ignored by ngspice (4k7 = "
                                                 "4000)"),
    _lint("value.femto-suffix", "warning", "a bare F is femto to ngspice, not farads (1F = 1 fF)"),
    _lint("value.greek-mu", "warning", "Greek mu (U+03BC) is not a scale factor to ngspice"),
    _lint("value.capacitance-range", "warning", "capacitor value outside 1 fF ... 10 F: probably a unit mistake"),
    _lint("netlist.duplicate-name", "error", "two elements with the same name in one scope"),
    _lint("netlist.undefined-subckt", "error", "instance of a subcircuit that is not defined"),
    _lint("netlist.undefined-model", "error", "element uses a model that is not defined"),
    _lint("netlist.undefined-parameter", "error", "an expression names a parameter no .param or subcircuit "
                                                  "defines (ngspice stops on it)"),
    _lint("netlist.pin-count", "error", "instance connects a different number of nodes than its subcircuit has "
                                        "pins"),
    _lint("netlist.bad-model", "warning", "a .model card that cannot be read (an error where an element uses it)"),
    _lint("netlist.bad-subckt", "warning", "a .subckt header that cannot be read (an error where an instance uses "
                                           "it)"),
    _lint("netlist.note", "info", "something in the netlist was ignored or replaced (a redefined model, an "
          "ignored control block ...)"),
    _lint("netlist.unknown-instance-param", "warning", "instance sets a parameter its subcircuit does not "
                                                       "declare"),
)}
