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
import re
from dataclasses import dataclass
from typing import Iterable, Mapping

from ..cardparts import DATABASE_ATTRIBUTES
from ..errors import DataError
from ..netlist.flatten import Circuit
from ..netlist.lexer import PLAIN_NUMBER, split_assignment
from ..netlist.flatten import CARD_PARASITICS, GROUND_NAMES
from ..netlist.names import rename_voltage_refs
from ..netlist.parser import Card, Netlist, Scope
from ..netlist.values import SourceValue, options_card
from ..project import Analysis, Parasitics, Scenario, Tran
from ..units import NumberError, parse_number

_DROP = frozenset({".tran", ".op", ".ac", ".dc", ".noise", ".tf", ".disto", ".pz", ".sens", ".print", ".plot",
                   ".probe", ".save", ".meas", ".measure", ".four", ".width", ".csparam", ".title",
                   ".step", ".backanno", ".external", ".aliases", ".endaliases"})


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


_DECK_LINE = re.compile(r"\b(line(?: no\.)?)\s+(\d+)\b", re.I)


@dataclass(frozen=True)
class Deck:
    """A complete ngspice deck for one scenario and the probes to read from its results."""

    scenario: str
    text: str
    probes: tuple[Probe, ...]
    tran: Tran
    origins: tuple[str, ...] = ()  # per deck line (from 1), the netlist file:line it was written from

    def user_lines(self, message: str) -> str:
        """An ngspice message with its deck line numbers ("line 6", "line no. 16") followed by the
        netlist line the deck line came from: the user never sees derate's deck."""
        def add(m: re.Match) -> str:
            n = int(m.group(2))
            origin = self.origins[n - 1] if 0 < n <= len(self.origins) else ""
            return f"{m.group(0)} (from {origin})" if origin else m.group(0)
        return _DECK_LINE.sub(add, message) if self.origins else message


def tran_cards(netlist: Netlist) -> list[Card]:
    """The netlist's transient analyses in reading order (``.tran`` cards and control-block ``tran``)."""
    return [card for card in netlist.analyses if card.keyword == ".tran"]


# options another simulator (LTspice) writes after the .tran numbers, which ngspice has no use for:
# what each means there and what derate's run does instead
FOREIGN_TRAN_OPTIONS = {
    "startup": "sources ramped up from zero at the start; ngspice starts from the operating point "
               "(derate's start-up figures come from that; use uic or a ramped source to simulate power-up)",
    "steady": "stop at steady state; derate runs to the stop time and checks the steady state itself",
    "nodiscard": "keep the points before the start time; derate measures its own window",
}


# the words ngspice and another simulator (PSpice's SKIPBP) use for "no operating point"
_UIC_WORDS = frozenset({"uic", "skipbp"})


def _tran_numbers(card: Card) -> list[str]:
    """The number tokens of a .tran card (its option words left out)."""
    return [t for t in card.tokens[1:] if t.lower() not in _UIC_WORDS and t.lower() not in FOREIGN_TRAN_OPTIONS]


def measured_tran_card(netlist: Netlist) -> Card | None:
    """The transient analysis ngspice leaves current, the one a user's plots show: a control block's own
    ``tran`` command (the last one it runs), else the first ``.tran`` card (ngspice runs several
    ``.tran`` cards last to first, so the first card's plot is left current; measured, ngspice 39)."""
    cards = tran_cards(netlist)
    if not cards:
        return None
    controlled = [c for c in cards if (c.loc.file, c.loc.line, c.text) in netlist.from_control]
    return controlled[-1] if controlled else cards[0]


POINTS_PER_PERIOD = 100  # a sine resolved to 0.2 % of its amplitude (1 - cos(pi/100)): common practice


