"""Split an element card into nodes, model, value, parameters and source description.

Node counts per element letter follow the ngspice manual (chapters 3 to 12).  Elements whose node
count depends on the model (BJT 3-5, MOSFET 4-7) are split at the first token that names a model
in scope, as ngspice does.  Sign convention (used everywhere in derate): a two-terminal element's
voltage is v(node 1) - v(node 2) and its current is positive flowing into node 1.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Callable

from .lexer import split_assignment, split_tokens

# (minimum, maximum) node counts for elements with a model name after the nodes
_MODEL_NODES = {"d": (2, 3), "q": (3, 5), "j": (3, 3), "m": (4, 7), "s": (4, 4), "o": (4, 4), "u": (3, 3)}
# Pin names, for findings and for the graph
PIN_NAMES = {
    "r": ("n+", "n-"), "c": ("n+", "n-"), "l": ("n+", "n-"), "v": ("n+", "n-"), "i": ("n+", "n-"),
    "b": ("n+", "n-"), "f": ("n+", "n-"), "h": ("n+", "n-"), "w": ("n+", "n-"),
    "e": ("n+", "n-", "nc+", "nc-"), "g": ("n+", "n-", "nc+", "nc-"),
    "d": ("anode", "cathode", "thermal"), "q": ("collector", "base", "emitter", "substrate", "thermal"),
    "j": ("drain", "gate", "source"), "m": ("drain", "gate", "source", "bulk", "p5", "p6", "p7"),
    "s": ("n+", "n-", "nc+", "nc-"), "t": ("p1+", "p1-", "p2+", "p2-"), "o": ("p1+", "p1-", "p2+", "p2-"),
    "u": ("n1", "n2", "ncap"),
}
SOURCE_FUNCTIONS = ("pulse", "sin", "pwl", "exp", "sffm", "am", "trnoise", "trrandom")
_EG_TWO_NODE = ("value", "vol", "cur", "poly", "table", "laplace", "freq", "and", "or", "nand", "nor")


@dataclass(frozen=True, slots=True)
class SourceSpec:
    """The value part of a V or I source: DC, AC and a transient function, raw and parsed."""

    text: str
    dc: str | None = None
    ac_mag: str | None = None
    ac_phase: str | None = None
    function: str | None = None  # pulse, sin, pwl, ...
    args: tuple[str, ...] = ()
    extra: tuple[str, ...] = ()  # words not read (distof1, portnum, ...): kept in the raw text only


@dataclass(frozen=True, slots=True)
class ElementParts:
    """The pieces of one element card before names and values are resolved."""

    nodes: tuple[str, ...]
    model: str | None = None
    value: str | None = None  # value text (number, {expr} or 'expr') for R, C, L, K gain, E/G gain
    params: tuple[tuple[str, str], ...] = ()
    controls: tuple[str, ...] = ()  # controlling source names (F, H, W) or inductors (K)
    source: SourceSpec | None = None
    subckt: str | None = None  # X only
    expression: str | None = None  # behavioural expression (B, E/G value=, C/R/L with q=/c=/r=)
    node_index: tuple[int, ...] = ()  # positions of the node tokens in the card (renamed in the deck)


class CardShapeError(ValueError):
    """The card does not have the shape its element letter needs."""


def _kv(tokens) -> tuple[tuple[str, str], ...]:
    out = []
    for tok in tokens:
        kv = split_assignment(tok)
        if kv:
            out.append((kv[0].lower(), kv[1]))
    return tuple(out)


def _need(tokens, n: int, what: str) -> None:
    if len(tokens) < n:
        raise CardShapeError(f"expected {what}")


def parse_source(tokens: list[str]) -> SourceSpec:
    """Read ``[DC] v  [AC mag [phase]]  [PULSE(...)|SIN(...)|...]`` in any order."""
    text = " ".join(tokens)
    dc = ac_mag = ac_phase = function = None
    args: tuple[str, ...] = ()
    extra: list[str] = []
    i = 0
    while i < len(tokens):
        tok = tokens[i]
        low = tok.lower()
        fn = next((f for f in SOURCE_FUNCTIONS if low.startswith(f) and
                   (len(low) == len(f) or low[len(f)] == "(")), None)
        if fn:
            inner = tok[len(fn):]
            if not inner and i + 1 < len(tokens) and tokens[i + 1].startswith("("):
                i += 1
                inner = tokens[i]
            inner = inner.strip()
            if inner.startswith("(") and inner.endswith(")"):
                inner = inner[1:-1]
            function = fn
            try:
                args = tuple(split_tokens(inner)) if inner else ()
            except ValueError as exc:
                raise CardShapeError(f"cannot read {fn.upper()}(...): {exc}") from None
            i += 1
            continue
        if low == "dc":
            _need(tokens, i + 2, "a value after DC")
            dc = tokens[i + 1]
            i += 2
            continue
        if low.startswith("dc=") :
            dc = tok[3:]
            i += 1
            continue
        if low == "ac":
            ac_mag = "1"
            if i + 1 < len(tokens) and _looks_numeric(tokens[i + 1]):
                ac_mag = tokens[i + 1]
                i += 1
                if i + 1 < len(tokens) and _looks_numeric(tokens[i + 1]):
                    ac_phase = tokens[i + 1]
                    i += 1
            i += 1
            continue
        if dc is None and _looks_numeric(tok):
            dc = tok
            i += 1
            continue
        extra.append(tok)  # other keywords (distof1, portnum, ...) are kept in the raw text only
        i += 1
    return SourceSpec(text, dc, ac_mag, ac_phase, function, args, tuple(extra))


def _looks_numeric(tok: str) -> bool:
    t = tok.strip()
    if not t:
        return False
    if t[0] in "{'":
        return True
    c = t[0]
    return c.isdigit() or (c in "+-." and len(t) > 1)


def split_element(tokens: tuple[str, ...], is_model: Callable[[str], bool]) -> ElementParts:
    """Return the parts of an element card; raises CardShapeError on a malformed card."""
    name = tokens[0]
    letter = name[0].lower()
    rest = list(tokens[1:])
    if letter in "rcl":
        _need(rest, 2, "two nodes")
        nodes, tail = tuple(rest[:2]), rest[2:]
        value = model = expression = None
        positional = [t for t in tail if not split_assignment(t)]
        params = _kv(tail)
        key = {"r": ("r", "resistance"), "c": ("c", "capacitance"), "l": ("l", "inductance")}[letter]
        for k, v in params:
            if k in key:
                value = v
            elif (letter == "c" and k == "q") or (letter == "l" and k == "flux"):
                expression = v
        if positional:
            first = positional[0]
            if _looks_numeric(first):
                value = value or first
                if len(positional) > 1:
                    model = positional[1]
            else:
                model = first
                if len(positional) > 1 and _looks_numeric(positional[1]):
                    value = value or positional[1]
        if value is not None and is_behavioural(value):
            expression, value = value, None  # C='(v(a,b) < 5) ? 1u : 2u', R='TIME > 70m ? 10k : 25k' ...
        if value is None and model is None and expression is None:
            raise CardShapeError("expected a value or a model name after the two nodes")
        return ElementParts(nodes, model=model, value=value, params=params, expression=expression, node_index=(1, 2))
    if letter == "k":
        _need(rest, 3, "two inductor names and a coupling value")
        return ElementParts((), value=rest[-1], controls=tuple(t.lower() for t in rest[:-1]))
    if letter in "vi":
        _need(rest, 2, "two nodes")
        return ElementParts(tuple(rest[:2]), source=parse_source(rest[2:]), node_index=(1, 2))
    if letter in "eg":
        _need(rest, 3, "nodes and a value")
        third = rest[2].lower()
        if third.startswith(_EG_TWO_NODE):
            tail = rest[2:]
            if third.startswith("poly"):
                order = _poly_order(third, tail)
                skip = 1 if "(" in third else 2
                ctrl = tail[skip:skip + 2 * order]
                if len(ctrl) < 2 * order:
                    raise CardShapeError(f"POLY({order}) needs {2 * order} controlling nodes")
                first = 3 + skip
                return ElementParts(tuple(rest[:2]) + tuple(ctrl), expression=" ".join(tail),
                                    node_index=(1, 2) + tuple(range(first, first + 2 * order)))
            return ElementParts(tuple(rest[:2]), expression=" ".join(tail), params=_kv(tail), node_index=(1, 2))
        _need(rest, 5, "four nodes and a gain")
        return ElementParts(tuple(rest[:4]), value=rest[4], params=_kv(rest[5:]), node_index=(1, 2, 3, 4))
    if letter in "fh":
        _need(rest, 3, "two nodes and a controlling source")
        third = rest[2].lower()
        if third.startswith("poly"):
            order = _poly_order(third, rest[2:])
            skip = 3 if "(" in third else 4
            ctrl = rest[skip:skip + order]
            return ElementParts(tuple(rest[:2]), controls=tuple(c.lower() for c in ctrl),
                                expression=" ".join(rest[2:]), node_index=(1, 2))
        if third.startswith(("value", "vol", "cur")):
            return ElementParts(tuple(rest[:2]), expression=" ".join(rest[2:]), node_index=(1, 2))
        _need(rest, 4, "a controlling source and a gain")
        return ElementParts(tuple(rest[:2]), controls=(rest[2].lower(),), value=rest[3], node_index=(1, 2))
    if letter == "b":
        _need(rest, 3, "two nodes and V= or I=")
        params = _kv(rest[2:])
        expr = next((v for k, v in params if k in ("v", "i")), None)
        if expr is None:
            raise CardShapeError("expected V=expression or I=expression")
        return ElementParts(tuple(rest[:2]), expression=expr, params=params, node_index=(1, 2))
    if letter == "w":
        _need(rest, 4, "two nodes, a controlling source and a model")
        return ElementParts(tuple(rest[:2]), controls=(rest[2].lower(),), model=rest[3], params=_kv(rest[4:]),
                            node_index=(1, 2))
    if letter == "t":
        _need(rest, 4, "four nodes")
        return ElementParts(tuple(rest[:4]), params=_kv(rest[4:]), node_index=(1, 2, 3, 4))
    if letter in _MODEL_NODES:
        lo, hi = _MODEL_NODES[letter]
        # ngspice's power MOSFET (VDMOS) has three terminals: M1 d g s model
        first = 3 if letter == "m" and len(rest) == 4 or (letter == "m" and len(rest) > 3 and is_model(rest[3])) else lo
        _need(rest, first + 1, f"{lo} nodes and a model name")
        split = None
        for k in range(first, min(hi, len(rest) - 1) + 1):
            if is_model(rest[k]):
                split = k
                break
        if split is None:
            # no model in scope: ngspice reads the minimum node count (three for 'M d g s model', the
            # VDMOS form); the caller reports the model
            split = min(lo, first, len(rest) - 1)
        nodes = tuple(rest[:split])
        tail = rest[split + 1:]
        positional = [t for t in tail if not split_assignment(t)]
        return ElementParts(nodes, model=rest[split], params=_kv(tail),
                            value=positional[0] if positional and _looks_numeric(positional[0]) else None,
                            node_index=tuple(range(1, split + 1)))
    if letter == "x":
        names: list[str] = []
        params_start = len(rest)
        for i, tok in enumerate(rest):
            if tok.lower() == "params:" or split_assignment(tok):
                params_start = i
                break
            names.append(tok)
        if not names:
            raise CardShapeError("expected nodes and a subcircuit name")
        return ElementParts(tuple(names[:-1]), subckt=names[-1],
                            params=_kv(t for t in rest[params_start:] if t.lower() != "params:"),
                            node_index=tuple(range(1, len(names))))
    if letter == "a":
        _need(rest, 2, "connections and a model name")
        nodes: list[str] = []
        for tok in rest[:-1]:
            t = tok.strip()
            if t.startswith("[") and t.endswith("]"):
                nodes.extend(x for x in split_tokens(t[1:-1]) if x)
            elif not split_assignment(t):
                nodes.append(t.lstrip("%"))
        return ElementParts(tuple(n.lstrip("~") for n in nodes if n and n.lower() != "null"),
                            model=rest[-1])
    raise CardShapeError(f"unknown element letter '{letter}'")


_BEHAVIOURAL = re.compile(r"(?i)(?<![\w.])(?:[vi]\s*\(|(?:time|temper|hertz)(?![\w.(]))")


def is_behavioural(text: str) -> bool:
    """True when a value text reads circuit quantities or the simulation state (v(), i(), TIME,
    temper, hertz): ngspice evaluates it during the run, derate cannot give it one value."""
    return bool(_BEHAVIOURAL.search(text))


def _poly_order(tok: str, tail: list[str]) -> int:
    inner = tok[4:]
    if not inner and len(tail) > 1:
        inner = tail[1]
    inner = inner.strip("()")
    try:
        order = int(inner)
    except ValueError:
        raise CardShapeError(f"expected POLY(n), got '{tok}'") from None
    if order < 1:
        raise CardShapeError("POLY order must be at least 1")
    return order
