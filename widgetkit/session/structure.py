"""Checks a session document against the shipped JSON Schema, quickly.

The schema file (``schema/session-v<N>.schema.json``) stays the one
description of the document structure. This module interprets the part of
JSON Schema (draft 2020-12) that file uses: ``type``, ``const``, ``enum``,
``required``, ``properties``, ``additionalProperties``, ``items``,
``minItems``, ``maxItems``, ``minLength``, ``maxLength``, ``pattern``,
``minimum``, ``maximum``, ``oneOf`` and local ``$ref``. Any other keyword in
the schema is a programming error (tested), so the interpretation cannot
drift from the file silently; a test also compares its verdicts with the
reference validator (the ``jsonschema`` package) on damaged documents.

It exists because importing a full validator costs seconds here (its format
checkers build parsers on import), which reopening a session must not pay.
Messages name the field by its path and never print more than a short cut of
the value.
"""

from __future__ import annotations

import re
from functools import lru_cache
from typing import Any

__all__ = ["problems", "KEYWORDS"]

#: the keywords this interpreter understands (others in a schema are refused)
KEYWORDS = frozenset({"$schema", "$id", "title", "description", "$defs", "type", "const", "enum",
                      "required", "properties", "additionalProperties", "items", "minItems",
                      "maxItems", "minLength", "maxLength", "pattern", "minimum", "maximum",
                      "oneOf", "$ref"})

_TYPES = {
    "object": lambda v: isinstance(v, dict),
    "array": lambda v: isinstance(v, list),
    "string": lambda v: isinstance(v, str),
    "integer": lambda v: isinstance(v, int) and not isinstance(v, bool),
    "number": lambda v: isinstance(v, (int, float)) and not isinstance(v, bool),
    "boolean": lambda v: isinstance(v, bool),
    "null": lambda v: v is None,
}


def _short(value: Any, limit: int = 60) -> str:
    if isinstance(value, dict):
        return f"an object with {len(value)} members"
    if isinstance(value, list):
        return f"a list of {len(value)} items"
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 1] + f"… ({len(text):,} characters)"


def _type_name(value: Any) -> str:
    for name in ("null", "boolean", "integer", "number", "string", "array", "object"):
        if _TYPES[name](value):
            return name
    return type(value).__name__  # pragma: no cover - JSON values only


@lru_cache(maxsize=64)
def _regex(pattern: str) -> re.Pattern:
    return re.compile(pattern)


def problems(value: Any, schema: dict, *, root: dict | None = None, path: str = "",
             limit: int = 5) -> list[str]:
    """Problems of ``value`` against ``schema`` (empty when it conforms), at most ``limit``,
    each ``"field a/b/0: must be ..."``."""
    out: list[str] = []
    _check(value, schema, root if root is not None else schema, path, out, limit)
    return out


def _field(path: str) -> str:
    return f"field {path or '(top level)'}"


def _check(v: Any, s: dict, root: dict, path: str, out: list[str], limit: int) -> None:
    if len(out) >= limit:
        return
    unknown = set(s) - KEYWORDS
    if unknown:
        raise ValueError(f"schema keyword(s) {sorted(unknown)} are not interpreted")
    if "$ref" in s:
        ref = s["$ref"]
        if not ref.startswith("#/$defs/"):
            raise ValueError(f"only local $ref are interpreted, got {ref!r}")
        _check(v, root["$defs"][ref[len("#/$defs/"):]], root, path, out, limit)
        return
    if "oneOf" in s:
        results = [problems(v, sub, root=root, path=path, limit=limit) for sub in s["oneOf"]]
        ok = [r for r in results if not r]
        if len(ok) != 1:
            typed = [r for sub, r in zip(s["oneOf"], results) if _types_ok(v, sub)]
            out.extend(typed[0] if len(typed) == 1 and typed[0] else
                       [f"{_field(path)}: must match exactly one of {len(s['oneOf'])} forms, "
                        f"got {_short(v)}"])
        return
    if "type" in s:
        types = s["type"] if isinstance(s["type"], list) else [s["type"]]
        if not any(_TYPES[t](v) for t in types):
            out.append(f"{_field(path)}: must be {' or '.join(types)}, got {_type_name(v)} "
                       f"{_short(v)}")
            return
    if "const" in s and not _same(v, s["const"]):
        out.append(f"{_field(path)}: must be {s['const']!r}, got {_short(v)}")
        return
    if "enum" in s and not any(_same(v, e) for e in s["enum"]):
        out.append(f"{_field(path)}: must be one of {', '.join(map(repr, s['enum']))}, got "
                   f"{_short(v)}")
        return
    if isinstance(v, str):
        _check_string(v, s, path, out)
    elif isinstance(v, (int, float)) and not isinstance(v, bool):
        if "minimum" in s and v < s["minimum"]:
            out.append(f"{_field(path)}: must be at least {s['minimum']}, got {_short(v)}")
        if "maximum" in s and v > s["maximum"]:
            out.append(f"{_field(path)}: must be at most {s['maximum']}, got {_short(v)}")
    elif isinstance(v, list):
        _check_array(v, s, root, path, out, limit)
    elif isinstance(v, dict):
        _check_object(v, s, root, path, out, limit)


def _types_ok(v: Any, s: dict) -> bool:
    if "type" not in s:
        return True
    types = s["type"] if isinstance(s["type"], list) else [s["type"]]
    return any(_TYPES[t](v) for t in types)


def _same(a: Any, b: Any) -> bool:
    return type(a) is type(b) and a == b or (
        isinstance(a, (int, float)) and isinstance(b, (int, float))
        and not isinstance(a, bool) and not isinstance(b, bool) and a == b)


def _check_string(v: str, s: dict, path: str, out: list[str]) -> None:
    if "minLength" in s and len(v) < s["minLength"]:
        out.append(f"{_field(path)}: must have at least {s['minLength']} characters, got "
                   f"{len(v)}")
    if "maxLength" in s and len(v) > s["maxLength"]:
        out.append(f"{_field(path)}: must have at most {s['maxLength']:,} characters, got "
                   f"{len(v):,}")
    elif "pattern" in s and not _regex(s["pattern"]).search(v):
        out.append(f"{_field(path)}: {_short(v)} does not have the form {s['pattern']}")


def _check_array(v: list, s: dict, root: dict, path: str, out: list[str], limit: int) -> None:
    if "minItems" in s and len(v) < s["minItems"]:
        out.append(f"{_field(path)}: must have at least {s['minItems']} item(s), got {len(v)}")
    if "maxItems" in s and len(v) > s["maxItems"]:
        out.append(f"{_field(path)}: must have at most {s['maxItems']:,} items, got {len(v):,}")
        return
    if "items" in s:
        for i, item in enumerate(v):
            _check(item, s["items"], root, f"{path}/{i}" if path else str(i), out, limit)
            if len(out) >= limit:
                return


def _check_object(v: dict, s: dict, root: dict, path: str, out: list[str], limit: int) -> None:
    for name in s.get("required", ()):
        if name not in v:
            out.append(f"{_field(path)}: the required member {name!r} is missing")
    props = s.get("properties", {})
    extra = s.get("additionalProperties", True)
    for name, item in v.items():
        sub = f"{path}/{name}" if path else name
        if name in props:
            _check(item, props[name], root, sub, out, limit)
        elif extra is False:
            allowed = ", ".join(props)
            out.append(f"{_field(path)}: unknown member {_short(name)} (allowed: {allowed})")
        elif isinstance(extra, dict):
            _check(item, extra, root, sub, out, limit)
        if len(out) >= limit:
            return