def source_time_step(circuit: Circuit | None) -> tuple[float | None, str]:
    """The step that resolves the circuit's fastest source: a hundredth of the shortest SIN or PULSE
    period, a tenth of a pulse's width or of a PWL segment; None when no source sets a time scale."""
    if circuit is None:
        return None, "no circuit"
    from ..netlist.flatten import source_value

    steps: list[tuple[float, str]] = []
    for el in circuit.elements:
        spec = el.source
        if el.kind not in "vi" or spec is None or not spec.function:
            continue

        def num(text: str, el=el) -> float | None:
            x = source_value(circuit, el, text)
            return x if x is not None and x > 0 else None
        fn, args = spec.function.lower(), spec.args
        if fn == "sin" and len(args) >= 3 and (f := num(args[2])):
            steps.append((1.0 / f / POINTS_PER_PERIOD, f"{el.path}'s {f:g} Hz sine"))
        elif fn == "pulse":
            if len(args) >= 7 and (per := num(args[6])):
                steps.append((per / POINTS_PER_PERIOD, f"{el.path}'s {per:g} s pulse period"))
            if len(args) >= 6 and (pw := num(args[5])):
                steps.append((pw / 10, f"{el.path}'s {pw:g} s pulse width"))
        elif fn == "pwl" and len(args) >= 4:
            times = [num(a) for a in args[0::2]]
            gaps = [b - a for a, b in zip(times, times[1:]) if a is not None and b is not None and b > a]
            if gaps:
                steps.append((min(gaps) / 10, f"{el.path}'s shortest PWL segment"))
    if not steps:
        return None, "no periodic or stepped source"
    return min(steps)


def netlist_tran(netlist: Netlist, circuit: Circuit | None = None) -> Tran | None:
    """Return the netlist's own transient analysis as a Tran, or None.

    Of several, the one ngspice leaves current (``measured_tran_card``); ``tran_note`` says which.
    One argument (``.tran 5m``, the form of another simulator, which chooses its step itself) is the stop
    time, with a step and maximum step that resolve the circuit's fastest source
    (``source_time_step``), else a thousandth of the stop time, said in the note.
    """
    card = measured_tran_card(netlist)
    if card is None:
        return None
    nums = []
    for tok in _tran_numbers(card):
        try:
            nums.append(parse_number(tok).value)
        except NumberError:
            raise DataError(f"cannot read .tran value '{tok}'", f"{card.loc.file}:{card.loc.line}") from None
    if not nums or any(x < 0 for x in nums) or nums[-1 if len(nums) == 1 else 1] <= 0:
        raise DataError(".tran needs a positive stop time", f"{card.loc.file}:{card.loc.line}")
    if len(nums) == 1:
        step, _ = source_time_step(circuit)
        step = min(step, nums[0] / 1000.0) if step else nums[0] / 1000.0
        return Tran(step, nums[0], 0.0, step, any(t.lower() in _UIC_WORDS for t in card.tokens))
    if nums[0] == 0:  # a print step of 0 (another simulator's "as needed"): ngspice needs a positive step
        nums[0] = min(nums[3], nums[1] / 1000.0) if len(nums) > 3 and nums[3] > 0 else nums[1] / 1000.0
    uic = any(t.lower() in _UIC_WORDS for t in card.tokens)
    return Tran(nums[0], nums[1], nums[2] if len(nums) > 2 else 0.0, nums[3] if len(nums) > 3 else None, uic)


