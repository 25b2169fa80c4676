"""Capacitor data as the trade writes it in BOMs and schematic fields.

A value field such as ``10u 25V X7R 0805``, ``10u/25V/X7R``, ``4u7``, ``6V3``, ``100n 50V C0G 0603`` or
``470uF 35V 105C`` is read into the fields of a part record.  The conventions (common practice in
BOMs and on schematics; IEC 60062 for the letter-as-decimal-point codes ``4u7`` = 4.7 µF and
``6V3`` = 6.3 V, from memory):

- capacitance: ``100n``, ``100nF``, ``0.1uF``, ``0.1 µF``, ``4u7``, ``2n2``, ``1p5``, ``10µ``;
- rated voltage: ``25V``, ``25 V``, ``25VDC``, ``6V3``, ``6.3V``; an AC rating ``275VAC``, ``275 V AC``,
  ``275Vac``, ``250V~`` is an AC (RMS) rating, never a DC one;
- safety class of mains capacitors: ``X1``, ``X2``, ``Y1``, ``Y2`` (IEC 60384-14 subclasses);
- dielectric: the EIA class-2 codes (X5R, X7R, X7S, X6S, X8R, Y5V, Z5U ...) and the class-1 codes
  C0G/NP0 (and U2J), which also give the technology;
- case size: ``0201`` ... ``2220`` (EIA inch codes) or ``D8x11.5`` style can sizes;
- tolerance: ``10%``, ``±20%``;
- rated temperature: ``105C``, ``105°C``, ``125 °C``;
- technology words: electrolytic, polymer, tantalum, film, MKP/MKT, ceramic/MLCC.

Words that mean nothing here are returned, so a caller can say what it could not read.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass, field

from .units import NumberError, parse_number

CLASS2 = ("X5R", "X6S", "X6T", "X7R", "X7S", "X7T", "X8R", "X8L", "Y5V", "Z5U", "Y5U", "X5S", "X7U", "Y5P")
CLASS1 = ("C0G", "NP0", "COG", "NPO", "U2J", "C0H", "P100", "N750")
CASES = ("01005", "0201", "0402", "0603", "0805", "1206", "1210", "1808", "1812", "2220", "2225")

TECHNOLOGY_WORDS = {
    "electrolytic": "aluminum-electrolytic", "elko": "aluminum-electrolytic", "e-cap": "aluminum-electrolytic",
    "elyt": "aluminum-electrolytic", "aluminum": "aluminum-electrolytic", "aluminium": "aluminum-electrolytic",
    "alu": "aluminum-electrolytic", "polymer": "aluminum-polymer", "oscon": "aluminum-polymer",
    "tantalum": "tantalum-mno2", "tant": "tantalum-mno2", "ta": "tantalum-mno2", "mno2": "tantalum-mno2",
    "film": "film-polyester", "mkt": "film-polyester", "pet": "film-polyester", "polyester": "film-polyester",
    "mkp": "film-polypropylene", "pp": "film-polypropylene", "polypropylene": "film-polypropylene",
    "mica": "mica-glass", "ceramic": None, "mlcc": None, "cer": None,
}

# spellings of the technology names that mean the same (British spelling, short forms)
TECHNOLOGY_ALIASES = {
    "aluminium-electrolytic": "aluminum-electrolytic", "aluminium-polymer": "aluminum-polymer",
    "al-electrolytic": "aluminum-electrolytic", "electrolytic": "aluminum-electrolytic",
    "aluminum": "aluminum-electrolytic", "aluminium": "aluminum-electrolytic",
    "polymer-aluminum": "aluminum-polymer", "polymer-aluminium": "aluminum-polymer",
    "tantalum": "tantalum-mno2", "solid-tantalum": "tantalum-mno2", "polymer-tantalum": "tantalum-polymer",
    "wet-tantalum": "tantalum-wet", "c0g": "ceramic-class1", "np0": "ceramic-class1", "class1": "ceramic-class1",
    "ceramic-class-1": "ceramic-class1", "class2": "ceramic-class2", "ceramic-class-2": "ceramic-class2",
    "x7r": "ceramic-class2", "x5r": "ceramic-class2", "mlcc": "ceramic-class2",
    "polypropylene": "film-polypropylene", "mkp": "film-polypropylene", "polyester": "film-polyester",
    "mkt": "film-polyester", "mica": "mica-glass", "glass": "mica-glass",
}


@dataclass
class TradeValue:
    """What a value text says about a capacitor (None: not said)."""

    capacitance_f: float | None = None
    rated_voltage_v: float | None = None
    dielectric: str | None = None
    technology: str | None = None
    case_size: str | None = None
    tolerance_pct: float | None = None
    rated_temperature_c: float | None = None
    rated_voltage_ac_v: float | None = None
    safety_class: str | None = None
    unread: list[str] = field(default_factory=list)

    def fields(self) -> dict:
        """The part-record fields it gives."""
        out = {k: v for k, v in vars(self).items() if k != "unread" and v is not None}
        return out


_RKM_CAP = re.compile(r"^(\d+)([pnuµμm])(\d+)$", re.I)  # 4u7, 2n2, 1p5
_CAP = re.compile(r"^(\d+(?:[.,]\d+)?|\.\d+)\s*([pnuµμm]?)f?$", re.I)  # 100n, 100nF, 0,1uF, 10µ
_RKM_VOLT = re.compile(r"^(\d+)v(\d+)$", re.I)  # 6V3
_VOLT = re.compile(r"^(\d+(?:[.,]\d+)?)\s*(k?)v(?:dc)?$", re.I)  # 25V, 6.3V, 1kV, 25VDC
_AC_VOLT = re.compile(r"^(\d+(?:[.,]\d+)?)\s*(k?)v(?:ac|rms|~|\s*ac)$", re.I)  # 275VAC, 250V~, 300Vac
_TEMP = re.compile(r"^(\d{2,3})\s*(?:°\s*)?c$", re.I)  # 105C, 105°C
SAFETY_CLASSES = ("X1", "X2", "X3", "Y1", "Y2", "Y3", "Y4")
_TOL = re.compile(r"^[±+\-/]*(\d+(?:[.,]\d+)?)\s*%$")
_CAN = re.compile(r"^(?:d)?(\d+(?:\.\d+)?)\s*[x×]\s*(\d+(?:\.\d+)?)\s*(?:mm)?$", re.I)
_DIVISOR = {"p": 1e12, "n": 1e9, "u": 1e6, "m": 1e3, "": 1.0}  # divide: 10 / 1e6 is exactly 1e-05


def _num(text: str) -> float:
    return float(text.replace(",", "."))


def capacitance(word: str) -> float | None:
    """A capacitance written the trade's way (``4u7``, ``100nF``, ``0.1 µF``), or None."""
    w = word.strip().replace(" ", "")
    m = _RKM_CAP.match(w)
    if m:
        return _num(f"{m.group(1)}.{m.group(3)}") / _DIVISOR[_prefix(m.group(2))]
    m = _CAP.match(w)
    if m and (m.group(2) or w.lower().endswith("f")):
        return _num(m.group(1)) / _DIVISOR[_prefix(m.group(2))]
    return None


