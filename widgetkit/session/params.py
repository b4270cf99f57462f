"""Declared step parameters: one check for live calls and for saved files.

Each step kind lists its parameters once, as :class:`Param` records
(``StepKind.parameters``). :func:`check_params` checks a parameter dict against
them before anything is computed, and returns it normalised (numbers as
``float``, whole numbers as ``int``, pairs as lists): the session calls it for
every live call (a bad argument raises the kind's ``argument_error`` naming the
argument and the value) and for every step of a file being opened (a
:class:`~widgetkit.errors.SessionFormatError` naming the step and the field).

Values of any kind are bounded (:func:`check_json`): nesting depth, number of
items, string length and integer size, so no parameter can make a later
computation hang or exhaust memory by its size alone.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = ["Param", "ParamProblem", "REQUIRED", "check_params", "check_json", "show",
           "MAX_DEPTH", "MAX_ITEMS", "MAX_STRING"]

#: deepest nesting of lists and objects inside one parameter
MAX_DEPTH = 16
#: most items (list entries plus object members, counted through the nesting) in one parameter
MAX_ITEMS = 2_000_000
#: longest string in a parameter (characters)
MAX_STRING = 100_000
#: largest integer magnitude (2**53: every such integer is exact as a float)
MAX_INT = 2**53


class _Required:
    def __repr__(self) -> str:
        return "REQUIRED"


#: default of a parameter that must be given
REQUIRED = _Required()


class ParamProblem(Exception):
    """A parameter is wrong: ``field`` (dotted, e.g. ``"region"`` or ``"constraints.l1_area"``)
    and ``problem`` (``"must be ..., got ..."``). Internal; callers turn it into their error."""

    def __init__(self, field: str, problem: str):
        super().__init__(f"{field}: {problem}")
        self.field, self.problem = field, problem


def show(value: Any, limit: int = 60) -> str:
    """A short description of a value for messages: its repr cut to ``limit`` characters
    and its type (arrays and long lists are never dumped)."""
    if isinstance(value, np.ndarray):
        return f"an array of shape {value.shape}"
    if isinstance(value, (list, tuple)) and len(value) > 8:
        return f"a {type(value).__name__} of {len(value)} items"
    try:
        text = repr(value)
    except Exception:  # pragma: no cover - a broken __repr__
        text = object.__repr__(value)
    if len(text) > limit:
        text = text[: limit - 1] + "…"
    return f"{text} ({type(value).__name__})"


@dataclass(frozen=True)
class Param:
    """One declared parameter of a step kind.

    Attributes
    ----------
    name : str
    kind : str or tuple of str
        ``"number"`` (finite real, stored as float), ``"integer"`` (whole number),
        ``"boolean"``, ``"string"``, ``"choice"`` (one of ``choices``), ``"range"`` (two
        numbers ``[lo, hi]``), ``"numbers"`` (a list of numbers; null items allowed when
        ``null_items``), ``"strings"`` (a string or a list of strings), ``"mapping"`` (an
        object with string keys, bounded), ``"json"`` (any bounded JSON value). A tuple
        accepts any of its kinds.
    default : object
        :data:`REQUIRED` when the parameter must be given; otherwise documentation of
        what the step does without it (checks never fill defaults in: the record keeps
        the parameters exactly as given).
    minimum, maximum : float, optional
        Inclusive limits of a number or integer.
    above, below : float, optional
        Exclusive limits (``above < value < below``).
    choices : tuple
        Allowed values of a ``"choice"``.
    nullable : bool
        None (JSON null) is allowed.
    max_items : int
        Longest list of a ``"numbers"`` or ``"strings"`` parameter.
    unit : str
        Unit named in messages (``"cm-1"``).
    doc : str
        One line for people.
    """

    name: str
    kind: str | tuple[str, ...]
    default: Any = REQUIRED
    minimum: float | None = None
    maximum: float | None = None
    above: float | None = None
    below: float | None = None
    choices: tuple = ()
    nullable: bool = False
    null_items: bool = False
    max_items: int = 1_000_000
    unit: str = ""
    doc: str = ""

    @property
    def required(self) -> bool:
        return self.default is REQUIRED

    def expected(self) -> str:
        """What the parameter must be, in words."""
        kinds = (self.kind,) if isinstance(self.kind, str) else self.kind
        words = [_KIND_WORDS[k](self) for k in kinds]
        if self.nullable:
            words.append("None")
        return " or ".join(words)

    def check(self, value: Any, field: str | None = None) -> Any:
        """The normalised value; :class:`ParamProblem` when it does not fit."""
        field = field or self.name
        if value is None:
            if self.nullable:
                return None
            raise ParamProblem(field, f"must be {self.expected()}, got None")
        kinds = (self.kind,) if isinstance(self.kind, str) else self.kind
        problems = []
        for k in kinds:
            try:
                return _CHECKS[k](self, value, field)
            except ParamProblem as exc:
                problems.append(exc)
        if len(problems) == 1:
            raise problems[0]
        raise ParamProblem(field, f"must be {self.expected()}, got {show(value)}")


def _limits(p: Param, v: float, field: str, what: str) -> None:
    unit = f" {p.unit}" if p.unit else ""
    if p.above is not None and not v > p.above:
        raise ParamProblem(field, f"must be {what} above {p.above:g}{unit}, got {v!r}")
    if p.below is not None and not v < p.below:
        raise ParamProblem(field, f"must be {what} below {p.below:g}{unit}, got {v!r}")
    if p.minimum is not None and v < p.minimum:
        raise ParamProblem(field, f"must be {what} of at least {p.minimum:g}{unit}, got {v!r}")
    if p.maximum is not None and v > p.maximum:
        raise ParamProblem(field, f"must be {what} of at most {p.maximum:g}{unit}, got {v!r}")


def _number(p: Param, v: Any, field: str) -> float:
    if isinstance(v, (bool, np.bool_)) or not isinstance(v, (int, float, np.integer, np.floating)):
        raise ParamProblem(field, f"must be {_word_number(p)}, got {show(v)}")
    try:
        f = float(v)
    except OverflowError:
        raise ParamProblem(field, f"must be {_word_number(p)}, got an integer too large "
                                  "for a float") from None
    if not math.isfinite(f):
        raise ParamProblem(field, f"must be a finite number, got {f!r}")
    _limits(p, f, field, "a number")
    return f


def _integer(p: Param, v: Any, field: str) -> int:
    if isinstance(v, (bool, np.bool_)) or not isinstance(v, (int, float, np.integer, np.floating)):
        raise ParamProblem(field, f"must be a whole number, got {show(v)}")
    if isinstance(v, (float, np.floating)) and not (math.isfinite(v) and float(v).is_integer()):
        raise ParamProblem(field, f"must be a whole number, got {show(v)}")
    i = int(v)
    if abs(i) > MAX_INT:
        raise ParamProblem(field, f"must be a whole number of at most 2**53 in size, got one "
                                  f"of {len(str(abs(i)))} digits")
    _limits(p, i, field, "a whole number")
    return i


def _boolean(p: Param, v: Any, field: str) -> bool:
    if not isinstance(v, (bool, np.bool_)):
        raise ParamProblem(field, f"must be True or False, got {show(v)}")
    return bool(v)


def _string(p: Param, v: Any, field: str) -> str:
    if not isinstance(v, str):
        raise ParamProblem(field, f"must be a string, got {show(v)}")
    if len(v) > MAX_STRING:
        raise ParamProblem(field, f"must be a string of at most {MAX_STRING:,} characters, got "
                                  f"{len(v):,}")
    return v


def _choice(p: Param, v: Any, field: str):
    for c in p.choices:
        if type(v) is type(c) and v == c:
            return c
    raise ParamProblem(field, f"must be one of {', '.join(repr(c) for c in p.choices)}, "
                              f"got {show(v)}")


def _range(p: Param, v: Any, field: str) -> list[float]:
    if isinstance(v, (str, bytes, Mapping)) or not isinstance(v, (Sequence, np.ndarray)) \
            or len(v) != 2:
        raise ParamProblem(field, f"must be a pair (lo, hi){_unit(p)}, got {show(v)}")
    return [_number(p, v[0], f"{field}[0]"), _number(p, v[1], f"{field}[1]")]


def _numbers(p: Param, v: Any, field: str) -> list:
    if isinstance(v, (str, bytes, Mapping)) or not isinstance(v, (Sequence, np.ndarray)):
        raise ParamProblem(field, f"must be a list of numbers, got {show(v)}")
    if len(v) > p.max_items:
        raise ParamProblem(field, f"must hold at most {p.max_items:,} numbers, got {len(v):,}")
    out = []
    for i, x in enumerate(v.tolist() if isinstance(v, np.ndarray) else v):
        if p.null_items and (x is None or (isinstance(x, float) and math.isnan(x))):
            out.append(None)
        else:
            out.append(_number(p, x, f"{field}[{i}]"))
    return out


def _strings(p: Param, v: Any, field: str) -> str | list[str]:
    if isinstance(v, str):
        return _string(p, v, field)
    if not isinstance(v, (list, tuple)):
        raise ParamProblem(field, f"must be a string or a list of strings, got {show(v)}")
    if len(v) > p.max_items:
        raise ParamProblem(field, f"must name at most {p.max_items:,} items, got {len(v):,}")
    return [_string(p, x, f"{field}[{i}]") for i, x in enumerate(v)]


def _mapping(p: Param, v: Any, field: str) -> dict:
    if not isinstance(v, Mapping):
        raise ParamProblem(field, f"must be a mapping (dict), got {show(v)}")
    return check_json(v, field)


def _json(p: Param, v: Any, field: str):
    return check_json(v, field)


def _unit(p: Param) -> str:
    return f" in {p.unit}" if p.unit else ""


def _word_number(p: Param) -> str:
    return f"a number{_unit(p)}"


_CHECKS = {"number": _number, "integer": _integer, "boolean": _boolean, "string": _string,
           "choice": _choice, "range": _range, "numbers": _numbers, "strings": _strings,
           "mapping": _mapping, "json": _json}
_KIND_WORDS = {
    "number": _word_number, "integer": lambda p: "a whole number",
    "boolean": lambda p: "True or False", "string": lambda p: "a string",
    "choice": lambda p: "one of " + ", ".join(repr(c) for c in p.choices),
    "range": lambda p: f"a pair (lo, hi){_unit(p)}", "numbers": lambda p: "a list of numbers",
    "strings": lambda p: "a string or a list of strings", "mapping": lambda p: "a mapping",
    "json": lambda p: "plain data"}


def check_json(value: Any, field: str) -> Any:
    """``value`` as plain JSON data (numpy scalars and tuples converted), bounded in depth
    (:data:`MAX_DEPTH`), items (:data:`MAX_ITEMS`), string length and integer size, with
    finite numbers and string keys only; :class:`ParamProblem` naming the field otherwise."""
    budget = [MAX_ITEMS]

    def walk(v, where, depth):
        if depth > MAX_DEPTH:
            raise ParamProblem(where, f"is nested deeper than {MAX_DEPTH} levels")
        if v is None or isinstance(v, str):
            if isinstance(v, str) and len(v) > MAX_STRING:
                raise ParamProblem(where, f"holds a string of {len(v):,} characters (at most "
                                          f"{MAX_STRING:,})")
            return v
        if isinstance(v, (bool, np.bool_)):
            return bool(v)
        if isinstance(v, (int, np.integer)):
            i = int(v)
            if abs(i) > MAX_INT:
                raise ParamProblem(where, f"holds an integer of {len(str(abs(i)))} digits "
                                          "(at most 2**53 in size)")
            return i
        if isinstance(v, (float, np.floating)):
            if not math.isfinite(v):
                raise ParamProblem(where, f"must hold finite numbers, got {float(v)!r}")
            return float(v)
        if isinstance(v, (list, tuple, np.ndarray)):
            items = v.tolist() if isinstance(v, np.ndarray) else v
            budget[0] -= len(items)
            if budget[0] < 0:
                raise ParamProblem(field, f"holds more than {MAX_ITEMS:,} items")
            return [walk(x, f"{where}[{i}]", depth + 1) for i, x in enumerate(items)]
        if isinstance(v, Mapping):
            budget[0] -= len(v)
            if budget[0] < 0:
                raise ParamProblem(field, f"holds more than {MAX_ITEMS:,} items")
            out = {}
            for k, x in v.items():
                if not isinstance(k, str):
                    raise ParamProblem(where, f"has a key {show(k)}; keys must be strings")
                out[k] = walk(x, f"{where}.{k}", depth + 1)
            return out
        raise ParamProblem(where, f"must be plain data (numbers, strings, lists, dicts), got "
                                  f"{show(v)}")

    return walk(value, field, 0)


def check_params(declared: Sequence[Param] | None, params: Any) -> dict:
    """Check a step's parameters against its declaration; return them normalised.

    ``declared`` None accepts any bounded JSON object (kinds that declare nothing yet).
    Raises :class:`ParamProblem` for the first problem: a missing required parameter, an
    unknown one (the message lists the known ones), or a value that does not fit.
    """
    if not isinstance(params, Mapping):
        raise ParamProblem("params", f"must be an object of parameters, got {show(params)}")
    if declared is None:
        return check_json(dict(params), "params")
    by_name = {p.name: p for p in declared}
    out = {}
    for name, value in params.items():
        if name not in by_name:
            known = ", ".join(by_name) or "none"
            raise ParamProblem(str(name), f"is not a parameter of this step (its parameters: "
                                          f"{known})")
        out[name] = by_name[name].check(value)
    for p in declared:
        if p.required and p.name not in out:
            raise ParamProblem(p.name, f"is required ({p.expected()})")
    return out
