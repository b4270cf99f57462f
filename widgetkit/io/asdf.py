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
``benchmarks/bench_io.py``). An exponent in an AFFN number must carry a sign (``1.5E+03``)
because an unsigned ``E`` is the SQZ digit 5; blocks holding exponents take a slower
regular-expression tokeniser with the same semantics.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..errors import SpectrumFormatError
from .asdf_encode import (
    encode_affn_lines,
    encode_dif,
    encode_difdup_lines,
    encode_dup,
    encode_sqz,
)

__all__ = ["XYDataLines", "decode_xydata", "encode_sqz", "encode_dif", "encode_dup",
           "encode_difdup_lines", "encode_affn_lines"]

# byte classes
_BAD, _DIGIT, _SQZ, _DIF, _DUP, _SEP, _NL, _SIGN, _DOT = range(9)
_CLS = np.zeros(256, np.int8)
_VAL = np.zeros(256, np.int8)
for _c in b"0123456789":
    _CLS[_c], _VAL[_c] = _DIGIT, _c - 48
_CLS[ord("@")], _CLS[ord("%")] = _SQZ, _DIF
for _i, (_sp, _sn, _dp, _dn) in enumerate(zip("ABCDEFGHI", "abcdefghi", "JKLMNOPQR", "jklmnopqr",
                                              strict=True), start=1):
    _CLS[ord(_sp)], _VAL[ord(_sp)] = _SQZ, _i
    _CLS[ord(_sn)], _VAL[ord(_sn)] = _SQZ, -_i
    _CLS[ord(_dp)], _VAL[ord(_dp)] = _DIF, _i
    _CLS[ord(_dn)], _VAL[ord(_dn)] = _DIF, -_i
for _i, _c in enumerate("STUVWXYZs", start=1):
    _CLS[ord(_c)], _VAL[ord(_c)] = _DUP, _i
for _c in b" \t,\r\x0b\x0c":
    _CLS[_c] = _SEP
_CLS[ord("\n")] = _NL
_CLS[ord("+")], _VAL[ord("+")] = _SIGN, 1
_CLS[ord("-")], _VAL[ord("-")] = _SIGN, -1
_CLS[ord(".")] = _DOT

# token kinds after tokenising
_ABS, _DIFK, _DUPK = 0, 1, 2

_EXP_RE = re.compile(rb"[0-9.][eE][+-][0-9]")
_TOKEN_RE = re.compile(
    rb"([+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-][0-9]+)?)"  # AFFN
    rb"|([@A-Ia-i%J-Rj-rS-Zs])([0-9]*\.?[0-9]*)"  # lead + digits
    rb"|(\n)|([ \t,\r\x0b\x0c]+)|(.)", re.S)
_POW10 = 10 ** np.arange(19, dtype=np.int64)


@dataclass(frozen=True)
class XYDataLines:
    """Decoded ``(X++(Y..Y))`` data, before XFACTOR and YFACTOR are applied.

    Attributes
    ----------
    y : ndarray, shape (n,)
        Ordinates in file order (int64 when every value is an integer, else float64),
        Y-check duplicates removed.
    line_x : ndarray of float64, shape (m,)
        The X written at the start of each data line.
    line_x_step : ndarray of float64, shape (m,)
        Half a unit in the last written digit of each line X (its rounding).
    line_first : ndarray of int64, shape (m,)
        Index into ``y`` of the ordinate each line X belongs to.
    line_number : ndarray of int64, shape (m,)
        The 1-based line of each data line in the file.
    """

    y: np.ndarray
    line_x: np.ndarray
    line_x_step: np.ndarray
    line_first: np.ndarray
    line_number: np.ndarray


def _fail(msg: str, path, line) -> SpectrumFormatError:
    return SpectrumFormatError(msg, path=path, line=None if line is None else int(line))


