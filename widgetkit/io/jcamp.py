"""JCAMP-DX spectra: reader and writer.

Written from the IUPAC specification: R. S. McDonald and P. A. Wilks, "JCAMP-DX: A Standard
Form for Exchange of Infrared Spectra in Computer Readable Form", *Applied Spectroscopy* 42
(1988) 151 (JCAMP-DX 4.24), with the compatibility rules of P. Lampen et al., *Applied
Spectroscopy* 48 (1994) 1545 (JCAMP-DX 5.01).

A file is a sequence of labelled data records ``##LABEL=value``; a label is compared after
removing blanks, dashes, slashes and underscores and ignoring case (``##DATA TYPE`` is
``DATATYPE``); ``$$`` starts a comment that runs to the end of its line. A block runs from
``##TITLE=`` to ``##END=``; a compound file (``##BLOCKS=``) nests blocks in a link block.

Supported data records: ``##XYDATA=(X++(Y..Y))`` in AFFN and the ASDF forms (SQZ, DIF, DUP,
PAC; see :mod:`widgetkit.io.asdf`) with the Y-check, ``##XYPOINTS=(XY..XY)`` and
``##PEAK TABLE=(XY..XY)`` (read as points). ``##NTUPLES=`` and other forms are refused.
The writer lives in :mod:`widgetkit.io._jcamp_write` and is exported from here.
"""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np

from ..errors import SpectrumFormatError
from ..spectrum import Spectrum
from ..units import normalise_x_unit
from ._common import (
    absolute_path,
    check_not_binary,
    decode_text,
    finish,
    parse_y_label,
    read_bytes,
    resolve_x_unit,
    resolve_y_kind,
    source_of,
)
from ._jcamp_write import write_jcamp, yfactor_for
from .asdf import decode_xydata

__all__ = ["read_jcamp", "write_jcamp", "normalise_label", "yfactor_for"]

_LDR = re.compile(rb"^[ \t]*##([^=\r\n]*)=", re.M)
_DATA_LABELS = {"XYDATA": "XYDATA", "XYPOINTS": "XYPOINTS", "PEAKTABLE": "PEAK TABLE"}
_REFUSED = {"NTUPLES", "DATATABLE", "RADATA", "VARNAME", "PAGE"}
_X_UNITS = {"1/CM": "cm-1", "CM-1": "cm-1", "NANOMETERS": "nm", "NM": "nm",
            "MICROMETERS": "um", "MICRONS": "um", "UM": "um"}
_AFFN = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\Z")


def normalise_label(raw: str) -> str:
    """A label as the specification compares it: ``"Data Type" -> "DATATYPE"``."""
    return re.sub(r"[\s\-/_]", "", raw).upper()


def _text(value: bytes) -> str:
    lines = [ln.split("$$", 1)[0].strip() for ln in decode_text(value).split("\n")]
    return "\n".join(ln for ln in lines if ln).strip()


