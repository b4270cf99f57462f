"""JSON records of result objects, and the read-only results rebuilt from them.

Fast reopen (:meth:`StepKind.restore`) rebuilds a step's result object from
what the step recorded instead of computing it again. This module holds the
two halves of that:

* :func:`encode_fields` turns the fields of a frozen result (a dataclass of
  tables, dicts, lists and numbers) into plain JSON, tagged where JSON alone
  would lose something: ``{"$table": ...}`` for a DataFrame (its columns, a
  pandas-independent kind code per column and a non-default index),
  ``{"$items": [[key, value], ...]}`` for a dict whose keys are not all
  strings, ``{"$tuple": [...]}`` and ``{"$float": "nan"}``. :func:`decode`
  inverts it exactly.
* :class:`Restored` is the rebuilt result: a read-only object whose
  attributes are the recorded fields, some computed on first use (model
  curves), and anything else taken from the real result object, built on
  first use (from the recorded fields, or by running the step again where the
  record cannot hold it, such as an lmfit result).

No code is ever named by a file: the type of a record is looked up in
:data:`RESULT_TYPES`, a fixed table of ``name -> "module:attribute"`` inside
widgetkit.
"""

from __future__ import annotations

import dataclasses
import importlib
import math
from collections.abc import Callable, Iterable, Mapping
from typing import Any

import numpy as np
import pandas as pd

from ..errors import SessionFormatError
from .verify import cut

__all__ = ["RESULT_TYPES", "Restored", "encode_fields", "encode", "decode", "table_to_json",
           "table_kinds", "table_from_json", "result_type"]

#: result types a record may name: name -> "module:attribute" (widgetkit modules only).
#: A step kind whose result object is restored adds its type here.
RESULT_TYPES: dict[str, str] = {
    "LineFit": "widgetkit.lines.fitting:LineFit",
    "BandAssignment": "widgetkit.levels.rovib:BandAssignment",
    "Progression": "widgetkit.levels.progression:Progression",
    "LinearAssignment": "widgetkit.levels.linear_assign:LinearAssignment",
}


def result_type(name: str) -> type:
    """The class registered as ``name`` in :data:`RESULT_TYPES` (imported on first use)."""
    try:
        module, attr = RESULT_TYPES[name].split(":")
    except (KeyError, TypeError):
        raise SessionFormatError(
            f"the record names result type {cut(name)}, which is not one of "
            f"{', '.join(sorted(RESULT_TYPES))}") from None
    return getattr(importlib.import_module(module), attr)


# ---------------------------------------------------------------------------- tables
#: column kind codes (independent of the pandas version): i int64, I nullable int,
#: f float64, b bool, B nullable bool, s string, O anything else
_KIND_OF_DTYPE = {"i": "i", "u": "i", "f": "f", "b": "b"}


def _plain(v):
    """numpy scalars -> Python; NaN/inf -> None (JSON has no NaN)."""
    if v is None or isinstance(v, str):
        return v
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if isinstance(v, np.integer):
        return int(v)
    if isinstance(v, (float, np.floating)):
        f = float(v)
        return f if math.isfinite(f) else None
    try:
        if pd.isna(v):
            return None
    except (TypeError, ValueError):
        pass
    if isinstance(v, tuple):
        return [_plain(x) for x in v]
    return v


def table_to_json(df: pd.DataFrame | None) -> dict:
    """A DataFrame as ``{column: [values]}`` of plain JSON values (NaN -> null)."""
    if df is None:
        return {}
    return {str(c): [_plain(v) for v in df[c].tolist()] for c in df.columns}


def table_kinds(df: pd.DataFrame) -> dict[str, str]:
    """The kind code of every column (see :data:`_KIND_OF_DTYPE`)."""
    out = {}
    for c in df.columns:
        dt = df[c].dtype
        if isinstance(dt, pd.StringDtype):
            out[str(c)] = "s"
        elif isinstance(dt, pd.Int64Dtype) or str(dt) in ("Int32", "Int64", "Int16", "Int8"):
            out[str(c)] = "I"
        elif str(dt) == "boolean":
            out[str(c)] = "B"
        else:
            out[str(c)] = _KIND_OF_DTYPE.get(getattr(dt, "kind", "O"), "O")
    return out


