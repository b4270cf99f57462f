"""The ASDF encoder: integers to SQZ, DIF and DUP text, DIFDUP lines with the Y-check, and
AFFN lines, after JCAMP-DX 4.24 (McDonald and Wilks, Applied Spectroscopy 42 (1988) 151).
The character tables are those of :mod:`widgetkit.io.asdf`, which re-exports these names."""

from __future__ import annotations

from bisect import bisect_right
from itertools import accumulate

import numpy as np

__all__ = ["encode_sqz", "encode_dif", "encode_dup", "encode_difdup_lines", "encode_affn_lines"]

_SQZ_POS, _SQZ_NEG = "@ABCDEFGHI", "@abcdefghi"
_DIF_POS, _DIF_NEG = "%JKLMNOPQR", "%jklmnopqr"
_DUP_CH = "?STUVWXYZs"

_DIF_FIRST = ({str(i): c for i, c in enumerate(_DIF_POS)},
              {str(i): c for i, c in enumerate(_DIF_NEG)})


def _fold(v: int, pos: str, neg: str) -> str:
    s = str(abs(v))
    table = neg if v < 0 else pos
    return table[int(s[0])] + s[1:]


def encode_sqz(v: int) -> str:
    """SQZ form of an integer: ``encode_sqz(1234) == "A234"``, ``encode_sqz(-5) == "e"``."""
    return _fold(int(v), _SQZ_POS, _SQZ_NEG)


def encode_dif(v: int) -> str:
    """DIF form of an integer difference: ``encode_dif(-15) == "j5"``, ``0 -> "%"``."""
    return _fold(int(v), _DIF_POS, _DIF_NEG)


def encode_dup(count: int) -> str:
    """DUP form of a repeat count >= 1: ``encode_dup(3) == "U"``, ``encode_dup(12) == "S2"``."""
    s = str(int(count))
    if int(count) < 1:
        raise ValueError(f"a DUP count must be >= 1, got {count}")
    return _DUP_CH[int(s[0])] + s[1:]


def encode_difdup_lines(y: np.ndarray, x_of, *, width: int = 80) -> list[str]:
    """Encode integer ordinates as DIFDUP lines with the Y-check.

    Parameters
    ----------
    y : ndarray of int, shape (n,)
        Ordinates already divided by YFACTOR and rounded.
    x_of : callable
        ``x_of(i)`` gives the text of the X written before ordinate ``i``.
    width : int
        Maximum line length (JCAMP-DX asks for at most 80 characters).

    Returns
    -------
    list of str
        One string per line. Each line starts ``X`` + SQZ(y[i]) and continues with the
        differences in DIF form, runs of equal differences shortened with DUP. A line that
        ends with a difference is followed by a line that repeats its last ordinate (the
        Y-check), including a final line holding only the check of the last ordinate.
    """
    y = np.asarray(y, np.int64)
    d = np.diff(y)
    # runs of equal differences: one DIF token each, with a DUP count when longer than 1
    brk = np.flatnonzero(d[1:] != d[:-1]) + 1
    run_start = np.concatenate(([0], brk)) if d.size else np.zeros(0, np.int64)
    run_len = np.diff(np.concatenate((run_start, [d.size]))).tolist()
    pos, neg = _DIF_FIRST
    toks = [neg[t[1]] + t[2:] if t[0] == "-" else pos[t[0]] + t[1:]
            for t in map(str, d[run_start].tolist())]
    for k in np.flatnonzero(np.asarray(run_len) > 1).tolist():
        toks[k] += encode_dup(run_len[k])
    tok_end = list(accumulate(map(len, toks)))  # characters up to the end of each token
    run_end = list(accumulate(run_len))  # ordinates covered up to the end of each run
    lines: list[str] = []
    i = r = 0  # the ordinate starting the line, the next run to write
    while True:
        head = x_of(i) + encode_sqz(int(y[i]))
        if r == len(toks):  # the check of the last ordinate, or a single point
            lines.append(head)
            break
        used = tok_end[r - 1] if r else 0
        stop = max(bisect_right(tok_end, used + width - len(head), r), r + 1)
        lines.append(head + "".join(toks[r:stop]))
        i = run_end[stop - 1]
        r = stop
    return lines


def encode_affn_lines(values: list[str], x_of, *, width: int = 80) -> list[str]:
    """AFFN lines ``X y y y`` of at most ``width`` characters (at least one y a line)."""
    lines: list[str] = []
    i = 0
    n = len(values)
    while i < n:
        line = x_of(i)
        j = i
        while j < n and (j == i or len(line) + 1 + len(values[j]) <= width):
            line += " " + values[j]
            j += 1
        lines.append(line)
        i = j
    return lines