def _prefix(p: str) -> str:
    return "u" if p in "µμ" and p else p.lower()


def voltage(word: str) -> float | None:
    """A voltage rating (``25V``, ``25 V``, ``6V3``, ``1kV``), or None."""
    w = word.strip().replace(" ", "")
    m = _RKM_VOLT.match(w)
    if m:
        return _num(f"{m.group(1)}.{m.group(2)}")
    m = _VOLT.match(w)
    if m:
        return _num(m.group(1)) * (1e3 if m.group(2) else 1.0)
    return None


def ac_voltage(word: str) -> float | None:
    """An AC (RMS) voltage rating (``275VAC``, ``275 V AC``, ``250V~``), or None."""
    m = _AC_VOLT.match(word.strip().replace(" ", ""))
    return _num(m.group(1)) * (1e3 if m.group(2) else 1.0) if m else None


def number_with_unit(text: str, unit: str) -> float | None:
    """A number that may carry its unit and spaces (``16 V``, ``6V3``, ``0.1 µF``), as derate reads part data."""
    t = text.strip()
    if unit == "V":
        got = voltage(t)
        if got is not None:
            return got
    if unit == "F":
        got = capacitance(t)
        if got is not None:
            return got
    compact = t.replace(" ", "").replace("µ", "u").replace("μ", "u")
    try:
        return parse_number(compact).value
    except NumberError:
        return None


