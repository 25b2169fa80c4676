"""Build one ngspice deck per scenario from the parsed netlist.

The deck is the netlist's own cards (includes already expanded and safety-checked, continuations
joined, comments dropped) with the scenario applied: ``.param`` values and source descriptions
replaced, capacitors that have series ESR/ESL data expanded into C + R + L, the netlist's own
analyses and output cards removed, and derate's own ``.save`` / ``.op`` / ``.tran`` appended.
Only the vectors the measurements need are saved: the capacitor terminal nodes and the
capacitor currents ``@c...[i]`` (measured faster than ``.options savecurrents``).
"""

from __future__ import annotations

import fnmatch
from dataclasses import dataclass
from typing import Iterable, Mapping

from ..errors import DataError
from ..netlist.flatten import Circuit
from ..netlist.lexer import split_assignment
from ..netlist.parser import Card, Netlist
from ..netlist.values import options_card
from ..project import Analysis, Parasitics, Scenario, Tran
from ..units import NumberError, parse_number

_DROP = frozenset({".tran", ".op", ".ac", ".dc", ".noise", ".tf", ".disto", ".pz", ".sens", ".print", ".plot",
                   ".probe", ".save", ".meas", ".measure", ".four", ".width", ".csparam", ".title"})


@dataclass(frozen=True)
class Probe:
    """What to read back for one capacitor: vector names of its terminals and its current."""

    path: str
    spice_name: str
    v_plus: str | None  # None for ground
    v_minus: str | None
    current: str
    model: str  # "ideal", "C+ESR", "C+ESR+ESL"
    esr_ohm: float | None = None
    esl_h: float | None = None


@dataclass(frozen=True)
class Deck:
    """A complete ngspice deck for one scenario and the probes to read from its results."""

    scenario: str
    text: str
    probes: tuple[Probe, ...]
    tran: Tran


def netlist_tran(netlist: Netlist) -> Tran | None:
    """Return the netlist's own ``.tran`` card as a Tran, or None."""
    for card in netlist.analyses:
        if card.keyword == ".tran":
            nums = []
            for tok in card.tokens[1:]:
                if tok.lower() == "uic":
                    continue
                try:
                    nums.append(parse_number(tok).value)
                except NumberError:
                    raise DataError(f"cannot read .tran value '{tok}'", f"{card.loc.file}:{card.loc.line}") from None
            if len(nums) < 2:
                raise DataError(".tran needs a step and a stop time", f"{card.loc.file}:{card.loc.line}")
            uic = any(t.lower() == "uic" for t in card.tokens)
            return Tran(nums[0], nums[1], nums[2] if len(nums) > 2 else 0.0, nums[3] if len(nums) > 3 else None, uic)
    return None


def parasitics_for(circuit: Circuit,
                   table: Mapping[str, Parasitics] | Iterable[tuple[str, Parasitics]]) -> dict[str, Parasitics]:
    """Return {capacitor path: Parasitics} for every capacitor matched by a key (path or glob)."""
    out: dict[str, Parasitics] = {}
    caps = circuit.capacitors()
    for key, para in (table.items() if isinstance(table, Mapping) else table):
        matched = [c.path for c in caps if c.path.lower() == key.lower() or fnmatch.fnmatchcase(c.path.lower(), key.lower())]
        if not matched:
            raise DataError(f"no capacitor matches '{key}'", key="esr")
        for path in matched:
            out[path] = para
    return out


def _fmt(x: float) -> str:
    return repr(float(x))


