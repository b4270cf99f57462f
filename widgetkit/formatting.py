"""Numbers and names as the trade writes them: a value with its standard
uncertainty in parentheses, in units of the last digits shown; isotopologues
as H³⁵Cl; column names such as "Gaussian σ"; units as cm⁻¹.

``2885.977(3)`` means 2885.977 ± 0.003 (one standard error). This module is
pure (no widget import) and is shared by the tables of every panel and by
reports.
"""

from __future__ import annotations

import math
import re
from decimal import ROUND_HALF_UP, Decimal

__all__ = ["format_uncertainty", "format_value", "display_isotopologue", "plural", "article",
           "COLUMN_LABELS", "column_label", "unicode_units", "tidy_text", "summary_text",
           "fit_verdict", "plain_message"]

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


# ---------------------------------------------------------------------- names as the trade writes them
_SUPERSCRIPT = str.maketrans("0123456789", "⁰¹²³⁴⁵⁶⁷⁸⁹")
_SUBSCRIPT = str.maketrans("0123456789", "₀₁₂₃₄₅₆₇₈₉")
_ATOM = re.compile(r"^(\d+)([A-Z][a-z]?)$")
#: hydrogen isotopes have symbols of their own in molecular formulas (common practice)
_HYDROGEN = {"1": "H", "2": "D", "3": "T"}


def _isotopologue_parts(key) -> list[tuple[str, str]] | None:
    """``"1H-35Cl"`` -> ``[("1", "H"), ("35", "Cl")]``; None when ``key`` is not of that form."""
    if not isinstance(key, str) or not key:
        return None
    parts = []
    for atom in key.split("-"):
        m = _ATOM.match(atom.strip())
        if m is None:
            return None
        parts.append((m[1], m[2]))
    return parts


def _grouped(parts: list[tuple[str, str]]) -> list[tuple[str, str, int]]:
    """Runs of the same isotope: ``[(mass, symbol, count), ...]`` (14N-14N -> one run of 2)."""
    out: list[tuple[str, str, int]] = []
    for mass, sym in parts:
        if out and out[-1][:2] == (mass, sym):
            out[-1] = (mass, sym, out[-1][2] + 1)
        else:
            out.append((mass, sym, 1))
    return out


def display_isotopologue(key) -> str:
    """An isotopologue key as the trade writes it: ``"1H-35Cl"`` -> ``"H³⁵Cl"``.

    Mass numbers become superscripts before the symbol; hydrogen isotopes are written
    H, D and T without one; repeated atoms get a subscript count (``"14N-14N"`` ->
    ``"¹⁴N₂"``); atoms stay in the key's order (``"16O-12C-16O"`` -> ``"¹⁶O¹²C¹⁶O"``).
    The key itself (ASCII) is what data, files and session steps keep; anything that
    is not such a key (a missing value, a free text) comes back as ``str(key)``.
    """
    parts = _isotopologue_parts(key)
    if parts is None:
        return "–" if key is None else str(key)
    out = []
    for mass, sym, n in _grouped(parts):
        text = _HYDROGEN[mass] if sym == "H" and mass in _HYDROGEN else mass.translate(
            _SUPERSCRIPT) + sym
        out.append(text + (str(n).translate(_SUBSCRIPT) if n > 1 else ""))
    return "".join(out)


def plural(n: int, word: str, words: str | None = None) -> str:
    """``"1 line"``, ``"2 lines"``, ``"0 lines"`` (``words`` for irregular plurals)."""
    return f"{n} {word if n == 1 else (words or word + 's')}"


def article(word: str) -> str:
    """``"an ALS baseline"``, ``"a polynomial baseline"``: the indefinite article by sound of
    the first letter (initialisms read letter by letter: A, E, F, H, I, L, M, N, O, R, S, X)."""
    w = word.strip()
    vowel_sound = (w[:1].lower() in "aeio" or (w[:2].isupper() and w[:1] in "AEFHILMNORSX")
                   or (len(w) > 1 and w[:1] == "u" and w[1:2] in "nm"))
    return f"{'an' if vowel_sound else 'a'} {w}"


