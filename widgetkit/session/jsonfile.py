"""Strict reading of session, recipe and series files: JSON as the standard defines it, bounded.

:func:`parse` refuses, with a :class:`~widgetkit.errors.SessionFormatError`
naming the line, column and field, what Python's ``json`` module would accept
silently or fail on with a built-in error:

* a repeated key in one object (RFC 8259 §4 says names SHOULD be unique; the
  ``json`` module keeps the last one, so an edited file could hide a value),
* ``NaN``, ``Infinity`` and ``-Infinity`` (not JSON),
* integers of more than :data:`MAX_INT_DIGITS` digits and numbers written with
  more than :data:`MAX_NUMBER_CHARS` characters (``int("9" * 5000)`` costs time
  and Python refuses beyond 4,300 digits),
* nesting deeper than :data:`MAX_DEPTH` (the parser recurses once per level;
  it stops by itself at Python's recursion limit, and the depth of what it read
  is then checked without recursion),
* files larger than :data:`MAX_BYTES`.
"""

from __future__ import annotations

import json
import re

import numpy as np

from ..errors import SessionFormatError

__all__ = ["parse", "read", "MAX_BYTES", "MAX_DEPTH", "MAX_INT_DIGITS", "MAX_NUMBER_CHARS"]

#: largest session file read (bytes): a 10-million-point spectrum embedded is about 210 MB
MAX_BYTES = 512 * 2**20
#: deepest nesting of arrays and objects (a session file needs about 8)
MAX_DEPTH = 64
#: most digits of an integer (int64 needs 19)
MAX_INT_DIGITS = 20
#: longest number literal (a float's shortest repr is at most 24 characters)
MAX_NUMBER_CHARS = 40

_TOKEN = re.compile(r'"[^"\\]*(?:\\.[^"\\]*)*"|[\[\]{}:,]|-?[0-9][0-9.eE+-]*|[A-Za-z]+|-[A-Za-z]+',
                    re.DOTALL)


class _Problem(Exception):
    def __init__(self, what: str, token: str):
        super().__init__(what)
        self.what, self.token = what, token


def _int(text: str) -> int:
    if len(text.lstrip("-")) > MAX_INT_DIGITS:
        raise _Problem(f"an integer of {len(text.lstrip('-')):,} digits (at most "
                       f"{MAX_INT_DIGITS})", text)
    return int(text)


def _float(text: str) -> float:
    if len(text) > MAX_NUMBER_CHARS:
        raise _Problem(f"a number written with {len(text):,} characters (at most "
                       f"{MAX_NUMBER_CHARS})", text)
    value = float(text)
    if value in (float("inf"), float("-inf")):
        raise _Problem(f"the number {text[:30]} beyond the range of a float", text)
    return value


def _constant(text: str):
    raise _Problem(f"{text}, which is not JSON (use null for a missing number)", text)


def _pairs(pairs: list) -> dict:
    out = dict(pairs)
    if len(out) != len(pairs):
        seen: set = set()
        for k, _ in pairs:
            if k in seen:
                raise _Problem(f"the key {k[:40]!r} twice in one object (keys must be unique; "
                               "which value was meant cannot be known)", json.dumps(k))
            seen.add(k)
    return out


_KEEP = b"[]{}\""
_DROP = bytes(b for b in range(256) if b not in _KEEP)
_QUOTED = re.compile(rb'"[^"]*"')


def _deeper_than(value, limit: int) -> bool:
    """Whether lists and objects nest deeper than ``limit`` (iterative: no recursion)."""
    stack = [(value, 1)]
    while stack:
        node, depth = stack.pop()
        if depth > limit:
            return True
        for item in (node.values() if isinstance(node, dict) else node):
            if isinstance(item, (dict, list)):
                stack.append((item, depth + 1))
    return False


def nesting_depth(data: bytes) -> int:
    """Deepest nesting of ``[`` and ``{`` outside strings, in linear time without recursion.

    Escaped backslashes, then escaped quotes are removed (left to right, as JSON reads
    them), every byte but brackets and quotes is dropped (``bytes.translate``), what lies
    between quotes is dropped, and the depth is the largest running sum of the rest.
    """
    reduced = data.replace(b"\\\\", b"").replace(b'\\"', b"").translate(None, _DROP)
    brackets = _QUOTED.sub(b"", reduced).replace(b'"', b"")
    if not brackets:
        return 0
    codes = np.frombuffer(brackets, dtype=np.uint8)
    steps = np.where((codes == 91) | (codes == 123), 1, -1)
    return int(np.cumsum(steps).max())


