"""derate's shipped library of typical part data (typical.yaml), labelled typical wherever it is used.

``fill(part)`` returns the part with the fields it lacks filled from typical data, and the names of
the fields filled (``Part.typical``).  Nothing is filled that the record gives; the policy decides
whether a check may rest on typical data (``typical_data``: accepted or refused).
"""

from __future__ import annotations

import math
from dataclasses import replace
from functools import lru_cache
from importlib import resources

import yaml

from ..parts import Part


@lru_cache(maxsize=1)
def library() -> dict:
    """The typical-data file shipped in the package (trusted: it is part of derate, not of a project)."""
    text = resources.files(__package__).joinpath("typical.yaml").read_text(encoding="utf-8")
    return yaml.safe_load(text)


def sources() -> dict[str, str]:
    """{table: its source} for reports and tests."""
    return {k: v["source"] for k, v in library().items()}


def _loglog(table: list, x: float) -> float:
    pts = [(math.log(a), math.log(b)) for a, b in table]
    lx = math.log(x)
    if lx <= pts[0][0]:
        return math.exp(pts[0][1])
    if lx >= pts[-1][0]:
        return math.exp(pts[-1][1])
    for (x0, y0), (x1, y1) in zip(pts, pts[1:]):
        if x0 <= lx <= x1:
            return math.exp(y0 + (y1 - y0) * (lx - x0) / (x1 - x0))
    return math.exp(pts[-1][1])  # pragma: no cover


def fill(part: Part) -> Part:
    """The part with typical values for the fields it lacks (listed in ``Part.typical``)."""
    lib = library()
    tech = part.technology
    got: dict = {}
    if part.rated_temperature_c is None:
        temp = None
        if part.dielectric and tech in ("ceramic-class1", "ceramic-class2"):
            temp = lib["rated_temperature_by_dielectric"]["value"].get(part.dielectric.upper())
        elif tech == "aluminum-electrolytic":
            temp = lib["electrolytic"]["value"]["rated_temperature_c"]
        elif tech == "aluminum-polymer":
            temp = lib["polymer_aluminum"]["value"]["rated_temperature_c"]
        elif tech in lib["tantalum"]["value"]:
            temp = lib["tantalum"]["value"][tech]
        elif tech in lib["film"]["value"]:
            temp = lib["film"]["value"][tech]
        if temp is not None:
            got["rated_temperature_c"] = float(temp)
    if tech == "ceramic-class2" and part.dc_bias is None and part.rated_voltage_v and part.case_size:
        curve = lib["dc_bias_by_case"]["value"].get(part.case_size)
        if curve:
            got["dc_bias"] = tuple((f * part.rated_voltage_v, c) for f, c in curve)
    if tech in ("ceramic-class1", "ceramic-class2"):
        if part.thermal_resistance_c_per_w is None and part.ripple_rise_c is None and part.case_size:
            rth = lib["mlcc_thermal_resistance_c_per_w"]["value"].get(part.case_size)
            if rth is not None:
                got["thermal_resistance_c_per_w"] = float(rth)
        if part.esr_ohm is None and part.esr_table is None and part.capacitance_f:
            got["esr_ohm"] = round(_loglog(lib["mlcc_esr_by_capacitance"]["value"], part.capacitance_f), 6)
    if tech in ("aluminum-electrolytic", "aluminum-polymer"):
        base = lib["electrolytic" if tech == "aluminum-electrolytic" else "polymer_aluminum"]["value"]
        if part.base_life_h is None:
            got["base_life_h"] = float(base["base_life_h"])
            if part.life_temperature_c is None and part.rated_temperature_c is None:
                got.setdefault("rated_temperature_c", float(base["rated_temperature_c"]))
        if "ripple_rise_c" in base and part.ripple_rise_c is None and part.thermal_resistance_c_per_w is None:
            got["ripple_rise_c"] = float(base["ripple_rise_c"])
    if not got:
        return part
    return replace(part, typical=tuple(sorted(set(part.typical) | set(got))), **got)


def without_typical(part: Part) -> Part:
    """The part as its own data gives it (typical fields removed), for policies that refuse typical data."""
    if not part.typical:
        return part
    return replace(part, typical=(), **{name: None for name in part.typical})

