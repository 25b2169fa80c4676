"""Expand subcircuits into a flat Circuit of element instances with ngspice's own names.

Naming follows what ngspice 39 does when it expands ``.subckt`` instances (checked against its
``listing e`` output in tests/netlist/test_crosscheck_ngspice.py): element ``C5`` inside instance
``X1`` of a subcircuit becomes ``c.x1.c5`` (nested: ``c.x1.x2.c5``); an internal net ``n3`` becomes
``x1.n3``; ``0``, ``gnd`` and ``.global`` nets stay global.  Everything is lowercased, as ngspice
does.  The user-facing path keeps the written case: ``X1.X2.C5``.

ngspice expands an instance in the scope where its subcircuit is *defined*.  When a subcircuit is
defined inside another one's body, its instances there are expanded first, inside that body, and
the outer expansion then renames the result like any element: ``C1`` of ``X2`` (a locally defined
subcircuit) inside ``X1`` becomes ``c.x1.c.x2.c1``, not ``c.x1.x2.c1`` (measured on ngspice 39).
``ngspice_name`` reproduces this.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from typing import Mapping

from ..errors import NetlistError
from ..findings import Finding
from ..units import NumberError, parse_number
from .elements import PIN_NAMES, ElementParts, split_element
from .expr import ExprError, SimulatorOnly, UserFunction, evaluate, names_in, parse_expr, strip_delimiters
from .lexer import split_tokens
from .lint_rules import LINT_RULES
from .names import global_name, local_name, voltage_refs
from .parser import Card, Location, Netlist, Scope, SubcktDef

GROUND_NAMES = frozenset({"0", "gnd"})
# parasitics another simulator's netlists give on C and L cards (C1 a b 100u Rser=20m Lser=2n): ngspice
# does not know them, so the deck writes them as elements of their own (simulate/deck.py)
CARD_PARASITICS = ("rser", "lser", "rpar", "cpar")
MAX_SUBCKT_DEPTH = 100  # nesting of subcircuit instances
MAX_ELEMENTS = 500_000  # element instances after expansion (5x the front-end benchmark board)
_NEEDS_MODEL = frozenset("dqjmswoua")


@dataclass(frozen=True, slots=True)
class ElementProto:
    """What every instance of one element card shares (prepared once per card, not per instance)."""

    card: Card
    kind: str
    parts: ElementParts
    local_nodes: tuple[str, ...]
    model_type: str | None
    literal: float | None  # value when written as a plain number (None: expression or none)
    value_notes: tuple[tuple[str, str], ...]  # (code, message) from units.parse_number
    subckt: str | None  # name of the subcircuit whose body holds the card
    sense: tuple[str, ...] = ()  # nets its expressions read through v(...), lowercased

    @property
    def loc(self) -> Location:
        return self.card.loc


@dataclass(frozen=True, slots=True)
class Element:
    """One element instance of the flattened circuit.

    ``value`` is the resolved primary value in SI units (ohm, farad, henry; gain for E/F/G/H),
    ``None`` when it is behavioural or set by a model.  For capacitors it includes the ``m``
    multiplier (``multiplicity``: parts in parallel; each part carries 1/m of the current).  ``nodes`` are ngspice's flattened net names.  Sign convention: a two-terminal
    element's voltage is v(nodes[0]) - v(nodes[1]); its current is positive into nodes[0].
    """

    path: str
    spice_name: str
    nodes: tuple[str, ...]
    proto: ElementProto
    value: float | None = None
    instance: tuple[str, ...] = ()
    controls: tuple[str, ...] = ()
    sense: tuple[str, ...] = ()  # flattened nets its expressions read through v(...) (no current flows)
    parasitics: tuple[tuple[str, float], ...] = ()  # C/L: Rser, Lser, Rpar, Cpar given on the card (ohm, H, F)
    multiplicity: float = 1.0  # m=: that many identical parts in parallel (value includes it; currents are totals)
    # V/I sources: each argument text of the source's function and its DC value, evaluated in the instance's
    # own parameter scope (a subcircuit's fs=10000 in PULSE(... {1/fs})); None where derate cannot
    source_values: tuple[tuple[str, float | None], ...] = ()

    kind = property(lambda self: self.proto.kind)
    card = property(lambda self: self.proto.card)
    loc = property(lambda self: self.proto.card.loc)
    value_text = property(lambda self: self.proto.parts.value)
    model = property(lambda self: self.proto.parts.model)
    model_type = property(lambda self: self.proto.model_type)
    params = property(lambda self: self.proto.parts.params)
    source = property(lambda self: self.proto.parts.source)
    expression = property(lambda self: self.proto.parts.expression)
    subckt = property(lambda self: self.proto.subckt)
    value_notes = property(lambda self: self.proto.value_notes)

    @property
    def pins(self) -> tuple[str, ...]:
        names = PIN_NAMES.get(self.kind, ())
        return tuple(names[i] if i < len(names) else f"p{i + 1}" for i in range(len(self.nodes)))


@dataclass
class Circuit:
    """The flattened circuit: elements in netlist order, nets, and findings met while expanding."""

    netlist: Netlist
    elements: list[Element]
    findings: list[Finding] = field(default_factory=list)
    params: dict[str, float] = field(default_factory=dict)
    # derate's own names for the deck (netlist/names.py): flattened user net -> flattened deck net,
    # per-scope tables (id(Scope) -> local name -> deck name), the .global table, and for each
    # expanded element card its prototype and scope (so the deck can rewrite exactly its nodes)
    deck_nets: dict[str, str] = field(default_factory=dict)
    tables: dict[int, dict[str, str]] = field(default_factory=dict)
    global_table: dict[str, str] = field(default_factory=dict)
    protos: dict[int, tuple[ElementProto, Scope]] = field(default_factory=dict)

    @property
    def title(self) -> str:
        """The netlist's title as a report shows it: a title line written as a comment ('* buck')
        loses its asterisks."""
        return self.netlist.title.lstrip("*").strip() or self.netlist.title

    def capacitors(self) -> list[Element]:
        return [e for e in self.elements if e.kind == "c"]

    def nets(self) -> set[str]:
        out: set[str] = set()
        for e in self.elements:
            out.update(e.nodes)
        return out


# the simulator's own variables: a .param reading one has no value derate can give (ngspice evaluates it;
# in its PSpice mode TEMP is the circuit temperature)
SIMULATOR_VARIABLES = frozenset({"temp", "temper", "time", "hertz"})


_BRACES = re.compile(r"\{([^{}]*)\}")


class SimulatorOnlyError(NetlistError):
    """A value only ngspice can evaluate (it reads the simulator's state or a function derate does not
    have): passed through to the deck; an error only where derate needs the number."""

    reason: str = ""


@dataclass(frozen=True)
class _Deferred:
    """A parameter whose value only ngspice can compute (the reason kept for where derate needs it)."""

    reason: str


class _Params:
    """Lazy, cached parameter scope; lookups fall back to the enclosing (calling) scope."""

    __slots__ = ("defs", "parent", "values", "busy", "funcs")

    def __init__(self, defs: Mapping[str, tuple[str, Card]], parent: "_Params | None",
                 funcs: Mapping[str, UserFunction]):
        self.defs = dict(defs)
        self.parent = parent
        self.values: dict[str, float] = {}
        self.busy: set[str] = set()
        self.funcs = funcs

    def set_value(self, name: str, value: float) -> None:
        self.values[name] = value
        self.defs.pop(name, None)

    def lookup(self, name: str) -> float:
        if name in self.values:
            return self.values[name]
        if name in self.defs:
            self._resolve(name)
            return self.values[name]
        if self.parent is not None:
            return self.parent.lookup(name)
        raise KeyError(name)

    def _resolve(self, name: str) -> None:
        """Evaluate ``name`` and the parameters of this scope it depends on, dependencies first.

        An explicit depth-first walk (no recursion), so a chain of any length is evaluated
        without exhausting the interpreter's stack; a cycle is an ExprError naming it.
        """
        path: list[str] = [name]
        pending = [iter(self._deps(name))]
        self.busy.add(name)
        while path:
            dep = next(pending[-1], None)
            if dep is None:
                done = path.pop()
                pending.pop()
                text, card = self.defs[done]
                try:
                    self.values[done] = self.eval(text, card)
                except SimulatorOnlyError as exc:
                    self.values[done] = _Deferred(exc.reason)
                finally:
                    self.busy.discard(done)
                continue
            if dep in self.values or dep not in self.defs:
                continue
            if dep in self.busy:
                cycle = " -> ".join(path[path.index(dep):] + [dep])
                self.busy.difference_update(path)
                card = self.defs[dep][1]
                raise NetlistError(f"parameter '{dep}' is defined in terms of itself ({cycle})",
                                   card.loc.file, card.loc.line, card.text)
            self.busy.add(dep)
            path.append(dep)
            pending.append(iter(self._deps(dep)))

    def _deps(self, name: str) -> list[str]:
        text = strip_delimiters(self.defs[name][0].strip())
        try:
            return sorted(names_in(parse_expr(text)))
        except ExprError:
            return []  # a plain number (or bad syntax, which the evaluator reports with its card)

    def eval(self, text: str, card: Card) -> float:
        """Evaluate a value text (number or expression) in this scope; NetlistError on failure."""
        t = text.strip()
        try:
            if t[:1] in "{'":
                value = evaluate(parse_expr(strip_delimiters(t)), self._lookup_checked, self.funcs)
            else:
                try:
                    value = parse_number(t).value
                except NumberError:
                    # a bare expression or parameter name (ngspice accepts both in .param)
                    value = evaluate(parse_expr(t), self._lookup_checked, self.funcs)
        except SimulatorOnly as exc:
            err = SimulatorOnlyError(f"cannot evaluate '{_brief(t)}': {exc}", card.loc.file, card.loc.line, card.text)
            err.reason = str(exc)
            raise err from None
        except ExprError as exc:
            raise NetlistError(f"cannot evaluate '{_brief(t)}': {exc}", card.loc.file, card.loc.line, card.text) from None
        if not math.isfinite(value):
            raise NetlistError(f"'{_brief(t)}' evaluates to {value}, not a finite number", card.loc.file, card.loc.line,
                               card.text)
        return value

    def _lookup_checked(self, name: str) -> float:
        try:
            value = self.lookup(name)
        except KeyError:
            if name in SIMULATOR_VARIABLES:
                raise SimulatorOnly(f"it reads the simulator's own variable '{name}'") from None
            raise ExprError(f"unknown parameter '{name}'") from None
        if isinstance(value, _Deferred):
            raise SimulatorOnly(value.reason if "(through" in value.reason else f"{value.reason} (through '{name}')")
        return value

    def snapshot(self) -> dict[str, float]:
        """The values derate can compute (those only ngspice can are left out)."""
        out: dict[str, float] = {}
        for name in list(self.defs) + list(self.values):
            value = self.lookup(name)
            if not isinstance(value, _Deferred):
                out[name] = value
        return out


def _all_models(scope: Scope):
    stack = [scope]
    while stack:
        s = stack.pop()
        yield from s.models.values()
        stack.extend(sub.body for sub in s.subckts.values())


def _try_value(env: "_Params", text: str, card: Card) -> float | None:
    """A source argument's value in an instance's scope, None when derate cannot evaluate it."""
    t = text.strip()
    if t[:1] not in "{'":
        try:
            return parse_number(t).value
        except NumberError:
            pass
    try:
        return env.eval(t, card)
    except NetlistError:
        return None


def source_value(circuit: "Circuit", el: Element, text: str) -> float | None:
    """The value of a source argument ``text`` of element ``el``: evaluated in its own instance's scope
    when flattened, else in the netlist's top-level parameters; None when it cannot be evaluated."""
    for t, v in el.source_values:
        if t == text:
            return v
    from .expr import eval_text
    try:
        return float(eval_text(text, lambda name: circuit.params[name]))
    except (ExprError, KeyError, ValueError, ZeroDivisionError, OverflowError):
        return None


