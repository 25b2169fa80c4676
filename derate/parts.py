"""Part ratings: YAML parts files, shared part libraries and BOM CSV import, assigned to capacitors.

A parts file maps capacitor references to part records::

    library: [../lib/capacitors.yaml]      # optional: part number -> record
    parts:
      C2: {part: ALU-470U-50V-105C}        # a library part
      "C5,C6": {part: MLCC-10U-50V-X7R}    # a list (ranges like C4-C7 work too)
      "X*.C5": {technology: ceramic-class1, capacitance_f: 1n, rated_voltage_v: 50}   # a glob, inline record
      C3: {part: ALU-470U-35V-105C, esr_ohm: 0.2}                                   # library part + overrides

An exact reference wins over a list or a glob; two exact assignments of one capacitor are an error.
"""

from __future__ import annotations

import fnmatch
import math
import re
from dataclasses import dataclass, field, fields, replace
from pathlib import Path
from typing import Any, Iterable, Mapping

from .datafile import Document, load_document, validate
from .errors import DataError
from .netlist.flatten import Circuit
from .notation import SAFETY_CLASSES, ac_voltage, nearest, number_with_unit, technology
from .trust import Confinement

TECHNOLOGIES = ("aluminum-electrolytic", "aluminum-polymer", "tantalum-mno2", "tantalum-polymer", "tantalum-wet",
                "ceramic-class1", "ceramic-class2", "film-polypropylene", "film-polyester", "mica-glass", "other")
POLARIZED_BY_DEFAULT = frozenset({"aluminum-electrolytic", "aluminum-polymer", "tantalum-mno2", "tantalum-polymer",
                                  "tantalum-wet"})

Table = tuple[tuple[float, float], ...]


@dataclass(frozen=True)
class Part:
    """Ratings of one capacitor part (SI units; temperatures in degrees C)."""

    technology: str | None = None
    part_number: str | None = None
    manufacturer: str | None = None
    description: str | None = None
    dielectric: str | None = None  # X7R, X5R, C0G ... (class-2 DC-bias data depends on it)
    case_size: str | None = None  # 0603, 1206, D8x11.5 ...
    polarized: bool | None = None
    capacitance_f: float | None = None
    tolerance_pct: float | None = None
    rated_voltage_v: float | None = None  # DC
    rated_voltage_ac_v: float | None = None  # AC (RMS, line frequency): mains capacitors
    safety_class: str | None = None  # X1, X2, Y1, Y2 ... (IEC 60384-14)
    surge_voltage_v: float | None = None
    reverse_voltage_v: float | None = None
    rated_temperature_c: float | None = None
    category_voltage: Table | None = None
    ripple_current_a: float | None = None
    ripple_frequency_hz: float | None = None
    ripple_temperature_c: float | None = None
    ripple_frequency_multipliers: Table | None = None
    ripple_temperature_multipliers: Table | None = None
    esr_ohm: float | None = None
    esr_frequency_hz: float | None = None
    esr_table: Table | None = None
    esl_h: float | None = None
    thermal_resistance_c_per_w: float | None = None
    ripple_rise_c: float | None = None
    base_life_h: float | None = None
    life_temperature_c: float | None = None
    dc_bias: Table | None = None
    source: str = ""  # file:line of the record, for findings about the data
    typical: tuple[str, ...] = ()  # fields filled from derate's typical-parts library (labelled in reports)

    @property
    def is_polarized(self) -> bool:
        if self.polarized is not None:
            return self.polarized
        return self.technology in POLARIZED_BY_DEFAULT

    def missing(self, names: Iterable[str]) -> list[str]:
        """Return the names among ``names`` that this part has no value for."""
        return [n for n in names if getattr(self, n) is None]


_PART_FIELDS = {f.name for f in fields(Part)} - {"source", "typical"}

