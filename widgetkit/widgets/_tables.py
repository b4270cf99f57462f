"""Tables of the session's DataFrames as HTML (values with uncertainties as the trade writes them)."""

from __future__ import annotations

import html
import math

import pandas as pd

from .numbers import format_uncertainty, format_value

__all__ = ["html_table", "TABLE_CSS"]

TABLE_CSS = (
    "<style>"
    ".wk-table{border-collapse:collapse;font-size:12px;font-family:monospace}"
    ".wk-table th,.wk-table td{border-bottom:1px solid #ddd;padding:1px 6px;text-align:right}"
    ".wk-table th{background:#f3f3f3}"
    ".wk-table tr.wk-selected td{background:#d5f5e3}"
    ".wk-table tr.wk-outlier td{color:#b03a2e}"
    ".wk-table tr.wk-current td{background:#fdebd0}"
    "</style>"
)


def _cell(v) -> str:
    if v is None:
        return "–"
    if isinstance(v, bool):
        return "yes" if v else ""
    if isinstance(v, float):
        if math.isnan(v):
            return "–"
        return format_value(v, 6)
    try:
        if pd.isna(v):
            return "–"
    except (TypeError, ValueError):
        pass
    return str(v)


def html_table(df: pd.DataFrame, *, name: str, columns: list[str] | None = None,
               headers: dict[str, str] | None = None, row_class=None, max_rows: int = 300,
               empty: str = "no rows yet", formats: dict[str, str] | None = None,
               converters: dict | None = None) -> str:
    """An HTML table of ``df``.

    A column ``c`` with a companion ``c_err`` (or ``stderr`` for ``value``) is
    written as ``value(uncertainty)`` with :func:`format_uncertainty`; the
    companion column is not shown on its own.

    Parameters
    ----------
    df : DataFrame
    name : str
        Added as CSS class ``wk-<name>`` (the browser test finds tables by it).
    columns : list of str, optional
        Columns to show, in order (default all that exist).
    headers : dict, optional
        Column titles (default the column names, the one vocabulary).
    row_class : callable, optional
        ``row_class(row) -> str`` CSS class of a row (``"wk-selected"``, ...).
    max_rows : int
        Rows shown; a final line says how many more there are.
    formats : dict, optional
        Format specs of columns without uncertainties (e.g. ``{"position": ".4f"}``).
    converters : dict, optional
        Column -> function of a cell value returning its text (e.g. isotopologue keys shown
        as H³⁵Cl); missing values stay ``–``.
    """
    headers = headers or {}
    formats = formats or {}
    converters = converters or {}
    cols = [c for c in (columns or list(df.columns)) if c in df.columns]
    err_of = {}
    for c in cols:
        for e in (f"{c}_err", "stderr" if c == "value" else None):
            if e and e in df.columns:
                err_of[c] = e
    shown = [c for c in cols if c not in err_of.values()]
    head = "".join(f"<th>{html.escape(headers.get(c, c))}</th>" for c in shown)
    out = [TABLE_CSS, f'<table class="wk-table wk-{name}"><thead><tr>{head}</tr></thead><tbody>']
    if len(df) == 0:
        out.append(f'<tr><td colspan="{max(len(shown), 1)}" style="text-align:left">'
                   f"{html.escape(empty)}</td></tr>")
    for _, row in df.head(max_rows).iterrows():
        cls = row_class(row) if row_class else ""
        cells = []
        for c in shown:
            v = row[c]
            if c in err_of and isinstance(v, (int, float)) and not isinstance(v, bool):
                err = row[err_of[c]]
                text = format_uncertainty(v, None if err is None or pd.isna(err) else float(err))
            elif c in formats and isinstance(v, (int, float)) and not pd.isna(v):
                text = format(v, formats[c])
            elif c in converters and not (v is None or (isinstance(v, float) and pd.isna(v))):
                text = str(converters[c](v))
            else:
                text = _cell(v.item() if hasattr(v, "item") else v)
            cells.append(f"<td>{html.escape(text)}</td>")
        out.append(f'<tr class="{cls}">' + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    if len(df) > max_rows:
        out.append(f"<div>… {len(df) - max_rows} more rows (the full table is in the session)</div>")
    return "".join(out)