def _all_subckts(scope: Scope):
    stack = [scope]
    while stack:
        s = stack.pop()
        yield from s.subckts.values()
        stack.extend(sub.body for sub in s.subckts.values())


def _brief(text: str, n: int = 60) -> str:
    return text if len(text) <= n else text[:n - 3] + "..."


def _funcs(scope: Scope, inherited: Mapping[str, UserFunction]) -> dict[str, UserFunction]:
    out = dict(inherited)
    for card in scope.funcs:
        # .func name(a, b) {body}    or    .func name(a,b) = {body}
        toks = list(card.tokens[1:])
        if not toks:
            raise NetlistError(".func without a definition", card.loc.file, card.loc.line, card.text)
        head = toks[0]
        body = " ".join(toks[1:])
        if "=" in head and "(" in head.split("=", 1)[0]:
            head, _, first = head.partition("=")
            body = (first + " " + body).strip()
        if "(" not in head or not head.endswith(")"):
            raise NetlistError("expected .func name(args) {expression}", card.loc.file, card.loc.line, card.text)
        name, _, args = head[:-1].partition("(")
        body = body.lstrip("=").strip()
        try:
            parsed = parse_expr(strip_delimiters(body))
        except ExprError as exc:
            raise NetlistError(f"cannot read .func body: {exc}", card.loc.file, card.loc.line, card.text) from None
        try:
            arg_names = tuple(a.strip().lower() for a in split_tokens(args) if a.strip())
        except ValueError as exc:
            raise NetlistError(f"cannot read .func arguments: {exc}", card.loc.file, card.loc.line,
                               card.text) from None
        out[name.strip().lower()] = UserFunction(name.strip().lower(), arg_names, parsed)
    return out