def _parse_blocks(data: bytes, path: str) -> list[dict[str, Any]]:
    """All blocks with data, in file order; each a dict of labels, data record and lines."""
    matches = list(_LDR.finditer(data))
    if not matches:
        raise SpectrumFormatError("no ##LABEL= records found; this is not a JCAMP-DX file",
                                  path=path)
    found: list[dict[str, Any]] = []
    stack: list[dict[str, Any]] = []
    line = 1
    pos = 0
    for k, m in enumerate(matches):
        line += data.count(b"\n", pos, m.start())
        pos = m.start()
        end = matches[k + 1].start() if k + 1 < len(matches) else len(data)
        raw_label = decode_text(m.group(1)).strip()
        label = normalise_label(raw_label)
        value = data[m.end():end]
        if label == "TITLE":
            block = {"title": _text(value), "labels": {}, "line": line, "data": None,
                     "children": 0}
            if stack:
                stack[-1]["children"] += 1
            stack.append(block)
            continue
        if not stack:
            if label == "END":
                continue  # a stray ##END= after the last block changes nothing
            where = "after the last ##END=" if found or k else "before any ##TITLE="
            raise SpectrumFormatError(f"##{raw_label}= stands outside any block ({where}); "
                                      "every JCAMP-DX block runs from ##TITLE= to ##END=",
                                      path=path, line=line)
        block = stack[-1]
        if label == "END":
            stack.pop()
            blocks = block["labels"].get("BLOCKS")
            if blocks is not None and _int(blocks, "BLOCKS", path) != block[
                    "children"]:
                raise SpectrumFormatError(
                    f"##BLOCKS={blocks[0]} but the compound file holds {block['children']} "
                    "block(s); the file is incomplete or BLOCKS is wrong", path=path,
                    line=blocks[1])
            if block["data"] is not None:
                found.append(block)
            continue
        if label in _REFUSED:
            raise SpectrumFormatError(
                f"##{raw_label}= is not supported; widgetkit reads ##XYDATA=(X++(Y..Y)), "
                "##XYPOINTS=(XY..XY) and ##PEAK TABLE=(XY..XY): export the spectrum in one of "
                "these forms", path=path, line=line)
        if label in _DATA_LABELS:
            if block["data"] is not None:
                raise SpectrumFormatError(f"a second data record ##{raw_label}= in the block "
                                          f"{block['title']!r}; one spectrum per block",
                                          path=path, line=line)
            block["data"] = (label, value, line)
            continue
        block["labels"].setdefault(label, (_text(value), line, raw_label))
    if stack:
        last = data.count(b"\n") + (0 if data.endswith(b"\n") else 1)
        raise SpectrumFormatError(
            f"the file ends without ##END= for the block {stack[-1]['title']!r} (line "
            f"{stack[-1]['line']}); it is truncated: copy or export it again", path=path,
            line=max(last, 1))
    if not found:
        raise SpectrumFormatError("no spectrum data: expected ##XYDATA=, ##XYPOINTS= or "
                                  "##PEAK TABLE=", path=path)
    return found


def _num(entry, name: str, path: str) -> float:
    text, line = entry[0], entry[1]
    s = text.split()[0] if text.split() else ""
    if not _AFFN.match(s):
        raise SpectrumFormatError(f"##{name}={text!r} is not a number", path=path, line=line)
    v = float(s)
    if not math.isfinite(v):
        raise SpectrumFormatError(f"##{name}={text!r} is not finite", path=path, line=line)
    return v


def _int(entry, name: str, path: str) -> int:
    v = _num(entry, name, path)
    if v != int(v):
        raise SpectrumFormatError(f"##{name}= must be a whole number, got {entry[0]!r}",
                                  path=path, line=entry[1])
    return int(v)


def _choose(blocks: list[dict[str, Any]], block, path: str) -> tuple[dict[str, Any], int]:
    titles = [b["title"] for b in blocks]
    if block is None:
        return blocks[0], 0
    if isinstance(block, (int, np.integer)) and not isinstance(block, bool):
        if 0 <= int(block) < len(blocks):
            return blocks[int(block)], int(block)
        raise SpectrumFormatError(f"block={block} is out of range: the file holds "
                                  f"{len(blocks)} spectrum block(s), numbered from 0: {titles}",
                                  path=path)
    if isinstance(block, str):
        want = block.strip()
        for i, b in enumerate(blocks):
            if b["title"] == want or b["labels"].get("BLOCKID", ("",))[0] == want:
                return b, i
        for i, b in enumerate(blocks):
            if b["title"].lower() == want.lower():
                return b, i
        raise SpectrumFormatError(f"no block titled {block!r}; the spectrum blocks are "
                                  f"{titles}", path=path)
    raise SpectrumFormatError(f"block must be a title or a 0-based index, got {block!r}",
                              path=path)


def _points(value: bytes, line0: int, path: str) -> np.ndarray:
    nums: list[float] = []
    for k, ln in enumerate(decode_text(value).split("\n"), start=line0):
        for tok in ln.split("$$", 1)[0].replace(";", " ").replace(",", " ").split():
            if not _AFFN.match(tok):
                raise SpectrumFormatError(f"{tok!r} is not a number (AFFN) in the point list",
                                          path=path, line=k)
            nums.append(float(tok))
    if len(nums) % 2:
        raise SpectrumFormatError(f"the point list holds {len(nums)} numbers, not x,y pairs",
                                  path=path, line=line0)
    return np.array(nums, np.float64).reshape(-1, 2)