def _tokenise_fast(a: np.ndarray, line0: int, path):
    """Vectorised tokeniser: kind, AFFN flag, value, decimals and line of every token
    (None when there is no token, ``"long"`` when a value has more digits than int64 or,
    with a decimal point, float64 holds exactly)."""
    cls = _CLS[a]
    bad = cls == _BAD
    if bad.any():
        i = int(np.argmax(bad))
        line = line0 + int(np.count_nonzero(cls[:i] == _NL))
        ch = chr(a[i])
        hint = ("'?' marks a missing ordinate, which widgetkit does not accept; "
                "replace it by a measured value" if ch == "?" else
                "only digits, signs, '.', blanks, commas and the SQZ/DIF/DUP letters may appear")
        raise _fail(f"character {ch!r} in the ordinate data is not allowed: {hint}", path, line)
    prev = np.empty_like(cls)
    prev[0] = _NL
    prev[1:] = cls[:-1]
    after_sep = (prev == _SEP) | (prev == _NL)
    start = ((cls == _SQZ) | (cls == _DIF) | (cls == _DUP) | (cls == _SIGN)
             | (((cls == _DIGIT) | (cls == _DOT)) & after_sep))
    starts = np.flatnonzero(start)
    ntok = starts.size
    if ntok == 0:
        return None
    tid = np.cumsum(start, dtype=np.int64) - 1
    digit_bearing = (cls == _DIGIT) | (cls == _SQZ) | (cls == _DIF) | (cls == _DUP)
    db = np.flatnonzero(digit_bearing)
    t = tid[db]
    cnt = np.bincount(t, minlength=ntok)
    nl_cum = np.cumsum(cls == _NL, dtype=np.int64)
    if cnt.min() == 0:
        k = int(np.argmin(cnt))
        raise _fail("a value in the ordinate data holds no digit; check the XYDATA lines", path,
                    line0 + int(nl_cum[starts[k]]))
    if cnt.max() > 18:  # beyond int64: the regular-expression tokeniser parses floats
        return "long"
    first_digit = np.cumsum(cnt) - cnt
    power = cnt[t] - 1 - (np.arange(db.size) - first_digit[t])
    digits = np.abs(_VAL[a[db]]).astype(np.int64) * _POW10[power]
    mantissa = np.add.reduceat(digits, first_digit)
    dots = np.flatnonzero(cls == _DOT)
    if dots.size:
        per_tok = np.bincount(tid[dots], minlength=ntok)
        if per_tok.max() > 1:
            k = int(np.argmax(per_tok > 1))
            raise _fail("a value in the ordinate data has two decimal points", path,
                        line0 + int(nl_cum[starts[k]]))
        dotpos = np.full(ntok, np.iinfo(np.int64).max)
        dotpos[tid[dots]] = dots
        decimals = np.bincount(t, weights=db > dotpos[t], minlength=ntok).astype(np.int64)
    else:
        decimals = np.zeros(ntok, np.int64)
    lead = a[starts]
    lead_cls = cls[starts]
    sign = np.where(_VAL[lead] < 0, -1, 1).astype(np.int64)
    sign[(lead_cls == _DIGIT) | (lead_cls == _DOT)] = 1
    kind = np.full(ntok, _ABS, np.int8)
    kind[lead_cls == _DIF] = _DIFK
    kind[lead_cls == _DUP] = _DUPK
    affn = (lead_cls == _DIGIT) | (lead_cls == _DOT) | (lead_cls == _SIGN)
    value = sign * mantissa
    if decimals.any():
        # mantissa / 10**d is correctly rounded only while the mantissa is exact in float64
        if np.any((decimals > 0) & (mantissa >= 2**53)):
            return "long"
        value = value / 10.0 ** decimals
    return kind, affn, value, decimals, nl_cum[starts]


