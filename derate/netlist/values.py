"""Values from data files made safe for a deck: parsed, validated, and rendered from the structure.

Nothing a project file says reaches ngspice as the text it was written in.  A scenario's source
value (``"SIN(0 {vpk} 60)"``) is read into a SourceSpec by the same element reader as a netlist
card, every argument is parsed as a SPICE number or an expression (``expr.parse_expr``: numbers,
names, operators, calls), and the deck text is then written from those trees.  The rendered text
holds only letters, digits, ``_ . + - * / % ^ ( ) { } < > = ! ? : , |&`` and spaces, so no line
break, comment, backquote or control construct can survive, whatever the input was.

ngspice options come from an allow-list: a known option name with a finite number, a known word,
or (for flags) true/false.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..units import NumberError, parse_number
from .elements import SOURCE_FUNCTIONS, parse_source
from .expr import ExprError, Node, parse_expr, strip_delimiters
from .lexer import PLAIN_NUMBER, split_assignment, split_tokens

MAX_VALUE_CHARS = 100_000  # a PWL of a few thousand points fits; a 200 kB field does not


class BadValue(ValueError):
    """A value from a data file cannot be used in a deck; the message says what was expected."""


# ---------------------------------------------------------------- expressions
def render_expr(node: Node) -> str:
    """Return ngspice expression text for a parsed tree (fully bracketed, numbers as Python floats)."""
    # iterative post-order, so a tree of any accepted depth renders without recursion concerns
    out: dict[int, str] = {}
    stack: list[tuple[Node, bool]] = [(node, False)]
    while stack:
        n, ready = stack.pop()
        kind = n[0]
        if kind == "num":
            out[id(n)] = _num(n[1])
            continue
        if kind == "name":
            out[id(n)] = n[1]
            continue
        kids = _kids(n)
        if not ready:
            stack.append((n, True))
            stack.extend((k, False) for k in kids)
            continue
        r = [out[id(k)] for k in kids]
        if kind == "un":
            out[id(n)] = f"({n[1]}{r[0]})"
        elif kind == "bin":
            out[id(n)] = f"({r[0]} {_op(n[1])} {r[1]})"
        elif kind == "chain":
            text = r[0]
            for (op, _), operand in zip(n[2], r[1:]):
                text = f"{text} {_op(op)} {operand}"
            out[id(n)] = f"({text})"
        elif kind == "tern":
            out[id(n)] = f"({r[0]} ? {r[1]} : {r[2]})"
        elif kind == "call":
            out[id(n)] = f"{n[1]}({', '.join(r)})"
        else:  # pragma: no cover - the parser makes no other node
            raise BadValue(f"cannot render expression node {kind!r}")
    return out[id(node)]


def _kids(n: Node) -> tuple[Node, ...]:
    kind = n[0]
    if kind == "un":
        return (n[2],)
    if kind == "bin":
        return (n[2], n[3])
    if kind == "chain":
        return (n[1],) + tuple(x for _, x in n[2])
    if kind == "tern":
        return (n[1], n[2], n[3])
    if kind == "call":
        return tuple(n[2])
    return ()


_OPS = frozenset({"||", "&&", "==", "!=", "<>", "<", "<=", ">", ">=", "+", "-", "*", "/", "%", "\\", "^"})


def _op(op: str) -> str:
    if op not in _OPS:  # pragma: no cover - the tokenizer makes no other operator
        raise BadValue(f"unknown operator {op!r}")
    return "!=" if op == "<>" else op


def _num(x: float) -> str:
    if not math.isfinite(x):
        raise BadValue(f"expected a finite number, got {x}")
    return repr(float(x))




def render_value(text: str) -> str:
    """Return deck text for one value: a SPICE number (as a float) or an expression in braces."""
    t = text.strip()
    if PLAIN_NUMBER.match(t):
        try:
            return _num(parse_number(t).value)
        except NumberError as exc:
            raise BadValue(str(exc)) from None
    try:
        return "{" + render_expr(parse_expr(strip_delimiters(t))) + "}"
    except ExprError as exc:
        raise BadValue(f"expected a number or an expression, got {_brief(t)}: {exc}") from None


# ---------------------------------------------------------------- source values
@dataclass(frozen=True)
class SourceValue:
    """A validated V/I source description: every part already rendered safe for a deck."""

    dc: str | None = None
    ac_mag: str | None = None
    ac_phase: str | None = None
    function: str | None = None
    args: tuple[str, ...] = ()
    keywords: tuple[tuple[str, str], ...] = ()  # PWL r= / td=

    def deck_text(self) -> str:
        """Return the source's value part as deck text (after the name and two nodes)."""
        bits = []
        if self.dc is not None:
            bits.append(f"DC {self.dc}")
        if self.ac_mag is not None:
            bits.append(f"AC {self.ac_mag}" + (f" {self.ac_phase}" if self.ac_phase is not None else ""))
        if self.function:
            inner = " ".join(self.args + tuple(f"{k}={v}" for k, v in self.keywords))
            bits.append(f"{self.function.upper()}({inner})")
        return " ".join(bits) or "DC 0"


_PWL_KEYWORDS = frozenset({"r", "td"})