#: the display names of table columns (the data keep the one vocabulary: ``sigma``, ``gamma``)
COLUMN_LABELS = {
    "line_id": "line", "peak_id": "peak", "position": "position", "position_err": "σ(position)",
    "area": "area", "height": "height", "fwhm": "FWHM", "sigma": "Gaussian σ",
    "gamma": "Lorentzian γ (HWHM)", "snr": "SNR", "isotopologue": "isotopologue",
    "v_upper": "v′", "v_lower": "v″", "J_upper": "J′", "J_lower": "J″", "calc": "calc",
    "calc_err": "σ(calc)", "obs_minus_calc": "obs − calc", "stderr": "σ", "band_origin": "ν₀",
    "normalised_residual": "(obs − calc)/σ",
}
#: the units of columns whose values are wavenumbers
WAVENUMBER_COLUMNS = frozenset({"position", "fwhm", "sigma", "gamma", "calc", "obs_minus_calc",
                                "position_err", "calc_err"})
_CM1 = re.compile(r"(?<![\w⁻])cm-1(?![\w])|cm\^-1|cm\*\*-1|1/cm(?![\w])")


def unicode_units(text: str) -> str:
    """Write the ASCII unit spellings of wavenumbers (``cm-1``, ``1/cm``) as ``cm⁻¹``."""
    return _CM1.sub("cm⁻¹", str(text))


def column_label(name: str, *, unit: bool = True) -> str:
    """The heading of a table column: the trade's name and, for wavenumbers, ``(cm⁻¹)``."""
    text = COLUMN_LABELS.get(name, name)
    return f"{text} (cm⁻¹)" if unit and name in WAVENUMBER_COLUMNS else text


_PLUS_MINUS = re.compile(r"(?<![\w.])([-+]?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?) ± "
                         r"(\d+(?:\.\d+)?(?:[eE][-+]?\d+)?)(?![\w.])")
_ONE_PLURAL = re.compile(r"(?<![\d.,])\b1 (line|peak|point|step|round|lock|file|isotopologue|"
                         r"band|constant)s\b")
_ISOTOPOLOGUE_KEY = re.compile(r"(?<![\w-])\d+[A-Z][a-z]?(?:-\d+[A-Z][a-z]?)+(?![\w-])")


def tidy_text(text) -> str:
    """A sentence of a result or message as a report shows it: ``"a ± b"`` in the
    value(uncertainty) notation, isotopologue keys as H³⁵Cl, wavenumber units as cm⁻¹,
    and "1 lines" as "1 line".

    >>> tidy_text("1H-37Cl: ratio 0.312642 ± 0.0013, shift -4.43657e-06 ± 8e-06 cm-1")
    'H³⁷Cl: ratio 0.313(1), shift -4(8)e-6 cm⁻¹'
    """
    s = _PLUS_MINUS.sub(lambda m: format_uncertainty(float(m[1]), float(m[2])), str(text))
    s = _ISOTOPOLOGUE_KEY.sub(lambda m: display_isotopologue(m.group(0)), s)
    s = _ONE_PLURAL.sub(lambda m: "1 " + m[1], s)
    return unicode_units(s)


_BASELINE_SUMMARY = re.compile(r"\bsubtracted a (als|poly) baseline")


def summary_text(summary) -> str:
    """A step's recorded one-line summary as panels and reports show it (:func:`tidy_text`,
    and "a als baseline" read as "an ALS baseline"). The record itself is never changed:
    ``verify`` compares it."""
    text = _BASELINE_SUMMARY.sub(lambda m: "subtracted " + ("an ALS" if m[1] == "als" else
                                                             "a polynomial") + " baseline",
                                 str(summary))
    return tidy_text(text)


_LIBRARY_PART = re.compile(r";\s*lmfit:.*$", re.S)
_LIBRARY_CLAUSE = re.compile(r";\s*lmfit:[^)]*")


def plain_message(text) -> str:
    """A message for people with the solver library's own words taken out (the clauses
    widgetkit quotes from it after "lmfit:"), e.g. in the error of a fit that failed."""
    return _LIBRARY_CLAUSE.sub("", str(text))


def fit_verdict(converged, message="") -> str:
    """Our own words for how a fit ended: ``"converged"``, or why not, without the solver
    library's messages (they name its internals, not the user's problem)."""
    if converged:
        return "converged"
    text = _LIBRARY_PART.sub("", str(message or "")).strip()
    text = re.sub(r"^not converged:\s*", "", text)
    if re.match(r"^the solver (stopped|failed)", text):
        text = "the solver stopped before reaching the minimum (a parameter ran away or the " \
               "model could not be evaluated)"
    return "did not converge" + (f": {text}" if text else "")
