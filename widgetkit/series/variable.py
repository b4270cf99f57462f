"""The series variable: how the temperature, pressure or time of each spectrum is read.

Three ways, given to :func:`~widgetkit.series.run_series` as ``variable=``:

* a **header field**: ``"set temperature"`` finds the value in the file's
  labels (JCAMP-DX ``##...=`` labels, including ``##$...`` ones, the
  ``key: value`` comment lines of a text file, any ``meta`` entry; names match
  ignoring case, spaces and punctuation; a dotted path such as
  ``"simulated.params.temperature"`` walks nested metadata);
* a **regular expression on the file name** with one group (or a named group,
  which then names the variable): ``r"_(\\d+)K"``;
* a **mapping** from file name (or path, or spectrum title) to value.

A string with a capturing group is a regular expression; any other string is
a field name. The value is the first number in what was found; the unit is
the one given, else the text after that number (``"340 K"`` → K).
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import SeriesError

__all__ = ["Variable"]

_NUMBER = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?")
_KEY_VALUE = re.compile(r"^\s*([^:=]{1,80}?)\s*[:=]\s*(.+?)\s*$")


def _norm(key: str) -> str:
    return re.sub(r"[^a-z0-9]", "", str(key).lower())


def _number(value: Any) -> tuple[float | None, str | None]:
    """(number, unit text after it) of a header value."""
    if isinstance(value, bool):
        return None, None
    if isinstance(value, (int, float)):
        return float(value), None
    if not isinstance(value, str):
        return None, None
    m = _NUMBER.search(value)
    if m is None:
        return None, None
    unit = value[m.end():].strip().strip("()[]").strip() or None
    return float(m.group()), unit


def _walk(meta: Mapping, depth: int = 0):
    """(key, value) pairs of nested metadata, breadth first, plus ``key: value`` lines."""
    nested = []
    for k, v in meta.items():
        if isinstance(v, Mapping):
            nested.append(v)
        elif isinstance(v, (list, tuple)) and all(isinstance(s, str) for s in v):
            for line in v:
                m = _KEY_VALUE.match(line.lstrip("#").strip())
                if m:
                    yield m.group(1), m.group(2)
        else:
            yield k, v
    if depth < 3:
        for sub in nested:
            yield from _walk(sub, depth + 1)


@dataclass(frozen=True)
class Variable:
    """How to read the series variable (module notes); exactly one of ``field``,
    ``pattern`` and ``values`` is set.

    Attributes
    ----------
    name : str
        What the variable is (``"temperature"``); shown on axes and in tables.
    unit : str or None
        Its unit (``"K"``); taken from the header value when not given.
    field : str, optional
        Header field name or dotted path.
    pattern : str, optional
        Regular expression searched in the file name; the first group is the value.
    values : mapping, optional
        File name, path or title -> value.
    """

    name: str = "variable"
    unit: str | None = None
    field: str | None = None
    pattern: str | None = None
    values: Mapping[str, float] | None = None

    @classmethod
    def parse(cls, spec: Any, unit: str | None = None) -> Variable | None:
        """A Variable from what ``run_series(variable=...)`` accepts: None, a Variable, a
        mapping, a string (regular expression with a group, else a field name) or a
        ``(spec, unit)`` pair."""
        if spec is None:
            return None
        if isinstance(spec, tuple) and len(spec) == 2:
            return cls.parse(spec[0], unit=spec[1])
        if isinstance(spec, Variable):
            return spec if unit is None else Variable(spec.name, unit, spec.field, spec.pattern,
                                                      spec.values)
        if isinstance(spec, Mapping):
            vals = {}
            for k, v in spec.items():
                num, _ = _number(v)
                if num is None:
                    raise SeriesError(f"variable: the mapping gives {v!r} for {k!r}, which is not "
                                      "a number")
                vals[str(k)] = num
            return cls(name="variable", unit=unit, values=vals)
        if isinstance(spec, str) and spec.strip():
            try:
                rx = re.compile(spec)
            except re.error:
                rx = None
            if rx is not None and rx.groups >= 1:
                names = list(rx.groupindex)
                return cls(name=names[0] if names else "variable", unit=unit, pattern=spec)
            return cls(name=spec.strip().split(".")[-1], unit=unit, field=spec.strip())
        raise SeriesError(
            f"variable must be a header field name (e.g. 'temperature'), a regular expression "
            f"with a group on the file name (e.g. r'_(\\d+)K'), a mapping name -> value or a "
            f"Variable; got {spec!r}")

    def value(self, meta: Mapping, name: str, path: str | None = None
              ) -> tuple[float | None, str | None, str | None]:
        """(value, unit, problem) of one spectrum; ``problem`` says why the value is missing."""
        if self.values is not None:
            keys = [name, Path(name).name] + ([path, Path(path).name] if path else [])
            keys.append(str(meta.get("title", "")))
            for k in keys:
                if k in self.values:
                    return float(self.values[k]), self.unit, None
            return None, self.unit, f"series variable: {name!r} is not in the mapping given"
        if self.pattern is not None:
            target = Path(path).name if path else name
            m = re.search(self.pattern, target)
            if m is None:
                return None, self.unit, (f"series variable: the pattern {self.pattern!r} does not "
                                         f"match the file name {target!r}")
            num, unit = _number(m.group(1))
            if num is None:
                return None, self.unit, (f"series variable: {m.group(1)!r} in {target!r} is not a "
                                         "number")
            return num, self.unit or unit, None
        return self._from_field(meta)

    def _from_field(self, meta: Mapping):
        raw = None
        if "." in self.field:
            node: Any = meta
            for part in self.field.split("."):
                node = node.get(part) if isinstance(node, Mapping) else None
            raw = node
        if raw is None:
            want = _norm(self.field)
            raw = next((v for k, v in _walk(meta) if _norm(k) == want), None)
        if raw is None:
            return None, self.unit, (f"series variable: the file has no header field "
                                     f"{self.field!r}")
        num, unit = _number(raw)
        if num is None:
            return None, self.unit, (f"series variable: header field {self.field!r} is {raw!r}, "
                                     "not a number")
        return num, self.unit or unit, None

    def to_json(self) -> dict:
        return {"name": self.name, "unit": self.unit, "field": self.field,
                "pattern": self.pattern, "values": None if self.values is None else dict(self.values)}

    @classmethod
    def from_json(cls, d: Mapping | None) -> Variable | None:
        if d is None:
            return None
        return cls(name=str(d.get("name", "variable")), unit=d.get("unit"), field=d.get("field"),
                   pattern=d.get("pattern"), values=d.get("values"))

    @property
    def label(self) -> str:
        """``"name / unit"`` for an axis."""
        return f"{self.name} / {self.unit}" if self.unit else self.name
