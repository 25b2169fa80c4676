"""SPICE engineering numbers: read them exactly as ngspice 39 does, and format them for people.

Reading follows the ngspice manual, section 2.1.1 "Some naming conventions" (Table 2.2, scale
factors): a number is an optional sign, digits with an optional decimal point and an optional
integer exponent, then an optional scale factor; letters after a number that are not a scale
factor are ignored, and so is everything after a scale factor.  ngspice 39 also reads the micro
sign U+00B5 as ``u``; it does *not* read the Greek letter mu U+03BC (the value is read without
any scale factor).  The pitfalls are reported, not corrected: the tool must read what ngspice
reads, and tell the designer when that is probably not what they meant.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

# Scale factors, ngspice manual Table 2.2.  'meg' and 'mil' are tested before 'm'.
_SCALE = {
    "t": 1e12,
    "g": 1e9,
    "k": 1e3,
    "m": 1e-3,
    "u": 1e-6,
    "n": 1e-9,
    "p": 1e-12,
    "f": 1e-15,
}
MICRO_SIGN = "\u00b5"  # read as micro by ngspice 39
GREEK_MU = "\u03bc"  # NOT read as micro by ngspice 39

_NUMBER_RE = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


@dataclass(frozen=True)
class SpiceNumber:
    """A number as ngspice reads it, with notes on anything a designer probably did not mean."""

    value: float
    text: str
    scale: str  # the scale-factor text that was applied ("", "k", "meg", "mil", ...)
    ignored: str  # trailing text that ngspice ignores
    pitfalls: tuple[tuple[str, str], ...] = ()  # (code, message): digits-after-scale, femto-suffix, greek-mu


class NumberError(ValueError):
    """Raised when a text does not start with a SPICE number."""


def parse_number(text: str) -> SpiceNumber:
    """Return the value ngspice gives to ``text`` (e.g. ``"4.7u"`` -> 4.7e-6), with pitfalls noted.

    Raises NumberError when the text does not begin with a number at all.
    """
    raw = text.strip()
    m = _NUMBER_RE.match(raw)
    if not m:
        raise NumberError(f"expected a number, got {text!r}")
    mantissa = float(m.group(0))
    rest = raw[m.end():]
    low = rest.lower()
    scale = ""
    factor = 1.0
    if low.startswith("meg"):
        scale, factor = rest[:3], 1e6
    elif low.startswith("mil"):
        scale, factor = rest[:3], 25.4e-6
    elif rest[:1] == MICRO_SIGN:
        scale, factor = rest[:1], 1e-6
    elif low[:1] in _SCALE:
        scale, factor = rest[:1], _SCALE[low[:1]]
    ignored = rest[len(scale):]
    if not math.isfinite(mantissa * factor):
        raise NumberError(f"{text!r} is too large to be a number (it overflows to infinity)")
    pitfalls: list[tuple[str, str]] = []
    if scale and ignored[:1].isdigit():
        # "4k7" is 4000 to ngspice; the designer almost certainly meant 4.7k.
        pitfalls.append(("digits-after-scale",
            f"'{raw}' is read by ngspice as {mantissa * factor:g}: digits after the "
            f"scale factor '{scale}' are ignored (write {m.group(0)}.{_leading_digits(ignored)}{scale} "
            f"if that was meant)"))
    if scale.lower() == "f" and not ignored:
        pitfalls.append(("femto-suffix",
            f"'{raw}' is read by ngspice as {mantissa * factor:g}: a bare 'F' is the "
            f"femto scale factor, not farads"))
    elif scale.lower() == "f" and "e" in m.group(0).lower():
        pitfalls.append(("femto-suffix",
            f"'{raw}' is read by ngspice as {mantissa * factor:g}: 'F' after an exponent "
            f"is the femto scale factor, not farads"))
    if GREEK_MU in rest[:1]:
        pitfalls.append(("greek-mu",
            f"'{raw}' is read by ngspice as {mantissa:g}: the Greek letter mu (U+03BC) "
            f"is not a scale factor to ngspice; use 'u' or the micro sign U+00B5"))
    return SpiceNumber(mantissa * factor, raw, scale, ignored, tuple(pitfalls))


def _leading_digits(s: str) -> str:
    out = []
    for ch in s:
        if not ch.isdigit():
            break
        out.append(ch)
    return "".join(out)


_PREFIXES = [
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "\u00b5"),
    (1e-9, "n"),
    (1e-12, "p"),
    (1e-15, "f"),
]


def format_number(value: float, unit: str = "", digits: int = 3) -> str:
    """Return ``value`` in engineering notation for people, e.g. ``4.7 µF``, ``16 V``, ``1.23 A``."""
    if value is None:
        return "—"
    if isinstance(value, float) and (math.isnan(value) or math.isinf(value)):
        return f"{value} {unit}".strip()
    if value == 0:
        return f"0 {unit}".strip()
    mag = abs(value)
    for factor, prefix in _PREFIXES:
        if mag >= factor * 0.9995:
            scaled = value / factor
            break
    else:
        factor, prefix = _PREFIXES[-1]
        scaled = value / factor
    text = f"{scaled:.{digits}g}"
    if "e" in text and abs(scaled) < 1000:  # 100 with 2 digits: keep "100", not "1e+02"
        text = f"{scaled:.0f}"
    elif "e" in text:  # beyond the prefix table
        text = f"{value:.{digits}g}"
        prefix = ""
    sep = " " if (unit or prefix) else ""
    return f"{text}{sep}{prefix}{unit}"
