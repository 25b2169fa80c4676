"""Part data from a KiCad schematic (KiCad 6 and later, ``.kicad_sch``): each capacitor's fields.

The file is parsed with kiutils (a maintained KiCad file library), never by hand.  A capacitor
symbol's fields are read like a BOM row (``bom.py``): Reference, Value (``10u 25V X7R``),
Footprint (``Capacitor_SMD:C_0805_2012Metric`` gives the 0805 case), and fields such as Voltage,
Dielectric, Tolerance, MPN, Manufacturer.  Symbols marked "do not populate" or left out of the BOM
are not reviewed.  Hierarchical sheets are followed (inside the project root; each file read once,
20 levels, 500 files and 200 MB at most), and a sheet used several times gives each use's
capacitors their own references.
The schematic is untrusted input like every project file: a file that cannot be read is an input
error naming it.
"""

from __future__ import annotations

import re
from pathlib import Path

from .bom import _row, detect_columns, is_capacitor_reference
from .datafile import read_limited
from .errors import DataError
from .trust import Confinement

MAX_SHEET_DEPTH = 20
MAX_SCHEMATIC_BYTES = 50 * 1024 * 1024


# The terms of an s-expression as kiutils reads them (kiutils.utils.sexpr), with the quoted string
# unrolled: kiutils' `"(?:[^"]|(?<=\\)")*"` keeps a backtracking entry per character (about 230 bytes
# of memory per byte of a long string); `[^"]*` runs are matched without one.
_TERM = re.compile(r"""(?mx)
    \s*(?:
        (?P<brackl>\()|
        (?P<brackr>\))|
        (?P<num>[+-]?\d+\.\d+(?=[\ \)])|\-?\d+(?=[\ \)]))|
        (?P<sq>"[^"]*(?:(?<=\\)"[^"]*)*"(?:(?=\))|(?=\s)))|
        (?P<s>[^(^)\s]+)
       )""")


def parse_sexp(text: str):
    """The nested lists kiutils' parser gives for ``text``, in memory proportional to the terms."""
    stack: list[list] = []
    out: list = []
    for m in _TERM.finditer(text):
        kind = m.lastgroup
        value = m.group(kind)
        if kind == "brackl":
            stack.append(out)
            out = []
        elif kind == "brackr":
            if not stack:
                raise ValueError("unbalanced ')'")
            done, out = out, stack.pop()
            out.append(done)
        elif kind == "num":
            v = float(value)
            out.append(int(v) if v.is_integer() else v)
        elif kind == "sq":
            out.append(value[1:-1].replace('\\"', '"'))
        else:
            out.append(value)
    if stack or not out:
        raise ValueError("unbalanced '(': the file ends inside an expression")
    return out[0]


def _parse(path: Path):
    from kiutils.schematic import Schematic

    raw = read_limited(path, MAX_SCHEMATIC_BYTES)
    try:
        text = raw.decode("utf-8-sig")
        if not text.lstrip().startswith("(kicad_sch"):
            raise ValueError("not a KiCad 6+ schematic (it does not start with '(kicad_sch')")
        return Schematic.from_sexpr(parse_sexp(text))
    except (UnicodeDecodeError, ValueError, AssertionError, AttributeError, IndexError, KeyError, TypeError,
            RecursionError) as exc:
        raise DataError(f"cannot read the schematic: {str(exc)[:160] or type(exc).__name__}", str(path)) from None
    except Exception as exc:  # kiutils raises bare Exceptions for malformed files
        raise DataError(f"cannot read the schematic: {str(exc)[:160] or type(exc).__name__}", str(path)) from None


MAX_SHEET_FILES = 500  # distinct sheet files one schematic may bring in
MAX_HIERARCHY_BYTES = 200 * 1024 * 1024  # their total size


