"""The CSV form of a report: one tidy table per file, each readable by ``pandas.read_csv``.

``write_report(session, "r.csv")`` writes ``r.csv``, the index (one row per table:
``table, file, rows, description``), and beside it one file per table,
``r_<table>.csv``: ``report`` (title, time, versions, verification as
``key, value`` rows), ``methods``, ``flags``, ``sources``, ``steps`` (numbered
from 0, parameters as JSON), ``lines``, ``assignments``, ``constants``, any
further tables, ``notes`` and ``software``. There are no comment lines and no
sections: every file is a plain header row and data rows. Numbers are written
in the shortest form that reads back to the same float64, isotopologues and
units as their ASCII keys (``1H-35Cl``, ``cm-1``), so the tables read back to
exactly the session's values (:func:`read_report_csv`).
"""

from __future__ import annotations

import io
import json
import os
from pathlib import Path

import pandas as pd

from .data import ReportData

__all__ = ["render_csv", "read_report_csv", "csv_file_names", "TABLE_DESCRIPTIONS"]

TABLE_DESCRIPTIONS = {
    "report": "title, time of writing, widgetkit version and whether the session was verified",
    "methods": "how every number was obtained, one paragraph per row",
    "flags": "what to look at twice: parameters on a bound, doubtful results, outliers",
    "sources": "the source file: path, format, size, sha256 of the file and of the data",
    "steps": "the processing record, step 0 = load; params exactly as recorded (JSON)",
    "lines": "fitted lines; wavenumbers in cm-1, *_err one standard error",
    "assignments": "line assignments; obs_minus_calc in cm-1, weight = 1/sigma^2 in cm^2",
    "constants": "fitted and derived constants; stderr one standard error, unit per row",
    "combination_differences": "combination differences of the assignment, cm-1",
    "notes": "what the assignment flagged, left out or cross-checked",
    "software": "package versions recorded by the session's steps",
}
_TEXT_COLUMNS = {k: str for k in ("id", "path", "format", "sha256", "data_sha256", "kind", "at",
                                  "summary", "params", "package", "version", "isotopologue", "label",
                                  "message", "name", "unit", "key", "paragraph",
                                  "flag", "table", "file", "description", "method")}


def _frame_text(df: pd.DataFrame) -> str:
    buf = io.StringIO()
    df.to_csv(buf, index=False, lineterminator="\n")
    return buf.getvalue()


def _tables(data: ReportData) -> dict[str, pd.DataFrame]:
    verified = "not run" if data.verified is None else ("yes" if data.verified else "no")
    about = pd.DataFrame({"key": ["title", "generated", "widgetkit", "verified", "notation"],
                          "value": [" ".join(data.title.split()), data.generated,
                                         data.software.get("widgetkit", "unknown"), verified,
                                         "value and stderr columns hold one standard error"]})
    keys = ("id", "path", "format", "size", "sha256", "data_sha256")
    out = {"report": about,
           "methods": pd.DataFrame({"paragraph": list(data.methods)}),
           "flags": pd.DataFrame({"flag": list(data.flags)}),
           "sources": pd.DataFrame([{k: s.get(k) for k in keys} for s in data.sources],
                                   columns=list(keys)),
           "steps": pd.DataFrame(
               [{"step": s.number, "kind": s.kind, "at": s.at, "summary": s.summary,
                 "params": json.dumps(s.params, sort_keys=True, ensure_ascii=False)}
                for s in data.steps], columns=["step", "kind", "at", "summary", "params"])}
    out.update(data.tables())
    out["notes"] = pd.DataFrame({"message": list(data.messages)})
    out["software"] = pd.DataFrame({"package": list(data.software),
                                    "version": list(data.software.values())})
    return out


def csv_file_names(index_path: str | os.PathLike, names) -> dict[str, Path]:
    """Table name -> the file beside the index ``r.csv`` that holds it (``r_<table>.csv``)."""
    p = Path(index_path)
    return {n: p.with_name(f"{p.stem}_{n}.csv") for n in names}


def render_csv(data: ReportData, *, index_name: str = "report.csv") -> dict[str, str]:
    """The report's CSV files as texts: ``{file name: text}``, the index first.

    ``index_name`` is the index file's name; each table goes to ``<stem>_<table>.csv``.
    """
    tables = _tables(data)
    files = csv_file_names(index_name, tables)
    index = pd.DataFrame({"table": list(tables), "file": [files[n].name for n in tables],
                          "rows": [len(df) for df in tables.values()],
                          "description": [TABLE_DESCRIPTIONS.get(n, "a further table of the "
                                                                    "assignment") for n in tables]})
    out = {Path(index_name).name: _frame_text(index)}
    out.update({files[n].name: _frame_text(df) for n, df in tables.items()})
    return out


def _read(text_or_path, table: str = "") -> pd.DataFrame:
    src = io.StringIO(text_or_path) if isinstance(text_or_path, str) else text_or_path
    dtype = dict(_TEXT_COLUMNS, value=str) if table == "report" else _TEXT_COLUMNS
    return pd.read_csv(src, dtype=dtype)


def read_report_csv(source) -> dict[str, pd.DataFrame]:
    """Read a report's CSV tables back: from the index file's path (the tables are the files
    it names, beside it) or from the texts :func:`render_csv` returned.

    Returns
    -------
    dict of str -> DataFrame
        Table name -> table (``"constants"``, ``"lines"``, ...).
    """
    if isinstance(source, dict):
        texts = list(source.values())
        index = _read(texts[0])
        return {t: _read(source[f], t) for t, f in zip(index["table"], index["file"])}
    folder = Path(source).parent
    index = _read(Path(source))
    return {t: _read(folder / f, t) for t, f in zip(index["table"], index["file"])}