def _xy(blk: dict[str, Any], path: str) -> tuple[np.ndarray, np.ndarray]:
    label, value, line = blk["data"]
    labels = blk["labels"]
    nl = value.find(b"\n")
    varlist = normalise_label(decode_text(value if nl < 0 else value[:nl]).split("$$")[0])
    body = b"" if nl < 0 else value[nl + 1:]
    xf = _num(labels["XFACTOR"], "XFACTOR", path) if "XFACTOR" in labels else 1.0
    yf = _num(labels["YFACTOR"], "YFACTOR", path) if "YFACTOR" in labels else 1.0
    npts = labels.get("NPOINTS")
    shown = _DATA_LABELS[label]
    if label == "XYDATA":
        if varlist != "(X++(Y..Y))":
            raise SpectrumFormatError(f"##XYDATA={varlist} is not supported; widgetkit reads "
                                      "##XYDATA=(X++(Y..Y))", path=path, line=line)
        for need in ("FIRSTX", "LASTX", "NPOINTS"):
            if need not in labels:
                raise SpectrumFormatError(f"##XYDATA= needs ##{need}=, which is missing from "
                                          f"the block {blk['title']!r}", path=path, line=line)
        n = _int(npts, "NPOINTS", path)
        d = decode_xydata(body, line0=line + 1, path=path,
                          max_values=max(n, 0) + body.count(b"\n") + 1)
        if d.y.size != n:
            raise SpectrumFormatError(
                f"##NPOINTS={n} but ##XYDATA= (lines {line + 1}-{int(d.line_number[-1])}) holds "
                f"{d.y.size} ordinates; the file is truncated or NPOINTS is wrong",
                path=path, line=npts[1])
        first, last = _num(labels["FIRSTX"], "FIRSTX", path), _num(labels["LASTX"], "LASTX",
                                                                    path)
        if n < 2 or first == last:
            raise SpectrumFormatError("FIRSTX equals LASTX or fewer than 2 points; x cannot be "
                                      "spaced", path=path, line=npts[1])
        dx = (last - first) / (n - 1)
        if "DELTAX" in labels:
            given = _num(labels["DELTAX"], "DELTAX", path)
            if abs(given - dx) > 1e-3 * abs(dx):
                raise SpectrumFormatError(
                    f"##DELTAX={given!r} disagrees with (LASTX-FIRSTX)/(NPOINTS-1) = {dx!r}; "
                    "fix DELTAX, FIRSTX, LASTX or NPOINTS", path=path, line=labels["DELTAX"][1])
        expected = first + d.line_first * dx
        tol = abs(dx) + d.line_x_step * abs(xf) + 1e-9 * max(abs(first), abs(last))
        off = np.abs(d.line_x * xf - expected) > tol
        if off.any():
            i = int(np.argmax(off))
            raise SpectrumFormatError(
                f"the line starts at X={d.line_x[i] * xf!r} but its first ordinate is point "
                f"{int(d.line_first[i])}, at x={expected[i]!r} from FIRSTX and DELTAX; a line "
                "is missing or the X values are wrong", path=path, line=int(d.line_number[i]))
        x = np.linspace(first, last, n)
        y = np.asarray(d.y, np.float64) * yf
        if "FIRSTY" in labels:
            fy = _num(labels["FIRSTY"], "FIRSTY", path)
            if not math.isclose(fy, y[0], rel_tol=1e-5, abs_tol=abs(yf)):
                raise SpectrumFormatError(f"##FIRSTY={fy!r} disagrees with the first ordinate "
                                          f"{y[0]!r} (decoded times YFACTOR)", path=path,
                                          line=labels["FIRSTY"][1])
        return x, y
    if varlist not in ("(XY..XY)", "(XY)"):
        raise SpectrumFormatError(f"##{shown}={varlist} is not supported; widgetkit reads "
                                  f"##{shown}=(XY..XY)", path=path, line=line)
    pts = _points(body, line + 1, path)
    if npts is not None and _int(npts, "NPOINTS", path) != pts.shape[0]:
        raise SpectrumFormatError(f"##NPOINTS={npts[0]} but ##{shown}= holds {pts.shape[0]} "
                                  "points; the file is truncated or NPOINTS is wrong",
                                  path=path, line=npts[1])
    return pts[:, 0] * xf, pts[:, 1] * yf


