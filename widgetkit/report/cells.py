"""Turning table values into report cells, and reading them back.

A column ``c`` with a standard-error column beside it (``c_err``, or ``stderr``
for ``value``) is shown in the uncertainty notation of the trade,
``2885.977(3)`` = 2885.977 ± 0.003 (one standard error in the last digits).
Other floats are shown with 10 significant digits, integers exactly, booleans
as ``yes``/``no`` and missing values as ``–``. :func:`parse_uncertainty` and
:func:`parse_cell` read cells back (tests use them to check that a report
shows the session's values).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..formatting import format_uncertainty

__all__ = ["Column", "table_columns", "cell_text", "parse_uncertainty", "parse_cell", "MISSING",
           "PLAIN_DIGITS"]

MISSING = "–"
#: significant digits of floats shown without an uncertainty
PLAIN_DIGITS = 10
_INT_COLUMNS = {"line_id", "peak_id", "v_upper", "v_lower", "J_upper", "J_lower", "number", "n",
                "J", "n_lines", "size"}
_HEADINGS = {"obs_minus_calc": "obs − calc", "position_err": "σ(position)", "stderr": "σ"}
_UNITS = {"position": "cm⁻¹", "fwhm": "cm⁻¹", "sigma": "cm⁻¹", "gamma": "cm⁻¹", "calc": "cm⁻¹",
          "obs_minus_calc": "cm⁻¹"}


@dataclass(frozen=True)
class Column:
    """A report column: the table column ``name`` and, when it has one, its error column."""

    name: str
    err: str | None = None

    @property
    def heading(self) -> str:
        text = _HEADINGS.get(self.name, self.name)
        unit = _UNITS.get(self.name)
        return f"{text} ({unit})" if unit else text


def table_columns(df: pd.DataFrame) -> list[Column]:
    """The report columns of a table: each value column paired with its error column."""
    cols = [str(c) for c in df.columns]
    paired = {c + "_err" for c in cols if c + "_err" in cols}
    if "value" in cols and "stderr" in cols:
        paired.add("stderr")
    out = []
    for c in cols:
        if c in paired:
            continue
        if c == "value" and "stderr" in paired:
            out.append(Column(c, "stderr"))
        else:
            out.append(Column(c, c + "_err" if c + "_err" in paired else None))
    return out


def _missing(v) -> bool:
    if v is None or v is pd.NA:
        return True
    try:
        return isinstance(v, (float, np.floating)) and math.isnan(v)
    except TypeError:  # pragma: no cover
        return False


def _plain(name: str, v) -> str:
    if _missing(v):
        return MISSING
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (int, np.integer)):
        return str(int(v))
    if isinstance(v, (float, np.floating)):
        f = float(v)
        if name in _INT_COLUMNS and f.is_integer():
            return str(int(f))
        if not math.isfinite(f):
            return "inf" if f > 0 else "-inf"
        return f"{f:.{PLAIN_DIGITS}g}"
    return str(v)


def cell_text(row: pd.Series, col: Column) -> str:
    """The text of one cell (``row`` a table row)."""
    v = row[col.name]
    if col.err is None:
        return _plain(col.name, v)
    if _missing(v):
        return MISSING
    e = row[col.err]
    return format_uncertainty(float(v), None if _missing(e) else float(e))


_UNC = re.compile(r"^\s*(?P<v>[-+]?\d+(?:\.(?P<d>\d*))?)(?:\((?P<u>\d+)\))?"
                  r"(?:e(?P<p>[-+]?\d+))?\s*$")


def parse_uncertainty(text: str) -> tuple[float, float | None]:
    """Read ``"2885.977(3)"`` back as ``(2885.977, 0.003)``; also ``"6.67(15)e-11"``.

    A value without parentheses gives ``(value, None)``. Raises ``ValueError`` on
    anything else.
    """
    m = _UNC.match(text.replace("−", "-"))
    if m is None:
        raise ValueError(f"not a value(uncertainty) cell: {text!r}")
    p = int(m["p"]) if m["p"] else 0
    scale = 10.0**p
    value = float(m["v"]) * scale
    if m["u"] is None:
        return value, None
    decimals = len(m["d"] or "")
    return value, int(m["u"]) * 10.0 ** (-decimals) * scale


def parse_cell(text: str):
    """Read a plain cell back: a number, ``True``/``False`` for yes/no, None for missing,
    otherwise the text itself."""
    t = text.strip()
    if t in (MISSING, ""):
        return None
    if t in ("yes", "no"):
        return t == "yes"
    try:
        return int(t)
    except ValueError:
        pass
    try:
        return float(t.replace("−", "-"))
    except ValueError:
        return t
