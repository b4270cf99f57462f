"""The series file: its document, how it is recognised, read and checked.

The series file (``series.json`` in the output folder) is JSON::

    {"format": "widgetkit-series", "version": 1, "session_version": <session format>,
     "created", "modified", "software", "complete": bool,
     "recipe": <the recipe document>, "recipe_sha256": hex,
     "variable": {"name", "unit", "field", "pattern", "values"} or null,
     "spectra": [{"index", "name", "source", "sha256", "variable", "variable_unit",
                  "status", "reasons", "notes", "session", "session_sha256", "seconds",
                  "cpu_seconds", "warm_start", "constants": {column: [values]}}, ...]}

``sha256`` is that of the source file's bytes (of the data for an in-memory
spectrum), ``session`` the session file relative to the series file and
``session_sha256`` the sha256 of its bytes, ``seconds`` and ``cpu_seconds`` the wall and
processor time its worker spent on it; ``spectra`` are in series order
(by the variable, then by name).
"""

from __future__ import annotations

import os
from pathlib import Path

from ..errors import SeriesError
from ..session import codec
from ..session.recipe import Recipe
from ..session.steps import software_versions, utc_now
from .variable import Variable

__all__ = ["SERIES_FORMAT", "SERIES_VERSION", "SERIES_FILE", "read_series_document",
           "is_series_file", "series_document"]

SERIES_FORMAT = "widgetkit-series"
SERIES_VERSION = 1
SERIES_FILE = "series.json"


def is_series_file(path: str | os.PathLike) -> bool:
    """Whether ``path`` looks like a series file (its ``format`` field, read cheaply), or is a
    folder holding one."""
    if os.path.isdir(path):
        return is_series_file(os.path.join(path, SERIES_FILE))
    try:
        with open(path, "rb") as fh:
            head = fh.read(4096)
    except OSError:
        return False
    return f'"format":"{SERIES_FORMAT}"'.encode() in head.replace(b" ", b"")


def _text(v) -> bool:
    return v is None or isinstance(v, str)


def _number(v) -> bool:
    return v is None or (isinstance(v, (int, float)) and not isinstance(v, bool))


def _texts(v) -> bool:
    return v is None or (isinstance(v, list) and all(isinstance(t, str) for t in v))


def _columns(v) -> bool:
    """``{column: [values]}`` with every column as long as the others."""
    return v is None or (isinstance(v, dict) and all(isinstance(c, list) for c in v.values())
                         and len({len(c) for c in v.values()}) <= 1)


#: the fields of a spectrum's entry: (check, what it must be)
_ENTRY_FIELDS = {
    "index": (lambda v: v is None or (isinstance(v, int) and not isinstance(v, bool)),
              "a whole number"),
    "source": (_text, "text"), "sha256": (_text, "text"), "session_sha256": (_text, "text"),
    "variable_unit": (_text, "text"),
    "variable": (lambda v: _number(v) or isinstance(v, str), "a number or text"),
    "reasons": (_texts, "a list of texts"), "notes": (_texts, "a list of texts"),
    "seconds": (_number, "a number"), "cpu_seconds": (_number, "a number"),
    "warm_start": (lambda v: v is None or isinstance(v, dict), "an object"),
    "constants": (_columns, "an object of equally long columns {name: [values]}"),
}
#: the fields of the document besides the spectra and the recipe
_DOC_FIELDS = {
    "variable": (lambda v: v is None or (isinstance(v, dict) and _text(v.get("name"))
                                         and _text(v.get("unit"))),
                 "an object with a 'name' and a 'unit' (texts) or null"),
    "recipe_sha256": (_text, "text"), "created": (_text, "text"), "modified": (_text, "text"),
    "complete": (lambda v: v is None or isinstance(v, bool), "true or false"),
}


def _check_fields(obj: dict, fields: dict, where: str, path: str) -> None:
    from ..session.verify import cut

    for key, (ok, what) in fields.items():
        if key in obj and not ok(obj[key]):
            raise SeriesError(f"field {where}{key}: must be {what}, got {cut(obj[key], 80)}",
                              path=path)


def read_series_document(path: str | os.PathLike) -> dict:
    """Read and check a series file: strict, bounded JSON (as session files are read, see
    :mod:`widgetkit.session.jsonfile`) and every field the series uses of the right type;
    :class:`SeriesError` naming the file and the field otherwise."""
    from ..session.jsonfile import read

    p = str(path)
    doc = read(p, error=SeriesError, what="a series file")
    if not isinstance(doc, dict) or doc.get("format") != SERIES_FORMAT:
        raise SeriesError(f"not a widgetkit series file (format {doc.get('format')!r})"
                          if isinstance(doc, dict) else "not a widgetkit series file", path=p)
    v = doc.get("version")
    if not isinstance(v, int) or isinstance(v, bool) or v < 1:
        raise SeriesError(f"field version: must be a positive integer, got {v!r}", path=p)
    if v > SERIES_VERSION:
        raise SeriesError(f"the series file is of version {v}; this widgetkit reads up to "
                          f"{SERIES_VERSION}; upgrade widgetkit", path=p)
    _check_fields(doc, _DOC_FIELDS, "", p)
    spectra = doc.get("spectra")
    if not isinstance(spectra, list):
        raise SeriesError("field spectra: must be a list", path=p)
    for i, e in enumerate(spectra):
        if not isinstance(e, dict) or not isinstance(e.get("name"), str) \
                or e.get("status") not in ("ok", "doubtful", "failed"):
            raise SeriesError(f"field spectra/{i}: each entry needs a 'name' and a 'status' "
                              "(ok, doubtful or failed)", path=p)
        _check_fields(e, _ENTRY_FIELDS, f"spectra/{i}/", p)
        sess = e.get("session")
        if sess is not None and (not isinstance(sess, str) or os.path.isabs(sess)
                                 or ".." in Path(sess).parts):
            raise SeriesError(f"field spectra/{i}/session: must be a path inside the series "
                              f"folder, got {sess!r}", path=p)
    Recipe.from_json(doc.get("recipe"), path=p)
    return doc


def series_document(recipe: Recipe, variable: Variable | None, entries: list[dict], *,
                    created: str, complete: bool) -> dict:
    """The series file's document (module notes)."""
    return {"format": SERIES_FORMAT, "version": SERIES_VERSION, "session_version": codec.VERSION,
            "created": created, "modified": utc_now(), "software": software_versions(),
            "complete": bool(complete), "recipe": recipe.to_json(),
            "recipe_sha256": recipe.sha256,
            "variable": None if variable is None else variable.to_json(), "spectra": entries}
