"""JCAMP-DX spectra: reader and writer.

Written from the IUPAC specification: R. S. McDonald and P. A. Wilks, "JCAMP-DX: A Standard
Form for Exchange of Infrared Spectra in Computer Readable Form", *Applied Spectroscopy* 42
(1988) 151 (JCAMP-DX 4.24), with the compatibility rules of P. Lampen et al., *Applied
Spectroscopy* 48 (1994) 1545 (JCAMP-DX 5.01).

A file is a sequence of labelled data records ``##LABEL=value``; a label is compared after
removing blanks, dashes, slashes and underscores and ignoring case (``##DATA TYPE`` is
``DATATYPE``); ``$$`` starts a comment that runs to the end of its line. A block runs from
``##TITLE=`` to ``##END=``; a compound file (``##BLOCKS=``) nests blocks in a link block
(:mod:`widgetkit.io._jcamp_blocks`). Lines may end in LF, CR LF or CR; a UTF-8 byte-order mark
or UTF-16 text is accepted.

Supported data records (:mod:`widgetkit.io._jcamp_data`): ``##XYDATA=(X++(Y..Y))`` in AFFN and
the ASDF forms (SQZ, DIF, DUP, PAC; see :mod:`widgetkit.io.asdf`) with the Y-check,
``##XYDATA=(XY..XY)`` and ``(XYXY)``, ``##XYPOINTS=(XY..XY)`` and ``##PEAK TABLE=(XY..XY)``
(also ``(XYW..XYW)``, the widths dropped), read as points. ``##NTUPLES=`` is refused.
The writer lives in :mod:`widgetkit.io._jcamp_write` and is exported from here.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ..errors import SpectrumFormatError
from ..spectrum import Spectrum
from ..units import normalise_x_unit
from ._common import (
    CHECKS,
    absolute_path,
    check_choice,
    check_not_binary,
    finish,
    parse_y_label,
    read_bytes,
    resolve_x_unit,
    resolve_y_kind,
    source_of,
    transcode,
)
from ._jcamp_blocks import DATA_LABELS, Checks, choose_block, normalise_label, parse_blocks
from ._jcamp_data import decode_block
from ._jcamp_write import write_jcamp, yfactor_for
from ._labels import resolution_cm1, sample_state, technique_of

__all__ = ["read_jcamp", "write_jcamp", "normalise_label", "yfactor_for"]

#: ##XUNITS= values after normalise_label ("1/CM" -> "1CM", "CM-1" -> "CM1")
_X_UNITS = {"1CM": "cm-1", "CM1": "cm-1", "NANOMETERS": "nm", "NM": "nm",
            "MICROMETERS": "um", "MICRONS": "um", "UM": "um"}
#: a Raman block whose x all lie above this (cm⁻¹) holds absolute wavenumbers, not shifts
#: (common practice, figures from memory: shifts of vibrational bands stay below about
#: 4500 cm⁻¹, while excitation lines lie above 9000 cm⁻¹; the 1064 nm line of FT-Raman
#: instruments, 9398 cm⁻¹, is the longest wavelength in common use)
RAMAN_ABSOLUTE_ABOVE = 9000.0


def _normalised_bytes(data: bytes) -> bytes:
    """UTF-8 bytes without byte-order mark, lines ended by LF (CR LF and lone CR too)."""
    data = transcode(data)
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    if b"\r" in data:
        data = data.replace(b"\r\n", b"\n").replace(b"\r", b"\n")
    return data


def _x_unit_of(labels, x_unit, path) -> tuple[str, str, bool]:
    """The x unit, where it came from, and whether ##XUNITS names a Raman shift."""
    xu = labels.get("XUNITS")
    file_unit, says_shift = None, False
    if xu is not None:
        key = normalise_label(xu[0])
        says_shift = "SHIFT" in key
        file_unit = _X_UNITS.get(key) or ("cm-1" if says_shift and "CM" in key else None)
        if file_unit is None:
            try:
                file_unit = normalise_x_unit(xu[0])
            except ValueError:
                if x_unit is None:
                    raise SpectrumFormatError(
                        f"##XUNITS={xu[0][:40]} is not supported: widgetkit works in wavenumber "
                        "and reads 1/CM, NANOMETERS or MICROMETERS (pass x_unit= if the label "
                        "is wrong)", path=path, line=xu[1]) from None
    unit, unit_from = resolve_x_unit(x_unit, file_unit, None, path=path, where="##XUNITS=")
    return unit, unit_from, says_shift


def _typed_meta(labels, unit: str, says_shift: bool, x: np.ndarray, meta: dict) -> None:
    """resolution, sample_state, technique and x_axis from the block's labels."""
    text = {k: v[0] for k, v in labels.items()}
    if "RESOLUTION" in text:
        r = resolution_cm1(text["RESOLUTION"], unit)
        if r is not None:
            meta["resolution"] = r
    if "STATE" in text and sample_state(text["STATE"]):
        meta["sample_state"] = sample_state(text["STATE"])
    technique = technique_of(text.get("DATATYPE"), text.get("XUNITS"), text.get("YUNITS"))
    if says_shift and technique is None:
        technique = "raman"
    if technique:
        meta["technique"] = technique
    if technique == "raman" and unit == "cm-1":
        if float(np.min(x)) > RAMAN_ABSOLUTE_ABOVE:
            meta.setdefault("warnings", []).append(
                f"a Raman block whose x runs from {float(np.min(x)):.6g} cm-1 up holds absolute "
                "wavenumbers, not a Raman shift; convert with the excitation line")
        else:
            meta["x_axis"] = "raman_shift"


