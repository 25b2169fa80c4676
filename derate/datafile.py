"""Load YAML/JSON data files and validate them against the JSON Schemas shipped in the package.

Errors name the file, the line and the key path, and say what was expected:
``parts.yaml:12: C12.rated_voltage_v: expected a positive number, got 'sixteen'``.
"""

from __future__ import annotations

import json
import math
from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Any

import jsonschema
import yaml

from .errors import DataError
from .fileio import read_capped


class _LineLoader(getattr(yaml, "CSafeLoader", yaml.SafeLoader)):
    """A safe YAML loader that remembers the line of every mapping key and sequence item (libyaml's
    parser when PyYAML has it: several times faster on a large parts file; the constructors, and so
    the safety rules, are the same Python ones)."""


MAX_FILE_BYTES = 20 * 1024 * 1024  # a data file larger than this is not a hand-written project file
MAX_VALUES = 1_000_000  # values after YAML aliases are expanded (an alias "bomb" expands exponentially)


def _construct_mapping(loader: _LineLoader, node: yaml.MappingNode, deep: bool = False):
    mapping = {}
    lines = {}
    for key_node, value_node in node.value:
        if not isinstance(key_node, yaml.ScalarNode):
            raise DataError(f"line {key_node.start_mark.line + 1}: a key must be a plain text or number, "
                            "not a list or mapping")
        key = loader.construct_object(key_node, deep=True)
        if key in mapping:
            raise DataError(f"line {key_node.start_mark.line + 1}: key '{key}' appears twice")
        mapping[key] = loader.construct_object(value_node, deep=True)
        lines[key] = key_node.start_mark.line + 1
    loader.line_index[id(mapping)] = lines
    return mapping


def _construct_sequence(loader: _LineLoader, node: yaml.SequenceNode, deep: bool = False):
    items = [loader.construct_object(child, deep=True) for child in node.value]
    loader.line_index[id(items)] = {i: child.start_mark.line + 1 for i, child in enumerate(node.value)}
    return items


_LineLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_mapping)
_LineLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_SEQUENCE_TAG, _construct_sequence)
# An unquoted 2027-03-31 stays the text it is: the schema and the code that reads a date check it
# (and name the key) instead of YAML building a date, or failing on 2027-02-30 with no location.
_LineLoader.add_constructor("tag:yaml.org,2002:timestamp", lambda loader, node: loader.construct_scalar(node))


class Document:
    """A loaded data file: its data, its path, and the line of any key path."""

    def __init__(self, path: str, data: Any, line_index: dict[int, dict]):
        self.path = path
        self.data = data
        self._lines = line_index  # keyed by id(): valid while self.data keeps the objects alive

    def line_of(self, key_path: list) -> int | None:
        """Return the line where ``key_path`` (a list of keys and indexes) is written."""
        node = self.data
        line = None
        for key in key_path:
            lines = self._lines.get(id(node))
            if lines is None or key not in lines:
                break
            line = lines[key]
            try:
                node = node[key]
            except (KeyError, IndexError, TypeError):
                break
        return line

    def error(self, message: str, key_path: list | None = None) -> DataError:
        """Return a DataError located at ``key_path`` in this document."""
        key_path = key_path or []
        line = self.line_of(key_path) if key_path else None
        where = f"{self.path}:{line}" if line else self.path
        return DataError(message, where, format_path(key_path) or None)


def format_path(key_path: list) -> str:
    """Return ``a.b[2].c`` for a key path."""
    out = ""
    for key in key_path:
        if isinstance(key, int):
            out += f"[{key}]"
        else:
            out += ("." if out else "") + str(key)
    return out


def read_limited(path: str | Path, limit: int = MAX_FILE_BYTES) -> bytes:
    """Return a file's bytes; DataError when it is missing, unreadable or larger than ``limit``."""
    p = Path(path)
    try:
        with open(p, "rb") as fh:
            data = read_capped(fh, limit)
    except FileNotFoundError:
        raise DataError("file not found", str(path)) from None
    except IsADirectoryError:
        raise DataError("expected a file, found a folder", str(path)) from None
    except (OSError, ValueError) as exc:
        raise DataError(f"cannot read: {getattr(exc, 'strerror', None) or exc}", str(path)) from None
    if len(data) > limit:
        raise DataError(f"file is larger than {limit // (1024 * 1024)} MB; derate reads data files up to that size",
                        str(path))
    return data


def load_document(path: str | Path) -> Document:
    """Read a YAML (or JSON) file with line tracking; DataError on unreadable or invalid YAML.

    Every number must be finite (YAML's ``.nan``/``.inf`` and overflowing literals such as
    ``1e999`` are refused), keys must be scalars, and aliases may not expand past
    ``MAX_VALUES`` values.
    """
    raw = read_limited(path)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[:exc.start].count(b"\n") + 1
        raise DataError(f"not UTF-8 text (byte 0x{raw[exc.start]:02x}); save the file as UTF-8", f"{path}:{line}") from None
    if "\x00" in text:
        raise DataError("the file holds a NUL character; expected YAML text", str(path))
    try:
        loader = _LineLoader(text)
    except yaml.YAMLError as exc:  # a character YAML does not allow, found when the reader starts
        raise DataError(f"invalid YAML: {getattr(exc, 'reason', None) or exc}", str(path)) from None
    loader.line_index = {}
    try:
        data = loader.get_single_data()
    except DataError as exc:
        raise DataError(exc.message, f"{path}") from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f"{path}:{mark.line + 1}" if mark else str(path)
        problem = getattr(exc, "problem", None) or str(exc)
        raise DataError(f"invalid YAML: {problem}", where) from None
    except RecursionError:
        raise DataError("YAML nested too deeply", str(path)) from None
    finally:
        loader.dispose()
    doc = Document(str(path), data, loader.line_index)
    _check_values(doc)
    return doc