# plausible ranges (low, high, low excluded?) for every number: a NaN, a negative rating or a
# x100 slip is an input error, never a tiny stress ratio that passes the gate
_T = (-273.15, 500.0, True)
BOUNDS: dict[str, tuple[float, float, bool]] = {
    "capacitance_f": (0.0, 100.0, True), "tolerance_pct": (0.0, 100.0, False),
    "rated_voltage_v": (0.0, 100e3, True), "rated_voltage_ac_v": (0.0, 100e3, True),
    "surge_voltage_v": (0.0, 100e3, True),
    "reverse_voltage_v": (0.0, 100e3, True), "rated_temperature_c": _T, "ripple_temperature_c": _T,
    "life_temperature_c": _T, "ripple_current_a": (0.0, 10e3, True), "ripple_frequency_hz": (0.0, 1e12, True),
    "esr_ohm": (0.0, 1e6, True), "esr_frequency_hz": (0.0, 1e12, True), "esl_h": (0.0, 1.0, True),
    "thermal_resistance_c_per_w": (0.0, 1e5, True), "ripple_rise_c": (0.0, 500.0, True),
    "base_life_h": (0.0, 1e8, True),
}
# (x range, y range) of the tables
TABLE_BOUNDS: dict[str, tuple[tuple[float, float, bool], tuple[float, float, bool]]] = {
    "category_voltage": (_T, (0.0, 1.0, True)),
    "ripple_frequency_multipliers": ((0.0, 1e12, True), (0.0, 100.0, True)),
    "ripple_temperature_multipliers": (_T, (0.0, 100.0, True)),
    "esr_table": ((0.0, 1e12, True), (0.0, 1e6, True)),
    "dc_bias": ((0.0, 100e3, False), (0.0, 1.5, True)),
}


def _in_range(x: float, bounds: tuple[float, float, bool]) -> bool:
    low, high, open_low = bounds
    return (x > low if open_low else x >= low) and x <= high


def _range_text(bounds: tuple[float, float, bool]) -> str:
    low, high, open_low = bounds
    return f"{'above' if open_low else 'at least'} {low:g} and at most {high:g}"
_TABLES = {"category_voltage", "ripple_frequency_multipliers", "ripple_temperature_multipliers", "esr_table", "dc_bias"}
_TEXT = {"technology", "part_number", "manufacturer", "description", "dielectric", "case_size"}
_UNITS = {"capacitance_f": "F", "rated_voltage_v": "V", "rated_voltage_ac_v": "V", "surge_voltage_v": "V",
          "reverse_voltage_v": "V"}
_PLAIN_NUMBERS = {"tolerance_pct", "rated_temperature_c", "ripple_temperature_c", "life_temperature_c"}


def _num(value: Any, doc: Document | None, path: list, bounds: tuple[float, float, bool] | None = None,
         unit: str = "") -> float:
    if isinstance(value, bool):
        raise _err(doc, f"expected a number, got {value!r}", path)
    if isinstance(value, (int, float)):
        x = float(value)
    else:
        # lenient as the trade writes: '16 V', '6V3', '4u7', '0.1 µF'
        got = number_with_unit(str(value), unit)
        if got is None:
            hint = " (such as 16, 16V, 6V3)" if unit == "V" else (" (such as 4.7u, 4u7, 100nF)" if unit == "F" else "")
            raise _err(doc, f"expected a number{hint}, got {value!r}", path) from None
        x = got
    if not math.isfinite(x):
        raise _err(doc, f"expected a finite number, got {value!r}", path)
    if bounds is not None and not _in_range(x, bounds):
        raise _err(doc, f"expected a number {_range_text(bounds)}, got {value!r}", path)
    return x


def _err(doc: Document | None, message: str, path: list) -> DataError:
    return doc.error(message, path) if doc else DataError(message, key=".".join(map(str, path)))


