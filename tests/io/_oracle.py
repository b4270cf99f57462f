"""Independent, deliberately simple decoders used as oracles by the fuzz tests.

They share no code with :mod:`widgetkit.io`: a character-by-character ASDF decoder with exact
fractions, written from the JCAMP-DX tables (McDonald and Wilks, Applied Spectroscopy 42
(1988) 151: SQZ '@'=0, 'A'-'I'=1..9, 'a'-'i'=-1..-9; DIF '%'=0, 'J'-'R'=1..9, 'j'-'r'=-1..-9;
DUP 'S'-'Z'=1..8, 's'=9, the count including the first occurrence; the Y-check repeats the last
ordinate of a line that ends in DIF form), and a two-column CSV row reader.

Each returns None when the input uses something it does not model (then the fuzz test only
checks that the reader raised nothing but SpectrumFormatError); otherwise the values the
reader must return if it returns at all.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np

SQZ = {"@": 0, **{c: i for i, c in enumerate("ABCDEFGHI", 1)},
       **{c: -i for i, c in enumerate("abcdefghi", 1)}}
DIF = {"%": 0, **{c: i for i, c in enumerate("JKLMNOPQR", 1)},
       **{c: -i for i, c in enumerate("jklmnopqr", 1)}}
DUP = {c: i for i, c in enumerate("STUVWXYZs", 1)}
_DIGITS = set("0123456789")


class Unjudged(Exception):
    """The oracle does not model this input."""


class Invalid(Exception):
    """The oracle finds the input invalid: a reader must refuse it."""


def _lines(text: str) -> list[str]:
    return text.replace("\r\n", "\n").replace("\r", "\n").split("\n")


def _affn(s: str, i: int) -> tuple[Fraction, int]:
    """An AFFN number (sign, digits, point, digits; signed exponent) starting at ``i``."""
    j = i
    if j < len(s) and s[j] in "+-":
        j += 1
    k = j
    while k < len(s) and (s[k] in _DIGITS or s[k] == "."):
        k += 1
    body = s[j:k]
    if body.count(".") > 1 or not any(c in _DIGITS for c in body):
        raise Invalid(f"bad number {s[i:k]!r}")
    if s[k:k + 1] in ("e", "E") and s[k + 1:k + 2] in ("+", "-") and s[k + 2:k + 3].isdigit():
        m = k + 2
        while m < len(s) and s[m] in _DIGITS:
            m += 1
        return Fraction(s[i:m]), m
    return Fraction(s[i:k] if not s[i:k].endswith(".") else s[i:k] + "0"), k


def _folded(s: str, i: int, table: dict) -> tuple[Fraction, int]:
    head = table[s[i]]
    k = i + 1
    while k < len(s) and (s[k] in _DIGITS or s[k] == "."):
        k += 1
    rest = s[i + 1:k]
    if rest.count(".") > 1:
        raise Invalid("two points")
    text = str(abs(head)) + rest
    v = Fraction(text if not text.endswith(".") else text + "0")
    return (-v if head < 0 else v), k


def asdf_lines(lines: list[str]) -> tuple[list[Fraction], list[Fraction]]:
    """Ordinates and line X values of ``(X++(Y..Y))`` lines."""
    ys: list[Fraction] = []
    xs: list[Fraction] = []
    prev_ended_dif = False
    for raw in lines:
        s = raw.split("$$", 1)[0]
        if not s.strip():
            continue
        toks: list[tuple[str, Fraction]] = []
        i = 0
        while i < len(s):
            c = s[i]
            if c in " \t,\x0b\x0c":
                i += 1
            elif c in _DIGITS or c in "+-.":
                v, i = _affn(s, i)
                toks.append(("abs", v))
            elif c in SQZ:
                v, i = _folded(s, i, SQZ)
                toks.append(("abs", v))
            elif c in DIF:
                v, i = _folded(s, i, DIF)
                toks.append(("dif", v))
            elif c in DUP:
                v, i = _folded(s, i, DUP)
                toks.append(("dup", v))
            else:
                raise Invalid(f"character {c!r}")
        if not toks or len(toks) < 2:
            raise Invalid("a line without X or ordinates")
        (xkind, x), rest = toks[0], toks[1:]
        if rest[0][0] != "abs":
            raise Invalid("first ordinate not absolute")
        lead = s.lstrip(" \t,\x0b\x0c")[0]
        if xkind != "abs" or not (lead in _DIGITS or lead in "+-."):
            raise Invalid("X not AFFN")
        line_ys: list[Fraction] = []
        last_kind = None
        last_val = Fraction(0)
        for kind, v in rest:
            if kind == "dup":
                if last_kind is None or last_kind.startswith("dup") or v.denominator != 1 \
                        or v < 1:
                    raise Invalid("bad DUP")
                if v > 10 ** 6:
                    raise Unjudged("huge DUP")
                for _ in range(int(v) - 1):
                    line_ys.append(line_ys[-1] + last_val if last_kind == "dif" else last_val)
                last_kind = "dup:" + last_kind
                continue
            if kind == "abs":
                line_ys.append(v)
            else:
                line_ys.append(line_ys[-1] + v)
            last_kind, last_val = kind, v
        if prev_ended_dif:
            if line_ys[0] != ys[-1]:
                raise Invalid("Y-check")
            line_ys = line_ys[1:]
            xs.append(x)
        else:
            xs.append(x)
        ys.extend(line_ys)
        prev_ended_dif = last_kind in ("dif", "dup:dif")
    return ys, xs


def _labels(text: str) -> tuple[dict[str, str], str, list[str]]:
    """Labels of a one-block file, the data label and its lines."""
    labels: dict[str, str] = {}
    data_label, data_lines = None, []
    current = None
    for ln in _lines(text.lstrip("\ufeff")):
        st = ln.lstrip(" \t")
        if st.startswith("##"):
            key, _, value = st[2:].partition("=")
            key = "".join(ch for ch in key if ch not in " \t-/_").upper()
            current = key
            if key in ("XYDATA", "XYPOINTS", "PEAKTABLE"):
                if data_label is not None:
                    raise Unjudged("two data records")
                data_label = key + "=" + "".join(value.split("$$")[0].split()).upper()
            elif key in labels:
                raise Unjudged("a label given twice, or several blocks")
            else:
                labels[key] = value.split("$$")[0].strip()
        elif current and data_label and current in ("XYDATA", "XYPOINTS", "PEAKTABLE"):
            data_lines.append(ln)
    if data_label is None:
        raise Invalid("no data")
    return labels, data_label, data_lines


def jcamp_values(text: str) -> tuple[np.ndarray, np.ndarray] | None:
    """(x, y) in file order (XFACTOR, YFACTOR applied) of a one-block JCAMP-DX text, or None
    when this oracle does not model the file. Raises :class:`Invalid` when a reader must
    refuse it."""
    try:
        labels, data_label, data_lines = _labels(text)
        if any(k in labels for k in ("BLOCKS", "NTUPLES")) or labels.get("XUNITS") != "1/CM":
            return None
        xf = float(Fraction(labels.get("XFACTOR", "1").split()[0]))
        yf = float(Fraction(labels.get("YFACTOR", "1").split()[0]))
        if data_label != "XYDATA=(X++(Y..Y))":
            return None
        body = "\n".join(data_lines)
        if any(c in body for c in "eE") and not any(c in body for c in
                                                    "ABCDFGHIabcdfghi%JKLMNOPQRjklmnopqrSTUVWXYZs"):
            return None  # unsigned exponents: settled against NPOINTS, not modelled here
        ys, _xs = asdf_lines(data_lines)
        n = int(Fraction(labels["NPOINTS"].split()[0]))
        if n != len(ys):
            raise Invalid("NPOINTS")
        first = float(Fraction(labels["FIRSTX"].split()[0]))
        last = float(Fraction(labels["LASTX"].split()[0]))
    except (KeyError, ValueError, ZeroDivisionError, IndexError):
        return None
    except Unjudged:
        return None
    if xf != 1.0:
        return None
    y = np.array([float(v) for v in ys], np.float64) * yf
    return np.linspace(first, last, n), y


def csv_rows(text: str) -> tuple[np.ndarray, np.ndarray] | None:
    """(x, y) rows of a two-column comma file with '.' decimals, or None when not modelled.
    Raises :class:`Invalid` when a reader must refuse it."""
    rows: list[tuple[float, float]] = []
    started = False
    for ln in _lines(text.lstrip("\ufeff")):
        s = ln.split("#", 1)[0].strip()
        if not s:
            continue
        cells = [c.strip().strip('"').strip() for c in s.split(",")]
        ok = len(cells) == 2 and all(_plain(c) for c in cells)
        if not started:
            if ok:
                started = True
            elif any(ch in s for ch in ";\t\"") or len(cells) != 2 or any(
                    _plain(c) or c.lower() in ("nan", "inf", "-inf") for c in cells):
                return None  # another layout or a row the sniffer may take as data
            else:
                continue
        if not ok:
            raise Invalid(f"row {s!r}")
        rows.append((float(cells[0]), float(cells[1])))
    if len(rows) < 3:
        raise Invalid("fewer than 3 rows")
    if len({r[0] for r in rows}) < len(rows):
        raise Invalid("a repeated x")
    a = np.array(rows)
    return a[:, 0], a[:, 1]


def _plain(cell: str) -> bool:
    """An ASCII decimal number that float() reads as a finite value."""
    if not cell or any(ch not in "0123456789+-.eE" for ch in cell):
        return False
    try:
        return bool(np.isfinite(float(cell)))
    except ValueError:
        return False
