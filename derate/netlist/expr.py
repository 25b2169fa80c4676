"""Safe evaluation of SPICE parameter expressions (``{...}`` and ``'...'``), never Python ``eval``.

Grammar (lowest to highest precedence), as in ngspice's numparam expressions (ngspice manual,
section 2.8.5 "Syntax of expressions"):

    ternary      a ? b : c                     (right associative)
    or / and     ||  &&
    equality     ==  !=
    relational   <  <=  >  >=
    additive     +  -
    multiplic.   *  /  %  \\ (integer division)
    unary        -  +  !
    power        ^  **                         (left associative, binds tighter than unary minus:
                                                 ngspice 39 gives -2^2 = -4 and 2^3^2 = 64)
    primary      number (SPICE suffixes allowed), name, name(args), ( expr )

Numbers keep ngspice's scale factors (``1k``, ``4.7u``, ``1meg``).  Comparison and logic give 1.0 or
0.0.  Names are looked up through a callable so that callers control scoping.
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass
from typing import Callable, Mapping

from ..units import NumberError, parse_number


class ExprError(ValueError):
    """An expression cannot be parsed or evaluated; the message says what was expected."""


class SimulatorOnly(ExprError):
    """An expression only the simulator can evaluate: it reads the simulator's own state (``temp``,
    ``temper``, ``time``, ``hertz``) or calls a function derate's evaluator does not have."""


# ---------------------------------------------------------------- tokens
_TOKEN_RE = re.compile(
    r"""
    (?P<ws>\s+)
  | (?P<num>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?[A-Za-z\u00b5\u03bc]*)
  | (?P<name>[A-Za-z_][A-Za-z0-9_.]*)
  | (?P<op>\*\*|==|!=|<>|<=|>=|&&|\|\||[-+*/%^()<>!?:,\\])
    """,
    re.VERBOSE,
)


@dataclass(frozen=True)
class _Tok:
    kind: str
    text: str
    pos: int


def _tokenize(text: str) -> list[_Tok]:
    pos = 0
    out: list[_Tok] = []
    while pos < len(text):
        m = _TOKEN_RE.match(text, pos)
        if not m:
            raise ExprError(f"unexpected character {text[pos]!r} at position {pos + 1} in {text!r}")
        kind = m.lastgroup
        if kind != "ws":
            out.append(_Tok(kind, m.group(0), pos))
        pos = m.end()
    out.append(_Tok("end", "", pos))
    return out


# ---------------------------------------------------------------- AST
# Nodes are tuples: ("num", value) ("name", n) ("call", n, args) ("un", op, a) ("bin", op, a, b)
# ("tern", c, a, b).  Tuples keep the tree hashable and cheap.
Node = tuple


MAX_DEPTH = 100  # nesting of brackets, operators and calls in one expression


# Binary operators by precedence level (higher binds tighter); all left associative.
_PREC = {"||": 0, "&&": 1, "==": 2, "!=": 2, "<>": 2, "<": 3, "<=": 3, ">": 3, ">=": 3,
         "+": 4, "-": 4, "*": 5, "/": 5, "%": 5, "\\": 5}


