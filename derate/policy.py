"""Derating policies: YAML files (JSON-Schema validated) with a source beside every value.

A policy names per-technology limits; ``extends:`` starts from another policy (a built-in name or
a file) and overrides single values.  ``technologies.default`` applies to every technology that
has no entry of its own.  ``overrides:`` gives a team's own values for some capacitors, by
reference pattern or by a net they connect to (the rectified-mains bulk capacitor of a universal-input
supply, say), without forking the policy.  Built-in policies live in the top-level ``rules/`` folder
(shipped inside the package as ``derate.rules``).
"""

from __future__ import annotations

import fnmatch
from dataclasses import dataclass, field, replace
from importlib import resources
from pathlib import Path
from types import MappingProxyType
from typing import Any, Mapping

from .datafile import Document, load_document, validate
from .errors import DataError
from .trust import Confinement

BUILTIN_PACKAGE = "derate.rules"


STATUSES = ("verified", "secondary", "unverified", "practice")


@dataclass(frozen=True)
class Sourced:
    """A policy value with the source it was taken from and how far that source was checked.

    ``status``: verified (read in the primary text: the standard, or the maker's own publication
    for a maker's rule), secondary (confirmed only in a secondary or another maker's source),
    unverified (from memory), practice (common practice: no document).
    """

    value: Any
    source: str
    status: str = "unverified"

    def provenance(self) -> dict[str, str]:
        return {"source": self.source, "status": self.status}


@dataclass(frozen=True)
class Override:
    """A team's own values for some capacitors (by reference pattern or net), over the policy's."""

    capacitors: tuple[str, ...]
    nets: tuple[str, ...]
    technologies: Mapping[str, Mapping[str, Sourced]]
    description: str
    where: str  # file:line of the entry

    def matches(self, path: str, nets: tuple[str, ...], aliases: tuple[str, ...] = ()) -> bool:
        names = aliases or (path.lower(),)
        return (any(fnmatch.fnmatchcase(n, p.lower()) for p in self.capacitors for n in names)
                or any(n.lower() in {x.lower() for x in self.nets} for n in nets))


@dataclass(frozen=True)
class Policy:
    """A resolved policy (``extends`` applied)."""

    name: str
    title: str = ""
    description: str = ""
    near_limit_pct: Sourced = field(default_factory=lambda: Sourced(10.0, "common practice", "practice"))
    unrated_severity: str = "error"
    typical_data: Sourced = field(default_factory=lambda: Sourced("accepted", "common practice", "practice"))
    refuse_unverified: Sourced = field(default_factory=lambda: Sourced(False, "common practice", "practice"))
    mission_life_h: Sourced | None = None
    technologies: Mapping[str, Mapping[str, Sourced]] = field(default_factory=dict)
    files: tuple[str, ...] = ()
    chain: tuple[str, ...] = ()
    overrides: tuple[Override, ...] = ()
    applied: tuple[str, ...] = ()  # the overrides this copy carries (for_capacitor)

    def for_capacitor(self, path: str, nets: tuple[str, ...], aliases: tuple[str, ...] = ()) -> "Policy":
        """The policy as it applies to one capacitor: the overrides that name it (by reference pattern or
        by a net it connects to) replace the policy's values, in the order written."""
        hits = [o for o in self.overrides if o.matches(path, nets, aliases)]
        if not hits:
            return self
        techs = {name: dict(values) for name, values in self.technologies.items()}
        for o in hits:
            for tech, values in o.technologies.items():
                techs.setdefault(tech, {}).update(values)
        return replace(self, technologies=MappingProxyType({t: MappingProxyType(v) for t, v in techs.items()}),
                       applied=tuple(o.description or o.where for o in hits))

    def get(self, technology: str | None, key: str) -> Sourced | None:
        """Return a technology's value for ``key`` (falling back to ``default``), or None."""
        tech = self.technologies.get(technology or "other", {})
        if key in tech:
            return tech[key]
        return self.technologies.get("default", {}).get(key)

    def own(self, technology: str | None, key: str) -> Sourced | None:
        """A technology's own value for ``key`` (no fallback to ``default``)."""
        return self.technologies.get(technology or "other", {}).get(key)

    def value(self, technology: str | None, key: str, fallback: Any = None) -> Any:
        got = self.get(technology, key)
        return got.value if got is not None else fallback

    def required(self, technology: str | None, check: str, ripple_a: float = 0.0) -> bool:
        """Whether a check must be judged for a technology (missing data then gates); without a
        ``required`` list every check that applies is required.  Hot spot and self-heating are
        required above ``hotspot_required_above_a`` of ripple current."""
        listed = self.value(technology, "required")
        if check == "ac-voltage":  # the voltage check of a part rated in AC volts
            check = "voltage"
        if listed is None or listed == "all" or check in listed:
            return True
        if check in ("hotspot", "self-heating"):
            above = self.value(technology, "hotspot_required_above_a")
            return above is not None and ripple_a > above
        return False

    @property
    def accepts_typical(self) -> bool:
        return self.typical_data.value == "accepted"

    @property
    def near_ratio(self) -> float:
        """Stress ratio from which a pass becomes 'near the limit' (e.g. 0.9 for 10 %)."""
        return 1.0 - float(self.near_limit_pct.value) / 100.0


