"""BOM import that works on real exports with no column map.

Columns are recognised by their usual header names (any case, any punctuation): Reference / Ref /
Designator, Value / Comment, Voltage / Rated voltage, Dielectric / Temperature characteristic,
Tolerance, Package / Footprint / Case, Manufacturer part number / MPN, Manufacturer, Type /
Technology, Description, and a do-not-populate column (DNP, Fitted, Populate ...).  The delimiter
(comma, semicolon, tab) and encoding (UTF-8 with or without byte-order mark, Windows-1252/Latin-1)
are detected.  References may be grouped (``C1, C3-C5``, ``C1 C2``).  Values are read by the
trade's conventions (``notation.py``): ``10u/25V/X7R``, ``4u7``, ``6V3``, ``100n 50V C0G 0603``,
``470uF 35V 105C``; a dedicated column wins over what a value text says.

Rows for other parts (R1, U3 ...) are skipped; a capacitor row whose reference is not in the
netlist is a note, not an error (BOMs list variants); a do-not-populate capacitor is not reviewed.
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Iterable, Mapping

from .errors import DataError
from .notation import read_value, technology

# derate's column -> header names seen in real exports (compared without case, spaces or punctuation)
HEADERS = {
    "reference": ("reference", "references", "ref", "refs", "refdes", "designator", "designators", "partreference",
                  "referencedesignator", "referencedesignators", "refdesignator", "position", "pos"),
    "value": ("value", "val", "capacitance", "comment"),
    "rated_voltage_v": ("voltage", "ratedvoltage", "voltagerating", "ratedvoltagev", "vrated", "workingvoltage",
                        "voltagedc", "vdc", "v"),
    "rated_voltage_ac_v": ("voltageac", "vac", "ratedvoltageac", "acvoltage", "acrating", "ratedacvoltage"),
    "safety_class": ("safetyclass", "class", "subclass", "safety", "xyclass"),
    "dielectric": ("dielectric", "temperaturecharacteristic", "tempco", "tc", "temperaturecoefficient",
                   "dielectricmaterial", "material"),
    "tolerance_pct": ("tolerance", "tol"),
    "case_size": ("package", "footprint", "case", "casesize", "size", "casepackage", "packagecase"),
    "part_number": ("mpn", "manufacturerpartnumber", "mfrpartnumber", "mfrpn", "mfrno", "partnumber", "manufacturerpn",
                    "mfgpartnumber", "mfgpn", "manfpartnumber"),
    "manufacturer": ("manufacturer", "mfr", "mfg", "maker", "vendor", "manufacturername"),
    "technology": ("type", "technology", "captype", "kind", "family"),
    "description": ("description", "desc", "details"),
    "rated_temperature_c": ("temperature", "maxtemperature", "ratedtemperature", "operatingtemperaturemax", "tmax"),
    "dnp": ("dnp", "dnf", "donotpopulate", "donotplace", "donotfit", "nopopulate", "notfitted", "nofit"),
    "fitted": ("populate", "fitted", "mount", "assembled", "place", "fit", "stuff", "populated"),
}
_DNP_WORDS = {"dnp", "dnf", "nf", "nofit", "nopop", "notfitted", "do not populate", "do not place", "dni"}
_YES = {"x", "yes", "y", "1", "true", "dnp", "dnf"}
_NO = {"no", "n", "0", "false", "dnp", "dnf"}
_REF_SPLIT = re.compile(r"[\s,;]+")
_CAP_REF = re.compile(r"^(c|cp|ce|ct|cx|cy)\d", re.I)
_FOOTPRINT_CASE = re.compile(r"(?<!\d)(01005|0201|0402|0603|0805|1206|1210|1808|1812|2220|2225)(?!\d)")


def _key(header: str) -> str:
    return re.sub(r"[^a-z0-9]", "", header.lower())


def detect_columns(headers: list[str]) -> dict[str, str]:
    """{derate column: header} for the headers that are recognised."""
    out: dict[str, str] = {}
    for header in headers:
        k = _key(header)
        for col, names in HEADERS.items():
            if k in names and col not in out:
                out[col] = header
                break
    return out


@dataclass
class BomRow:
    """One BOM row read: its references, the part fields it gives, and where it is."""

    references: list[str]
    record: dict
    where: str
    dnp: bool = False
    unread: list[str] = field(default_factory=list)


def read_rows(path: Path, columns: Mapping[str, str] | None = None) -> tuple[list[BomRow], dict[str, str]]:
    """Read a BOM export into rows (only those with references); the columns used are returned too."""
    from .parts import read_text_guessing, sniff_delimiter

    text = read_text_guessing(path)
    reader = csv.DictReader(io.StringIO(text, newline=""), delimiter=sniff_delimiter(text), strict=True)
    try:
        headers = [h for h in (reader.fieldnames or []) if h is not None]
        found = detect_columns(headers)
        if columns:
            for key, col in columns.items():
                if col not in headers:
                    raise DataError(f"column '{col}' (for {key}) not in the BOM header: {', '.join(headers)}",
                                    f"{path}:1")
            found.update({("value" if k == "capacitance_f" else k): v for k, v in columns.items()})
        if "reference" not in found:
            raise DataError("no reference column: expected a header such as Reference, Ref or Designator (found: "
                            f"{', '.join(headers) or 'none'}); or give bom.columns.reference", f"{path}:1")
        rows = list(enumerate(reader, start=2))
    except csv.Error as exc:
        raise DataError(f"cannot read the BOM as CSV: {exc}", f"{path}:{reader.line_num}") from None
    out = []
    for line, row in rows:
        refs = [r for r in _REF_SPLIT.split((row.get(found["reference"]) or "").strip()) if r]
        if not refs:
            continue
        out.append(_row(refs, row, found, f"{path}:{line}"))
    return out, found


_READ_ABOVE = frozenset({"value", "description", "rated_voltage_v", "rated_voltage_ac_v", "tolerance_pct",
                         "rated_temperature_c", "dielectric", "case_size", "technology", "part_number", "manufacturer",
                         "safety_class"})


def _row(refs: list[str], row: Mapping[str, str], cols: Mapping[str, str], where: str) -> BomRow:
    def cell(col: str) -> str:
        return (row.get(cols[col]) or "").strip() if col in cols else ""
    record: dict = {}
    unread: list[str] = []
    texts = [cell("value"), cell("description")]
    dnp = any(t.lower() in _DNP_WORDS for t in texts if t)
    # what the value and description texts say, then dedicated columns on top
    for text in reversed(texts):
        if text and text.lower() not in _DNP_WORDS:
            tv = read_value(text)
            record.update(tv.fields())
            if text is texts[0]:
                unread += tv.unread
    for col in ("rated_voltage_v", "rated_voltage_ac_v", "tolerance_pct", "rated_temperature_c"):
        if cell(col):
            record[col] = cell(col).rstrip("%").strip() if col == "tolerance_pct" else cell(col)
    if cell("safety_class"):
        tv = read_value(cell("safety_class"))
        if tv.safety_class:
            record["safety_class"] = tv.safety_class
        if tv.rated_voltage_ac_v and "rated_voltage_ac_v" not in record:
            record["rated_voltage_ac_v"] = tv.rated_voltage_ac_v
    if cell("dielectric"):
        tv = read_value(cell("dielectric"))
        record["dielectric"] = tv.dielectric or cell("dielectric").upper()
        if tv.technology:
            record["technology"] = tv.technology
    if cell("case_size"):
        fp = cell("case_size")
        m = _FOOTPRINT_CASE.search(fp)
        record["case_size"] = m.group(1) if m else (read_value(fp).case_size or fp)
    if cell("technology"):
        tech, _ = technology(cell("technology"))
        tech = tech or read_value(cell("technology")).technology
        if tech:
            record["technology"] = tech
        else:
            unread.append(cell("technology"))
    for col in ("part_number", "manufacturer"):
        if cell(col):
            record[col] = cell(col)
    if cell("description") and "description" not in record:
        record["description"] = cell("description")
    from .parts import _PART_FIELDS
    for col in cols:  # any other part field the caller's column map names (those read above are done:
        # an unreadable Type stays a note, never the record's technology)
        if col in _PART_FIELDS and col not in _READ_ABOVE and col not in record and cell(col):
            record[col] = cell(col)
    if "part" in cols and cell("part"):
        record["part"] = cell("part")
    if "dnp" in cols and cell("dnp").lower() in _YES:
        dnp = True
    if "fitted" in cols and cell("fitted").lower() in _NO:
        dnp = True
    return BomRow(refs, record, where, dnp, unread)


def is_capacitor_reference(ref: str) -> bool:
    return bool(_CAP_REF.match(ref))


def load_bom(path: Path, table, columns: Mapping[str, str] | None = None, libraries: Iterable[Path] = ()) -> list[str]:
    """Add a BOM's capacitors to a PartTable (soft entries: unknown references are notes); return notes."""
    from .parts import _libraries, _resolve

    library = _libraries(libraries)
    rows, _ = read_rows(path, columns)
    notes = []
    for row in rows:
        refs = [r for r in row.references if is_capacitor_reference(r) or (columns and "reference" in columns)]
        if not refs:
            continue
        if row.dnp:
            table.dnp.update(r.lower() for r in refs)
            continue
        raw = {k: v for k, v in row.record.items() if k != "value"}
        if "part" not in raw and str(raw.get("part_number", "")).lower() in library:
            raw["part"] = raw["part_number"]  # an MPN the part library knows: its record, with the row on top
        try:
            part = _resolve(raw, library, None, [], row.where)
        except DataError as exc:
            raise DataError(exc.message, row.where, exc.key) from None
        for ref in refs:
            table.add(ref, part, row.where, soft=True)
        if row.unread:
            notes.append(f"{row.where}: could not read {', '.join(repr(u) for u in row.unread[:5])} "
                         f"in the value of {', '.join(refs[:3])}")
    table.files.append(str(path))
    return notes
