"""ASDF, the compressed ordinate forms of JCAMP-DX, decoded and encoded with numpy.

JCAMP-DX 4.24 (R. S. McDonald and P. A. Wilks, *Applied Spectroscopy* 42 (1988) 151) and
5.01 (P. Lampen et al., *Applied Spectroscopy* 48 (1994) 1545) write ``##XYDATA=(X++(Y..Y))``
as lines of one abscissa X (AFFN, a plain decimal number) followed by ordinates Y in one of
these forms, which may be mixed within a line:

========  =====================================================================
AFFN      decimal numbers separated by blanks or commas: ``1234 -56``
PAC       AFFN where a sign is the separator: ``1234-56+78``
SQZ       the first digit and sign folded into one character:
          ``@`` = 0, ``A``-``I`` = 1..9, ``a``-``i`` = -1..-9 (``A234`` = 1234)
DIF       the difference from the previous ordinate, first digit folded:
          ``%`` = 0, ``J``-``R`` = 1..9, ``j``-``r`` = -1..-9 (``j5`` = -15)
DUP       a repeat count of the preceding value or difference (the count includes
          that first occurrence): ``S``-``Z`` = 1..8, ``s`` = 9 (``U`` = 3 times)
========  =====================================================================

The Y-check: when a line ends with an ordinate in DIF form, the next line starts with that
same ordinate again (in SQZ or AFFN form) under its own X; a reader verifies the two agree
and keeps one of them.

The decoder tokenises the whole block with byte lookup tables and rebuilds the ordinates
with cumulative sums, so no Python loop runs per character or per value (see
``benchmarks/bench_io.py``). Every value is kept exact (an integer mantissa and a power of
ten) until the ordinates are rebuilt: the running sums and the Y-check use int64 when their
magnitude provably fits (the sum of the absolute values stays below 2**62), Python integers
otherwise, so nothing wraps around and no value near 10**16 is compared after rounding. Each
ordinate is then converted to float64 once, correctly rounded. Tokenising is described in
:mod:`widgetkit.io._asdf_tokens`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..errors import SpectrumFormatError
from ._asdf_tokens import (
    ABS,
    DIF,
    DUP,
    MAX_DIGITS,
    POW10,
    Tokens,
    ambiguous_exponents,
    fail,
    tokenise,
)
from .asdf_encode import (
    encode_affn_lines,
    encode_dif,
    encode_difdup_lines,
    encode_dup,
    encode_sqz,
)

__all__ = ["XYDataLines", "decode_xydata", "encode_sqz", "encode_dif", "encode_dup",
           "encode_difdup_lines", "encode_affn_lines"]

#: no block of more ordinates than this (and no DUP expansion beyond it, whatever NPOINTS
#: says): decoding takes a few hundred bytes of memory per ordinate, so 2e7 ordinates stay
#: within a few GB; a corrupt count fails at once instead of filling memory
MAX_VALUES = 20_000_000
_COMMENT = re.compile(rb"\$\$[^\n]*")


@dataclass(frozen=True)
class XYDataLines:
    """Decoded ``(X++(Y..Y))`` data, before XFACTOR and YFACTOR are applied.

    Attributes
    ----------
    y : ndarray of float64, shape (n,)
        Ordinates in file order, each correctly rounded from its exact decoded value, Y-check
        duplicates removed.
    line_x : ndarray of float64, shape (m,)
        The X written at the start of each data line.
    line_x_step : ndarray of float64, shape (m,)
        Half a unit in the last written digit of each line X (its rounding).
    line_first : ndarray of int64, shape (m,)
        Index into ``y`` of the ordinate each line X belongs to.
    line_number : ndarray of int64, shape (m,)
        The 1-based line of each data line in the file.
    ycheck_failures : tuple of (int, float, float)
        Y-checks that failed, as (line, value at the end of the previous line, value that
        starts this line); empty unless ``ycheck="warn"``, which keeps the line's value.
    """

    y: np.ndarray
    line_x: np.ndarray
    line_x_step: np.ndarray
    line_first: np.ndarray
    line_number: np.ndarray
    ycheck_failures: tuple = ()


def decode_xydata(block: bytes, *, line0: int, path: str | None = None,
                  max_values: int | None = None, ycheck: str = "strict",
                  npoints: int | None = None) -> XYDataLines:
    """Decode the data lines of ``##XYDATA=(X++(Y..Y))`` in any AFFN/PAC/ASDF mix.

    Parameters
    ----------
    block : bytes
        The lines after the ``##XYDATA=`` line up to (not including) the next ``##`` label,
        lines ended by LF.
    line0 : int
        The 1-based file line of the first byte of ``block`` (for error messages).
    path : str, optional
        The file, for error messages.
    max_values : int, optional
        Refuse DUP counts that would expand to more values than this (a guard against a
        corrupt count filling memory); readers pass NPOINTS plus the number of lines.
        At most :data:`MAX_VALUES`.
    ycheck : {"strict", "warn"}
        A failed Y-check raises (``"strict"``) or is listed in ``ycheck_failures`` with the
        value that starts the line kept (``"warn"``).
    npoints : int, optional
        The number of ordinates expected (NPOINTS). Used only to settle a block whose only
        ASDF letters are ``E``/``e`` inside numbers: it is read with AFFN exponents unless
        that fails or gives another count, then with ``E`` as the SQZ digit 5.

    Returns
    -------
    XYDataLines

    Raises
    ------
    SpectrumFormatError
        On a character outside the ASDF alphabet, a line without X or ordinates, a DIF or DUP
        with nothing before it on its line, a DUP count that is not a whole number of at least
        one or expands beyond ``max_values``, or a failed Y-check (the message gives the line).
    """
    if b"$$" in block:
        block = _COMMENT.sub(b"", block)
    limit = MAX_VALUES if max_values is None else min(int(max_values), MAX_VALUES)
    if ambiguous_exponents(block):
        try:
            d = _decode(block, line0, path, limit, ycheck, exponents=True)
            if npoints is None or d.y.size == npoints:
                return d
        except SpectrumFormatError:
            pass
    return _decode(block, line0, path, limit, ycheck)


def _decode(block, line0, path, limit, ycheck, *, exponents: bool = False) -> XYDataLines:
    toks = tokenise(block, line0, path, exponents=exponents)
    if toks is None:
        raise fail("##XYDATA= holds no values", path, line0)
    return _assemble(toks, line0, path, limit, ycheck)


def _floats(mantissa: np.ndarray, exponent) -> np.ndarray:
    """float64 of ``mantissa * 10**exponent``, each correctly rounded."""
    m = mantissa
    e = np.broadcast_to(np.asarray(exponent, np.int64), m.shape)
    if m.dtype != object and not e.any():  # integers: one conversion, correctly rounded
        return m.astype(np.float64)
    if m.dtype != object and m.size:
        small = (np.abs(m) < 2 ** 53) & (np.abs(e) <= 22)
        if small.all():  # both operands exact: one IEEE operation rounds correctly
            mf = m.astype(np.float64)
            return np.where(e >= 0, mf * 10.0 ** np.maximum(e, 0), mf / 10.0 ** np.maximum(-e, 0))
    out = np.empty(m.shape, np.float64)
    for i, (mi, ei) in enumerate(zip(m.tolist(), e.tolist(), strict=True)):
        out[i] = float(f"{int(mi)}e{int(ei)}")  # the decimal parser rounds correctly
    return out


def _structure(toks: Tokens, line0, path):
    """Split the tokens into line X values and ordinates; check each line's shape."""
    kind, affn, tline = toks.kind, toks.affn, toks.line
    is_x = np.ones(kind.size, bool)
    is_x[1:] = tline[1:] != tline[:-1]
    xi = np.flatnonzero(is_x)
    if not affn[xi].all():
        k = xi[int(np.argmin(affn[xi]))]
        raise fail("a data line must start with its X value as a plain number (AFFN)",
                   path, line0 + tline[k])
    yi = np.flatnonzero(~is_x)
    has_y = np.zeros(xi.size, bool)
    has_y[np.searchsorted(tline[xi], tline[yi])] = True
    if not has_y.all():
        k = int(np.argmin(has_y))
        raise fail("a data line holds an X value but no ordinates", path,
                   line0 + tline[xi[k]])
    yk, yl = kind[yi], tline[yi]
    first_y = np.ones(yk.size, bool)
    first_y[1:] = yl[1:] != yl[:-1]
    bad = first_y & (yk != ABS)
    if bad.any():
        k = int(np.argmax(bad))
        what = "DIF" if yk[k] == DIF else "DUP"
        raise fail(f"the first ordinate of a line is in {what} form; it must be an absolute "
                   "value (SQZ or AFFN)", path, line0 + yl[k])
    return xi, yi