def _sheet_file(sheet) -> str | None:
    """The file a hierarchical sheet shows (kiutils keeps it apart from the sheet's other fields)."""
    named = getattr(sheet, "fileName", None)
    value = getattr(named, "value", None)
    if value:
        return str(value)
    return next((str(p.value) for p in sheet.properties if p.key in ("Sheetfile", "Sheet file")), None)


def _references(sym, props: dict) -> list[str]:
    """Every reference one symbol has on the board: one per instance of a sheet used several times
    (KiCad 7+ keeps them with the symbol), else its Reference field."""
    refs = [path.reference for inst in (getattr(sym, "instances", None) or [])
            for path in (getattr(inst, "paths", None) or []) if getattr(path, "reference", None)]
    return list(dict.fromkeys(refs)) or [props.get("Reference", "").strip()]


def read_symbols(path: Path, confinement: Confinement):
    """Yield (reference, {field: value}, dnp, where) for every capacitor symbol of a schematic and of the
    sheets below it.  Each sheet file is read once however often it is used (its symbols carry a
    reference per use), the nesting at most 20 deep, 500 files and 200 MB in all: a budget a
    repository cannot make the walk exceed."""
    seen: set[Path] = set()
    queue: list[tuple[Path, int]] = [(path, 0)]
    total = 0
    while queue:
        here, depth = queue.pop(0)
        resolved = here.resolve()
        if resolved in seen:
            continue
        if depth > MAX_SHEET_DEPTH:
            raise DataError(f"sheets nest more than {MAX_SHEET_DEPTH} levels deep", str(here))
        seen.add(resolved)
        if len(seen) > MAX_SHEET_FILES:
            raise DataError(f"the hierarchy brings in more than {MAX_SHEET_FILES} sheet files", str(path))
        try:
            total += here.stat().st_size
        except OSError:
            pass
        if total > MAX_HIERARCHY_BYTES:
            raise DataError(f"the hierarchy's sheet files pass {MAX_HIERARCHY_BYTES // (1024 * 1024)} MB in all",
                            str(path))
        sch = _parse(here)
        for sym in sch.schematicSymbols:
            props = {p.key: str(p.value) for p in sym.properties}
            dnp = bool(getattr(sym, "dnp", False)) or getattr(sym, "inBom", True) is False
            for ref in _references(sym, props):
                ref = ref.strip()
                if not ref or ref.endswith("?") or not is_capacitor_reference(ref):
                    continue  # unannotated, or not a capacitor
                yield ref, {**props, "Reference": ref}, dnp, f"{here}:{ref}"
        for sheet in sch.sheets:
            name = _sheet_file(sheet)
            if name:
                child = confinement.read(here.parent / name, str(here), "sheet file")
                queue.append((child, depth + 1))


def load_schematic(path: Path, table, confinement: Confinement) -> list[str]:
    """Add a schematic's capacitor fields to a PartTable (soft entries, like a BOM); return notes."""
    from .parts import _resolve

    notes = []
    count = 0
    for ref, props, dnp, where in read_symbols(path, confinement):
        if dnp:
            table.dnp.add(ref.lower())
            continue
        cols = detect_columns(list(props))
        cols["reference"] = "Reference"
        row = _row([ref], props, cols, where)
        raw = {k: v for k, v in row.record.items() if k != "value"}
        if not raw:
            continue
        try:
            part = _resolve(raw, {}, None, [], where)
        except DataError as exc:
            raise DataError(exc.message, where, exc.key) from None
        if ref.lower() in table.exact:
            notes.append(f"{where}: {ref} already has part data from {table.exact[ref.lower()][1]}; the schematic's "
                         "fields are not used for it")
            continue
        table.add(ref, part, where, soft=True)
        count += 1
        if row.unread:
            notes.append(f"{where}: could not read {', '.join(repr(u) for u in row.unread[:5])} in its value")
    table.files.append(str(path))
    if count == 0:
        notes.append(f"{path}: no capacitor symbol with part data found")
    return notes
