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

import csv
import os
from typing import Any

import numpy as np

from ..errors import SpectrumFormatError
from ..spectrum import Spectrum
from ._common import (
    HashingReader,
    absolute_path,
    atomic_write,
    check_choice,
    check_not_binary,
    decode_text,
    finish,
    parse_x_label,
    parse_y_label,
    read_bytes,
    resolve_x_unit,
    resolve_y_kind,
    source_of,
    split_lines,
    transcode,
)
from ._labels import bracketed, header_fields, resolution_cm1, sample_state, technique_of
from ._text_sniff import DELIM_NAMES, NONFINITE, Layout, is_numeric, sniff_file, split_cells

__all__ = ["read_text", "write_csv"]


def _unit_in(label: str | None) -> str | None:
    """The text in brackets or after a slash in a label: ``"Intensity (counts)" -> "counts"``."""
    if not label:
        return None
    inside = bracketed(label)
    if inside:
        return inside[0] or None
    i = label.find(" /")
    return label[i + 2:].strip() or None if i >= 0 else None


def _select_y(layout: Layout, y_column, path: str) -> int:
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
        want = y_column.strip().strip('"').strip().lower()
        if want in low:
            return low.index(want)
        raise SpectrumFormatError(
            f"no y column named {y_column!r}; the y columns are "
            f"{names if names else 'unnamed (no header line)'}; give a name or a 0-based index",
            path=path)
    raise SpectrumFormatError(f"y_column must be a column name or a 0-based index, got "
                              f"{y_column!r}", path=path)


def _fast_columns(path: str, layout: Layout, ycol: int):
    """Parse with pandas from the first data line on; return (x, y, sha, size) or None when
    the reference parser is needed (any cell pandas cannot take as a float, a quote, a short
    row). Both parsers take the same numbers where both succeed."""
    import pandas as pd

    if layout.trailing or layout.transcoded:
        return None
    sep = r"\s+" if layout.delimiter is None else layout.delimiter
    with open(path, "rb") as f:
        reader = HashingReader(f)
        left = layout.offset
        while left > 0:  # the header bytes are hashed but not parsed
            chunk = reader.read(left)
            if not chunk:
                return None
            left -= len(chunk)
        try:
            frame = pd.read_csv(
                reader, sep=sep, header=None, comment="#", decimal=layout.decimal,
                engine="c", dtype=np.float64, na_filter=False, encoding="latin-1",
                skip_blank_lines=True, names=list(range(layout.ncols)), index_col=False,
                quoting=csv.QUOTE_NONE)
        except Exception:  # any trouble: the reference parser explains it
            return None
        reader.drain()
    columns = [frame[c].to_numpy() for c in range(layout.ncols)]
    if any(np.isnan(c).any() for c in columns):  # a missing field: the reference says where
        return None
    return columns[0], columns[1 + ycol], reader.sha.hexdigest(), reader.size


def _reference_rows(text: str, layout: Layout, ycol: int,
                    path: str) -> tuple[np.ndarray, np.ndarray]:
    """Line-by-line parse of every data row: x, y and the 1-based line of each row.

    The x and y cells must be finite numbers; the other columns must hold numbers, which may
    be NaN or infinite there (they are not read)."""
    xs: list[float] = []
    ys: list[float] = []
    lines_of: list[int] = []
    dec = layout.decimal
    read = (0, 1 + ycol)
    mark = " with decimal comma" if dec == "," else ""
    for k, raw in enumerate(split_lines(text)[layout.skip:], start=layout.skip + 1):
        s = raw.split("#", 1)[0].strip()
        if not s:
            continue
        cells = split_cells(s, layout.delimiter, layout.trailing)
        if len(cells) != layout.ncols:
            raise SpectrumFormatError(
                f"this row has {len(cells)} field(s) but the data has {layout.ncols} columns "
                f"separated by {DELIM_NAMES[layout.delimiter]}; fix the row or remove it",
                path=path, line=k)
        for j, c in enumerate(cells):
            finite_needed = j in read
            if is_numeric(c, dec) and not (finite_needed and c.lower() in NONFINITE):
                continue
            what = ("an empty cell" if not c else
                    f"the value {c!r} is not finite" if c.lower() in NONFINITE else
                    f"{c[:40]!r} is not a number")
            rule = ("must be a finite number" if finite_needed else
                    "must be a number (NaN allowed in a column that is not read)")
            raise SpectrumFormatError(f"column {j + 1}: {what}; this cell {rule}{mark}",
                                      path=path, line=k)
        xs.append(float(cells[0].replace(",", ".") if dec == "," else cells[0]))
        yc = cells[1 + ycol]
        ys.append(float(yc.replace(",", ".") if dec == "," else yc))
        lines_of.append(k)
    if not xs:
        raise SpectrumFormatError("the file holds no data rows", path=path)
    return np.array(xs, np.float64), np.array(ys, np.float64), np.array(lines_of, np.int64)


