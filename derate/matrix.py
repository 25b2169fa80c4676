"""Corners as a matrix: axes whose levels combine as a product into scenarios.

A level is a part of a scenario (parameters, source values, simulation and ambient temperature, a
description); a combination takes one level of every axis, merged, and is named by its levels'
names joined with '_'.  ``exclude`` leaves combinations out.  A netlist's ``.step`` sweeps become
axes of the same kind (netlist/steps.py), so both give the same scenarios.
"""

from __future__ import annotations

import itertools
import math
import re
from dataclasses import dataclass

from .errors import DataError
from .netlist.values import SourceValue

MAX_MATRIX_SCENARIOS = 1000  # a project file cannot ask for more corners than a review can run


@dataclass(frozen=True)
class Level:
    name: str
    params: tuple[tuple[str, float], ...] = ()
    sources: tuple[tuple[str, SourceValue], ...] = ()
    temperature_c: float | None = None
    ambient_c: float | None = None
    description: str = ""


@dataclass(frozen=True)
class Axis:
    name: str
    levels: tuple[Level, ...]


def level_name(text: str) -> str:
    """A level's name as written (``vin=1e+06``): letters, digits and ``_ . - = +`` kept, anything else
    becomes '-' and is never cut short, so two levels never share a name by accident."""
    return re.sub(r"[^A-Za-z0-9_.=+-]", "-", text)


def value_text(x: float) -> str:
    """A level value as a name shows it: 12 significant digits (``1e-06``, ``1e+06``, ``0.1``)."""
    return f"{x:.12g}"


def _fail(message: str, key_path: list) -> DataError:
    return DataError(message, None, ".".join(str(k) for k in key_path))


def combinations(axes: list[Axis], exclude: list[dict[str, str]] | None = None,
                 fail=_fail) -> list[tuple[str, Level]]:
    """(scenario name, merged level) for every combination not excluded, in axis order.

    Two axes may not set the same parameter, source, or temperature: that is an error naming both.
    ``fail(message, key_path)`` makes the error (a project file's names its file and line).
    """
    total = math.prod(len(a.levels) for a in axes)
    if total > MAX_MATRIX_SCENARIOS:
        raise fail(f"the matrix combines into {total} scenarios (at most {MAX_MATRIX_SCENARIOS}): fewer levels, "
                   "or exclude combinations", ["matrix", "axes"])
    names = {a.name: {lv.name for lv in a.levels} for a in axes}
    for k, entry in enumerate(exclude or []):
        for axis, level in entry.items():
            if axis not in names:
                raise fail(f"no axis '{axis}' (axes: {', '.join(names)})", ["matrix", "exclude", k])
            if level not in names[axis]:
                raise fail(f"axis '{axis}' has no level '{level}' (levels: {', '.join(sorted(names[axis]))})",
                           ["matrix", "exclude", k, axis])
    out = []
    seen: set[str] = set()
    for combo in itertools.product(*(a.levels for a in axes)):
        chosen = {a.name: lv.name for a, lv in zip(axes, combo)}
        if any(all(chosen[ax] == lv for ax, lv in entry.items()) for entry in exclude or []):
            continue
        name = "_".join(lv.name for lv in combo)
        if name in seen:  # results are kept by name: two corners with one name would lose one of them
            raise fail(f"two combinations are both named '{name}' (give the levels distinct names)",
                       ["matrix", "axes"])
        seen.add(name)
        out.append((name, _merge(axes, combo, fail)))
    return out


def _merge(axes: list[Axis], combo: tuple[Level, ...], fail) -> Level:
    params: dict[str, tuple[float, str]] = {}
    sources: dict[str, tuple[SourceValue, str]] = {}
    temp = ambient = None
    temp_from = ambient_from = ""
    for axis, lv in zip(axes, combo):
        for key, value in lv.params:
            if key in params and params[key][1] != axis.name:
                raise fail(f"axes '{params[key][1]}' and '{axis.name}' both set parameter '{key}'", ["matrix", "axes"])
            params[key] = (value, axis.name)
        for key, value in lv.sources:
            if key in sources and sources[key][1] != axis.name:
                raise fail(f"axes '{sources[key][1]}' and '{axis.name}' both set source '{key}'", ["matrix", "axes"])
            sources[key] = (value, axis.name)
        if lv.temperature_c is not None:
            if temp is not None:
                raise fail(f"axes '{temp_from}' and '{axis.name}' both set temperature_c", ["matrix", "axes"])
            temp, temp_from = lv.temperature_c, axis.name
        if lv.ambient_c is not None:
            if ambient is not None:
                raise fail(f"axes '{ambient_from}' and '{axis.name}' both set ambient_c", ["matrix", "axes"])
            ambient, ambient_from = lv.ambient_c, axis.name
    return Level("_".join(lv.name for lv in combo), tuple((k, v) for k, (v, _) in params.items()),
                 tuple((k, v) for k, (v, _) in sources.items()), temp, ambient,
                 ", ".join(lv.description for lv in combo if lv.description))
