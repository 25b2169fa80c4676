"""Part data from a KiCad schematic (KiCad 6 and later, ``.kicad_sch``): each capacitor's fields.

The file is parsed with kiutils (a maintained KiCad file library), never by hand.  A capacitor
symbol's fields are read like a BOM row (``bom.py``): Reference, Value (``10u 25V X7R``),
Footprint (``Capacitor_SMD:C_0805_2012Metric`` gives the 0805 case), and fields such as Voltage,
Dielectric, Tolerance, MPN, Manufacturer.  Symbols marked "do not populate" or left out of the BOM
are not reviewed.  Hierarchical sheets are followed (inside the project root, 20 levels at most).
The schematic is untrusted input like every project file: a file that cannot be read is an input
error naming it.
"""

from __future__ import annotations

from pathlib import Path

from .bom import _row, detect_columns, is_capacitor_reference
from .datafile import read_limited
from .errors import DataError
from .trust import Confinement

MAX_SHEET_DEPTH = 20
MAX_SCHEMATIC_BYTES = 50 * 1024 * 1024


def _parse(path: Path):
    from kiutils.schematic import Schematic
    from kiutils.utils.sexpr import parse_sexp

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


def read_symbols(path: Path, confinement: Confinement, _depth: int = 0, _seen: frozenset = frozenset()):
    """Yield (reference, {field: value}, dnp, where) for every capacitor symbol, sub-sheets included."""
    resolved = path.resolve()
    if resolved in _seen:
        return
    if _depth > MAX_SHEET_DEPTH:
        raise DataError(f"sheets nest more than {MAX_SHEET_DEPTH} levels deep", str(path))
    sch = _parse(path)
    for sym in sch.schematicSymbols:
        props = {p.key: str(p.value) for p in sym.properties}
        ref = props.get("Reference", "").strip()
        if not ref or ref.endswith("?") or not is_capacitor_reference(ref):
            continue  # unannotated, or not a capacitor
        dnp = bool(getattr(sym, "dnp", False)) or getattr(sym, "inBom", True) is False
        yield ref, props, dnp, f"{path}:{ref}"
    for sheet in sch.sheets:
        name = next((p.value for p in sheet.properties if p.key in ("Sheetfile", "Sheet file")), None)
        if name:
            child = confinement.read(path.parent / str(name), str(path), "sheet file")
            yield from read_symbols(child, confinement, _depth + 1, _seen | {resolved})


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