def _typed_meta(layout: Layout, x_label, y_label, x_quantity, unit: str, meta: dict) -> None:
    """resolution, sample_state, technique and x_axis from the labels and header fields."""
    fields = header_fields(layout.comments + layout.header)
    res = next((v for k, v in fields.items() if k.startswith("resolution")), None)
    if res is not None and resolution_cm1(res, None) is not None:
        meta["resolution"] = resolution_cm1(res, None)
    state = fields.get("state") or fields.get("sample state") or fields.get("phase")
    if state and sample_state(state):
        meta["sample_state"] = sample_state(state)
    technique = technique_of(fields.get("technique"), x_label, y_label)
    if technique:
        meta["technique"] = technique
    if unit == "cm-1" and x_quantity == "raman shift":
        meta["x_axis"] = "raman_shift"
        meta.setdefault("technique", "raman")


def read_text(path, *, x_unit: str | None = None, y_kind: str | None = None,
              y_column: int | str | None = None, percent: bool | None = None) -> Spectrum:
    """Read a spectrum from delimited text.

    Parameters
    ----------
    path : str or path-like
        The file. Columns are separated by comma, tab, semicolon or blanks (detected); a
        decimal comma (``2885,97;0,123``) is accepted with tab, semicolon or blank separators.
        Lines before the first numeric row are header lines, the last of them naming the
        columns (for example ``Wavenumber (cm-1),Absorbance``; double quotes around a name
        are removed, and a quoted name may span lines); ``#`` starts a comment. Lines end at
        LF, CR LF or a lone CR.
    x_unit : {"cm-1", "nm", "um", "THz"}, optional
        Unit of the first column; default taken from its label, else cm⁻¹. Given, it wins over
        the label (both are kept in ``meta``). Wavelength is taken as vacuum wavelength:
        ν̃ = 10⁷/λ[nm] = 10⁴/λ[µm]; frequency ν̃ = ν/(100 c). A Raman shift (label such as
        ``Raman shift (cm-1)``) stays as it is, negative anti-Stokes values included.
    y_kind : {"absorbance", "transmittance", "intensity"}, optional
        What the y column holds; default from its label. Required when the label says nothing.
    y_column : int or str, optional
        Which y column when there are several: its header name or its 0-based index among the
        y columns (the x column not counted). Default the first. Columns that are not read
        must hold numbers, NaN and infinity included.
    percent : bool, optional
        Transmittance only: True when the values are percent (divided by 100), False for a
        fraction. Default: from the label ("%", "percent", "fraction"), else percent when
        max(y) > 2. ``meta["transmittance_percent"]`` and ``meta["percent_from"]`` record it.

    Returns
    -------
    Spectrum
        Sorted to ascending wavenumber. ``source`` holds the absolute path, sha256 and size
        of the file and ``format="text"``; ``meta`` the title, labels, units, columns,
        separator, decimal mark, header and comment lines, the typed keys of
        :func:`widgetkit.io.read_spectrum` and ``read_options``.

    Raises
    ------
    FileNotFoundError
        The file does not exist.
    SpectrumFormatError
        Empty or binary file, no numeric rows, a row with a different number of fields, a cell
        that is not a finite number, fewer than 3 rows or a repeated x: with the 1-based line.
    """
    apath = absolute_path(path)
    check_choice("percent", percent, (None, True, False), apath)
    options = {"x_unit": x_unit, "y_kind": y_kind,
               "y_column": int(y_column) if isinstance(y_column, np.integer) else y_column,
               "percent": percent}
    layout = sniff_file(apath)
    ycol = _select_y(layout, y_column, apath)
    names = layout.names
    x_label = names[0] if names else None
    y_label = names[1 + ycol] if names else None
    file_x_unit, x_quantity = parse_x_label(x_label)
    file_kind, file_percent, y_quantity = parse_y_label(y_label)
    unit, unit_from = resolve_x_unit(x_unit, file_x_unit, x_quantity, path=apath,
                                     where=f"x column label {x_label!r}" if x_label else
                                     "file (no header)")
    kind, kind_from = resolve_y_kind(y_kind, file_kind, path=apath,
                                     where=f"y column label {y_label!r}" if y_label else
                                     "file (no header line naming the columns)")
    fields = header_fields(layout.comments + layout.header)
    meta: dict[str, Any] = {
        "title": fields.get("title") or os.path.splitext(os.path.basename(apath))[0],
        "x_unit": unit, "x_unit_from": unit_from, "x_label": x_label,
        "x_quantity": x_quantity or ("wavenumber" if unit == "cm-1" else None),
        "y_label": y_label, "y_unit": _unit_in(y_label), "y_quantity": y_quantity or kind,
        "y_kind_from": kind_from,
        "columns": names, "y_column": y_label if y_label is not None else ycol,
        "delimiter": DELIM_NAMES[layout.delimiter], "decimal": layout.decimal,
        "header": layout.header, "comments": layout.comments, "read_options": options,
    }
    if file_x_unit is not None and file_x_unit != unit:
        meta["x_unit_in_file"] = file_x_unit
    if file_kind is not None and file_kind != kind:
        meta["y_kind_in_file"] = file_kind
    _typed_meta(layout, x_label, y_label, x_quantity, unit, meta)
    use_percent, percent_from = percent, "the percent= argument"
    if use_percent is None and file_percent is not None:
        use_percent, percent_from = file_percent, f"the y label {y_label!r}"
    common = dict(x_unit=unit, y_kind=kind, path=apath, percent_from=percent_from,
                  percent=use_percent if kind == "transmittance" else None)
    fast = _fast_columns(apath, layout, ycol)
    if fast is not None:
        x, y, sha, size = fast
        source = {"path": apath, "sha256": sha, "format": "text", "size": size}
        try:
            return finish(x, y, meta=_copy_meta(meta), source=source, **common)
        except SpectrumFormatError:
            pass  # the reference parser gives the line
        del x, y
    data = read_bytes(apath)
    text = decode_text(transcode(data))
    check_not_binary(text.encode("utf-8", "surrogatepass") if layout.transcoded else data,
                     apath)
    x, y, row_lines = _reference_rows(text, layout, ycol, apath)
    return finish(x, y, meta=meta, source=source_of(apath, data, "text"),
                  row_lines=row_lines, **common)