def tran_note(netlist: Netlist, circuit: Circuit | None = None) -> str | None:
    """What derate made of the netlist's transient analyses (None when there is nothing to say)."""
    cards = tran_cards(netlist)
    card = measured_tran_card(netlist)
    notes = []
    if card is not None:
        for tok in card.tokens[1:]:
            if tok.lower() in FOREIGN_TRAN_OPTIONS:
                notes.append(f"{card.loc}: .tran option '{tok}' of another simulator ignored "
                             f"({FOREIGN_TRAN_OPTIONS[tok.lower()]})")
    if len(cards) > 1:
        where = ", ".join(str(c.loc) for c in cards)
        why = ("the control block runs it" if (card.loc.file, card.loc.line, card.text) in netlist.from_control
               else "ngspice runs .tran cards last to first and leaves the first one's results current, the ones "
                    "its plots show")
        notes.append(f"{len(cards)} transient analyses ({where}): derate measures {card.loc} ({why}); set "
                     "analysis.tran in derate.yaml to choose another")
    if card is not None and len(card.tokens) > 2 and _is_zero(card.tokens[1]):
        notes.append(f"{card.loc}: .tran step 0 read as the smaller of the maximum step and stop/1000 "
                     "(ngspice needs a positive step)")
    if card is not None and any(t.lower() == "skipbp" for t in card.tokens):
        notes.append(f"{card.loc}: .tran option SKIPBP read as uic (no operating point; initial conditions from IC=)")
    if card is not None and len(_tran_numbers(card)) == 1:
        tran = netlist_tran(netlist, circuit)
        step, what = source_time_step(circuit)
        chosen = (f"a step of {tran.step_s:.3g} s to resolve {what}" if step and step <= tran.stop_s / 1000.0
                  else f"a step of stop/1000 ({tran.step_s:.3g} s): {what} needs no finer one")
        notes.append(f"{card.loc}: one-argument .tran (another simulator's form, which chooses its own step) read as "
                     f"the stop time, with {chosen}")
    return "; ".join(notes) or None


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
               parasitics: Mapping[str, Parasitics] | None = None, skip: frozenset[str] = frozenset()) -> Deck:
    """Return the deck for one scenario; DataError when the scenario names something unknown.

    Capacitors in ``skip`` (not reviewed) are simulated but not probed.
    """
    scale = dict(scenario.scale)
    parasitics = {k: v for k, v in (parasitics or {}).items() if v.esr_ohm or v.esl_h}
    for key, factor in scale.items():  # a sample's ESR spread
        if key.startswith("esr:") and key[4:] in parasitics and parasitics[key[4:]].esr_ohm:
            para = parasitics[key[4:]]
            parasitics[key[4:]] = Parasitics(para.esr_ohm * factor, para.esl_h)
    top = {e.path.lower(): e for e in circuit.elements if not e.instance} if scale else {}
    tran = analysis.tran or netlist_tran(netlist, circuit)
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
    origins: list[str] = [""]  # per deck line, the netlist file:line it comes from ("" for derate's own)
    names = _DeckNames(circuit)
    scopes: list[Scope] = [netlist.top]
    previous = ""
    for card in netlist.cards:
        origins += [previous] * (len(lines) - len(origins))  # the lines the previous card became
        previous = str(card.loc)
        kw = card.keyword
        depth = len(scopes) - 1
        if kw == ".subckt":
            sub = scopes[-1].subckts.get(card.tokens[1].lower()) if len(card.tokens) > 1 else None
            scopes.append(sub.body if sub else scopes[-1])
            lines.append(names.subckt_header(card, sub))
            continue
        if kw == ".ends":
            scopes.pop()
            lines.append(card.text)
            continue
        if kw in _DROP:
            continue
        if kw == ".temp" and scenario.temperature_c is not None:
            continue
        if kw in (".param", ".parameter", ".parameters") and depth == 0 and overrides:
            lines.append(_override_params(card, overrides))
            continue
        if kw.startswith("."):
            lines.append(names.dot_card(card))
            continue
        toks = without_database_attributes(names.element_tokens(card), kw[0])
        if kw[0] == "v":  # Rser=/Cpar= on a source: elements of their own, written before it
            toks, extra = source_parasitics(toks)
            lines.extend(extra)
        if depth == 0 and scale and kw in top:
            el = top[kw]
            factor = scale.get(f"source:{el.path}")
            if factor is not None:
                lines.append(" ".join(toks[:3]) + " " + scaled_source(el, sources.get(kw), factor, circuit).deck_text())
                continue
            factor = scale.get(f"value:{el.path}")
            biased = scale.get(f"bias:{el.path}")  # a class-2 ceramic at its capacitance under DC bias
            if (factor is not None or biased is not None) and el.value is not None:
                at = max(el.proto.parts.node_index, default=0) + 1
                toks[at] = _fmt(el.value / (el.multiplicity or 1.0) * (factor or 1.0) * (biased or 1.0))  # m= stays
        if depth == 0 and kw in sources:
            lines.append(" ".join(toks[:3]) + " " + sources[kw].deck_text())
            continue
        if kw[0] in "cl":
            got = circuit.protos.get(id(card))
            behavioural = kw[0] == "c" and got is not None and got[0].parts.expression is not None
            para = by_card.get(id(card), (None,))[0]
            if behavioural or (para is not None and para != Parasitics()) or any(
                    (split_assignment(t) or ("",))[0].lower() in CARD_PARASITICS for t in toks[3:]):
                lines.extend(expand_two_terminal(toks, para, behavioural))
                continue
        lines.append(" ".join(toks))

    origins += [previous] * (len(lines) - len(origins))

    # probes read the deck's own net names (netlist/names.py): v(dn3), v(x1.dn2)
    probes: list[Probe] = []
    saves: list[str] = []
    seen: set[str] = set()
    for cap in circuit.capacitors():
        if cap.path in skip:
            continue
        vp, vn = (circuit.deck_nets[n] if n != "0" else None for n in cap.nodes)
        for v in (vp, vn):
            if v and v not in seen:
                seen.add(v)
                saves.append(f"v({v})")
        cur = sense_vector(cap.spice_name) if cap.expression is not None else f"@{cap.spice_name}[i]"
        saves.append(cur)
        para = parasitics.get(cap.path)
        card_para = dict(cap.parasitics)
        esr = para.esr_ohm if para and para.esr_ohm else card_para.get("rser")
        esl = para.esl_h if para and para.esl_h else card_para.get("lser")
        model = "C+ESR+ESL" if esr and esl else ("C+ESR" if esr else ("C+ESL" if esl else "ideal"))
        probes.append(Probe(cap.path, cap.spice_name, vp, vn, cur, model, esr or None, esl or None))
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
    return Deck(scenario.name, "\n".join(lines) + "\n", tuple(probes), tran, tuple(origins))