def builtin_names() -> list[str]:
    """Return the names of the built-in policies."""
    folder = resources.files(BUILTIN_PACKAGE)
    return sorted(p.name[:-5] for p in folder.iterdir() if p.name.endswith(".yaml"))


def _builtin_path(name: str) -> Path | None:
    ref = resources.files(BUILTIN_PACKAGE).joinpath(f"{name}.yaml")
    return Path(str(ref)) if ref.is_file() else None


def _sourced(raw: dict[str, Any]) -> Sourced:
    value = raw["value"]
    if isinstance(value, list) and value and isinstance(value[0], list):
        value = tuple(sorted((float(a), float(b)) for a, b in value))
    elif isinstance(value, list):
        value = tuple(value)
    status = raw.get("status") or ("practice" if "common practice" in raw["source"].lower() else "unverified")
    return Sourced(value, raw["source"], status)


def load_policy(spec: str, base_dir: Path | None = None, confinement: Confinement | None = None,
                _seen: tuple[str, ...] = (), _named_at: tuple[str | None, str | None] = (None, None)) -> Policy:
    """Load a policy by built-in name or file path, applying ``extends`` recursively.

    A policy file may extend a built-in policy or a file inside ``confinement`` (the project
    root): an ``extends:`` cannot reach outside it.
    """
    path = None
    candidate = Path(spec)
    if base_dir is not None and not candidate.is_absolute():
        candidate = base_dir / candidate
    if spec.endswith((".yaml", ".yml")) or candidate.is_file():
        path = confinement.read(candidate, *_named_at) if confinement is not None else candidate
    else:
        path = _builtin_path(spec)
        if path is None:
            raise DataError(f"no built-in policy named '{spec}' (built-in: {', '.join(builtin_names())}) "
                            "and no such file")
    key = str(path.resolve())
    if key in _seen:
        raise DataError(f"policy 'extends' cycle: {' -> '.join(_seen + (key,))}", str(path))
    doc = load_document(path)
    if not isinstance(doc.data, dict):
        raise DataError("expected a policy mapping", str(path))
    validate(doc, "policy")
    _check_curves(doc)
    raw = doc.data
    if "extends" in raw:
        line = doc.line_of(["extends"])
        try:
            base = load_policy(raw["extends"], path.parent, confinement or Confinement(path.resolve().parent),
                               _seen + (key,), (f"{path}:{line}" if line else str(path), "extends"))
        except DataError as exc:
            if exc.file:  # the error is inside the extended file, which it names
                raise
            raise doc.error(exc.message, ["extends"]) from None
    else:
        base = Policy(name=raw["name"])
    techs = {name: dict(values) for name, values in base.technologies.items()}
    for tech, values in (raw.get("technologies") or {}).items():
        merged = techs.setdefault(tech, {})
        for k, v in values.items():
            merged[k] = _sourced(v)
    overrides = list(base.overrides)
    for k, entry in enumerate(raw.get("overrides") or []):
        def listed(v):
            return tuple([v] if isinstance(v, str) else v or [])
        line = doc.line_of(["overrides", k])
        overrides.append(Override(listed(entry.get("capacitors")), listed(entry.get("nets")),
                                  MappingProxyType({t: MappingProxyType({key: _sourced(v) for key, v in vals.items()})
                                                    for t, vals in (entry.get("technologies") or {}).items()}),
                                  str(entry.get("description", "")), f"{path}:{line}" if line else str(path)))
    return Policy(
        overrides=tuple(overrides),
        name=raw["name"], title=raw.get("title", base.title), description=raw.get("description", base.description),
        near_limit_pct=_sourced(raw["near_limit_pct"]) if "near_limit_pct" in raw else base.near_limit_pct,
        unrated_severity=raw.get("unrated_severity", base.unrated_severity),
        typical_data=_sourced(raw["typical_data"]) if "typical_data" in raw else base.typical_data,
        refuse_unverified=_sourced(raw["refuse_unverified"]) if "refuse_unverified" in raw else base.refuse_unverified,
        mission_life_h=_sourced(raw["mission_life_h"]) if "mission_life_h" in raw else base.mission_life_h,
        technologies=MappingProxyType({t: MappingProxyType(v) for t, v in techs.items()}),
        files=base.files + (str(path),), chain=base.chain + (raw["name"],))


def _check_curves(doc: Document) -> None:
    for tech, values in (doc.data.get("technologies") or {}).items():
        for key, v in values.items():
            if key.endswith("_curve") or key == "category_voltage":
                xs = [row[0] for row in v["value"]]
                if len(set(xs)) != len(xs):
                    raise doc.error("two rows for the same temperature", ["technologies", tech, key])
                ordered = sorted(v["value"])
                if any(b[1] > a[1] + 1e-12 for a, b in zip(ordered, ordered[1:])):
                    raise doc.error("a derating curve must not rise with temperature", ["technologies", tech, key])