def _check_values(doc: Document) -> None:
    """Refuse non-finite numbers and alias expansions past MAX_VALUES (iteratively: no recursion)."""
    sizes: dict[int, int] = {}
    open_: set[int] = set()
    # post-order walk with an explicit stack; shared (aliased) objects are sized once
    stack: list[tuple[Any, list, bool]] = [(doc.data, [], False)]
    while stack:
        node, path, done = stack.pop()
        if isinstance(node, float) and not math.isfinite(node):
            raise doc.error(f"expected a finite number, got {node!r}", path)
        if not isinstance(node, (dict, list)):
            continue
        if done:
            children = node.values() if isinstance(node, dict) else node
            total = 1 + sum(sizes.get(id(c), 1) for c in children)
            sizes[id(node)] = total
            open_.discard(id(node))
            if total > MAX_VALUES:
                raise doc.error(f"holds more than {MAX_VALUES:,} values once YAML aliases are expanded", path)
            continue
        if id(node) in sizes:
            continue
        if id(node) in open_:
            raise doc.error("a YAML alias refers to a list or mapping that contains it", path)
        open_.add(id(node))
        stack.append((node, path, True))
        items = node.items() if isinstance(node, dict) else enumerate(node)
        for k, v in items:
            if isinstance(v, (dict, list, float)) and id(v) not in sizes:
                stack.append((v, path + [k], False))


@lru_cache(maxsize=None)
def schema(name: str) -> dict:
    """Return the JSON Schema ``derate/schemas/<name>.schema.json``."""
    text = resources.files("derate").joinpath("schemas", f"{name}.schema.json").read_text(encoding="utf-8")
    return json.loads(text)


_TYPE_WORDS = {"number": "a number", "integer": "a whole number", "string": "a text", "object": "a mapping",
               "array": "a list", "boolean": "true or false", "null": "nothing"}


def _describe(error: jsonschema.ValidationError) -> str:
    validator = error.validator
    got = error.instance
    shown = repr(got) if not isinstance(got, (dict, list)) else type(got).__name__
    if validator == "type":
        want = error.validator_value
        words = " or ".join(_TYPE_WORDS.get(w, w) for w in (want if isinstance(want, list) else [want]))
        desc = error.schema.get("description")
        return f"expected {words}{f' ({desc})' if desc else ''}, got {shown}"
    if validator == "exclusiveMinimum":
        return f"expected a number above {error.validator_value}, got {shown}"
    if validator == "minimum":
        return f"expected a number of at least {error.validator_value}, got {shown}"
    if validator == "maximum":
        return f"expected a number of at most {error.validator_value}, got {shown}"
    if validator == "exclusiveMaximum":
        return f"expected a number below {error.validator_value}, got {shown}"
    if validator == "maxItems":
        return f"expected at most {error.validator_value} item(s)"
    if validator == "maxLength":
        return f"expected at most {error.validator_value} characters"
    if validator == "enum":
        return f"expected one of {', '.join(map(str, error.validator_value))}, got {shown}"
    if validator == "required":
        missing = [k for k in error.validator_value if k not in (got or {})]
        return f"missing required key(s): {', '.join(missing)}"
    if validator == "additionalProperties":
        allowed = sorted(error.schema.get("properties", {}))
        extra = sorted(set(got) - set(allowed), key=str) if isinstance(got, dict) else []
        import difflib
        close = [m for k in extra for m in difflib.get_close_matches(str(k), allowed, n=1, cutoff=0.75)]
        hint = f"; did you mean {', '.join(map(repr, dict.fromkeys(close)))}?" if close else ""
        return (f"unknown key(s) {', '.join(map(repr, extra))}{hint} (expected one of: {', '.join(allowed)})")
    if validator == "pattern":
        hint = error.schema.get("description", f"text matching {error.validator_value}")
        return f"expected {hint}, got {shown}"
    if validator in ("oneOf", "anyOf"):
        desc = error.schema.get("description")
        return f"expected {desc}, got {shown}" if desc else f"does not match any allowed form, got {shown}"
    if validator == "minItems":
        return f"expected at least {error.validator_value} item(s)"
    return error.message


def validate(doc: Document, schema_name: str) -> None:
    """Validate a document; raise a DataError at the first (deepest, earliest) problem."""
    validator = jsonschema.Draft202012Validator(schema(schema_name))
    errors = sorted(validator.iter_errors(doc.data),
                    key=lambda e: (doc.line_of(list(e.absolute_path)) or 0, -len(e.absolute_path)))
    if not errors:
        return
    err = errors[0]
    if err.validator in ("oneOf", "anyOf") and err.context and not err.schema.get("description"):
        # report the branch that got furthest
        err = max(err.context, key=lambda e: len(e.absolute_path))
    path = list(err.absolute_path)
    if err.validator == "additionalProperties" and isinstance(err.instance, dict):
        allowed = set(err.schema.get("properties", {}))
        extra = sorted(set(err.instance) - allowed, key=str)
        if extra:
            path = path + [extra[0]]
    raise doc.error(_describe(err), path)