def scaled_source(el, override, factor: float, circuit: Circuit) -> SourceValue:
    """A V or I source with its levels times ``factor`` (a tolerance sample): DC; SIN offset and
    amplitude; PULSE levels; PWL values.  Times and frequencies stay."""
    from ..netlist.expr import ExprError, eval_text

    def num(text: str) -> float:
        try:
            return float(eval_text(text, lambda name: circuit.params[name]))
        except (ExprError, KeyError, ValueError) as exc:
            raise DataError(f"tolerance on {el.path}: its value '{text}' cannot be evaluated ({exc})") from None
    spec = override if override is not None else el.proto.parts.source
    function = (spec.function or "").lower() if spec is not None else ""
    dc = spec.dc if spec is not None else None
    args = list(spec.args) if spec is not None else []
    levels = {"sin": (0, 1), "pulse": (0, 1)}.get(function)
    if function == "pwl":
        levels = tuple(range(1, len(args), 2))
    elif function and levels is None:
        raise DataError(f"tolerance on {el.path}: the levels of a {function.upper()}() source are not varied "
                        "(DC, SIN, PULSE and PWL are)")
    new_args = tuple(_fmt(num(a) * factor) if k in (levels or ()) else _fmt(num(a)) for k, a in enumerate(args))
    new_dc = _fmt(num(dc) * factor) if dc is not None else None
    keywords = tuple(getattr(spec, "keywords", ()) or ())
    return SourceValue(dc=new_dc, function=function or None, args=new_args, keywords=keywords)


def _override_params(card: Card, overrides: Mapping[str, float]) -> str:
    out = [card.tokens[0]]
    for tok in card.tokens[1:]:
        kv = split_assignment(tok)
        if kv and kv[0].lower() in overrides:
            out.append(f"{kv[0]}={_fmt(overrides[kv[0].lower()])}")
        else:
            out.append(tok)
    return " ".join(out)