def _record(raw: Mapping[str, Any], doc: Document | None, path: list) -> dict[str, Any]:
    """Convert one raw record (YAML or CSV) into Part keyword arguments."""
    out: dict[str, Any] = {}
    for key, value in raw.items():
        if key == "part" or value is None or value == "":
            continue
        here = path + [key]
        if key not in _PART_FIELDS:
            near = nearest(str(key), _PART_FIELDS)
            hint = f"did you mean '{near[0]}'? " if near else ""
            raise _err(doc, f"unknown field; {hint}expected one of: {', '.join(sorted(_PART_FIELDS))}", here)
        if key == "technology":
            tech, suggest = technology(str(value))
            if tech is None:
                hint = f"did you mean {' or '.join(repr(x) for x in suggest)}? " if suggest else ""
                raise _err(doc, f"{hint}expected one of {', '.join(TECHNOLOGIES)}, got {value!r}", here)
            out[key] = tech
        elif key in _TEXT:
            out[key] = str(value)
        elif key == "polarized":
            out[key] = value if isinstance(value, bool) else str(value).strip().lower() in ("1", "true", "yes", "y")
        elif key in _TABLES:
            out[key] = _table(key, value, doc, here)
        elif key == "safety_class":
            cls = str(value).strip().upper()
            if cls not in SAFETY_CLASSES:
                raise _err(doc, f"expected a safety class ({', '.join(SAFETY_CLASSES)}), got {value!r}", here)
            out[key] = cls
        elif key in ("rated_voltage_v", "rated_voltage_ac_v") and isinstance(value, str) and ac_voltage(value):
            # '275VAC' is an AC rating wherever it is written: never read as a DC rating
            out["rated_voltage_ac_v"] = _num(ac_voltage(value), doc, here, BOUNDS["rated_voltage_ac_v"])
        else:
            out[key] = _num(value, doc, here, BOUNDS.get(key), _UNITS.get(key, ""))
    return out


def _table(name: str, value: Any, doc: Document | None, path: list) -> Table:
    if not isinstance(value, list) or not value:
        raise _err(doc, "expected a list of [x, y] pairs", path)
    rows = []
    xb, yb = TABLE_BOUNDS[name]
    for i, pair in enumerate(value):
        if not isinstance(pair, list) or len(pair) != 2:
            raise _err(doc, "expected a pair [x, y]", path + [i])
        rows.append((_num(pair[0], doc, path + [i, 0], xb), _num(pair[1], doc, path + [i, 1], yb)))
    rows.sort()
    xs = [r[0] for r in rows]
    if len(set(xs)) != len(xs):
        raise _err(doc, "two rows for the same x", path)
    if name == "dc_bias":
        if any(not (0 < y <= 1.5) for _, y in rows):
            raise _err(doc, "expected capacitance fractions between 0 and 1.5", path)
        if any(b[1] > a[1] + 1e-12 for a, b in zip(rows, rows[1:])):
            raise _err(doc, "DC-bias capacitance must not rise with voltage (fractions must fall or stay)", path)
    elif name == "category_voltage" and any(b[1] > a[1] + 1e-12 for a, b in zip(rows, rows[1:])):
        raise _err(doc, "the category voltage must not rise with temperature (fractions must fall or stay)", path)
    if name in ("ripple_frequency_multipliers", "esr_table") and any(x <= 0 for x in xs):
        raise _err(doc, "expected positive frequencies", path)
    return tuple(rows)


# ---------------------------------------------------------------- references
_RANGE = re.compile(r"^(?P<prefix>.*?)(?P<a>\d+)-(?P=prefix)?(?P<b>\d+)$")


MAX_RANGE = 10_000  # names in one range (C1-C10000)
MAX_REFERENCES = 200_000  # names all the part data of one project may assign, ranges expanded
MAX_PATTERN = 200  # characters in one glob pattern


def expand_reference(ref: str, limit: int = MAX_REFERENCES) -> tuple[list[str], list[str]]:
    """Split ``"C1,C4-C7,X*.C5"`` into (exact names, glob patterns); all lowercased.

    At most ``limit`` names in all (a range counts every name it stands for), checked before a
    range is expanded, so a short hostile key cannot cost memory."""
    exact: list[str] = []
    globs: list[str] = []
    for item in (x.strip() for x in ref.split(",")):
        if not item:
            continue
        low = item.lower()
        if any(c in low for c in "*?["):
            if len(low) > MAX_PATTERN:
                raise DataError(f"the pattern '{item[:40]}...' is {len(low)} characters long; "
                                f"at most {MAX_PATTERN} are allowed")
            globs.append(low)
            continue
        m = _RANGE.match(low)
        count = 1
        if m and "-" in low:
            a, b = int(m.group("a")), int(m.group("b"))
            if b < a or b - a >= MAX_RANGE:
                raise DataError(f"bad reference range '{item}' (expected first-last, at most {MAX_RANGE:,} names)")
            count = b - a + 1
        if len(exact) + count > limit:
            raise DataError(f"the references expand to more than {MAX_REFERENCES:,} names"
                            + (" with those already read" if limit < MAX_REFERENCES else "")
                            + f"; a board has far fewer capacitors (at '{item[:40]}')")
        if count > 1:
            exact.extend(f"{m.group('prefix')}{n}" for n in range(a, b + 1))
        else:
            exact.append(low)
    return exact, globs


