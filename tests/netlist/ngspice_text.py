"""Readers for ngspice's own text output (`listing e`, `show`), the outside reference of the tests."""

from __future__ import annotations

import re


def parse_show(text: str, parameter: str) -> dict[str, float]:
    """Return {device: value} from `show <type> : <parameter>` output (column blocks)."""
    out: dict[str, float] = {}
    devices: list[str] = []
    for line in text.splitlines():
        toks = line.split()
        if not toks:
            continue
        if toks[0] == "device":
            devices = toks[1:]
        elif toks[0] == parameter and devices:
            for dev, val in zip(devices, toks[1:]):
                out[dev] = float(val)
    return out


_LISTING = re.compile(r"^\s*\d+\s*:\s*(.*)$")


def parse_listing(text: str) -> list[list[str]]:
    """Return the token lists of the element lines of `listing e` (title and dot cards dropped)."""
    rows = []
    lines = text.splitlines()
    for line in lines[2:]:  # title echo, then the numbered title line
        m = _LISTING.match(line)
        if not m:
            continue
        body = m.group(1).strip()
        if not body or body.startswith("."):
            continue
        rows.append(body.replace("[", " ").replace("]", " ").split())
    return rows