class _Parser:
    """Recursive descent with precedence climbing: a bounded number of frames per nesting level."""

    def __init__(self, text: str):
        self.text = text
        self.toks = _tokenize(text)
        self.i = 0
        self.depth = 0

    def peek(self) -> _Tok:
        return self.toks[self.i]

    def take(self) -> _Tok:
        tok = self.toks[self.i]
        self.i += 1
        return tok

    def expect(self, text: str) -> None:
        tok = self.take()
        if tok.text != text:
            got = tok.text or "end of expression"
            raise ExprError(f"expected {text!r} at position {tok.pos + 1} in {self.text!r}, got {got!r}")

    def enter(self) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise ExprError(f"expression nested more than {MAX_DEPTH} levels deep in {_short(self.text)}")

    def parse(self) -> Node:
        node = self.ternary()
        tok = self.peek()
        if tok.kind != "end":
            raise ExprError(f"unexpected {tok.text!r} at position {tok.pos + 1} in {self.text!r}")
        return node

    def ternary(self) -> Node:
        self.enter()
        cond = self.binary(0)
        if self.peek().text == "?":
            self.take()
            a = self.ternary()
            self.expect(":")
            b = self.ternary()
            cond = ("tern", cond, a, b)
        self.depth -= 1
        return cond

    def binary(self, min_prec: int) -> Node:
        node = self.unary()
        while True:
            tok = self.peek()
            prec = _PREC.get(tok.text) if tok.kind == "op" else None
            if prec is None or prec < min_prec:
                return node
            # a run of operators of one precedence (1+2-3+...) is one n-ary node, evaluated in a loop
            self.enter()
            run: list[tuple[str, Node]] = []
            while tok.kind == "op" and _PREC.get(tok.text) == prec:
                self.take()
                run.append((tok.text, self.binary(prec + 1)))
                tok = self.peek()
            self.depth -= 1
            node = _chain(node, run)

    def unary(self) -> Node:
        tok = self.peek()
        if tok.kind == "op" and tok.text in ("-", "+", "!"):
            self.take()
            self.enter()
            node = ("un", tok.text, self.unary())
            self.depth -= 1
            return node
        return self.power()

    def power(self) -> Node:
        node = self.primary()
        run: list[tuple[str, Node]] = []
        while self.peek().text in ("^", "**"):
            self.take()
            run.append(("^", self.signed_primary()))  # left associative, as ngspice
        return _chain(node, run) if run else node

    def signed_primary(self) -> Node:
        # the exponent may carry its own sign: 2^-1
        tok = self.peek()
        if tok.kind == "op" and tok.text in ("-", "+"):
            self.take()
            self.enter()
            node = ("un", tok.text, self.signed_primary())
            self.depth -= 1
            return node
        return self.primary()

    def primary(self) -> Node:
        tok = self.take()
        if tok.kind == "num":
            try:
                return ("num", parse_number(tok.text).value)
            except NumberError as exc:  # an overflowing literal such as 1e999
                raise ExprError(str(exc)) from None
        if tok.kind == "name":
            if self.peek().text == "(":
                self.take()
                args: list[Node] = []
                if self.peek().text != ")":
                    args.append(self.ternary())
                    while self.peek().text == ",":
                        self.take()
                        args.append(self.ternary())
                self.expect(")")
                return ("call", tok.text.lower(), tuple(args))
            return ("name", tok.text.lower())
        if tok.text == "(":
            node = self.ternary()
            self.expect(")")
            return node
        got = tok.text or "end of expression"
        raise ExprError(f"expected a number, name or '(' at position {tok.pos + 1} in {self.text!r}, got {got!r}")


def _chain(first: Node, run: list[tuple[str, Node]]) -> Node:
    """("bin", op, a, b) for one operator; ("chain", a, ((op, b), (op, c), ...)) for a run."""
    if len(run) == 1:
        return ("bin", run[0][0], first, run[0][1])
    return ("chain", first, tuple(run))


def _short(text: str) -> str:
    return repr(text if len(text) <= 60 else text[:57] + "...")


@functools.lru_cache(maxsize=4096)
def parse_expr(text: str) -> Node:
    """Return the syntax tree of an expression; raises ExprError with the position on bad syntax.

    Trees deeper than MAX_DEPTH (brackets, or a chain such as 1+1+...+1 of more than MAX_DEPTH
    operators) are refused, so that evaluating one never exhausts the interpreter's stack.
    """
    node = _Parser(text).parse()
    if tree_depth(node) > MAX_DEPTH:
        raise ExprError(f"expression nested more than {MAX_DEPTH} levels deep in {_short(text)}")
    return node


def children(node: Node) -> tuple[Node, ...]:
    """Return the sub-expressions of a node."""
    kind = node[0]
    if kind == "call":
        return node[2]
    if kind == "chain":
        return (node[1],) + tuple(n for _, n in node[2])
    if kind in ("un", "bin"):
        return tuple(node[2:])
    if kind == "tern":
        return tuple(node[1:])
    return ()