def _expand_dup(yk, ym, ye, yl, line0, path, limit):
    """Replace each DUP count by repetitions of the value or difference before it."""
    dup = yk == DUP
    if not dup.any():
        return yk, ym, ye, yl
    d = np.flatnonzero(dup)
    if dup[d - 1].any():
        k = d[int(np.argmax(dup[d - 1]))]
        raise fail("two DUP counts follow each other", path, line0 + yl[k])
    counts = ym[d]
    bad = (ye[d] != 0) | np.array([not 1 <= int(c) <= limit for c in counts.tolist()]
                                  if counts.dtype == object else (counts < 1) | (counts > limit))
    if bad.any():
        k = d[int(np.argmax(bad))]
        c = ym[k]
        why = ("a DUP count must be a whole number of at least 1" if ye[k] != 0 or c < 1 else
               f"a DUP count of {int(c)} expands beyond the {limit} values allowed (NPOINTS "
               "and the lines); the count is corrupt")
        raise fail(why, path, line0 + yl[k])
    rep = np.ones(yk.size, np.int64)
    rep[d - 1] = np.asarray(counts.tolist(), np.int64)
    keep = ~dup
    rep = rep[keep]
    total = int(rep.sum())  # each count <= limit, so no overflow for any realistic file
    if total > limit:
        raise fail(f"DUP counts expand to {total} values, more than the {limit} allowed "
                   "(NPOINTS and the lines); a count is corrupt", path, line0)
    return (np.repeat(yk[keep], rep), np.repeat(ym[keep], rep), np.repeat(ye[keep], rep),
            np.repeat(yl[keep], rep))