def read_jcamp(path, *, x_unit: str | None = None, y_kind: str | None = None,
               block: int | str | None = None) -> Spectrum:
    """Read a spectrum from a JCAMP-DX file (4.24 / 5.01).

    Parameters
    ----------
    path : str or path-like
    x_unit : {"cm-1", "nm", "um", "THz"}, optional
        Overrides ``##XUNITS=`` (1/CM, NANOMETERS, MICROMETERS; others such as HZ are
        refused unless this is given).
    y_kind : {"absorbance", "transmittance", "intensity"}, optional
        Overrides ``##YUNITS=``: ABSORBANCE, TRANSMITTANCE (percent detected as for text),
        REFLECTANCE (read as ``"intensity"`` with ``meta["y_quantity"] = "reflectance"``, as
        -log10 R is not an absorbance in general), COUNTS or ARBITRARY UNITS (intensity).
    block : int or str, optional
        In a compound file, the spectrum block by ``##TITLE=`` (or ``##BLOCK_ID=``) or by
        0-based index among the blocks holding data; default the first.

    Returns
    -------
    Spectrum
        x in cm⁻¹ ascending; ``meta["jcamp"]`` the block's labels (lower-case normalised
        keys, string values), ``meta["data_form"]``, ``meta["read_options"]``; ``source`` with
        ``format="jcamp-dx"``.

    Raises
    ------
    FileNotFoundError
        The file does not exist.
    SpectrumFormatError
        Truncated file (no ``##END=``), wrong NPOINTS, failed Y-check or X-check, DELTAX or
        FIRSTY inconsistent with the data, unsupported form or unit (names label and line).
    """
    apath = absolute_path(path)
    data = read_bytes(apath)
    if not data.strip():
        raise SpectrumFormatError("the file is empty", path=apath)
    check_not_binary(data, apath)
    blocks = _parse_blocks(data, apath)
    blk, index = _choose(blocks, block, apath)
    labels = blk["labels"]
    x, y = _xy(blk, apath)
    xu = labels.get("XUNITS")
    file_unit = None
    if xu is not None:
        key = normalise_label(xu[0])
        file_unit = _X_UNITS.get(key)
        if file_unit is None:
            try:
                file_unit = normalise_x_unit(xu[0])
            except ValueError:
                if x_unit is None:
                    raise SpectrumFormatError(
                        f"##XUNITS={xu[0]} is not supported: widgetkit works in wavenumber and "
                        "reads 1/CM, NANOMETERS or MICROMETERS (pass x_unit= if the label is "
                        "wrong)", path=apath, line=xu[1]) from None
    unit, unit_from = resolve_x_unit(x_unit, file_unit, None, path=apath, where="##XUNITS=")
    yu = labels.get("YUNITS", ("", None))[0]
    kind, percent, quantity = parse_y_label(yu)
    dtype = labels.get("DATATYPE", ("", None))[0]
    if kind is None and not yu and "RAMAN" in dtype.upper():
        kind, quantity = "intensity", "intensity"
    kind_used, kind_from = resolve_y_kind(y_kind, kind, path=apath,
                                          where=f"##YUNITS={yu}" if yu else "block (no ##YUNITS=)")
    meta: dict[str, Any] = {
        "title": blk["title"], "x_unit": unit, "x_unit_from": unit_from,
        "y_unit": yu or None, "y_quantity": quantity or kind_used, "y_kind_from": kind_from,
        "data_form": _DATA_LABELS[blk["data"][0]], "block": index,
        "jcamp": {"title": blk["title"], **{k.lower(): v[0] for k, v in labels.items()}},
        "read_options": {"x_unit": x_unit, "y_kind": y_kind,
                         "block": int(block) if isinstance(block, np.integer) else block},
    }
    if kind is not None and kind != kind_used:
        meta["y_kind_in_file"] = kind
    return finish(x, y, x_unit=unit, y_kind=kind_used,
                  percent=percent if kind_used == "transmittance" else None, meta=meta,
                  source=source_of(apath, data, "jcamp-dx"), path=apath)
