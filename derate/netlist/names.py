"""derate's own net names in the deck, mapped back to the user's names everywhere else.

Real netlists name nets ``1``, ``2`` (ngspice then calls the vector ``V(2)``), ``Net-(C1-Pad1)``
(KiCad 5: ngspice keeps ``net-(c1-pad1`` and cannot save it), ``/PWR/+5V`` and worse.  The deck
derate writes therefore renames every net: in each scope (the top level or a subcircuit body) the
local nets become ``dn1``, ``dn2`` ... in order of first appearance, and ``.global`` nets
``dg1``, ``dg2`` ...; ground (``0``, ``gnd``) stays ``0``.  ngspice prefixes local names with the
instance path as usual (``x1.dn3``).  Reports, findings and messages use the user's names; a
simulator message that names a deck net is translated back.
"""

from __future__ import annotations

import re
from typing import Callable, Mapping

# a node voltage reference in an expression: v(a) or v(a, b)
V_REF = re.compile(r"(?i)(?<![\w.])v\s*\(\s*([^\s(),]+)\s*(?:,\s*([^\s(),]+)\s*)?\)")
DECK_NAME = re.compile(r"\b(?:[a-z0-9_]+\.)*d[ng]\d+\b")


def local_name(k: int) -> str:
    return f"dn{k}"


def global_name(k: int) -> str:
    return f"dg{k}"


def voltage_refs(text: str) -> list[str]:
    """The node names an expression reads through v(...)."""
    out = []
    for m in V_REF.finditer(text):
        out.append(m.group(1))
        if m.group(2):
            out.append(m.group(2))
    return out


def rename_voltage_refs(text: str, rename: Callable[[str], str | None]) -> str:
    """``text`` with every v(a[, b]) node renamed (names ``rename`` returns None for stay)."""
    def repl(m: re.Match) -> str:
        a = rename(m.group(1)) or m.group(1)
        if m.group(2):
            b = rename(m.group(2)) or m.group(2)
            return f"v({a},{b})"
        return f"v({a})"
    return V_REF.sub(repl, text)


def to_user_names(text: str, deck_to_user: Mapping[str, str]) -> str:
    """A simulator message with deck net names replaced by the user's."""
    if not deck_to_user:
        return text
    return DECK_NAME.sub(lambda m: deck_to_user.get(m.group(0), m.group(0)), text)