def ngspice_name(base: str, chain: tuple[tuple[str, int], ...]) -> str:
    """Return ngspice's flattened name for element ``base`` inside instances ``chain``.

    ``chain`` lists, outermost first, each instance's lowercased name and the index of the frame
    where its subcircuit is defined (0 = top level, j = the body of the j-th instance).
    """
    name = base
    k = len(chain)
    while k > 0:
        m = chain[k - 1][1]
        path = ".".join(inst for inst, _ in chain[m:k])
        name = f"{name[0]}.{path}.{name}"
        k = m
    return name


class _Flattener:
    def __init__(self, netlist: Netlist, overrides: Mapping[str, float] | None):
        self.netlist = netlist
        self.elements: list[Element] = []
        self.findings: list[Finding] = []
        self.globals = set(netlist.globals) | GROUND_NAMES
        self.overrides = {k.lower(): v for k, v in (overrides or {}).items()}
        self.prepared: dict[int, list[ElementProto]] = {}
        self.checked_instances: set[int] = set()
        self.tables: dict[int, dict[str, str]] = {}
        self.used_bad_models: set[int] = set()
        self.global_table = {g: global_name(k) for k, g in enumerate(sorted(self.globals - GROUND_NAMES), 1)}
        self.deck_nets: dict[str, str] = {"0": "0"}
        self.protos: dict[int, tuple[ElementProto, Scope]] = {}
        self.deferred_cards: set[int] = set()
        self.source_checked: set[int] = set()
        self.library_files = set(getattr(netlist, "library_files", ()) or ())

    def undefined_in_source(self, card: Card, env: "_Params", path: str) -> None:
        """A finding for each parameter a source's {expressions} name that nothing defines (ngspice stops
        with "Undefined parameter"); derate does not evaluate source values itself."""
        missing: list[str] = []
        for block in _BRACES.findall(card.text):
            try:
                names = names_in(parse_expr(block))
            except ExprError:
                continue  # ngspice judges what derate cannot read
            for n in sorted(names):
                try:
                    env.lookup(n)
                except KeyError:
                    if n not in SIMULATOR_VARIABLES and n not in missing:
                        missing.append(n)
        if missing:
            self.finding(LINT_RULES["netlist.undefined-parameter"].id,
                         f"{card.tokens[0]} uses {', '.join(repr(m) for m in missing)}, which no .param or subcircuit "
                         "parameter defines", card, path)

    def in_library(self, card: Card) -> bool:
        """True for a card read from a model library (a device model's insides, not reviewed)."""
        return card.loc.file in self.library_files

    def finding(self, rule: str, message: str, card: Card | None, subject: str | None,
                severity: str | None = None) -> None:
        self.findings.append(Finding(rule, severity or LINT_RULES[rule].severity, message, subject=subject,
                                     file=card.loc.file if card else None,
                                     line=card.loc.line if card else None))

    def run(self) -> Circuit:
        top = self.netlist.top
        funcs = _funcs(top, {})
        env = _Params({p.name: (p.expr, p.card) for p in top.params}, None, funcs)
        unknown = [k for k in self.overrides if k not in env.defs]
        if unknown:
            raise NetlistError(f"scenario sets unknown parameter(s) {', '.join(sorted(unknown))}; "
                               f"the netlist defines: {', '.join(sorted(env.defs)) or 'none'}",
                               file=self.netlist.path)
        for k, v in self.overrides.items():
            env.set_value(k, v)
        self.expand(top, env, funcs, (), (), {}, [], (), [top])
        for model in _all_models(top):
            if model.problem and id(model) not in self.used_bad_models:
                self.finding(LINT_RULES["netlist.bad-model"].id, f"model '{model.name}' cannot be read "
                             f"({model.problem}); no element uses it, so ngspice runs the deck anyway",
                             model.card, model.name)
        for sub in _all_subckts(top):
            if sub.problem:
                self.finding(LINT_RULES["netlist.bad-subckt"].id, f"subcircuit '{sub.name}' cannot be read "
                             f"({sub.problem}); no element uses it, so ngspice runs the deck anyway", sub.card, sub.name)
        return Circuit(self.netlist, self.elements, self.findings, env.snapshot(), self.deck_nets, self.tables,
                       self.global_table, self.protos)

    def table(self, scope: Scope, pins: list[str], protos: list[ElementProto]) -> dict[str, str]:
        """The scope's local net names -> dn1, dn2 ... (pins first, then in order of appearance)."""
        got = self.tables.get(id(scope))
        if got is not None:
            return got
        names: dict[str, str] = {}
        skip = GROUND_NAMES | self.globals

        def add(n: str) -> None:
            if n not in names and n not in skip and "." not in n:
                names[n] = local_name(len(names) + 1)
        for n in pins:
            add(n)
        for proto in protos:
            for n in proto.local_nodes:
                add(n)
            for n in proto.sense:
                add(n)
        self.tables[id(scope)] = names
        return names

    def net(self, node: str, prefix: str, pinmap: Mapping[str, str]) -> str:
        low = node.lower()
        if low in pinmap:
            return pinmap[low]
        if low in GROUND_NAMES:
            return "0"
        if low in self.globals or not prefix:
            return low
        return f"{prefix}.{low}"

    def prepare(self, scope: Scope, subckt: str | None) -> list[ElementProto]:
        """Split each card of a scope once; report per-card problems once, not per instance."""
        key = id(scope)
        if key in self.prepared:
            return self.prepared[key]
        protos: list[ElementProto] = []
        seen: dict[str, Card] = {}
        where = f" in subcircuit '{subckt}'" if subckt else ""
        for card in scope.elements:
            name = card.tokens[0]
            low = name.lower()
            if low in seen:
                self.finding(LINT_RULES["netlist.duplicate-name"].id,
                             f"element name '{name}' is used twice{where} (first at {seen[low].loc})", card, name)
                continue
            seen[low] = card
            try:
                parts = split_element(card.tokens, lambda t: scope.find_model(t) is not None)
            except ValueError as exc:  # CardShapeError, or a bracket the lexer cannot split
                raise NetlistError(f"{name}: {exc}", card.loc.file, card.loc.line, card.text) from None
            kind = low[0]
            model_type = None
            if parts.model and kind != "x":
                model = scope.find_model(parts.model)
                if model is not None and model.problem:
                    self.used_bad_models.add(id(model))
                    self.finding(LINT_RULES["netlist.bad-model"].id,
                                 f"{name}{where} uses model '{parts.model}' ({model.card.loc}), which cannot be "
                                 f"read: {model.problem}", card, name, severity="error")
                if model is not None:
                    model_type = model.type
                elif kind in _NEEDS_MODEL or kind in "rcl":
                    self.finding(LINT_RULES["netlist.undefined-model"].id,
                                 f"{name}{where} uses model '{parts.model}', which is not defined", card, name)
            literal, notes = None, ()
            text = parts.value
            if text is not None and kind in "rclefgh" and text.strip()[:1] not in "{'":
                try:
                    num = parse_number(text)
                    literal, notes = num.value, num.pitfalls
                except NumberError:
                    pass
            after = max(parts.node_index, default=0) + 1
            sense = tuple(n.lower() for n in voltage_refs(" ".join(card.tokens[after:]))) \
                if kind in "bcefghlr" and "(" in card.text else ()
            protos.append(ElementProto(card, kind, parts, tuple(n.lower() for n in parts.nodes), model_type,
                                       literal, notes, subckt, sense))
        self.prepared[key] = protos
        return protos

    def expand(self, scope: Scope, env: _Params, funcs: Mapping[str, UserFunction],
               inst_path: tuple[str, ...], inst_lower: tuple[str, ...], pinmap: Mapping[str, str],
               chain: list[str], frames: tuple[tuple[str, int], ...], bodies: list[Scope]) -> None:
        prefix = ".".join(inst_lower)
        path_prefix = ".".join(inst_path) + "." if inst_path else ""
        # ngspice_name() unrolled for this instance: the paths to wrap names in, innermost first
        wraps: list[str] = []
        k = len(frames)
        while k > 0:
            m = frames[k - 1][1]
            wraps.append(".".join(inst for inst, _ in frames[m:k]))
            k = m
        ground, globals_ = GROUND_NAMES, self.globals
        local_nets: dict[str, str] = {}
        subckt = chain[-1] if chain else None
        protos = self.prepare(scope, subckt)
        table = self.table(scope, list(pinmap), protos)
        deck_nets, global_table = self.deck_nets, self.global_table

        def net(low: str) -> str:
            mapped = pinmap.get(low)
            if mapped is not None:
                return mapped
            if low in ground:
                return "0"
            got = local_nets.get(low)
            if got is None:
                if low in globals_:
                    got, deck = low, global_table[low]
                elif not prefix:
                    got, deck = low, table.get(low, low)
                else:
                    got, deck = f"{prefix}.{low}", f"{prefix}.{table.get(low, low)}"
                local_nets[low] = got
                deck_nets[got] = deck
            return got

        append = self.elements.append
        for proto in protos:
            self.protos[id(proto.card)] = (proto, scope)
            nodes = tuple(net(n) for n in proto.local_nodes)
            card = proto.card
            if proto.kind == "x":
                self.instance(card, proto.parts, scope, env, funcs, inst_path, inst_lower, nodes, chain,
                              frames, bodies)
                continue
            name = card.tokens[0]
            spice_name = name.lower()
            for w in wraps:
                spice_name = f"{spice_name[0]}.{w}.{spice_name}"
            controls = proto.parts.controls
            if controls and wraps:
                controls = tuple(ngspice_name(c, frames) for c in controls)
            value = proto.literal
            parts = proto.parts
            if proto.kind in "vi" and "{" in card.text and id(card) not in self.source_checked:
                self.source_checked.add(id(card))
                self.undefined_in_source(card, env, path_prefix + name)
            if value is None and parts.value is not None and proto.kind in "rclefgh" \
                    and parts.value.strip()[:1] in "{'":
                try:
                    value = env.eval(parts.value, card)
                except SimulatorOnlyError as exc:
                    if proto.kind == "c" and not self.in_library(card):
                        raise  # a reviewed capacitor's value is needed
                    value = None  # ngspice evaluates it; derate needs no number here
                    if id(card) not in self.deferred_cards:
                        self.deferred_cards.add(id(card))
                        self.finding(LINT_RULES["netlist.note"].id, f"{name}: value {_brief(parts.value)} left to "
                                     f"ngspice: {exc.reason}", card, path_prefix + name)
            multiplicity = 1.0
            if proto.kind == "c" and parts.params:
                m = next((v for k2, v in parts.params if k2 == "m"), None)
                if m is not None:
                    multiplicity = env.eval(m, card)
                    if value is not None:
                        value *= multiplicity
            sense = tuple(n if "." in n else net(n) for n in proto.sense) if proto.sense else ()
            extra = ()
            if proto.kind in "cl" and parts.params:
                extra = tuple((k2, env.eval(v, card)) for k2, v in parts.params if k2 in CARD_PARASITICS)
            src_values = ()
            if proto.kind in "vi" and parts.source is not None and (parts.source.function or parts.source.dc):
                texts = list(parts.source.args) + ([parts.source.dc] if parts.source.dc else [])
                src_values = tuple((t, _try_value(env, t, card)) for t in dict.fromkeys(texts))
            append(Element(path_prefix + name, spice_name, nodes, proto, value, inst_path, controls, sense, extra,
                           multiplicity, src_values))

    def instance(self, card: Card, parts: ElementParts, scope: Scope, env: _Params,
                 funcs: Mapping[str, UserFunction], inst_path: tuple[str, ...], inst_lower: tuple[str, ...],
                 nodes: tuple[str, ...], chain: list[str], frames: tuple[tuple[str, int], ...],
                 bodies: list[Scope]) -> None:
        name = card.tokens[0]
        path = ".".join(inst_path + (name,))
        first_time = id(card) not in self.checked_instances
        self.checked_instances.add(id(card))
        sub: SubcktDef | None = scope.find_subckt(parts.subckt or "")
        if sub is None:
            if first_time:
                self.finding(LINT_RULES["netlist.undefined-subckt"].id,
                             f"{name} instantiates subcircuit '{parts.subckt}', which is not defined", card, path)
            return
        if len(nodes) != len(sub.pins):
            if first_time:
                self.finding(LINT_RULES["netlist.pin-count"].id,
                             f"{name} connects {len(nodes)} node(s) but subcircuit '{sub.name}' has "
                             f"{len(sub.pins)} pin(s) ({' '.join(sub.pins)}, defined at {sub.card.loc})", card, path)
            return
        if sub.problem:
            raise NetlistError(f"{name} uses subcircuit '{sub.name}', whose header ({sub.card.loc}) cannot be read: "
                               f"{sub.problem}", card.loc.file, card.loc.line, card.text)
        if sub.name.lower() in chain:
            raise NetlistError(f"subcircuit '{sub.name}' instantiates itself ({' -> '.join(chain + [sub.name])})",
                               card.loc.file, card.loc.line, card.text)
        if len(chain) >= MAX_SUBCKT_DEPTH:
            raise NetlistError(f"subcircuit instances nest more than {MAX_SUBCKT_DEPTH} levels deep",
                               card.loc.file, card.loc.line, card.text)
        if len(self.elements) > MAX_ELEMENTS:
            raise NetlistError(f"the netlist expands to more than {MAX_ELEMENTS:,} element instances; derate "
                               "stops here (a subcircuit fan-out this large is not a board)",
                               card.loc.file, card.loc.line, card.text)
        sub_funcs = _funcs(sub.body, funcs)
        # instance parameters are evaluated in the caller's scope, header defaults in the new one
        local = _Params({k: (v, sub.card) for k, v in sub.params.items()}, env, sub_funcs)
        for key, text in parts.params:
            if key not in sub.params and first_time:
                self.finding(LINT_RULES["netlist.unknown-instance-param"].id,
                             f"{name} sets parameter '{key}', which subcircuit '{sub.name}' does not declare",
                             card, path)
            try:
                local.set_value(key, env.eval(text, card))
            except SimulatorOnlyError as exc:
                local.set_value(key, _Deferred(exc.reason))
        for p in sub.body.params:
            local.defs[p.name] = (p.expr, p.card)
        pinmap = dict(zip(sub.pins, nodes))
        # the frame whose scope holds the definition: the body of an enclosing instance, or the top
        def_scope = sub.body.parent
        frame = next((i for i, b in enumerate(bodies) if b is def_scope), 0)
        self.expand(sub.body, local, sub_funcs, inst_path + (name,), inst_lower + (name.lower(),),
                    pinmap, chain + [sub.name.lower()], frames + ((name.lower(), frame),), bodies + [sub.body])


def flatten(netlist: Netlist, param_overrides: Mapping[str, float] | None = None) -> Circuit:
    """Return the flattened circuit; structural problems become findings, bad values raise NetlistError."""
    try:
        return _Flattener(netlist, param_overrides).run()
    except RecursionError:
        # the explicit limits above come first; this is the backstop for combinations of them
        raise NetlistError("the netlist nests parameters, functions and subcircuits too deeply to expand",
                           file=netlist.path) from None