class _DeckNames:
    """Rewrites cards with derate's own net names (the tables the flattener made)."""

    def __init__(self, circuit: Circuit):
        self.circuit = circuit
        self.top = circuit.tables.get(id(circuit.netlist.top), {})

    def _name(self, n: str, table: Mapping[str, str]) -> str:
        low = n.lower()
        if low in GROUND_NAMES:
            return "0"
        if low in self.circuit.global_table:
            return self.circuit.global_table[low]
        if "." in low:  # a hierarchical reference (v(x1.mid)) from the top level
            return self.circuit.deck_nets.get(low, n)
        return table.get(low, n)

    def element_tokens(self, card: Card) -> list[str]:
        toks = list(card.tokens)
        got = self.circuit.protos.get(id(card))
        if got is None:  # a card of a subcircuit that is never instantiated: left as written
            return toks
        proto, scope = got
        table = self.circuit.tables.get(id(scope), {})
        for i in proto.parts.node_index:
            toks[i] = self._name(toks[i], table)
        if proto.kind == "a":
            nodes = {n.lower() for n in proto.parts.nodes}
            toks[1:-1] = [_A_WORD.sub(lambda m: self._name(m.group(0), table) if m.group(0).lower() in nodes
                                      else m.group(0), t) for t in toks[1:-1]]
        elif proto.sense or "(" in card.text:
            start = max(proto.parts.node_index, default=0) + 1
            toks[start:] = [rename_voltage_refs(t, lambda n: self._name(n, table)) for t in toks[start:]]
        return toks

    def subckt_header(self, card: Card, sub) -> str:
        toks = list(card.tokens)
        table = self.circuit.tables.get(id(sub.body)) if sub is not None else None
        if table is None:
            return card.text
        for i in range(2, 2 + len(sub.pins)):
            toks[i] = self._name(toks[i], table)
        return " ".join(toks)

    def dot_card(self, card: Card) -> str:
        kw = card.keyword
        if kw == ".model":
            return without_model_annotations(card.text)
        if kw == ".global":
            return " ".join([card.tokens[0]] + [self._name(t, self.top) for t in card.tokens[1:]])
        if kw in (".ic", ".nodeset"):
            return rename_voltage_refs(card.text, lambda n: self._name(n, self.top))
        return card.text


_A_WORD = re.compile(r"[^\s\[\]()%~,]+")

# informational model parameters another simulator's libraries carry (maker, device type, ratings
# for its part browser): ngspice reads a word value as an undefined parameter and stops, and warns
# on the ratings; none of them changes the model
_MODEL_ANNOTATION = re.compile(
    r"(?<=[\s(,])(?:mfg|type|iave|vpk|vceo|icrating)\s*=\s*(\"[^\"]*\"|'[^']*'|[^\s(),]+)", re.I)


def without_model_annotations(text: str) -> str:
    """A .model card without the informational parameters (``type`` only when its value is a word:
    some ngspice models take a numeric ``type``)."""
    def drop(m: re.Match) -> str:
        key = m.group(0).split("=", 1)[0].strip().lower()
        return m.group(0) if key == "type" and PLAIN_NUMBER.match(m.group(1)) else ""
    return _MODEL_ANNOTATION.sub(drop, text)


def without_database_attributes(toks: list[str], kind: str) -> list[str]:
    """An R, L or C card without the part-database attributes (V=, Irms=, mfg=, pn= ...) that
    ngspice does not know; derate reads them as part data (cardparts.py)."""
    keys = DATABASE_ATTRIBUTES.get(kind)
    if not keys:
        return toks
    out = toks[:3]
    for t in toks[3:]:
        kv = split_assignment(t)
        key = kv[0].lower() if kv else ""
        if key in keys:
            continue
        if key == "tc" and "," in kv[1]:  # TC=a,b (another simulator's form): ngspice reads tc1= and tc2=
            first, _, second = kv[1].partition(",")
            out += [f"tc1={first}"] + ([f"tc2={second}"] if second.strip() else [])
            continue
        out.append(t)
    return out


def _card_parasitics(toks: list[str]) -> tuple[list[str], dict[str, str]]:
    """Split Rser=/Lser=/Rpar=/Cpar= off a C or L card: (the card without them, {key: value text})."""
    kept, found = [], {}
    for tok in toks:
        kv = split_assignment(tok)
        if kv and kv[0].lower() in CARD_PARASITICS:
            found[kv[0].lower()] = kv[1]
        else:
            kept.append(tok)
    return kept, found


# parasitics another simulator's netlists give on a voltage source (V1 in 0 SIN(0 325 50) Rser=0.5):
# ngspice's V source has none, so each becomes an element of its own
SOURCE_PARASITICS = ("rser", "cpar")