def _column(values: list, kind: str) -> pd.Series:
    if kind == "f":
        return pd.Series([np.nan if v is None else v for v in values], dtype="float64")
    if kind == "i":
        return pd.Series(values, dtype="int64")
    if kind == "b":
        return pd.Series(values, dtype="bool")
    if kind == "I":
        return pd.Series(pd.array(values, dtype="Int64"))
    if kind == "B":
        return pd.Series(pd.array(values, dtype="boolean"))
    if kind == "s":
        return pd.Series(values, dtype=pd.StringDtype(na_value=np.nan)) if _PANDAS3 else \
            pd.Series(values, dtype=object)
    return pd.Series(values, dtype=object)


_PANDAS3 = int(pd.__version__.split(".")[0]) >= 3


def table_from_json(columns: Mapping[str, list], kinds: Mapping[str, str] | None = None,
                    *, index: list | None = None, where: str = "table") -> pd.DataFrame:
    """Rebuild a DataFrame written by :func:`table_to_json` (kinds from :func:`table_kinds`;
    columns without a kind are inferred from their JSON values)."""
    if not isinstance(columns, Mapping):
        raise SessionFormatError(f"{where}: a table must be an object of columns, got "
                                 f"{type(columns).__name__}")
    lengths = {len(v) if isinstance(v, list) else -1 for v in columns.values()}
    if -1 in lengths or len(lengths) > 1:
        raise SessionFormatError(f"{where}: every column must be a list of the same length")
    data = {}
    for name, values in columns.items():
        kind = (kinds or {}).get(name) or _infer_kind(values)
        try:
            data[name] = _column(values, kind)
        except (TypeError, ValueError, OverflowError):
            raise SessionFormatError(f"{where}, column {name!r}: values do not fit its kind "
                                     f"{kind!r}") from None
    df = pd.DataFrame(data)
    if not data:
        df = pd.DataFrame(index=range(0))
    if index is not None:
        if len(index) != len(df):
            raise SessionFormatError(f"{where}: the index has {len(index)} entries for "
                                     f"{len(df)} rows")
        df.index = pd.Index(index)
    return df


def _infer_kind(values: list) -> str:
    present = [v for v in values if v is not None]
    if not present:
        return "f"
    if all(isinstance(v, bool) for v in present):
        return "b" if len(present) == len(values) else "B"
    if all(isinstance(v, int) and not isinstance(v, bool) for v in present):
        return "i" if len(present) == len(values) else "I"
    if all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in present):
        return "f"
    if all(isinstance(v, str) for v in present):
        return "s"
    return "O"


# ---------------------------------------------------------------------------- values
def encode(value: Any) -> Any:
    """A value as plain JSON, tagged where JSON would lose its type (module docstring)."""
    if value is None or isinstance(value, (bool, str)):
        return value
    if isinstance(value, (int, np.integer)) and not isinstance(value, np.bool_):
        return int(value)
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, (float, np.floating)):
        f = float(value)
        return f if math.isfinite(f) else {"$float": repr(f)}
    if isinstance(value, pd.DataFrame):
        body = {"kinds": table_kinds(value), "data": table_to_json(value)}
        if not isinstance(value.index, pd.RangeIndex) or value.index.start != 0 \
                or value.index.step != 1:
            body["index"] = [encode(v) for v in value.index.tolist()]
        return {"$table": body}
    if isinstance(value, Mapping):
        keys = list(value.keys())
        if all(isinstance(k, str) and not k.startswith("$") for k in keys):
            return {k: encode(v) for k, v in value.items()}
        return {"$items": [[encode(k), encode(v)] for k, v in value.items()]}
    if isinstance(value, tuple):
        return {"$tuple": [encode(v) for v in value]}
    if isinstance(value, (list, np.ndarray)):
        return [encode(v) for v in (value.tolist() if isinstance(value, np.ndarray) else value)]
    raise TypeError(f"cannot record a value of type {type(value).__name__}")


