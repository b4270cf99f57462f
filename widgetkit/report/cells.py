"""Turning table values into report cells, and reading them back.

Every number is rounded by its uncertainty:

* a column ``c`` with a standard-error column beside it (``c_err``, or ``stderr``
  for ``value``) is shown in the uncertainty notation of the trade,
  ``2885.977(3)`` = 2885.977 ± 0.003 (one standard error in the last digits);
* ``obs_minus_calc`` is rounded to the decimal place of its row's position (or
  value) as shown, which that one's uncertainty decides, and ``calc`` likewise
  when it has no error of its own;
* ``weight`` (1/σ², σ a standard error itself known to about one digit) and
  ``normalised_residual`` ((obs − calc)/σ_eff) are shown with 2 significant digits;
* a parameter that ended on a bound is shown as its value with 3 significant
  digits and "(at bound)", never as a value(uncertainty) pair;
* other floats without an uncertainty get 6 significant digits (statistics such
  as ``rms`` 3), integers are exact, booleans ``yes``/``no``, missing ``–``;
  powers of ten are written short (``2.5e3``).

Isotopologue keys are shown as the trade writes them (H³⁵Cl) and unit texts as
cm⁻¹. :func:`parse_uncertainty` and :func:`parse_cell` read cells back (tests
use them to check that a report shows the session's values).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..formatting import column_label, display_isotopologue, format_uncertainty, unicode_units

__all__ = ["Column", "table_columns", "cell_text", "parse_uncertainty", "parse_cell", "MISSING",
           "PLAIN_DIGITS", "AT_BOUND"]

MISSING = "–"
#: significant digits of floats shown without an uncertainty
PLAIN_DIGITS = 6
#: the mark of a parameter that ended on a bound of its fit
AT_BOUND = "(at bound)"
_INT_COLUMNS = {"line_id", "peak_id", "v_upper", "v_lower", "J_upper", "J_lower", "number", "n",
                "J", "n_lines", "size", "m", "lines"}
_STATISTICS = {"rms": 3, "n_lines": 6}
_UNITS = {"weight": "cm²"}


@dataclass(frozen=True)
class Column:
    """A report column: the table column ``name`` and, when it has one, its error column."""

    name: str
    err: str | None = None

    @property
    def heading(self) -> str:
        """The trade's name of the column with its unit (``Gaussian σ (cm⁻¹)``)."""
        text = column_label(self.name)
        return f"{text} ({_UNITS[self.name]})" if self.name in _UNITS else text


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


def _sig(f: float, digits: int) -> str:
    """``digits`` significant digits; exponents written short (``2.5e3``, ``1.2e-6``)."""
    if not math.isfinite(f):
        return "inf" if f > 0 else "-inf"
    mant, _, exp = f"{f:.{digits}g}".partition("e")
    return f"{mant}e{int(exp)}" if exp else mant


def _plain(name: str, v, digits: int = PLAIN_DIGITS) -> str:
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
        return _sig(f, digits)
    if name == "isotopologue":
        return display_isotopologue(v)
    return unicode_units(str(v))


def _decimals(cell: str) -> int | None:
    """Decimal places of a value(uncertainty) cell as shown (negative for 12350(20))."""
    m = re.match(r"^-?(\d+)(?:\.(\d*))?\((\d+)\)(?:e([-+]?\d+))?$", cell)
    if m is None:
        return None
    d = len(m[2] or "") - (int(m[4]) if m[4] else 0)
    if not m[2] and len(m[3]) > 1 and m[1].endswith("0" * (len(m[3]) - 1)):
        d -= len(m[3]) - 1  # 12350(20): rounded to the tens
    return d


#: the value(uncertainty) pair whose shown digits round a row's residual and calculated value
_REFERENCES = (("position", "position_err"), ("value", "stderr"))


def _rounded_like_reference(row: pd.Series, v: float) -> str | None:
    d = None
    for col, err in _REFERENCES:
        if col in row and err in row and not _missing(row[col]) and not _missing(row[err]):
            d = _decimals(format_uncertainty(float(row[col]), float(row[err])))
            break
    if d is None:
        return None
    text = f"{round(v, d):.{max(d, 0)}f}"
    return "0" + text[2:] if text.startswith("-0") and float(text) == 0 else text


def cell_text(row: pd.Series, col: Column, *, at_bound: frozenset = frozenset()) -> str:
    """The text of one cell (``row`` a table row; ``at_bound`` the (line_id, column) pairs
    of parameters that ended on a bound)."""
    v = row[col.name]
    if _missing(v):
        return MISSING
    if at_bound and "line_id" in row and (_key(row["line_id"]), col.name) in at_bound:
        return f"{_sig(float(v), 3)} {AT_BOUND}"
    e = None if col.err is None or _missing(row[col.err]) else float(row[col.err])
    if e is not None:
        return format_uncertainty(float(v), e)
    if col.name in ("obs_minus_calc", "calc") and isinstance(v, (float, np.floating)):
        text = _rounded_like_reference(row, float(v))
        if text is not None:
            return text
    if col.name in ("weight", "normalised_residual") and isinstance(v, (float, np.floating)):
        return _sig(float(v), 2)
    if col.name == "value" and str(row.get("name")) in _STATISTICS:
        return _plain(col.name, v, _STATISTICS[str(row.get("name"))])
    return _plain(col.name, v)


def _key(line_id):
    try:
        f = float(line_id)
        return int(f) if f.is_integer() else line_id
    except (TypeError, ValueError):
        return line_id


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
