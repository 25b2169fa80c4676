"""``.step`` sweeps (another simulator's netlists use them) read as derate scenarios.

``.step param NAME list 1 2 3``, ``.step param NAME START STOP INCR`` (``lin`` may be written),
``.step param NAME dec|oct START STOP POINTS``, and ``.step temp ...`` (simulation and ambient
temperature) become one scenario per value; several ``.step`` cards combine as a product, as the
other simulator nests them.  A sweep of a source or a model parameter is not translated (a note
says so).  A project that lists its own scenarios keeps them.
"""

from __future__ import annotations

import math

from dataclasses import dataclass

from ..errors import NetlistError
from ..units import NumberError, parse_number
from .parser import Card

MAX_STEP_SCENARIOS = 200


def _temperature_bounds() -> tuple[float, float]:
    """The bounds a scenario temperature has in derate.yaml (its schema), for ``.step temp`` too."""
    from ..datafile import schema
    t = schema("project")["$defs"]["scenario"]["properties"]["temperature_c"]
    return float(t["exclusiveMinimum"]), float(t["maximum"])


@dataclass(frozen=True)
class Step:
    """One swept quantity: ``param`` (a .param name) or ``temp``, and its values."""

    kind: str
    name: str
    values: tuple[float, ...]
    card: Card


def read_steps(cards: list[Card]) -> tuple[list[Step], list[tuple[Card, str]]]:
    """Return the translated sweeps and (card, note) for those that are not translated."""
    steps: list[Step] = []
    notes: list[tuple[Card, str]] = []
    for card in cards:
        toks = [t.lower() for t in card.tokens[1:]]
        if toks[:1] == ["param"] and len(toks) >= 3:
            kind, name, spec = "param", toks[1], card.tokens[3:]
        elif toks[:1] == ["temp"]:
            kind, name, spec = "temp", "temp", card.tokens[2:]
        else:
            notes.append((card, "a .step of a source or model parameter is not translated into scenarios; "
                                "give the corners as scenarios in derate.yaml"))
            continue
        values = _values(spec, card)
        if kind == "temp":
            low, high = _temperature_bounds()
            bad = next((v for v in values if not low < v <= high), None)
            if bad is not None:
                raise NetlistError(f".step temp value {bad:g} °C is outside {low:g} (exclusive) to {high:g} °C, "
                                   "the bounds a scenario temperature has in derate.yaml",
                                   card.loc.file, card.loc.line, card.text)
        steps.append(Step(kind, name, values, card))
    return steps, notes


def _values(spec: list[str], card: Card) -> tuple[float, ...]:
    def num(t: str) -> float:
        try:
            v = parse_number(t).value
        except NumberError:
            raise NetlistError(f".step value '{t}' is not a number", card.loc.file, card.loc.line, card.text) from None
        if not math.isfinite(v) or abs(v) > 1e30:
            raise NetlistError(f".step value '{t}' is out of range (at most 1e30 in magnitude)", card.loc.file,
                               card.loc.line, card.text)
        return v
    if not spec:
        raise NetlistError(".step has no values", card.loc.file, card.loc.line, card.text)
    mode = spec[0].lower()
    if mode == "list":
        values = [num(t) for t in spec[1:]]
    else:
        args = spec[1:] if mode in ("lin", "dec", "oct") else spec
        if len(args) != 3:
            raise NetlistError("expected .step ... [lin|dec|oct] START STOP INCREMENT-or-POINTS", card.loc.file,
                               card.loc.line, card.text)
        start, stop, inc = (num(a) for a in args)
        values = _sweep(mode if mode in ("dec", "oct") else "lin", start, stop, inc, card)
    if not values or len(values) > MAX_STEP_SCENARIOS:
        raise NetlistError(f".step gives {len(values)} values (expected 1 to {MAX_STEP_SCENARIOS})",
                           card.loc.file, card.loc.line, card.text)
    return tuple(values)


def _sweep(mode: str, start: float, stop: float, inc: float, card: Card) -> list[float]:
    if mode == "lin":
        if inc == 0 or (stop - start) / inc < 0:
            raise NetlistError(".step increment does not lead from start to stop", card.loc.file, card.loc.line,
                               card.text)
        count = (stop - start) / inc
        if not math.isfinite(count) or count + 1 > MAX_STEP_SCENARIOS:
            return [0.0] * (MAX_STEP_SCENARIOS + 1)
        n = int(math.floor(count + 1e-9)) + 1
        if n > MAX_STEP_SCENARIOS:
            return [0.0] * (MAX_STEP_SCENARIOS + 1)
        return [start + k * inc for k in range(n)]
    if start <= 0 or stop <= 0 or inc <= 0:
        raise NetlistError(f".step {mode} needs positive start, stop and points", card.loc.file, card.loc.line,
                           card.text)
    per = math.log10(2.0) if mode == "oct" else 1.0
    count = math.log10(stop / start) / per * inc
    if not math.isfinite(count) or count + 1 > MAX_STEP_SCENARIOS:
        return [0.0] * (MAX_STEP_SCENARIOS + 1)
    n = int(math.floor(count + 1e-9)) + 1
    if n > MAX_STEP_SCENARIOS:
        return [0.0] * (MAX_STEP_SCENARIOS + 1)
    return [start * 10 ** (k * per / inc) for k in range(n)]


def step_scenarios(steps: list[Step]) -> list[tuple[str, tuple[tuple[str, float], ...], float | None]]:
    """(scenario name, params, temperature or None) for every combination of the sweeps: each
    ``.step`` is an axis of the same matrix a project file can give (derate/matrix.py)."""
    from ..matrix import Axis, Level, combinations, level_name, value_text

    total = math.prod(len(s.values) for s in steps)
    if total > MAX_STEP_SCENARIOS:
        card = steps[0].card
        raise NetlistError(f".step cards combine into {total} scenarios (at most {MAX_STEP_SCENARIOS}); list the "
                           "corners you need in derate.yaml", card.loc.file, card.loc.line, card.text)
    axes = []
    for s in steps:
        if len(set(s.values)) != len(s.values):
            raise NetlistError(f".step {s.name}: a value is listed twice", s.card.loc.file, s.card.loc.line,
                               s.card.text)
        names = [level_name(f"{s.name}={value_text(v)}") for v in s.values]
        if len(set(names)) != len(names):
            raise NetlistError(f".step {s.name}: two values give the same scenario name at 12 digits",
                               s.card.loc.file, s.card.loc.line, s.card.text)
        levels = tuple(Level(n, temperature_c=v, ambient_c=v) if s.kind == "temp"
                       else Level(n, params=((s.name, v),)) for n, v in zip(names, s.values))
        axes.append(Axis(s.name, levels))

    def fail(message: str, key_path: list) -> NetlistError:
        card = steps[0].card
        return NetlistError(f".step: {message}", card.loc.file, card.loc.line, card.text)
    return [(name, lv.params, lv.temperature_c) for name, lv in combinations(axes, None, fail)]
