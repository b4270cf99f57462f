"""The layout of a delimited text file: separator, decimal mark, columns, header and comments.

The first lines are read until the first data row (two or more numbers); the file's head is
read in growing pieces (64 KiB, then four times more each time), so a first line of any
length is found and the total work stays linear in the file size. Lines end at LF, CR LF or
a lone CR (as in pandas' parser). A header line holding an odd number of double quotes
continues on the next lines (a quoted cell with a line break) until its quotes pair up or a
data row starts. Every step is a single pass over the text (no backtracking patterns).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import SpectrumFormatError
from ._common import check_not_binary, decode_text, split_lines, transcode

__all__ = ["Layout", "sniff_file", "split_cells", "is_numeric", "NONFINITE", "DELIM_NAMES"]

HEAD_BYTES = 1 << 16
_NUM = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\Z", re.ASCII)
NONFINITE = frozenset({"nan", "+nan", "-nan", "inf", "+inf", "-inf", "infinity", "+infinity",
                       "-infinity", "na", "n/a", "null", "none"})
DELIM_NAMES = {",": "comma", "\t": "tab", ";": "semicolon", None: "whitespace"}
_MAX_JOIN = 5  # physical lines one quoted header cell may span


@dataclass
class Layout:
    delimiter: str | None  # None: runs of whitespace
    decimal: str
    ncols: int
    skip: int  # physical lines before the first data line
    names: list[str] | None
    trailing: bool = False  # rows end with a separator: read by the reference parser
    header: list[str] = field(default_factory=list)
    comments: list[str] = field(default_factory=list)
    offset: int = 0  # byte offset of the first data line in the file
    transcoded: bool = False  # the file is UTF-16: only the reference parser reads it


def split_cells(line: str, delimiter: str | None, trailing: bool = False) -> list[str]:
    """Cells of a line, blanks and enclosing double quotes removed; with ``trailing``,
    separators at the end (``1.0;2.0;`` or ``1.0,2.0,,`` as spreadsheets write) make no
    cells."""
    cells = line.split() if delimiter is None else line.split(delimiter)
    if trailing:
        while len(cells) > 1 and not cells[-1].strip().strip('"').strip():
            cells.pop()
    return [c.strip().strip('"').strip() for c in cells]


def is_numeric(cell: str, decimal: str) -> bool:
    """A number (ASCII digits, ``decimal`` as the mark) or a non-finite word such as NaN."""
    if decimal == ",":
        if "." in cell:
            return False
        cell = cell.replace(",", ".")
    return bool(_NUM.match(cell)) or cell.lower() in NONFINITE


def _guess(line: str) -> tuple[str | None, str, int, bool] | None:
    """Separator, decimal mark, column count and trailing separator of a data line, or None
    if it is not a data line."""
    for delim in ("\t", ";", ",", None):
        if delim is not None and delim not in line:
            continue
        for trailing in (False, True) if delim is not None else (False,):
            cells = split_cells(line, delim, trailing)
            if len(cells) < 2:
                continue
            decimals = ["."] if delim == "," else ([",", "."] if any("," in c for c in cells)
                                                 else ["."])
            for dec in decimals:
                if all(is_numeric(c, dec) for c in cells):
                    return delim, dec, len(cells), trailing
    return None


def _data_part(line: str) -> str:
    return line.split("#", 1)[0].strip()


def _merge_units(words: list[str]) -> list[str]:
    """Join blank-separated label words so that units stay with their quantity:
    ``["Wavenumber", "(cm-1)", "Absorbance"] -> ["Wavenumber (cm-1)", "Absorbance"]``."""
    out: list[str] = []
    for w in words:
        if out and (w[0] in "([{/" or out[-1].endswith("/")):
            out[-1] += " " + w
        else:
            out.append(w)
    return out


def _header_names(line: str, delim: str | None, ncols: int) -> list[str] | None:
    tries = [delim] if delim is not None else ["\t", "  ", ",", ";", None, "units"]
    for d in tries:
        if d == "  ":
            cells = [c.strip().strip('"').strip() for c in re.split(r"\s{2,}", line.strip())]
        elif d == "units":
            cells = [c.strip('"').strip() for c in _merge_units(line.split())]
        else:
            cells = split_cells(line, d, trailing=True)
        if len(cells) == ncols and all(cells):
            return cells
    return None


def _with_unit_row(above: str, names: list[str], delim, ncols: int) -> list[str]:
    """Names and a row of units below them merged: ``["Wavenumber", "Absorbance"]`` over
    ``["cm-1", "AU"]`` gives ``["Wavenumber (cm-1)", "Absorbance (AU)"]``; ``names`` as they
    are when the last header row is not a row of units."""
    first = _header_names(above, delim, ncols)
    if first is None:
        return names
    from ._labels import parse_x_label

    unit, quantity = parse_x_label(names[0])
    if unit is None or quantity is not None or len(names[0]) > 12:
        return names  # the last row does not start with a bare x unit
    return [f"{a} ({b})" for a, b in zip(first, names, strict=True)]


def _sniff_text(lines: list[str]) -> Layout | None:
    header: list[str] = []
    comments: list[str] = []
    last_comment_at = -2
    i = 0
    while i < len(lines):
        s = lines[i].strip()
        if not s:
            i += 1
            continue
        if s.startswith("#"):
            comments.append(s.lstrip("#").strip())
            last_comment_at = i
            i += 1
            continue
        g = _guess(_data_part(s))
        if g is None:
            j = i + 1
            while s.count('"') % 2 and j < len(lines) and j - i < _MAX_JOIN and _guess(
                    _data_part(lines[j].strip())) is None:
                s += " " + lines[j].strip()  # a quoted cell broken over lines
                j += 1
            header.append(s)
            i = j
            continue
        delim, dec, ncols, trailing = g
        names = _header_names(header[-1], delim, ncols) if header else None
        if names is not None and len(header) > 1:
            names = _with_unit_row(header[-2], names, delim, ncols)
        if names is None and comments and last_comment_at == i - 1:
            names = _header_names(comments[-1], delim, ncols)
        return Layout(delim, dec, ncols, i, names, trailing, header, comments[:20])
    return None


def _line_offset(data: bytes, index: int) -> int:
    """Byte offset where physical line ``index`` (0-based; LF, CR LF or CR ends a line)
    starts."""
    if index == 0:
        return 0
    a = np.frombuffer(data, np.uint8)
    lf = a == 10
    cr = a == 13
    cr[:-1] &= ~lf[1:]  # a CR followed by LF ends its line at the LF
    ends = np.flatnonzero(lf | cr)
    return int(ends[index - 1]) + 1


def _no_layout(lines: list[str], path: str) -> SpectrumFormatError:
    first = next(((k + 1, ln.strip()) for k, ln in enumerate(lines)
                  if ln.strip() and not ln.strip().startswith("#")), None)
    if first is None:
        return SpectrumFormatError("the file holds no data rows (only blank or comment "
                                   "lines); expected rows of two or more numbers", path=path)
    return SpectrumFormatError(
        f"no data row found: expected two or more numbers per line separated by comma, "
        f"tab, semicolon or blanks; the first line reads {first[1][:60]!r}",
        path=path, line=first[0])


def sniff_file(path: str) -> Layout:
    """The layout of a text file (see the module notes); raises
    :class:`SpectrumFormatError` for an empty or binary file or one without a data row."""
    size = HEAD_BYTES
    try:
        f = open(path, "rb")  # noqa: SIM115 - closed by the with block below
    except FileNotFoundError:
        raise
    except OSError as exc:
        raise SpectrumFormatError(f"cannot read the file ({exc.strerror or exc}); give the "
                                  "path of a readable spectrum file", path=path) from exc
    with f:
        head = f.read(size + 1)
        if not head:
            raise SpectrumFormatError("the file is empty; expected columns of numbers",
                                      path=path)
        if head[:2] in (b"\xff\xfe", b"\xfe\xff"):  # UTF-16: decode the whole file
            data = transcode(head + f.read())
            check_not_binary(data, path)
            lines = split_lines(decode_text(data))
            layout = _sniff_text(lines)
            if layout is None:
                raise _no_layout(lines, path)
            layout.transcoded = True
            return layout
        while True:
            complete = len(head) <= size
            cut = head if complete else head[:max(head.rfind(b"\n", 0, size),
                                                  head.rfind(b"\r", 0, size)) + 1]
            check_not_binary(cut, path)
            lines = split_lines(decode_text(cut))
            layout = _sniff_text(lines) if cut else None
            if layout is not None:
                layout.offset = _line_offset(cut, layout.skip)
                return layout
            if complete:
                raise _no_layout(lines, path)
            size *= 4
            head += f.read(size + 1 - len(head))