def build_deck(netlist: Netlist, circuit: Circuit, analysis: Analysis, scenario: Scenario,
               parasitics: Mapping[str, Parasitics] | None = None) -> Deck:
    """Return the deck for one scenario; DataError when the scenario names something unknown."""
    parasitics = {k: v for k, v in (parasitics or {}).items() if v.esr_ohm or v.esl_h}
    tran = analysis.tran or netlist_tran(netlist)
    if tran is None:
        raise DataError("no transient analysis: give analysis.tran in derate.yaml or a .tran card in the netlist")
    overrides = dict(scenario.params)
    sources = {k.lower(): v for k, v in scenario.sources}
    top_sources = {e.path.lower() for e in circuit.elements if e.kind in "vi" and not e.instance}
    unknown = sorted(k for k, _ in scenario.sources if k.lower() not in top_sources)
    if unknown:
        raise DataError(f"scenario '{scenario.name}' sets source(s) {', '.join(unknown)}, which are not "
                        f"top-level V or I sources of the netlist")

    # parasitics per capacitor card: every instance of a card must get the same values
    by_card: dict[int, tuple[Parasitics, str]] = {}
    for cap in circuit.capacitors():
        para = parasitics.get(cap.path)
        key = id(cap.card)
        if key in by_card and by_card[key][0] != (para or Parasitics()):
            raise DataError(f"{cap.path} and {by_card[key][1]} come from one subcircuit card "
                            f"({cap.loc}) but have different ESR/ESL; derate simulates parasitics per "
                            "card, so give them the same values")
        by_card[key] = (para or Parasitics(), cap.path)

    # derate's own title line: the netlist's title is text from the repository and stays out of the deck
    lines = [f"derate deck, scenario {scenario.name}"]
    depth = 0
    for card in netlist.cards:
        kw = card.keyword
        if kw == ".subckt":
            depth += 1
        elif kw == ".ends":
            depth -= 1
        if kw in _DROP:
            continue
        if kw == ".temp" and scenario.temperature_c is not None:
            continue
        if kw in (".param", ".parameter", ".parameters") and depth == 0 and overrides:
            lines.append(_override_params(card, overrides))
            continue
        if depth == 0 and kw in sources:
            lines.append(" ".join(card.tokens[:3]) + " " + sources[kw].deck_text())
            continue
        if kw[0] == "c" and not kw.startswith(".") and id(card) in by_card and by_card[id(card)][0] != Parasitics():
            lines.extend(_expand_capacitor(card, by_card[id(card)][0]))
            continue
        lines.append(card.text)

    probes: list[Probe] = []
    saves: list[str] = []
    seen: dict[str, str] = {}
    for cap in circuit.capacitors():
        vp, vn = (n if n != "0" else None for n in cap.nodes)
        names = []
        for v in (vp, vn):
            if v and v not in seen:
                if ".probe" in v:
                    # ngspice 39 cannot .save a vector whose name contains ".probe" (its .probe
                    # handling swallows it; measured): read the node through a B-source alias
                    alias = f"derate_alias_{len(seen)}"
                    lines.append(f"Bderate_alias_{len(seen)} {alias} 0 V=v({v})")
                    seen[v] = alias
                else:
                    seen[v] = v
                saves.append(f"v({seen[v]})")
            names.append(seen[v] if v else None)
        vp, vn = names
        cur = f"@{cap.spice_name}[i]"
        saves.append(cur)
        para = parasitics.get(cap.path)
        model = "ideal" if not para else ("C+ESR+ESL" if para.esl_h else "C+ESR")
        probes.append(Probe(cap.path, cap.spice_name, vp, vn, cur, model,
                            para.esr_ohm if para else None, para.esl_h if para else None))
    options = options_card(analysis.options)
    if options:
        lines.append(options)
    if scenario.temperature_c is not None:
        lines.append(f".temp {_fmt(scenario.temperature_c)}")
    # one .save line per few vectors keeps lines short; ngspice accepts many .save cards
    for i in range(0, len(saves), 20):
        lines.append(".save " + " ".join(saves[i:i + 20]))
    lines.append(".op")
    tran_card = f".tran {_fmt(tran.step_s)} {_fmt(tran.stop_s)} {_fmt(tran.start_s)}"
    if tran.max_step_s:
        tran_card += f" {_fmt(tran.max_step_s)}"
    if tran.uic:
        tran_card += " uic"
    lines.append(tran_card)
    lines.append(".end")
    return Deck(scenario.name, "\n".join(lines) + "\n", tuple(probes), tran)


def _override_params(card: Card, overrides: Mapping[str, float]) -> str:
    out = [card.tokens[0]]
    for tok in card.tokens[1:]:
        kv = split_assignment(tok)
        if kv and kv[0].lower() in overrides:
            out.append(f"{kv[0]}={_fmt(overrides[kv[0].lower()])}")
        else:
            out.append(tok)
    return " ".join(out)


def _expand_capacitor(card: Card, para: Parasitics) -> list[str]:
    toks = list(card.tokens)
    name = toks[0].lower()
    a, b = toks[1], toks[2]
    chain = [f"derate_{name}_esr"]
    if para.esl_h:
        chain.append(f"derate_{name}_esl")
    lines = [" ".join([toks[0], a, chain[0]] + toks[3:])]
    nxt = chain[1] if para.esl_h else b
    lines.append(f"Rderate_esr_{name} {chain[0]} {nxt} {_fmt(para.esr_ohm or 1e-6)}")
    if para.esl_h:
        lines.append(f"Lderate_esl_{name} {chain[1]} {b} {_fmt(para.esl_h)}")
    return lines