def decode(value: Any, *, where: str = "record") -> Any:
    """Invert :func:`encode`; SessionFormatError naming ``where`` on a malformed tag."""
    if isinstance(value, list):
        return [decode(v, where=where) for v in value]
    if not isinstance(value, dict):
        return value
    if len(value) == 1:
        (tag, body), = value.items()
        if tag == "$table":
            if not isinstance(body, dict):
                raise SessionFormatError(f"{where}: $table must be an object")
            return table_from_json(body.get("data", {}), body.get("kinds"),
                                   index=decode(body.get("index"), where=where), where=where)
        if tag == "$items":
            try:
                return {_hashable(decode(k, where=where)): decode(v, where=where)
                        for k, v in body}
            except (TypeError, ValueError):
                raise SessionFormatError(f"{where}: $items must be [key, value] pairs") from None
        if tag == "$tuple":
            if not isinstance(body, list):
                raise SessionFormatError(f"{where}: $tuple must be a list")
            return tuple(decode(v, where=where) for v in body)
        if tag == "$float":
            if body not in ("nan", "inf", "-inf"):
                raise SessionFormatError(f"{where}: $float must be 'nan', 'inf' or '-inf'")
            return float(body)
    return {k: decode(v, where=where) for k, v in value.items()}


def _same(value):
    return value


def _hashable(k):
    return tuple(k) if isinstance(k, list) else k


def encode_fields(obj: Any, *, skip: Iterable[str] = ()) -> dict:
    """The record of a dataclass result: ``{"type": name, "fields": {field: encode(value)}}``.

    ``skip`` names fields left out (large arrays rebuilt on demand, objects of other
    libraries); :class:`Restored` computes or fetches those when they are asked for.
    """
    skip = set(skip)
    fields = {f.name: encode(getattr(obj, f.name)) for f in dataclasses.fields(obj)
              if f.name not in skip}
    return {"type": type(obj).__name__, "fields": fields}


# ---------------------------------------------------------------------------- restored
class Restored:
    """A result rebuilt from the record: read-only, attributes on demand.

    Parameters
    ----------
    type_name : str
        The registered result type (:data:`RESULT_TYPES`).
    fields : dict
        Decoded recorded fields; they are the attributes.
    lazy : dict of str -> callable, optional
        Attributes computed on first use from the record (model curves, say).
    real : callable, optional
        Returns the real result object; asked once, for an attribute that is neither
        recorded nor lazy (by default the registered type built from the fields).

    Notes
    -----
    ``restored`` is True on these objects, so a view can say a result came from the
    record. :meth:`Session.verify` never looks at them: it runs every step again.
    """

    __slots__ = ("_type", "_fields", "_lazy", "_real_factory", "_real")

    def __init__(self, type_name: str, fields: dict, *,
                 lazy: Mapping[str, Callable[[], Any]] | None = None,
                 real: Callable[[], Any] | None = None):
        object.__setattr__(self, "_type", type_name)
        object.__setattr__(self, "_fields", dict(fields))
        object.__setattr__(self, "_lazy", dict(lazy or {}))
        object.__setattr__(self, "_real_factory", real)
        object.__setattr__(self, "_real", None)

    @property
    def restored(self) -> bool:
        return True

    @property
    def type_name(self) -> str:
        return self._type

    def __getattr__(self, name: str):
        if name.startswith("__"):
            raise AttributeError(name)
        fields = self._fields
        if name in fields:
            return fields[name]
        if name in self._lazy:
            value = self._lazy.pop(name)()
            fields[name] = value
            return value
        return getattr(self.real(), name)

    def real(self):
        """The real result object (built once, on first use)."""
        if self._real is None:
            factory = self._real_factory or self._from_fields
            object.__setattr__(self, "_real", factory())
        return self._real

    def _from_fields(self):
        cls = result_type(self._type)
        names = {f.name for f in dataclasses.fields(cls) if f.init}
        return cls(**{k: v for k, v in self._fields.items() if k in names})

    def __setattr__(self, name, value):
        raise AttributeError(f"a restored {self._type} is read-only")

    def __reduce__(self):
        # pickled (or deep-copied) as the real result: the closures cannot travel
        return (_same, (self.real(),))

    def __dir__(self):
        return sorted(set(self._fields) | set(self._lazy) | {"restored", "real", "type_name"})

    def __repr__(self) -> str:
        return f"<{self._type} restored from the session record>"