def _copy_meta(meta: dict) -> dict:
    return {k: (list(v) if isinstance(v, list) else v) for k, v in meta.items()}


_Y_LABELS = {"absorbance": "absorbance", "transmittance": "transmittance (fraction)",
             "intensity": "intensity"}


def write_csv(spectrum: Spectrum, path, *, y_label: str | None = None,
              title: str | None = None) -> str:
    """Write a spectrum as comma-separated text that reads back exactly.

    The file is ``# title: ...`` (when there is a title), comment lines for the typed
    metadata (``# resolution: 0.5 cm-1``, ``# state: gas``, ``# technique: raman``), a header
    ``wavenumber (cm-1),<y label>`` (``Raman shift (cm-1)`` for a shift axis) and one row per
    point, ascending, every number in the shortest form that converts back to the same
    float64 (Python's ``repr``). The y label is ``absorbance``, ``transmittance (fraction)``
    or ``intensity`` unless given. The file is written to a temporary name and then renamed,
    so a failed write leaves no partial file; :func:`read_text` reads back the same spectrum
    and the same typed metadata.

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
    meta = spectrum.meta
    out = []
    if title:
        out.append("# title: " + " ".join(str(title).split()) + "\n")
    r = meta.get("resolution")
    if isinstance(r, (int, float)) and not isinstance(r, bool) and np.isfinite(r) and r > 0:
        out.append(f"# resolution: {float(r)!r} cm-1\n")
    if meta.get("sample_state") in ("gas", "liquid", "solid"):
        out.append(f"# state: {meta['sample_state']}\n")
    if meta.get("technique") in ("infrared", "raman"):
        out.append(f"# technique: {meta['technique']}\n")
    shift = meta.get("x_axis") == "raman_shift"
    out.append(f"{'Raman shift' if shift else 'wavenumber'} (cm-1),{label}\n")
    xs, ys = spectrum.x.tolist(), spectrum.y.tolist()
    body = "\n".join(map("{!r},{!r}".format, xs, ys)) + "\n"
    atomic_write(apath, ("".join(out) + body).encode("utf-8"))
    return apath