_PREFIXED = re.compile(r"^c_(?=[a-z])", re.I)


def designator_aliases(path: str) -> tuple[str, ...]:
    """The names part data may give a capacitor by, lower case: its netlist name and, for a name
    an exporter prefixed with its element letter (``C_C12``, another simulator's style), the
    designator the BOM and schematic use (``c12``)."""
    low = path.lower()
    return (low, _PREFIXED.sub("", low)) if _PREFIXED.match(low) else (low,)


@dataclass
class PartTable:
    """Part records assigned to capacitor paths, with where each assignment came from."""

    exact: dict[str, tuple[Part, str]] = field(default_factory=dict)
    globs: list[tuple[str, Part, str]] = field(default_factory=list)
    files: list[str] = field(default_factory=list)
    soft: dict[str, tuple[Part, str]] = field(default_factory=dict)  # from a BOM or schematic
    dnp: set[str] = field(default_factory=set)  # do-not-populate references (a BOM says so)
    notes: list[str] = field(default_factory=list)
    expanded: int = 0  # names assigned so far, over every file (bounded by MAX_REFERENCES)

    def add(self, ref: str, part: Part, where: str, soft: bool = False) -> None:
        """Assign a record.  Parts files assign once per capacitor; a BOM or schematic record (soft)
        is the base that a parts file's fields refine, and a soft reference not in the netlist is
        a note, not an error."""
        try:
            exact, globs = expand_reference(ref, MAX_REFERENCES - self.expanded)
        except DataError as exc:
            raise DataError(exc.message, exc.file or where, exc.key) from None
        self.expanded += len(exact) + len(globs)
        for name in exact:
            table = self.soft if soft else self.exact
            if name in table:
                raise DataError(f"capacitor {name.upper()} is assigned twice (also at {table[name][1]})", where)
            table[name] = (part, where)
        for pattern in globs:
            self.globs.append((pattern, part, where))

    def lookup(self, path: str) -> Part | None:
        names = designator_aliases(path)
        hard = next((self.exact[n][0] for n in names if n in self.exact), None) or next(
            (part for pattern, part, _ in self.globs for n in names if fnmatch.fnmatchcase(n, pattern)), None)
        base = next((self.soft[n][0] for n in names if n in self.soft), None)
        if base is None or hard is None:
            return hard or base
        given = {f.name: getattr(hard, f.name) for f in fields(Part)
                 if f.name not in ("source", "typical") and getattr(hard, f.name) is not None}
        return replace(base, source=f"{hard.source} over {base.source}", **given)

    def assign(self, circuit: Circuit, elsewhere: frozenset[str] = frozenset()) -> dict[str, Part | None]:
        """Return {capacitor path: Part or None} for every capacitor; unknown references are errors
        (``elsewhere``: lower-case designators of a board's other decks, known too)."""
        paths = {n for c in circuit.capacitors() for n in designator_aliases(c.path)} | set(elsewhere)
        unknown = sorted(n for n in self.exact if n not in paths)
        missing_soft = sorted(n for n in self.soft if n not in paths)
        if missing_soft:
            self.notes.append(f"the BOM lists {', '.join(m.upper() for m in missing_soft[:8])}"
                              f"{' ...' if len(missing_soft) > 8 else ''}, not in the netlist")
        if unknown:
            where = self.exact[unknown[0]][1]
            raise DataError(f"no capacitor named {', '.join(u.upper() for u in unknown[:5])} in the netlist", where)
        for pattern, _, where in self.globs:
            if not any(fnmatch.fnmatchcase(p, pattern) for p in paths):
                raise DataError(f"pattern '{pattern}' matches no capacitor in the netlist", where)
        return {c.path: self.lookup(c.path) for c in circuit.capacitors()}


