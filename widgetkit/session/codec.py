"""The session file: JSON with ``format``/``version``, a shipped JSON Schema,
explicit array encoding with hashes, ordered migrations and atomic saves.

Layout (version 1)::

    {"format": "widgetkit-session", "version": 1,
     "created": ISO time, "modified": ISO time, "software": {...},
     "sources": [{"id", "path", "sha256", "size", "format", "y_kind", "meta",
                  "read_options", "data": {"x": ARRAY, "y": ARRAY} or null}],
     "steps": [{"kind", "params", "at", "summary", "result", "software"}]}

    ARRAY = {"dtype": "<f8", "shape": [n], "encoding": "base64",
             "sha256": hex of the raw bytes, "data": base64 text}

No pickle, no code: a file is data only.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import json
import os
from collections.abc import Callable
from functools import lru_cache
from importlib import resources

import numpy as np

from ..errors import SessionFormatError
from . import jsonfile, structure

__all__ = ["FORMAT", "VERSION", "MIGRATIONS", "encode_array", "decode_array", "migrate",
           "validate", "atomic_write_text", "read_document"]

FORMAT = "widgetkit-session"
#: the version this code writes
VERSION = 1
#: MIGRATIONS[k] turns a version k+1 document into a version k+2 document
MIGRATIONS: list[Callable[[dict], dict]] = []


def encode_array(a: np.ndarray) -> dict:
    """Encode a float64 array as base64 little-endian bytes with dtype, shape and sha256."""
    raw = np.ascontiguousarray(a, dtype="<f8").tobytes()
    return {"dtype": "<f8", "shape": list(np.shape(a)), "encoding": "base64",
            "sha256": hashlib.sha256(raw).hexdigest(),
            "data": base64.b64encode(raw).decode("ascii")}


def decode_array(d: dict, *, where: str) -> tuple[np.ndarray, bool]:
    """Decode an encoded array; returns the array and whether its sha256 matches.

    Raises :class:`SessionFormatError` naming ``where`` when the data cannot be decoded.
    """
    if not isinstance(d, dict) or d.get("dtype") != "<f8" or d.get("encoding") != "base64":
        got = (f"dtype {str(d.get('dtype'))[:20]!r}, encoding {str(d.get('encoding'))[:20]!r}"
               if isinstance(d, dict) else type(d).__name__)
        raise SessionFormatError(f"{where}: only base64 '<f8' arrays are supported, got {got}")
    shape, data = d.get("shape"), d.get("data")
    if not (isinstance(shape, list) and len(shape) == 1 and isinstance(shape[0], int)
            and not isinstance(shape[0], bool) and 0 <= shape[0] <= 10**9):
        raise SessionFormatError(f"{where}: shape must be [n] with 0 <= n <= 10**9")
    if not isinstance(data, str) or not isinstance(d.get("sha256"), str):
        raise SessionFormatError(f"{where}: data and sha256 must be text")
    try:
        raw = base64.b64decode(data, validate=True)
    except (binascii.Error, ValueError):
        raise SessionFormatError(f"{where}: the base64 data is corrupt (not base64 text of "
                                 "whole 8-byte numbers)") from None
    n = shape[0]
    if len(raw) != 8 * n:
        raise SessionFormatError(
            f"{where}: holds {len(raw)} bytes but shape {shape} needs {8 * n}")
    ok = hashlib.sha256(raw).hexdigest() == d["sha256"]
    return np.frombuffer(raw, dtype="<f8").astype(np.float64), ok


@lru_cache(maxsize=4)
def _schema(version: int) -> dict:
    text = resources.files("widgetkit.session").joinpath(
        f"schema/session-v{version}.schema.json").read_text(encoding="utf-8")
    return json.loads(text)


def validate(doc: dict, *, path: str | None = None) -> None:
    """Check a current-version document against the shipped JSON Schema
    (:mod:`.structure` interprets it: no validator package is imported)."""
    found = structure.problems(doc, _schema(VERSION))
    if found:
        more = " (and more problems)" if len(found) > 1 else ""
        raise SessionFormatError(found[0] + more, path=path)


def migrate(doc: dict, *, path: str | None = None) -> dict:
    """Bring a document to :data:`VERSION` through :data:`MIGRATIONS`, in order.

    A document newer than this code is refused, naming both versions.
    """
    if not isinstance(doc, dict) or doc.get("format") != FORMAT:
        got = doc.get("format") if isinstance(doc, dict) else type(doc).__name__
        raise SessionFormatError(
            f"not a widgetkit session file (format is {got!r}, expected {FORMAT!r})", path=path)
    version = doc.get("version")
    if not isinstance(version, int) or isinstance(version, bool) or version < 1:
        raise SessionFormatError(f"field version: must be a positive integer, got {version!r}",
                                 path=path)
    if version > VERSION:
        raise SessionFormatError(
            f"the file is session format version {version}, but this widgetkit reads versions "
            f"up to {VERSION}; upgrade widgetkit to open it", path=path)
    while version < VERSION:
        doc = MIGRATIONS[version - 1](dict(doc))
        version += 1
        doc["version"] = version
    return doc


def read_document(path: str | os.PathLike) -> dict:
    """Read, migrate and validate a session file; raises SessionFormatError on any problem
    of its content (and OSError when it cannot be read at all)."""
    p = os.fspath(path)
    doc = migrate(jsonfile.read(p), path=p)
    validate(doc, path=p)
    return doc


def atomic_write_text(path: str | os.PathLike, text: str) -> str:
    """Write ``text`` to ``path`` atomically (:func:`widgetkit._files.atomic_write`: a
    temporary file in the same folder, fsync, rename; symbolic links written through; the
    umask's mode for a new file; temporaries of killed saves removed). On any failure the
    previous file is left untouched. Returns the real path written."""
    from .._files import atomic_write

    return atomic_write(path, text.encode("utf-8"))