def parse_source_value(value: Any) -> SourceValue:
    """Read a scenario's source value (``12``, ``"DC 5"``, ``"SIN(0 {vpk} 60)"``) strictly.

    Raises BadValue naming what was expected; nothing outside the grammar of an ngspice
    independent source passes.
    """
    if isinstance(value, bool):
        raise BadValue(f"expected a source value such as 12, 'DC 5' or 'SIN(0 17 60)', got {value!r}")
    if isinstance(value, (int, float)):
        return SourceValue(dc=_num(float(value)))
    if not isinstance(value, str):
        raise BadValue(f"expected a source value text, got {type(value).__name__}")
    text = value.strip()
    if not text:
        raise BadValue("expected a source value, got an empty text")
    if len(text) > MAX_VALUE_CHARS:
        raise BadValue(f"source value longer than {MAX_VALUE_CHARS:,} characters")
    bad = next((ch for ch in text if ord(ch) < 32 or ch in "`;$\\\"" or ord(ch) == 127), None)
    if bad is not None:
        raise BadValue(f"character {bad!r} is not allowed in a source value (expected "
                          "[DC] value [AC mag [phase]] [PULSE(...)|SIN(...)|PWL(...)|EXP(...)|...])")
    try:
        tokens = split_tokens(text)
    except ValueError as exc:
        raise BadValue(f"cannot read {_brief(text)}: {exc}") from None
    try:
        spec = parse_source(tokens)
    except ValueError as exc:  # CardShapeError
        raise BadValue(f"cannot read {_brief(text)}: {exc}") from None
    if spec.extra:
        raise BadValue(f"cannot read {_brief(spec.extra[0])} in {_brief(text)}: expected [DC] value "
                       f"[AC mag [phase]] [{'|'.join(f.upper() + '(...)' for f in SOURCE_FUNCTIONS)}]")
    try:
        dc = render_value(spec.dc) if spec.dc is not None else None
        ac_mag = render_value(spec.ac_mag) if spec.ac_mag is not None else None
        ac_phase = render_value(spec.ac_phase) if spec.ac_phase is not None else None
        args: list[str] = []
        keywords: list[tuple[str, str]] = []
        for arg in spec.args:
            kv = split_assignment(arg)
            if kv:
                key = kv[0].lower()
                if spec.function != "pwl" or key not in _PWL_KEYWORDS:
                    raise BadValue(f"'{_brief(arg)}' is not allowed inside {spec.function.upper()}(...)")
                keywords.append((key, render_value(kv[1])))
            else:
                args.append(render_value(arg))
    except BadValue as exc:
        raise BadValue(f"in {_brief(text)}: {exc}") from None
    return SourceValue(dc, ac_mag, ac_phase, spec.function, tuple(args), tuple(keywords))


# ---------------------------------------------------------------- options
# ngspice options derate passes on (ngspice manual, chapter 11 ".options"): name -> kind.
# "num": a finite positive number; "int": a whole number >= 1; a frozenset: one of these words;
# "flag": true/false (written as the bare word, the only form ngspice 39 honours for interp).
OPTIONS: dict[str, Any] = {
    "abstol": "num", "reltol": "num", "vntol": "num", "chgtol": "num", "trtol": "num", "gmin": "num",
    "pivtol": "num", "pivrel": "num", "rshunt": "num", "cshunt": "num", "rseries": "num", "ramptime": "num",
    "xmu": "num", "temp": "temp", "tnom": "temp", "itl1": "int", "itl2": "int", "itl4": "int", "itl5": "int",
    "itl6": "int", "gminsteps": "int", "srcsteps": "int", "maxord": "int",
    "method": frozenset({"trap", "trapezoidal", "gear"}),
    "interp": "flag", "noopiter": "flag", "klu": "flag", "sparse": "flag", "autostop": "flag",
}


def parse_option(name: Any, value: Any) -> tuple[str, str | None]:
    """Return (option, deck value or None for a flag); BadValue for anything not allowed."""
    key = str(name).strip().lower()
    kind = OPTIONS.get(key)
    if kind is None:
        raise BadValue(f"unknown ngspice option {str(name)!r}; derate passes on: {', '.join(sorted(OPTIONS))}")
    if kind == "flag":
        if value is True:
            return key, None
        if value is False:
            return key, ""
        raise BadValue(f"option {key} is a flag: expected true or false, got {value!r}")
    if isinstance(kind, frozenset):
        word = str(value).strip().lower()
        if word not in kind:
            raise BadValue(f"option {key}: expected one of {', '.join(sorted(kind))}, got {value!r}")
        return key, word
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise BadValue(f"option {key}: expected a number, got {value!r}")
    try:
        x = float(value) if isinstance(value, (int, float)) else parse_number(value).value
    except (NumberError, ValueError):
        raise BadValue(f"option {key}: expected a number, got {value!r}") from None
    if isinstance(value, str) and not PLAIN_NUMBER.match(value.strip()):
        raise BadValue(f"option {key}: expected a number, got {value!r}")
    if not math.isfinite(x):
        raise BadValue(f"option {key}: expected a finite number, got {value!r}")
    if kind == "int":
        if x != int(x) or not 1 <= x <= 1_000_000:
            raise BadValue(f"option {key}: expected a whole number from 1 to 1000000, got {value!r}")
        return key, str(int(x))
    if kind == "temp":
        if not -273.15 < x < 1000:
            raise BadValue(f"option {key}: expected a temperature in °C above -273.15, got {value!r}")
        return key, _num(x)
    if x <= 0:
        raise BadValue(f"option {key}: expected a positive number, got {value!r}")
    return key, _num(x)


def options_card(options: tuple[tuple[str, str | None], ...]) -> str | None:
    """Return one ``.options`` card for validated options (flags set to false are left out)."""
    words = [k if v is None else f"{k}={v}" for k, v in options if v != ""]
    return ".options " + " ".join(words) if words else None


def _brief(text: str, n: int = 60) -> str:
    return repr(text if len(text) <= n else text[:n - 3] + "...")