def _tokenise_slow(block: bytes, line0: int, path):
    """Regular-expression tokeniser for blocks with exponents (same outputs)."""
    kinds: list[int] = []
    affn: list[bool] = []
    decs: list[int] = []
    lines: list[int] = []
    floats: list[float] = []
    line = 0
    for m in _TOKEN_RE.finditer(block):
        num, lead, rest, nl, _sep, other = m.groups()
        if nl is not None:
            line += 1
            continue
        if other is not None:
            raise _fail(f"character {other.decode('latin-1')!r} in the ordinate data is not "
                        "allowed", path, line0 + line)
        if num is not None:
            kinds.append(_ABS)
            affn.append(True)
            floats.append(float(num))
            frac = num.split(b".")[1] if b"." in num else b""
            decs.append(0 if b"e" in num.lower() else len(frac))
        elif lead is not None:
            text = rest.replace(b".", b"")
            ndig = 1 + len(text)
            if ndig > 18:
                raise _fail("a value in the ordinate data has more than 18 digits", path,
                            line0 + line)
            c = _CLS[lead[0]]
            v = abs(int(_VAL[lead[0]]))
            value = int(str(v) + text.decode()) if text else v
            sgn = -1 if _VAL[lead[0]] < 0 and c in (_SQZ, _DIF) else 1
            kinds.append({_SQZ: _ABS, _DIF: _DIFK, _DUP: _DUPK}[int(c)])
            affn.append(False)
            d = len(rest) - 1 - rest.index(b".") if b"." in rest else 0
            floats.append(sgn * value / 10.0 ** d)
            decs.append(d)
        else:  # pragma: no cover - the pattern always matches one group
            continue
        lines.append(line)
    if not kinds:
        return None
    return (np.array(kinds, np.int8), np.array(affn, bool), np.array(floats, np.float64),
            np.array(decs, np.int64), np.array(lines, np.int64))


def decode_xydata(block: bytes, *, line0: int, path: str | None = None,
                  max_values: int | None = None) -> XYDataLines:
    """Decode the data lines of ``##XYDATA=(X++(Y..Y))`` in any AFFN/PAC/ASDF mix.

    Parameters
    ----------
    block : bytes
        The lines after the ``##XYDATA=`` line up to (not including) the next ``##`` label.
    line0 : int
        The 1-based file line of the first byte of ``block`` (for error messages).
    path : str, optional
        The file, for error messages.
    max_values : int, optional
        Refuse DUP counts that would expand to more values than this (a guard against a
        corrupt count filling memory); readers pass NPOINTS plus the number of lines.

    Returns
    -------
    XYDataLines

    Raises
    ------
    SpectrumFormatError
        On a character outside the ASDF alphabet, a line without X or ordinates, a DIF or DUP
        with nothing before it on its line, or a failed Y-check (the message gives the line).
    """
    if b"$$" in block:
        block = re.sub(rb"\$\$[^\n]*", b"", block)
    toks = ("slow" if _EXP_RE.search(block) else
            _tokenise_fast(np.frombuffer(block, np.uint8), line0, path))
    if isinstance(toks, str):  # exponents, or more digits than int64 holds
        toks = _tokenise_slow(block, line0, path)
    if toks is None:
        raise _fail("##XYDATA= holds no values", path, line0)
    kind, affn, value, xdec, tline = toks
    return _assemble(kind, affn, value, xdec, tline, line0, path, max_values)