def source_parasitics(toks: list[str]) -> tuple[list[str], list[str]]:
    """A V card with Rser=/Cpar= split off: (the card, its n+ moved behind the series resistor; the
    lines of the resistor from n+ and of the capacitor across n+ and n-).  Zero values add nothing."""
    kept, found = list(toks[:3]), {}
    for tok in toks[3:]:
        kv = split_assignment(tok)
        if kv and kv[0].lower() in SOURCE_PARASITICS:
            found[kv[0].lower()] = kv[1]
        else:
            kept.append(tok)
    if len(kept) < 3 or not found:
        return list(toks), []
    name, plus, minus = kept[0].lower(), kept[1], kept[2]
    extra = []
    rser, cpar = found.get("rser"), found.get("cpar")
    if rser and not _is_zero(rser):
        inner = f"derate_{name}_rser"
        extra.append(f"Rderate_rser_{name} {plus} {inner} {rser}")
        kept[1] = inner
    if cpar and not _is_zero(cpar):
        extra.append(f"Cderate_cpar_{name} {plus} {minus} {cpar}")
    return kept, extra


def _is_zero(text: str) -> bool:
    try:
        return parse_number(text).value == 0
    except NumberError:
        return False  # an expression: ngspice evaluates it


def expand_two_terminal(toks: list[str], para: Parasitics | None, sense: bool) -> list[str]:
    """The lines for a C or L card with its parasitics as elements of their own.

    In series from n+ : the element, then ESR (the part's, else the card's Rser), ESL (the part's,
    else Lser) and, for a behavioural capacitor, a 0 V source whose branch current is the
    capacitor's (ngspice gives no @c[i] for one); Rpar and Cpar across n+ and n-.  Values the
    card gives are copied as written (they are netlist text, evaluated by ngspice per instance).

    A card with ``m=`` stands for m identical parts in parallel, each with its own ESR and ESL: the
    parasitic elements carry the same ``m=`` (ngspice divides R and L by m and multiplies C), so
    the bank is C x m in series with ESR / m and ESL / m, as m discrete parts are (circuit theory).
    """
    card, found = _card_parasitics(list(toks))
    name = card[0].lower()
    a, b = card[1], card[2]
    multiplier = next((t for t in card[3:] if (split_assignment(t) or ("",))[0].lower() == "m"), None)
    m_tail = f" {multiplier}" if multiplier else ""
    series: list[tuple[str, str]] = []  # (element card prefix, value)
    found = {k: v for k, v in found.items() if not _is_zero(v)}  # Lser=0: no element (a 0 H inductor is a branch)
    esr = _fmt(para.esr_ohm) if para is not None and para.esr_ohm else found.get("rser")
    esl = _fmt(para.esl_h) if para is not None and para.esl_h else found.get("lser")
    if esr:
        series.append((f"Rderate_esr_{name}", esr))
    if esl:
        series.append((f"Lderate_esl_{name}", esl))
    if sense:
        series.append((f"Vderate_sense_{name}", "0"))
    lines = []
    if series:
        nets = [f"derate_{name}_{k}" for k in range(1, len(series) + 1)] + [b]
        lines.append(" ".join([card[0], a, nets[0]] + card[3:]))
        for (element, value), (x, y) in zip(series, zip(nets, nets[1:])):
            lines.append(f"{element} {x} {y} {value}" + (m_tail if element[0] in "RL" else ""))
    else:
        lines.append(" ".join(card))
    if "rpar" in found:
        lines.append(f"Rderate_rpar_{name} {a} {b} {found['rpar']}{m_tail}")
    if "cpar" in found:
        lines.append(f"Cderate_cpar_{name} {a} {b} {found['cpar']}{m_tail}")
    return lines


def sense_vector(spice_name: str) -> str:
    """The branch-current vector of a behavioural capacitor's sense source (``v.x1.vderate_sense_c1#branch``)."""
    parts = spice_name.split(".")
    base = parts[-1]
    wrapped = ["v" if p == "c" else p for p in parts[:-1]]  # ngspice's letter wrappers: c.x1.c1 -> v.x1....
    return ".".join(wrapped + [f"vderate_sense_{base}"]) + "#branch"