def tree_depth(node: Node) -> int:
    """Return the depth of an expression tree (iteratively)."""
    deepest = 0
    stack = [(node, 1)]
    while stack:
        n, d = stack.pop()
        deepest = max(deepest, d)
        stack.extend((c, d + 1) for c in children(n))
    return deepest


def names_in(node: Node) -> set[str]:
    """Return every parameter name an expression refers to (function names excluded)."""
    out: set[str] = set()
    stack = [node]
    while stack:
        n = stack.pop()
        if n[0] == "name":
            out.add(n[1])
        stack.extend(children(n))
    return out


# ---------------------------------------------------------------- evaluation
def _int(x: float) -> float:
    return float(math.trunc(x))


def _checked_log(fn: Callable[[float], float]) -> Callable[[float], float]:
    def inner(x: float) -> float:
        if x <= 0:
            raise ExprError(f"logarithm of a non-positive number ({x:g})")
        return fn(x)
    return inner


FUNCTIONS: Mapping[str, tuple[int, Callable[..., float]]] = {
    # name: (number of arguments, -1 = one or more)
    "sqrt": (1, lambda x: math.sqrt(x) if x >= 0 else _raise(f"square root of a negative number ({x:g})")),
    "exp": (1, math.exp),
    "log": (1, _checked_log(math.log)),  # natural logarithm, as in ngspice
    "ln": (1, _checked_log(math.log)),
    "log10": (1, _checked_log(math.log10)),
    "abs": (1, abs),
    "min": (2, min),
    "max": (2, max),
    "pow": (2, lambda a, b: math.pow(a, b)),
    "pwr": (2, lambda a, b: abs(a) ** b),  # ngspice 39: pwr(-2, 3) = 8
    "sin": (1, math.sin),
    "cos": (1, math.cos),
    "tan": (1, math.tan),
    "asin": (1, math.asin),
    "acos": (1, math.acos),
    "atan": (1, math.atan),
    "sinh": (1, math.sinh),
    "cosh": (1, math.cosh),
    "tanh": (1, math.tanh),
    "floor": (1, lambda x: float(math.floor(x))),
    "ceil": (1, lambda x: float(math.ceil(x))),
    "int": (1, _int),
    "nint": (1, lambda x: float(round(x))),
    "sgn": (1, lambda x: float((x > 0) - (x < 0))),
    "sign": (1, lambda x: float((x > 0) - (x < 0))),
    "ternary_fcn": (3, lambda c, a, b: a if c else b),
}

CONSTANTS: Mapping[str, float] = {"pi": math.pi}


def _raise(msg: str) -> float:
    raise ExprError(msg)


@dataclass(frozen=True)
class UserFunction:
    """A ``.func name(args) {body}`` definition."""

    name: str
    args: tuple[str, ...]
    body: Node