def _exact_ordinates(yk, ym, ye, yl, line0, path):
    """Integers ``s`` and a common exponent ``E`` with ordinate ``i`` = ``s[i] * 10**E``."""
    e_min = int(ye.min())
    shift = ye - e_min
    if int(shift.max()) > MAX_DIGITS:
        k = int(np.argmax(shift))
        raise fail(f"DIF data whose values span more than {MAX_DIGITS} decades of exponents; "
                   "the ordinates are corrupt", path, line0 + yl[k])
    if ym.dtype != object and int(shift.max()) <= 18:
        exact_ints = not shift.any()
        magnitude = np.abs(ym.astype(np.float64))
        bound = float(np.sum(magnitude if exact_ints else magnitude * 10.0 ** shift))
        if bound < 2.0 ** 61:  # every partial sum, and their differences, fit in int64
            scaled = ym if exact_ints else ym * POW10[shift]
            return _running(yk, scaled), e_min
    scaled = np.array([int(m) * 10 ** int(s) for m, s in zip(ym.tolist(), shift.tolist(),
                                                              strict=True)], object)
    return _running(yk, scaled), e_min


def _running(yk, scaled):
    """Absolute values reset, differences accumulate (exact in the array's integer type)."""
    n = yk.size
    is_abs = yk == ABS
    seg = np.maximum.accumulate(np.where(is_abs, np.arange(n), 0))
    zero = 0 if scaled.dtype == object else scaled.dtype.type(0)
    dif_part = np.where(is_abs, zero, scaled)
    if scaled.dtype == object:
        dif_part = dif_part.astype(object)
    c = np.cumsum(dif_part)
    return scaled[seg] + (c - c[seg])


def _assemble(toks: Tokens, line0, path, limit, ycheck) -> XYDataLines:
    xi, yi = _structure(toks, line0, path)
    line_x = _floats(toks.mantissa[xi], toks.exponent[xi])
    line_x_step = 0.5 * 10.0 ** np.clip(toks.exponent[xi], -300, 300).astype(np.float64)
    line_number = line0 + toks.line[xi]
    yk, ym, ye, yl = _expand_dup(toks.kind[yi], toks.mantissa[yi], toks.exponent[yi],
                                 toks.line[yi], line0, path, limit)
    n = yk.size
    if not (yk == DIF).any():  # every ordinate stands alone: round each one once
        return XYDataLines(y=_floats(ym, ye), line_x=line_x, line_x_step=line_x_step,
                           line_first=_line_first(yl, n, np.zeros(n, bool)),
                           line_number=np.asarray(line_number, np.int64))
    exact, e_common = _exact_ordinates(yk, ym, ye, yl, line0, path)
    first_y = np.ones(n, bool)
    first_y[1:] = yl[1:] != yl[:-1]
    # Y-check: a line after one that ended in DIF repeats that last ordinate first
    last_y = np.ones(n, bool)
    last_y[:-1] = first_y[1:]
    ended_dif = (yk != ABS) & last_y
    firsts = np.flatnonzero(first_y)
    check_at = firsts[1:][ended_dif[firsts[1:] - 1]]
    check = np.zeros(n, bool)
    check[check_at] = True
    failures: list[tuple[int, float, float]] = []
    if check_at.size:
        mism = exact[check_at] != exact[check_at - 1]
        if mism.any():
            bad = check_at[mism]
            pairs = _floats(np.concatenate((exact[bad - 1], exact[bad])), e_common)
            before, after = pairs[:bad.size].tolist(), pairs[bad.size:].tolist()
            if ycheck != "warn":
                raise fail(f"Y-check failed: this line starts with ordinate {after[0]!r} but "
                           f"the previous line ended with {before[0]!r}; the data are corrupt "
                           "or a line is missing", path, line0 + yl[bad[0]])
            failures = [(int(line0 + yl[b]), float(u), float(v))
                        for b, u, v in zip(bad.tolist(), before, after, strict=True)]
            # keep the line's own (absolute) value for the point both lines hold
            exact = exact.copy()
            exact[bad - 1] = exact[bad]
    return XYDataLines(y=_floats(exact[~check], e_common), line_x=line_x,
                       line_x_step=line_x_step, line_first=_line_first(yl, n, check),
                       line_number=np.asarray(line_number, np.int64),
                       ycheck_failures=tuple(failures))


def _line_first(yl, n: int, check) -> np.ndarray:
    """Index, among the ordinates kept, of the ordinate each line's X belongs to."""
    first_y = np.ones(n, bool)
    first_y[1:] = yl[1:] != yl[:-1]
    firsts = np.flatnonzero(first_y)
    keep = ~check
    kept_before = np.cumsum(keep) - keep
    return (kept_before[firsts] - check[firsts]).astype(np.int64)
