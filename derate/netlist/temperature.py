"""The temperature a netlist simulates at: its own ``.temp`` card, else ``.options temp=``.

ngspice 39 reads both; a ``.temp`` card wins over ``.options temp=`` whichever comes first (measured
here), and without either it simulates at 27 °C.  derate takes the netlist's temperature as the
ambient of a scenario that gives none, so the circuit and the thermal judgements use one temperature.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

from ..units import NumberError
from .expr import ExprError, eval_text
from .lexer import split_assignment
from .parser import Netlist

MIN_C, MAX_C = -273.15, 500.0


@dataclass(frozen=True)
class NetlistTemperature:
    value_c: float
    where: str  # "the netlist's .temp (board.cir:12)"


def netlist_temperature(netlist: Netlist, lookup: Callable[[str], float] | None = None) -> NetlistTemperature | None:
    """The top-level ``.temp`` (the last one), else the last ``.options temp=``; None when neither
    gives a number (an expression is evaluated with ``lookup``, the circuit's parameters)."""
    depth = 0
    temp = option = None
    for card in netlist.cards:
        kw = card.keyword
        if kw == ".subckt":
            depth += 1
        elif kw == ".ends":
            depth = max(0, depth - 1)
        elif depth == 0 and kw == ".temp" and len(card.tokens) > 1:
            got = _value(card.tokens[1], lookup)
            if got is not None:
                temp = NetlistTemperature(got, f"the netlist's .temp ({card.loc})")
        elif depth == 0 and kw in (".option", ".options", ".opt"):
            for tok in card.tokens[1:]:
                kv = split_assignment(tok)
                if kv and kv[0].lower() == "temp":
                    got = _value(kv[1], lookup)
                    if got is not None:
                        option = NetlistTemperature(got, f"the netlist's .options temp ({card.loc})")
    return temp or option


def _value(text: str, lookup: Callable[[str], float] | None) -> float | None:
    try:
        x = float(eval_text(text, lookup))
    except (ExprError, KeyError, ValueError, NumberError, ZeroDivisionError, OverflowError):
        return None
    return x if MIN_C < x <= MAX_C else None