def evaluate(node: Node, lookup: Callable[[str], float],
             functions: Mapping[str, UserFunction] | None = None, _active: tuple[str, ...] = ()) -> float:
    """Return the value of a parsed expression; names are resolved through ``lookup``.

    A user function that calls itself, directly or through others, is an ExprError (ngspice
    has no recursive functions).
    """
    functions = functions or {}

    def ev(n: Node) -> float:
        return evaluate(n, lookup, functions, _active)

    kind = node[0]
    if kind == "num":
        return node[1]
    if kind == "name":
        name = node[1]
        if name in CONSTANTS:
            try:
                return lookup(name)
            except KeyError:
                return CONSTANTS[name]
        return lookup(name)
    if kind == "un":
        v = ev(node[2])
        if node[1] == "-":
            return -v
        if node[1] == "!":
            return 0.0 if v else 1.0
        return v
    if kind == "bin":
        op = node[1]
        a = ev(node[2])
        if op in ("&&", "||"):
            return _logic(op, a, node[3], ev)
        return _apply(op, a, ev(node[3]))
    if kind == "chain":
        acc = ev(node[1])
        for op, operand in node[2]:
            acc = _logic(op, acc, operand, ev) if op in ("&&", "||") else _apply(op, acc, ev(operand))
        return acc
    if kind == "tern":
        return ev(node[2] if ev(node[1]) else node[3])
    if kind == "call":
        name, args = node[1], node[2]
        if name in functions:
            fn = functions[name]
            if len(args) != len(fn.args):
                raise ExprError(f"function {name}() takes {len(fn.args)} arguments, got {len(args)}")
            if name in _active:
                raise ExprError(f"function {name}() calls itself ({' -> '.join(_active + (name,))}); "
                                "recursive functions are not supported")
            values = {a: ev(x) for a, x in zip(fn.args, args)}

            def inner(n: str) -> float:
                return values[n] if n in values else lookup(n)
            return evaluate(fn.body, inner, functions, _active + (name,))
        if name not in FUNCTIONS:
            raise SimulatorOnly(f"it calls {name}(), a function derate does not evaluate")
        arity, fn = FUNCTIONS[name]
        if name == "ternary_fcn":  # lazy like ?:
            if len(args) != 3:
                raise ExprError("function ternary_fcn() takes 3 arguments")
            return ev(args[1] if ev(args[0]) else args[2])
        values = [ev(a) for a in args]
        if arity == -1 and not values:
            raise ExprError(f"function {name}() needs at least one argument")
        if arity >= 0 and len(values) != arity:
            raise ExprError(f"function {name}() takes {arity} argument{'s' if arity != 1 else ''}, got {len(values)}")
        try:
            return float(fn(*values))
        except (OverflowError, ValueError) as exc:
            raise ExprError(f"cannot compute {name}({', '.join(f'{v:g}' for v in values)}): {exc}") from None
    raise ExprError(f"bad expression node {kind!r}")  # pragma: no cover


def _logic(op: str, a: float, right: Node, ev: Callable[[Node], float]) -> float:
    """Short-circuit && and ||: the right side is evaluated only when it decides the result."""
    if op == "&&":
        return 1.0 if (a and ev(right)) else 0.0
    return 1.0 if (a or ev(right)) else 0.0


def _apply(op: str, a: float, b: float) -> float:
    """Return ``a op b`` for an arithmetic or comparison operator (1.0/0.0 for comparisons)."""
    try:
        if op == "+":
            return a + b
        if op == "-":
            return a - b
        if op == "*":
            return a * b
        if op == "/":
            if b == 0:
                raise ExprError("division by zero")
            return a / b
        if op == "\\":
            if b == 0:
                raise ExprError("division by zero")
            return float(math.trunc(a / b))
        if op == "%":
            if b == 0:
                raise ExprError("modulo by zero")
            return math.fmod(a, b)
        if op == "^":
            return math.pow(a, b)
    except (OverflowError, ValueError) as exc:
        if isinstance(exc, ExprError):
            raise
        raise ExprError(f"cannot compute {a:g} {op} {b:g}: {exc}") from None
    return float({"==": a == b, "!=": a != b, "<>": a != b, "<": a < b, "<=": a <= b,
                  ">": a > b, ">=": a >= b}[op])


def strip_delimiters(text: str) -> str:
    """Return the inside of ``{expr}`` or ``'expr'`` (other text unchanged), with inner braces as
    brackets: ngspice substitutes ``{x}`` inside an expression (``'{C}*2'``) like ``(x)``."""
    t = text.strip()
    if len(t) >= 2 and ((t[0] == "{" and t[-1] == "}") or (t[0] == "'" and t[-1] == "'")):
        t = t[1:-1]
    if "{" in t:
        t = t.replace("{", "(").replace("}", ")")
    return t


def eval_text(text: str, lookup: Callable[[str], float] | None = None,
              functions: Mapping[str, UserFunction] | None = None) -> float:
    """Parse and evaluate an expression text (braces or quotes allowed around it)."""
    def no_names(name: str) -> float:
        raise KeyError(name)
    return evaluate(parse_expr(strip_delimiters(text)), lookup or no_names, functions)
