"""Delimited text spectra: reading (comma, tab, semicolon or whitespace columns, decimal
comma, header and ``#`` comment lines) and writing CSV.

Reading works in two passes over one design. The first lines are sniffed in Python to find
the header, the column names and units, the separator and the decimal mark. The numbers are
then parsed by pandas' C parser (fast, correctly rounded). Should that parser stumble, or the
values break a rule (non-finite, duplicate x, ...), a line-by-line reference parser reads the
file again and raises :class:`~widgetkit.errors.SpectrumFormatError` with the 1-based line and
what to fix; when it finds nothing wrong its result is used. Both passes accept the same
files and give the same numbers.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import SpectrumFormatError
from ..spectrum import Spectrum
from ._common import (
    HashingReader,
    absolute_path,
    atomic_write,
    check_not_binary,
    decode_text,
    finish,
    parse_x_label,
    parse_y_label,
    read_bytes,
    resolve_x_unit,
    resolve_y_kind,
    source_of,
)

__all__ = ["read_text", "write_csv"]

_HEAD_BYTES = 1 << 16
_NUM = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\Z")
_NONFINITE = {"nan", "+nan", "-nan", "inf", "+inf", "-inf", "infinity", "+infinity",
              "-infinity", "na", "n/a", "null", "none"}
_DELIM_NAMES = {",": "comma", "\t": "tab", ";": "semicolon", None: "whitespace"}


@dataclass
class _Layout:
    delimiter: str | None  # None: runs of whitespace
    decimal: str
    ncols: int
    skip: int  # physical lines before the first data line
    names: list[str] | None
    trailing: bool = False  # rows end with a separator: read by the reference parser
    header: list[str] = field(default_factory=list)
    comments: list[str] = field(default_factory=list)


def _split(line: str, delimiter: str | None, trailing: bool = False) -> list[str]:
    """Cells of a line; with ``trailing``, one separator at the end (``1.0;2.0;``) makes no
    cell."""
    cells = line.split() if delimiter is None else line.split(delimiter)
    if trailing and len(cells) > 1 and not cells[-1].strip():
        cells.pop()
    return [c.strip().strip('"').strip() for c in cells]


def _numeric(cell: str, decimal: str) -> bool:
    if decimal == ",":
        if "." in cell:
            return False
        cell = cell.replace(",", ".")
    return bool(_NUM.match(cell)) or cell.lower() in _NONFINITE


def _guess(line: str) -> tuple[str | None, str, int, bool] | None:
    """Separator, decimal mark, column count and trailing separator of a data line, or None
    if it is not a data line."""
    for delim in ("\t", ";", ",", None):
        if delim is not None and delim not in line:
            continue
        for trailing in (False, True) if delim is not None else (False,):
            cells = _split(line, delim, trailing)
            if len(cells) < 2:
                continue
            decimals = ["."] if delim == "," else ([",", "."] if any("," in c for c in cells)
                                                 else ["."])
            for dec in decimals:
                if all(_numeric(c, dec) for c in cells):
                    return delim, dec, len(cells), trailing
    return None


def _sniff(head: str, complete: bool, path: str) -> _Layout:
    lines = head.split("\n")
    header: list[str] = []
    comments: list[str] = []
    layout = None
    last_comment_at = -2
    for i, raw in enumerate(lines):
        s = raw.strip()
        if not s:
            continue
        if s.startswith("#"):
            comments.append(s.lstrip("#").strip())
            last_comment_at = i
            continue
        g = _guess(s.split("#", 1)[0].strip())
        if g is None:
            header.append(s)
            continue
        delim, dec, ncols, trailing = g
        names = None
        if header:
            names = _header_names(header[-1], delim, ncols)
        if names is None and comments and last_comment_at == i - 1:
            names = _header_names(comments[-1], delim, ncols)
        layout = _Layout(delim, dec, ncols, i, names, trailing, header, comments[:20])
        break
    if layout is None:
        if not complete:
            raise SpectrumFormatError("no numeric data in the first 64 KiB; expected rows of "
                                      "two or more numbers", path=path)
        first = next(((k + 1, ln.strip()) for k, ln in enumerate(lines)
                      if ln.strip() and not ln.strip().startswith("#")), None)
        if first is None:
            raise SpectrumFormatError("the file holds no data rows (only blank or comment "
                                      "lines); expected rows of two or more numbers", path=path)
        raise SpectrumFormatError(
            f"no data row found: expected two or more numbers per line separated by comma, "
            f"tab, semicolon or blanks; the first line reads {first[1][:60]!r}",
            path=path, line=first[0])
    return layout


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
            cells = [c.strip() for c in re.split(r"\s{2,}", line.strip())]
        elif d == "units":
            cells = _merge_units(line.split())
        else:
            cells = _split(line, d, trailing=True)
        if len(cells) == ncols and all(cells):
            return cells
    return None


def _unit_in(label: str | None) -> str | None:
    """The text in brackets or after a slash in a label: ``"Intensity (counts)" -> "counts"``."""
    if not label:
        return None
    m = re.search(r"[\(\[]\s*([^\)\]]+?)\s*[\)\]]", label) or re.search(r"\s/\s*(\S.*)$", label)
    return m.group(1) if m else None


def _select_y(layout: _Layout, y_column, path: str) -> int:
    ny = layout.ncols - 1
    if y_column is None:
        return 0
    if isinstance(y_column, (int, np.integer)) and not isinstance(y_column, bool):
        if not 0 <= int(y_column) < ny:
            raise SpectrumFormatError(f"y_column={y_column} is out of range: the file has {ny} "
                                      f"y column(s), numbered 0 to {ny - 1}", path=path)
        return int(y_column)
    if isinstance(y_column, str):
        names = layout.names[1:] if layout.names else []
        low = [n.lower() for n in names]
        if y_column.strip().lower() in low:
            return low.index(y_column.strip().lower())
        raise SpectrumFormatError(
            f"no y column named {y_column!r}; the y columns are "
            f"{names if names else 'unnamed (no header line)'}; give a name or a 0-based index",
            path=path)
    raise SpectrumFormatError(f"y_column must be a column name or a 0-based index, got "
                              f"{y_column!r}", path=path)


def _fast_columns(path: str, layout: _Layout, ycol: int):
    """Parse with pandas; return (x, y, sha, size) or None when the reference parser is needed."""
    import pandas as pd

    if layout.trailing:
        return None
    sep = r"\s+" if layout.delimiter is None else layout.delimiter
    with open(path, "rb") as f:
        reader = HashingReader(f)
        try:
            frame = pd.read_csv(
                reader, sep=sep, header=None, skiprows=layout.skip, comment="#",
                decimal=layout.decimal, engine="c", dtype=np.float64, na_filter=False,
                encoding="latin-1", skip_blank_lines=True, names=list(range(layout.ncols)),
                index_col=False)
        except Exception:  # any trouble: the reference parser explains it
            return None
        reader.drain()
    x = frame[0].to_numpy()
    y = frame[1 + ycol].to_numpy()
    return x, y, reader.sha.hexdigest(), reader.size


def _reference_rows(text: str, layout: _Layout, path: str) -> tuple[np.ndarray, np.ndarray]:
    """Line-by-line parse of every data row: values (rows, ncols) and 1-based line numbers."""
    rows: list[list[float]] = []
    lines_of: list[int] = []
    dec = layout.decimal
    for k, raw in enumerate(text.split("\n")[layout.skip:], start=layout.skip + 1):
        s = raw.split("#", 1)[0].strip()
        if not s:
            continue
        cells = _split(s, layout.delimiter, layout.trailing)
        if len(cells) != layout.ncols:
            raise SpectrumFormatError(
                f"this row has {len(cells)} field(s) but the data has {layout.ncols} columns "
                f"separated by {_DELIM_NAMES[layout.delimiter]}; fix the row or remove it",
                path=path, line=k)
        vals = []
        for j, c in enumerate(cells):
            if not _numeric(c, dec) or c.lower() in _NONFINITE:
                what = ("an empty cell" if not c else
                        f"the value {c!r} is not finite" if c.lower() in _NONFINITE else
                        f"{c!r} is not a number")
                mark = " with decimal comma" if dec == "," else ""
                raise SpectrumFormatError(
                    f"column {j + 1}: {what}; every data cell must be a finite number{mark}",
                    path=path, line=k)
            vals.append(float(c.replace(",", ".") if dec == "," else c))
        rows.append(vals)
        lines_of.append(k)
    if not rows:
        raise SpectrumFormatError("the file holds no data rows", path=path)
    return np.array(rows, np.float64), np.array(lines_of, np.int64)


def read_text(path, *, x_unit: str | None = None, y_kind: str | None = None,
              y_column: int | str | None = None) -> Spectrum:
    """Read a spectrum from delimited text.

    Parameters
    ----------
    path : str or path-like
        The file. Columns are separated by comma, tab, semicolon or blanks (detected); a
        decimal comma (``2885,97;0,123``) is accepted with tab, semicolon or blank separators.
        Lines before the first numeric row are header lines, the last of them naming the
        columns (for example ``Wavenumber (cm-1),Absorbance``); ``#`` lines are comments.
    x_unit : {"cm-1", "nm", "um", "THz"}, optional
        Unit of the first column; default taken from its label, else cm⁻¹. Given, it wins over
        the label (both are kept in ``meta``). Wavelength is taken as vacuum wavelength:
        ν̃ = 10⁷/λ[nm] = 10⁴/λ[µm]; frequency ν̃ = ν/(100 c).
    y_kind : {"absorbance", "transmittance", "intensity"}, optional
        What the y column holds; default from its label. Required when the label says nothing.
        Transmittance in percent (label with "%", or no unit and a maximum above 1.5) is
        divided by 100 and ``meta["transmittance_percent"]`` is True.
    y_column : int or str, optional
        Which y column when there are several: its header name or its 0-based index among the
        y columns (the x column not counted). Default the first.

    Returns
    -------
    Spectrum
        Sorted to ascending wavenumber. ``source`` holds the absolute path, sha256 and size
        of the file and ``format="text"``; ``meta`` the title, labels, units, columns,
        separator, decimal mark, header and comment lines and ``read_options``.

    Raises
    ------
    FileNotFoundError
        The file does not exist.
    SpectrumFormatError
        Empty or binary file, no numeric rows, a row with a different number of fields, a cell
        that is not a finite number, fewer than 3 rows or a repeated x: with the 1-based line.
    """
    apath = absolute_path(path)
    options = {"x_unit": x_unit, "y_kind": y_kind,
               "y_column": int(y_column) if isinstance(y_column, np.integer) else y_column}
    with open(apath, "rb") as f:
        head = f.read(_HEAD_BYTES + 1)
    complete = len(head) <= _HEAD_BYTES
    if not complete:  # sniff whole lines only
        head = head[: head.rfind(b"\n", 0, _HEAD_BYTES) + 1]
    if not head:
        raise SpectrumFormatError("the file is empty; expected columns of numbers", path=apath)
    check_not_binary(head, apath)
    layout = _sniff(decode_text(head), complete, apath)
    ycol = _select_y(layout, y_column, apath)
    names = layout.names
    x_label = names[0] if names else None
    y_label = names[1 + ycol] if names else None
    file_x_unit, x_quantity = parse_x_label(x_label)
    file_kind, percent, y_quantity = parse_y_label(y_label)
    unit, unit_from = resolve_x_unit(x_unit, file_x_unit, x_quantity, path=apath,
                                     where=f"x column label {x_label!r}" if x_label else
                                     "file (no header)")
    kind, kind_from = resolve_y_kind(y_kind, file_kind, path=apath,
                                     where=f"y column label {y_label!r}" if y_label else
                                     "file (no header line naming the columns)")
    if kind != "transmittance":
        percent = None
    title = next((re.split(r"[:=]", c, maxsplit=1)[1].strip() for c in layout.comments
                  + layout.header if re.match(r"\s*title\s*[:=]", c, re.I)), None)
    meta: dict[str, Any] = {
        "title": title or os.path.splitext(os.path.basename(apath))[0],
        "x_unit": unit, "x_unit_from": unit_from, "x_label": x_label,
        "x_quantity": x_quantity or ("wavenumber" if unit == "cm-1" else None),
        "y_label": y_label, "y_unit": _unit_in(y_label), "y_quantity": y_quantity or kind,
        "y_kind_from": kind_from,
        "columns": names, "y_column": y_label if y_label is not None else ycol,
        "delimiter": _DELIM_NAMES[layout.delimiter], "decimal": layout.decimal,
        "header": layout.header, "comments": layout.comments, "read_options": options,
    }
    if file_x_unit is not None and file_x_unit != unit:
        meta["x_unit_in_file"] = file_x_unit
    if file_kind is not None and file_kind != kind:
        meta["y_kind_in_file"] = file_kind
    common = dict(x_unit=unit, y_kind=kind, percent=percent, path=apath)
    fast = _fast_columns(apath, layout, ycol)
    if fast is not None:
        x, y, sha, size = fast
        source = {"path": apath, "sha256": sha, "format": "text", "size": size}
        try:
            return finish(x, y, meta=dict(meta), source=source, **common)
        except SpectrumFormatError:
            pass  # the reference parser gives the line
        del x, y
    data = read_bytes(apath)
    check_not_binary(data, apath)
    values, row_lines = _reference_rows(decode_text(data), layout, apath)
    return finish(values[:, 0], values[:, 1 + ycol], meta=meta,
                  source=source_of(apath, data, "text"), row_lines=row_lines, **common)


_Y_LABELS = {"absorbance": "absorbance", "transmittance": "transmittance (fraction)",
             "intensity": "intensity"}


def write_csv(spectrum: Spectrum, path, *, y_label: str | None = None,
              title: str | None = None) -> str:
    """Write a spectrum as comma-separated text that reads back exactly.

    The file is ``# title: ...`` (when there is a title), a header
    ``wavenumber (cm-1),<y label>`` and one row per point, ascending, every number in the
    shortest form that converts back to the same float64 (Python's ``repr``). The y label is
    ``absorbance``, ``transmittance (fraction)`` or ``intensity`` unless given. The file is
    written to a temporary name and then renamed, so a failed write leaves no partial file.

    Parameters
    ----------
    spectrum : Spectrum
        x in cm⁻¹ is written as is (ascending).
    path : str or path-like
        The file to write (replaced if it exists).
    y_label : str, optional
        Header of the y column. A label :func:`read_text` does not recognise means the file
        must be read back with ``y_kind=``.
    title : str, optional
        Written as ``# title: ...``; default ``spectrum.meta["title"]``, none if empty.

    Returns
    -------
    str
        The absolute path written.
    """
    apath = absolute_path(path)
    label = y_label or _Y_LABELS[spectrum.y_kind]
    title = spectrum.meta.get("title") if title is None else title
    out = []
    if title:
        out.append("# title: " + " ".join(str(title).split()) + "\n")
    out.append(f"wavenumber (cm-1),{label}\n")
    xs, ys = spectrum.x.tolist(), spectrum.y.tolist()
    body = "\n".join(map("{!r},{!r}".format, xs, ys)) + "\n"
    atomic_write(apath, ("".join(out) + body).encode("utf-8"))
    return apath
