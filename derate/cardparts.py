"""Part data written on the capacitor cards themselves.

A schematic tool with a capacitor database writes the chosen part's ratings onto the netlist card,
for example ``C1 out 0 100µ V=35 Irms=1.2 Rser=0.05 Lser=0 mfg="..." pn="..." type="Al electrolytic"``.
These attributes mean nothing to ngspice (the deck leaves them out) but they are part data: the
rated voltage, the rated ripple current, the maker, the part number and the technology (or the
ceramic dielectric).  They are read like a BOM row, as the lowest layer: a BOM or schematic record
for the same capacitor replaces them, and a parts file refines whatever is there.

A rating of 0 (written for "not given", as in ``Irms=0``) is no data.  ``Rser``/``Lser`` on the card
are simulated (netlist/flatten.py) and serve as the ESR for self-heating.
"""

from __future__ import annotations

from .errors import DataError
from .units import NumberError, parse_number

# card attribute -> the column header the BOM reader knows it by
CARD_ATTRIBUTES = {"v": "Voltage", "mfg": "Manufacturer", "pn": "MPN", "type": "Type"}
RIPPLE_ATTRIBUTE = "irms"
# attributes a schematic tool's capacitor, inductor and resistor databases write on cards, which
# ngspice does not know (it would refuse the card); the deck leaves them out
# (MTBF= and ppPkg= are the database's reliability and parts-per-package columns)
_DATABASE_COMMON = frozenset({"mfg", "pn", "type", "mtbf", "pppkg"})
DATABASE_ATTRIBUTES = {"c": _DATABASE_COMMON | {"v", "irms"},
                       "l": _DATABASE_COMMON | {"ipk"},
                       "r": _DATABASE_COMMON | {"tol", "pwr"}}


def _text(value: str) -> str:
    return value.strip().strip('"').strip("'").strip()


def card_attributes(element) -> dict[str, str]:
    """The database attributes on an element's card ({lower-case key: text}), others left out."""
    keys = DATABASE_ATTRIBUTES.get(element.kind, frozenset())
    return {k.lower(): _text(v) for k, v in element.params if k.lower() in keys and _text(v)}


def load_card_attributes(circuit, table) -> list[str]:
    """Add the part data written on capacitor cards to a PartTable (soft, under BOM and schematic
    records); return notes."""
    from .bom import _row, detect_columns
    from .notation import read_value
    from .parts import _resolve, designator_aliases

    notes: list[str] = []
    count = 0
    ripple = False
    for cap in circuit.capacitors():
        attrs = card_attributes(cap)
        if not attrs or any(n in table.soft for n in designator_aliases(cap.path)):
            continue
        where = str(cap.loc)
        props = {CARD_ATTRIBUTES[k]: v for k, v in attrs.items() if k in CARD_ATTRIBUTES}
        if props.get("Voltage") is not None:
            try:
                if parse_number(props["Voltage"]).value == 0:
                    del props["Voltage"]
            except NumberError:
                pass  # read (and refused, naming the card) with the other fields below
        cols = detect_columns(list(props))
        row = _row([cap.path], props, cols, where)
        raw = dict(row.record)
        if "Type" in props:
            tv = read_value(props["Type"])
            if tv.dielectric and "dielectric" not in raw:
                raw["dielectric"] = tv.dielectric
        if RIPPLE_ATTRIBUTE in attrs:
            try:
                irms = parse_number(attrs[RIPPLE_ATTRIBUTE]).value
            except NumberError:
                raise DataError(f"cannot read Irms={attrs[RIPPLE_ATTRIBUTE]!r} on {cap.path}'s card as a current",
                                where, "Irms") from None
            if irms > 0:
                raw["ripple_current_a"] = irms
        if row.unread:
            notes.append(f"{where}: could not read {', '.join(repr(u) for u in row.unread[:5])} on {cap.path}'s card")
        if not raw:
            continue
        try:
            part = _resolve(raw, {}, None, [], where)
        except DataError as exc:
            raise DataError(f"{cap.path}'s card: {exc.message}", where, exc.key) from None
        table.add(cap.path, part, where, soft=True)
        count += 1
        ripple |= "ripple_current_a" in raw
    if count:
        notes.append(f"part data for {count} capacitor(s) read from their netlist cards (V, Irms, mfg, pn, type); "
                     "a BOM, schematic or parts file overrides it")
        if ripple:
            notes.append("Irms on a card is taken as the rated ripple current; the card does not say at what "
                         "frequency and temperature, so it applies as written unless parts.yaml gives "
                         "ripple_frequency_hz with frequency multipliers")
    return notes