def _assemble(kind, affn, value, xdec, tline, line0, path, max_values) -> XYDataLines:
    ntok = kind.size
    is_x = np.ones(ntok, bool)
    is_x[1:] = tline[1:] != tline[:-1]
    xi = np.flatnonzero(is_x)
    if not affn[xi].all():
        k = xi[int(np.argmin(affn[xi]))]
        raise _fail("a data line must start with its X value as a plain number (AFFN)",
                    path, line0 + tline[k])
    line_x = np.asarray(value[xi], np.float64)
    line_x_step = 0.5 * 10.0 ** (-np.asarray(xdec[xi], np.float64))
    line_number = line0 + tline[xi]
    yi = np.flatnonzero(~is_x)
    yk, yv, yl = kind[yi], value[yi], tline[yi]
    # every line needs at least one ordinate
    has_y = np.zeros(xi.size, bool)
    line_pos = np.searchsorted(tline[xi], yl)
    has_y[line_pos] = True
    if not has_y.all():
        k = int(np.argmin(has_y))
        raise _fail("a data line holds an X value but no ordinates", path, line_number[k])
    first_y = np.ones(yk.size, bool)
    first_y[1:] = yl[1:] != yl[:-1]
    bad = first_y & (yk != _ABS)
    if bad.any():
        k = int(np.argmax(bad))
        what = "DIF" if yk[k] == _DIFK else "DUP"
        raise _fail(f"the first ordinate of a line is in {what} form; it must be an absolute "
                    "value (SQZ or AFFN)", path, line0 + yl[k])
    # DUP expansion
    dup = yk == _DUPK
    if dup.any():
        d = np.flatnonzero(dup)
        if (dup[d - 1]).any():
            k = d[int(np.argmax(dup[d - 1]))]
            raise _fail("two DUP counts follow each other", path, line0 + yl[k])
        counts = yv[d]
        if np.any(counts < 1) or np.any(counts != np.round(counts)):
            k = d[int(np.argmax((counts < 1) | (counts != np.round(counts))))]
            raise _fail("a DUP count must be a whole number of at least 1", path, line0 + yl[k])
        rep = np.ones(yk.size, np.int64)
        rep[d - 1] = np.asarray(counts, np.int64)
        keep = ~dup
        rep, yk, yv, yl = rep[keep], yk[keep], yv[keep], yl[keep]
        total = int(rep.sum())
        limit = 200_000_000 if max_values is None else min(int(max_values), 200_000_000)
        if total > limit:
            raise _fail(f"DUP counts expand to {total} values, more than the {limit} allowed "
                        "(NPOINTS and the lines); a count is corrupt", path, line0)
        yk, yv, yl = np.repeat(yk, rep), np.repeat(yv, rep), np.repeat(yl, rep)
        first_y = np.ones(yk.size, bool)
        first_y[1:] = yl[1:] != yl[:-1]
    # ordinates: absolute values reset, differences accumulate
    n = yk.size
    is_abs = yk == _ABS
    idx = np.arange(n)
    seg = np.maximum.accumulate(np.where(is_abs, idx, 0))
    if yv.dtype.kind == "f":
        dif_part = np.where(is_abs, 0.0, yv)
    else:
        dif_part = np.where(is_abs, 0, yv)
    c = np.cumsum(dif_part)
    y = yv[seg] + (c - c[seg])
    # Y-check: a line after one that ended in DIF repeats that last ordinate first
    last_y = np.ones(n, bool)
    last_y[:-1] = first_y[1:]
    ended_dif = (~is_abs) & last_y
    firsts = np.flatnonzero(first_y)
    check = np.zeros(n, bool)
    prev_last = firsts[1:] - 1
    is_check = ended_dif[prev_last]
    check_at = firsts[1:][is_check]
    check[check_at] = True
    if check_at.size:
        mism = y[check_at] != y[check_at - 1]
        if mism.any():
            k = check_at[int(np.argmax(mism))]
            raise _fail(f"Y-check failed: this line starts with ordinate {y[k].item()!r} but the "
                        f"previous line ended with {y[k - 1].item()!r}; the data are corrupt or a "
                        "line is missing", path, line0 + yl[k])
    keep = ~check
    kept_before = np.cumsum(keep) - keep
    line_first = kept_before[firsts] - check[firsts]
    return XYDataLines(y=y[keep], line_x=line_x, line_x_step=line_x_step,
                       line_first=line_first.astype(np.int64),
                       line_number=np.asarray(line_number, np.int64))