# ---------------------------------------------------------------- files
def load_library(path: Path) -> dict[str, Part]:
    """Return {part number (lowercased): Part} from a library file (same schema as a parts file)."""
    doc = load_document(path)
    if not isinstance(doc.data, dict):
        raise DataError("expected a mapping with 'parts'", str(path))
    validate(doc, "parts")
    out: dict[str, Part] = {}
    for number, raw in (doc.data.get("parts") or {}).items():
        where = f"{path}:{doc.line_of(['parts', number]) or ''}".rstrip(":")
        if "part" in raw:
            raise doc.error("a library record cannot refer to another part", ["parts", number, "part"])
        kw = _record(raw, doc, ["parts", number])
        kw.setdefault("part_number", str(number))
        out[str(number).lower()] = Part(source=where, **kw)
    return out


def _libraries(paths: Iterable[Path]) -> dict[str, Part]:
    merged: dict[str, Part] = {}
    for p in paths:
        merged.update(load_library(p))
    return merged


def load_parts(path: Path, table: PartTable | None = None, confinement: Confinement | None = None) -> PartTable:
    """Read a parts file (and the libraries it names, inside ``confinement``) into a PartTable."""
    table = table or PartTable()
    doc = load_document(path)
    if not isinstance(doc.data, dict):
        raise DataError("expected a mapping with 'parts'", str(path))
    validate(doc, "parts")
    lib_refs = doc.data.get("library") or []
    if isinstance(lib_refs, str):
        lib_refs = [lib_refs]
    confinement = confinement or Confinement(path.resolve().parent)
    where = f"{path}:{doc.line_of(['library']) or ''}".rstrip(":")
    library = _libraries(confinement.read(path.parent / p, where, "library") for p in lib_refs)
    for ref, raw in (doc.data.get("parts") or {}).items():
        where = f"{path}:{doc.line_of(['parts', ref]) or ''}".rstrip(":")
        table.add(str(ref), _resolve(raw, library, doc, ["parts", ref], where), where)
    table.files.append(str(path))
    return table


def _resolve(raw: Mapping[str, Any], library: Mapping[str, Part], doc: Document | None, path: list,
             where: str) -> Part:
    kw = _record(raw, doc, path)
    number = raw.get("part")
    if number:
        base = library.get(str(number).lower())
        if base is None:
            known = ", ".join(sorted(p.part_number or k for k, p in library.items())[:8]) or "none loaded"
            raise _err(doc, f"part number '{number}' is not in the library (known: {known})", path + ["part"])
        return replace(base, source=where, **kw)
    return Part(source=where, **kw)


MAX_BOM_BYTES = 20 * 1024 * 1024


def read_text_guessing(path: Path) -> str:
    """Return a text export's contents: UTF-8 (with or without a byte-order mark), else Windows-1252/Latin-1."""
    from .datafile import read_limited

    raw = read_limited(path, MAX_BOM_BYTES)
    if b"\x00" in raw:
        raise DataError("the file holds NUL bytes (UTF-16 or a spreadsheet?); export it as CSV text", str(path))
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        try:
            return raw.decode("cp1252")
        except UnicodeDecodeError:
            return raw.decode("latin-1")


def sniff_delimiter(text: str) -> str:
    """The delimiter of a CSV export: the most frequent of comma, semicolon and tab in its header line."""
    header = next((ln for ln in text.splitlines() if ln.strip()), "")
    counts = {d: header.count(d) for d in (",", ";", "\t")}
    best = max(counts, key=lambda d: counts[d])
    return best if counts[best] else ","


def simulation_parasitics(assigned: Mapping[str, Part | None]) -> dict:
    """Return {capacitor path: project.Parasitics} to simulate for capacitors whose part gives ESR/ESL.

    A single ESR value is used as is; from an ESR table the value at its highest frequency is
    taken (the switching-frequency plateau, where paralleled capacitors compete for ripple).
    """
    from .project import Parasitics

    out = {}
    for path, part in assigned.items():
        if part is None:
            continue
        esr = part.esr_ohm if part.esr_ohm is not None else (part.esr_table[-1][1] if part.esr_table else None)
        if esr is not None or part.esl_h is not None:
            out[path] = Parasitics(esr, part.esl_h)
    return out