def read_jcamp(path, *, x_unit: str | None = None, y_kind: str | None = None,
               block: int | str | None = None, checks: str = "strict",
               percent: bool | None = None) -> Spectrum:
    """Read a spectrum from a JCAMP-DX file (4.24 / 5.01).

    Parameters
    ----------
    path : str or path-like
    x_unit : {"cm-1", "nm", "um", "THz"}, optional
        Overrides ``##XUNITS=`` (1/CM, NANOMETERS, MICROMETERS; others such as HZ are
        refused unless this is given).
    y_kind : {"absorbance", "transmittance", "intensity"}, optional
        Overrides ``##YUNITS=``: ABSORBANCE (also absorption coefficients and cross sections,
        named in ``meta["y_quantity"]``), TRANSMITTANCE, REFLECTANCE (read as
        ``"intensity"`` with ``meta["y_quantity"] = "reflectance"``, as -log10 R is not an
        absorbance in general), COUNTS or ARBITRARY UNITS (intensity). A Raman block without
        ``##YUNITS=`` is intensity.
    block : int or str, optional
        In a compound file, the spectrum block by ``##TITLE=`` (or ``##BLOCK_ID=``) or by
        0-based index among the blocks holding data; default the first.
    checks : {"strict", "warn"}
        What a failed consistency check does: ``"strict"`` (default) refuses the file;
        ``"warn"``, for a user who knows the file, reads it and lists each failure in
        ``meta["warnings"]``. The checks: FIRSTY, LASTY (and FIRSTX, LASTX of point lists)
        against the decoded data to their written digits; every line's X against FIRSTX,
        LASTX and NPOINTS; the Y-check (``"warn"`` keeps the value that starts the line);
        ``##BLOCKS=``; a missing final ``##END=``; NPOINTS against the number of ordinates
        (``"warn"`` reads the data only when every line X places them between FIRSTX and
        LASTX). A nominal ``##DELTAX=`` is only a warning.
    percent : bool, optional
        Transmittance only: True when the values are percent, False for a fraction. Default:
        from ``##YUNITS=`` ("%", "PERCENT"), else percent when max(y) > 2.

    Returns
    -------
    Spectrum
        x in cm⁻¹ ascending; ``meta["jcamp"]`` the block's labels (lower-case normalised
        keys, string values), ``meta["data_form"]``, ``meta["checks"]`` (each check and how
        it came out), ``meta["warnings"]`` (when any), the typed keys of
        :func:`widgetkit.io.read_spectrum`, ``meta["read_options"]``; ``source`` with
        ``format="jcamp-dx"``.

    Raises
    ------
    FileNotFoundError
        The file does not exist.
    SpectrumFormatError
        Wrong NPOINTS, a failed check (with ``checks="strict"``), an unsupported form or unit,
        or any other defect (names label and line).
    """
    apath = absolute_path(path)
    check_choice("checks", checks, CHECKS, apath)
    check_choice("percent", percent, (None, True, False), apath)
    raw = read_bytes(apath)
    if not raw.strip():
        raise SpectrumFormatError("the file is empty", path=apath)
    data = _normalised_bytes(raw)
    check_not_binary(data, apath)
    ck = Checks(checks, apath)
    blocks = parse_blocks(data, apath, ck)
    blk, index = choose_block(blocks, block, apath)
    labels = blk["labels"]
    x, y = decode_block(blk, apath, ck)
    unit, unit_from, says_shift = _x_unit_of(labels, x_unit, apath)
    yu = labels.get("YUNITS", ("", None))[0]
    kind, file_percent, quantity = parse_y_label(yu)
    dtype = labels.get("DATATYPE", ("", None))[0]
    if kind is None and not yu and "RAMAN" in dtype.upper():
        kind, quantity = "intensity", "intensity"
    kind_used, kind_from = resolve_y_kind(y_kind, kind, path=apath,
                                          where=f"##YUNITS={yu}" if yu else "block (no ##YUNITS=)")
    meta: dict[str, Any] = {
        "title": blk["title"], "x_unit": unit, "x_unit_from": unit_from,
        "y_unit": yu or None, "y_quantity": quantity or kind_used, "y_kind_from": kind_from,
        "data_form": DATA_LABELS[blk["data"][0]], "block": index,
        "jcamp": {"title": blk["title"], **{k.lower(): v[0] for k, v in labels.items()}},
        "checks": dict(ck.results), "warnings": list(ck.warnings),
        "read_options": {"x_unit": x_unit, "y_kind": y_kind,
                         "block": int(block) if isinstance(block, np.integer) else block,
                         "checks": checks, "percent": percent},
    }
    if kind is not None and kind != kind_used:
        meta["y_kind_in_file"] = kind
    _typed_meta(labels, unit, says_shift, x if unit == "cm-1" else np.array([0.0]), meta)
    use_percent, percent_from = percent, "the percent= argument"
    if use_percent is None and file_percent is not None:
        use_percent, percent_from = file_percent, f"##YUNITS={yu}"
    return finish(x, y, x_unit=unit, y_kind=kind_used,
                  percent=use_percent if kind_used == "transmittance" else None, meta=meta,
                  source=source_of(apath, raw, "jcamp-dx"), path=apath,
                  percent_from=percent_from)
