"""Numbers as the trade writes them: a value with its standard uncertainty in
parentheses, in units of the last digits shown.

``2885.977(3)`` means 2885.977 ± 0.003 (one standard error). This module is
pure (no widget import) and is shared by the tables of every panel and by
reports.
"""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal

__all__ = ["format_uncertainty", "format_value"]

#: values at least this large, or smaller (non-zero) than SMALL, are written as mantissa(u)e±p
LARGE = 1e9
SMALL = 1e-4


def _finite(v) -> bool:
    try:
        return v is not None and math.isfinite(float(v))
    except (TypeError, ValueError):
        return False


def format_value(value, sig: int = 6) -> str:
    """A value without an uncertainty: ``sig`` significant digits (``"–"`` for missing)."""
    if value is None:
        return "–"
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if math.isnan(v):
        return "–"
    return f"{v:.{sig}g}"


def _round(d: Decimal, decimals: int) -> Decimal:
    return d.quantize(Decimal(1).scaleb(-decimals), rounding=ROUND_HALF_UP)


def format_uncertainty(value, stderr, digits: int = 1) -> str:
    """Write ``value`` with its standard uncertainty in the parenthesis notation.

    The uncertainty is rounded to ``digits`` significant digits (half up, on
    the decimal form of the float), the value is rounded to the same decimal
    place, and the rounded uncertainty is written in parentheses as an integer
    in units of the last digit of the value (common practice, as in the
    CODATA tables and the GUM, section 7.2.2)::

        format_uncertainty(2885.97741, 0.0031)            -> "2885.977(3)"
        format_uncertainty(2885.97741, 0.0031, digits=2)  -> "2885.9774(31)"
        format_uncertainty(12345.6, 23)                   -> "12350(20)"

    When the uncertainty reaches the tens or more, the parentheses hold it in
    the units of the value's last (integer) digit as written, e.g.
    ``12350(20)``. Values with ``|value| >= 1e9`` or ``0 < |value| < 1e-4`` are
    written in scientific form, ``6.67430(15)e-11`` (the larger of ``|value|``
    and ``stderr`` decides).

    Parameters
    ----------
    value : float
    stderr : float or None
        One standard error, in the units of ``value``. ``None``, NaN, inf or a
        value ≤ 0 means "not known": the value is written with 6 significant
        digits and no parentheses.
    digits : {1, 2}, default 1
        Significant digits of the uncertainty.

    Returns
    -------
    str
    """
    if digits not in (1, 2):
        raise ValueError(f"digits must be 1 or 2, got {digits!r}")
    if not _finite(value):
        return format_value(value)
    v = float(value)
    if not _finite(stderr) or float(stderr) <= 0:
        return format_value(v)
    u = float(stderr)
    exp_suffix = ""
    big = max(abs(v), u)
    if big >= LARGE or big < SMALL:
        p = math.floor(math.log10(big))
        v, u = v / 10.0**p, u / 10.0**p
        exp_suffix = f"e{p:+d}"
    du = Decimal(repr(u))
    e = du.adjusted()  # exponent of the leading digit
    decimals = digits - 1 - e
    ur = _round(du, decimals)
    if ur.adjusted() > e:  # rounding carried into a new digit (0.96 -> 1.0)
        decimals -= 1
        ur = _round(du, decimals)
    vr = _round(Decimal(repr(v)), decimals)
    if decimals > 0:
        vs = f"{vr:.{decimals}f}"
        us = str(int(ur.scaleb(decimals)))
    else:
        vs = f"{vr:.0f}"
        us = f"{ur:.0f}"
    if vs.startswith("-") and float(vr) == 0:
        vs = vs[1:]
    return f"{vs}({us}){exp_suffix}"
