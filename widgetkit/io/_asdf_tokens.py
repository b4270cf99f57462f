"""Tokenisers of ``##XYDATA=(X++(Y..Y))`` lines (see :mod:`widgetkit.io.asdf`).

Both return the same :class:`Tokens`: for every number its kind (absolute, DIF or DUP),
whether it was written in AFFN, and its exact value as ``mantissa * 10**exponent`` with an
integer mantissa, so that no value is rounded before the ordinates are rebuilt.

* :func:`tokenise_fast` works on the byte array with lookup tables and numpy, one pass, no
  Python loop per character; it handles every block whose numbers have at most 18 digits and
  no exponent.
* :func:`tokenise_careful` is a single left-to-right regular-expression scan (each
  alternative consumes at least one byte and none can backtrack beyond its own token, so the
  scan is linear); it takes exponents and numbers of any length (Python integers).

An exponent needs a sign (``1.5E+03``) because an unsigned ``E`` is the SQZ digit 5, except in
a block written entirely in AFFN (no ASDF letter other than ``E``/``e``, each of them between
a digit or point and a digit or sign), where ``1.5E3`` and ``2e-4`` are read as exponents.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..errors import SpectrumFormatError

__all__ = ["Tokens", "tokenise", "ABS", "DIF", "DUP", "fail", "ambiguous_exponents"]

# byte classes
_BAD, _DIGIT, _SQZ, _DIFC, _DUPC, _SEP, _NL, _SIGN, _DOT = range(9)
CLS = np.zeros(256, np.int8)
VAL = np.zeros(256, np.int8)
for _c in b"0123456789":
    CLS[_c], VAL[_c] = _DIGIT, _c - 48
CLS[ord("@")], CLS[ord("%")] = _SQZ, _DIFC
for _i, (_sp, _sn, _dp, _dn) in enumerate(zip("ABCDEFGHI", "abcdefghi", "JKLMNOPQR", "jklmnopqr",
                                              strict=True), start=1):
    CLS[ord(_sp)], VAL[ord(_sp)] = _SQZ, _i
    CLS[ord(_sn)], VAL[ord(_sn)] = _SQZ, -_i
    CLS[ord(_dp)], VAL[ord(_dp)] = _DIFC, _i
    CLS[ord(_dn)], VAL[ord(_dn)] = _DIFC, -_i
for _i, _c in enumerate("STUVWXYZs", start=1):
    CLS[ord(_c)], VAL[ord(_c)] = _DUPC, _i
for _c in b" \t,\r\x0b\x0c":
    CLS[_c] = _SEP
CLS[ord("\n")] = _NL
CLS[ord("+")], VAL[ord("+")] = _SIGN, 1
CLS[ord("-")], VAL[ord("-")] = _SIGN, -1
CLS[ord(".")] = _DOT

#: token kinds
ABS, DIF, DUP = 0, 1, 2
#: a number may hold at most this many digits and an exponent of at most this magnitude
#: (float64 holds 17 significant digits and exponents to about ±308)
MAX_DIGITS, MAX_EXPONENT = 60, 400

#: 10**k for k = 0..18 in int64
POW10 = 10 ** np.arange(19, dtype=np.int64)
_SIGNED_EXP = re.compile(rb"[0-9.][eE][+-][0-9]")
_ASDF_LETTERS = re.compile(rb"[@A-DF-Za-df-z%]")
_ANY_E = re.compile(rb"[eE]")
_E_IN_NUMBER = re.compile(rb"[0-9.][eE][+-]?[0-9]")
_AFFN_EXP = rb"(?:[eE][+-]?[0-9]+)"
_SIGNED_ONLY = rb"(?:[eE][+-][0-9]+)"
_TOKEN = (rb"([+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+){exp}?)"  # AFFN number
          rb"|([@A-Ia-i%J-Rj-rS-Zs])([0-9]*\.?[0-9]*)"  # SQZ / DIF / DUP lead and digits
          rb"|(\n)|([ \t,\r\x0b\x0c]+)|(.)")
_TOKEN_SIGNED = re.compile(_TOKEN.replace(b"{exp}", _SIGNED_ONLY), re.S)
_TOKEN_AFFN = re.compile(_TOKEN.replace(b"{exp}", _AFFN_EXP), re.S)


@dataclass(frozen=True)
class Tokens:
    """Numbers of an XYDATA block in file order.

    ``value = mantissa * 10**exponent`` exactly; ``mantissa`` is int64 (fast tokeniser) or
    Python ``int`` objects (careful tokeniser); ``line`` counts from 0 at the block's first
    line."""

    kind: np.ndarray
    affn: np.ndarray
    mantissa: np.ndarray
    exponent: np.ndarray
    line: np.ndarray


def fail(msg: str, path, line) -> SpectrumFormatError:
    return SpectrumFormatError(msg, path=path, line=None if line is None else int(line))


def ambiguous_exponents(block: bytes) -> bool:
    """True when every E/e of a block without other ASDF letters sits inside a number, so
    that ``1.5E3`` may be an AFFN exponent or 1.5 followed by the SQZ value 53."""
    if _ASDF_LETTERS.search(block) or not _ANY_E.search(block):
        return False
    return len(_ANY_E.findall(block)) == len(_E_IN_NUMBER.findall(block))


def tokenise(block: bytes, line0: int, path, *, exponents: bool = False) -> Tokens | None:
    """Tokens of a block (``$$`` comments already removed), or None when it holds none.

    ``exponents=True`` reads an unsigned ``E`` inside a number as an exponent (see
    :func:`ambiguous_exponents`)."""
    if exponents:
        return tokenise_careful(block, line0, path, _TOKEN_AFFN)
    if _SIGNED_EXP.search(block):
        return tokenise_careful(block, line0, path, _TOKEN_SIGNED)
    toks = tokenise_fast(np.frombuffer(block, np.uint8), line0, path)
    if isinstance(toks, str):  # more digits than int64 holds
        return tokenise_careful(block, line0, path, _TOKEN_SIGNED)
    return toks


def tokenise_fast(a: np.ndarray, line0: int, path) -> Tokens | str | None:
    """Vectorised tokeniser; ``"long"`` when a number has more than 18 digits."""
    if a.size == 0:
        return None
    cls = CLS[a]
    bad = cls == _BAD
    if bad.any():
        i = int(np.argmax(bad))
        line = line0 + int(np.count_nonzero(cls[:i] == _NL))
        ch = chr(a[i])
        hint = ("'?' marks a missing ordinate, which widgetkit does not accept; "
                "replace it by a measured value" if ch == "?" else
                "only digits, signs, '.', blanks, commas and the SQZ/DIF/DUP letters may appear")
        raise fail(f"character {ch!r} in the ordinate data is not allowed: {hint}", path, line)
    prev = np.empty_like(cls)
    prev[0] = _NL
    prev[1:] = cls[:-1]
    after_sep = (prev == _SEP) | (prev == _NL)
    start = ((cls == _SQZ) | (cls == _DIFC) | (cls == _DUPC) | (cls == _SIGN)
             | (((cls == _DIGIT) | (cls == _DOT)) & after_sep))
    starts = np.flatnonzero(start)
    ntok = starts.size
    if ntok == 0:
        return None
    tid = np.cumsum(start, dtype=np.int64) - 1
    digit_bearing = (cls == _DIGIT) | (cls == _SQZ) | (cls == _DIFC) | (cls == _DUPC)
    db = np.flatnonzero(digit_bearing)
    t = tid[db]
    cnt = np.bincount(t, minlength=ntok)
    nl_cum = np.cumsum(cls == _NL, dtype=np.int64)
    if cnt.min() == 0:
        k = int(np.argmin(cnt))
        raise fail("a value in the ordinate data holds no digit; check the XYDATA lines", path,
                   line0 + int(nl_cum[starts[k]]))
    if cnt.max() > 18:
        return "long"
    first_digit = np.cumsum(cnt) - cnt
    power = cnt[t] - 1 - (np.arange(db.size) - first_digit[t])
    digits = np.abs(VAL[a[db]]).astype(np.int64) * POW10[power]
    mantissa = np.add.reduceat(digits, first_digit)
    dots = np.flatnonzero(cls == _DOT)
    exponent = np.zeros(ntok, np.int64)
    if dots.size:
        per_tok = np.bincount(tid[dots], minlength=ntok)
        if per_tok.max() > 1:
            k = int(np.argmax(per_tok > 1))
            raise fail("a value in the ordinate data has two decimal points", path,
                       line0 + int(nl_cum[starts[k]]))
        dotpos = np.full(ntok, np.iinfo(np.int64).max)
        dotpos[tid[dots]] = dots
        exponent = -np.bincount(t, weights=db > dotpos[t], minlength=ntok).astype(np.int64)
    lead = a[starts]
    lead_cls = cls[starts]
    sign = np.where(VAL[lead] < 0, -1, 1).astype(np.int64)
    sign[(lead_cls == _DIGIT) | (lead_cls == _DOT)] = 1
    kind = np.full(ntok, ABS, np.int8)
    kind[lead_cls == _DIFC] = DIF
    kind[lead_cls == _DUPC] = DUP
    affn = (lead_cls == _DIGIT) | (lead_cls == _DOT) | (lead_cls == _SIGN)
    return Tokens(kind, affn, sign * mantissa, exponent, nl_cum[starts])


def _check_size(ndigits: int, exp: bytes, path, line: int) -> None:
    if ndigits > MAX_DIGITS:
        raise fail(f"a value in the ordinate data has {ndigits} digits (at most {MAX_DIGITS})",
                   path, line)
    if exp and (len(exp) > 5 or abs(int(exp)) > MAX_EXPONENT):
        raise fail(f"a value in the ordinate data has the exponent {exp[:12].decode()}, beyond "
                   f"±{MAX_EXPONENT}; no float64 holds it", path, line)


def tokenise_careful(block: bytes, line0: int, path, pattern: re.Pattern) -> Tokens | None:
    """One regular-expression pass; numbers as exact Python integers and exponents."""
    kinds: list[int] = []
    affn: list[bool] = []
    mant: list[int] = []
    expo: list[int] = []
    lines: list[int] = []
    line = 0
    value_end = -1  # where the last number ended: a point right after it is a second point
    for m in pattern.finditer(block):
        num, lead, rest, nl, _sep, other = m.groups()
        if num is not None and num.startswith(b".") and m.start() == value_end:
            raise fail("a value in the ordinate data has two decimal points", path,
                       line0 + line)
        if num is not None or lead is not None:
            value_end = m.end()
        if nl is not None:
            line += 1
            continue
        if other is not None:
            ch = other.decode("latin-1")
            hint = (" ('?' marks a missing ordinate; replace it by a measured value)"
                    if ch == "?" else "")
            raise fail(f"character {ch!r} in the ordinate data is not allowed{hint}", path,
                       line0 + line)
        if num is not None:
            body, _, exp = num.lower().partition(b"e")
            whole, _, frac = body.partition(b".")
            digits = (whole.lstrip(b"+-") + frac) or b"0"
            _check_size(len(digits), exp, path, line0 + line)
            sign = -1 if body.startswith(b"-") else 1
            kinds.append(ABS)
            affn.append(True)
            mant.append(sign * int(digits))
            expo.append((int(exp) if exp else 0) - len(frac))
        elif lead is not None:
            c = CLS[lead[0]]
            v = int(VAL[lead[0]])
            whole, _, frac = rest.partition(b".")
            if rest.count(b".") > 1:
                raise fail("a value in the ordinate data has two decimal points", path,
                           line0 + line)
            _check_size(1 + len(whole) + len(frac), b"", path, line0 + line)
            magnitude = int(str(abs(v)) + (whole + frac).decode())
            kinds.append({_SQZ: ABS, _DIFC: DIF, _DUPC: DUP}[int(c)])
            affn.append(False)
            mant.append(-magnitude if v < 0 and c != _DUPC else magnitude)
            expo.append(-len(frac))
        else:  # pragma: no cover - the pattern always matches one group
            continue
        lines.append(line)
    if not kinds:
        return None
    mant_arr = np.empty(len(mant), object)
    mant_arr[:] = mant
    return Tokens(np.array(kinds, np.int8), np.array(affn, bool), mant_arr,
                  np.array(expo, np.int64), np.array(lines, np.int64))