def parse(data: bytes, *, path: str | None = None, error: type = SessionFormatError,
          what: str = "a session file"):
    """The JSON value of a file's bytes; ``error`` (default :class:`SessionFormatError`,
    with ``path``) for anything that is not strict, bounded JSON (module docstring). ``what``
    names the kind of file in messages ("a series file")."""
    if len(data) > MAX_BYTES:
        raise error(f"the file holds {len(data):,} bytes, more than the "
                    f"{MAX_BYTES:,} {what} may have", path=path)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise error(f"not a text (UTF-8 JSON) file: byte {exc.start} cannot be decoded",
                    path=path) from None
    if text.startswith("\ufeff"):
        text = text[1:]
    try:
        value = json.loads(text, object_pairs_hook=_pairs, parse_int=_int, parse_float=_float,
                           parse_constant=_constant)
        if isinstance(value, (dict, list)) and _deeper_than(value, MAX_DEPTH):
            raise RecursionError
        return value
    except RecursionError:  # the parser stops by itself far below any danger
        raise error(f"the JSON is nested {nesting_depth(data):,} levels deep (at most "
                    f"{MAX_DEPTH}); this is not {what}", path=path) from None
    except json.JSONDecodeError as exc:
        raise error(f"invalid JSON at line {exc.lineno}, column {exc.colno}: {exc.msg}",
                    path=path) from None
    except _Problem as exc:
        raise error(f"{_locate(text, exc.token)}holds {exc.what}", path=path) from None
    except (ValueError, MemoryError) as exc:  # pragma: no cover - bounded above
        raise error(f"the JSON cannot be read: {type(exc).__name__}", path=path) from None


def read(path, *, error: type = SessionFormatError, what: str = "a session file"):
    """The JSON value of the file ``path``, read strictly (:func:`parse`); its size is
    checked before it is read. ``OSError`` when it cannot be read at all."""
    import os

    p = os.fspath(path)
    size = os.stat(p).st_size
    if size > MAX_BYTES:
        raise error(f"the file holds {size:,} bytes, more than the {MAX_BYTES:,} {what} may "
                    "have", path=p)
    with open(p, "rb") as fh:
        data = fh.read()
    return parse(data, path=p, error=error, what=what)


def _locate(text: str, token: str) -> str:
    """``"line L, column C, field a/b/3: "`` of the first offending ``token`` (a duplicated
    key, a number or a constant), found by one pass over the tokens tracking the path."""
    stack: list[list] = []  # [container, current key or index, keys seen]
    key_next = False
    for m in _TOKEN.finditer(text):
        t = m.group()
        if t in "[{":
            if stack and stack[-1][0] == "[":
                stack[-1][1] += 1
            stack.append(["{", None, set()] if t == "{" else ["[", -1, None])
            key_next = t == "{"
            continue
        if t in "]}":
            if stack:
                stack.pop()
            key_next = False
            continue
        if t == ",":
            key_next = bool(stack) and stack[-1][0] == "{"
            continue
        if t == ":":
            key_next = False
            continue
        top = stack[-1] if stack else None
        if key_next and top is not None and top[0] == "{":
            key = json.loads(t) if t.startswith('"') else t
            if t == token and key in top[2]:
                return _where(text, m.start(), stack, key)
            top[2].add(key)
            top[1] = key
            key_next = False
            continue
        if top is not None and top[0] == "[":
            top[1] += 1
        if t == token:
            return _where(text, m.start(), stack, None)
    return ""


def _where(text: str, pos: int, stack: list, key) -> str:
    line = text.count("\n", 0, pos) + 1
    col = pos - (text.rfind("\n", 0, pos) + 1) + 1
    parts = [str(frame[1]) for frame in stack if frame[1] is not None]
    if key is not None:
        parts[-1:] = [str(key)]
    field = "/".join(parts) or "(top level)"
    return f"line {line}, column {col}, field {field}: "