def _tokens(text: str) -> list[str]:
    # '10u/25V/X7R', '100n 50V C0G 0603', '470uF, 35V; 105C', '16 V' (a number then its unit)
    raw = [t for t in re.split(r"[\s/,;|_]+", text.strip()) if t]
    out: list[str] = []
    for t in raw:
        if out and re.fullmatch(r"(?i)(v|vdc|vac|v~|kv|[pnuµμm]?f|°?c|%)", t) and re.fullmatch(r"[\d.,]+", out[-1]):
            out[-1] += t  # '16' 'V' -> '16V'
        elif out and re.fullmatch(r"(?i)(ac|~|rms)", t) and re.fullmatch(r"(?i)[\d.,]+k?v", out[-1]):
            out[-1] += "AC"  # '275V' 'AC' -> '275VAC'
        else:
            out.append(t)
    return out


def read_value(text: str) -> TradeValue:
    """Read a BOM or schematic value text into a TradeValue (see the module docstring)."""
    tv = TradeValue()
    for word in _tokens(text):
        up = word.upper()
        low = word.lower()
        if tv.capacitance_f is None and (c := capacitance(word)) is not None:
            tv.capacitance_f = c
        elif tv.rated_voltage_ac_v is None and (v := ac_voltage(word)) is not None:
            tv.rated_voltage_ac_v = v
        elif tv.rated_voltage_v is None and (v := voltage(word)) is not None:
            tv.rated_voltage_v = v
        elif up in SAFETY_CLASSES:
            tv.safety_class = up
        elif up in CLASS2:
            tv.dielectric, tv.technology = up, "ceramic-class2"
        elif up in CLASS1:
            tv.dielectric, tv.technology = {"COG": "C0G", "NPO": "NP0"}.get(up, up), "ceramic-class1"
        elif word in CASES:
            tv.case_size = word
        elif (m := _CAN.match(word)) is not None:
            tv.case_size = f"D{m.group(1)}x{m.group(2)}"
        elif (m := _TOL.match(word)) is not None:
            tv.tolerance_pct = _num(m.group(1))
        elif (m := _TEMP.match(word)) is not None and 50 <= int(m.group(1)) <= 250:
            tv.rated_temperature_c = float(m.group(1))
        elif low in TECHNOLOGY_WORDS:
            tech = TECHNOLOGY_WORDS[low]
            if tech and tv.technology is None:
                tv.technology = tech
        else:
            tv.unread.append(word)
    if tv.technology is None and tv.dielectric is None and tv.case_size in CASES:
        pass  # an MLCC case without a dielectric: the technology stays unknown (class 1 or 2?)
    return tv


def technology(text: str) -> tuple[str | None, list[str]]:
    """A technology name, leniently: (the canonical name or None, suggestions)."""
    from .parts import TECHNOLOGIES

    t = text.strip().lower().replace("_", "-").replace(" ", "-")
    if t in TECHNOLOGIES:
        return t, []
    if t in TECHNOLOGY_ALIASES:
        return TECHNOLOGY_ALIASES[t], []
    return None, difflib.get_close_matches(t, list(TECHNOLOGIES) + list(TECHNOLOGY_ALIASES), n=3, cutoff=0.6)


def nearest(word: str, choices, n: int = 1) -> list[str]:
    """The choices closest to a misspelt word (for 'did you mean ...')."""
    return difflib.get_close_matches(word, list(choices), n=n, cutoff=0.6)
