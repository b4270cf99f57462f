"""Readers and writers of spectra (the io layer).

``read_spectrum`` looks at the content, not the file name: a file whose first non-blank
line starts with ``##`` is JCAMP-DX (:func:`read_jcamp`), anything else delimited text
(:func:`read_text`). Every reader returns a :class:`~widgetkit.spectrum.Spectrum` with x in
wavenumber cm⁻¹ (vacuum), ascending, and ``source`` = ``{"path", "sha256", "format",
"size"}`` of the file read. A missing file raises :class:`FileNotFoundError`; any other
problem with the file raises :class:`~widgetkit.errors.SpectrumFormatError` carrying the
path and, where it applies, the 1-based line.
"""

from __future__ import annotations

from ..errors import SpectrumFormatError
from ..spectrum import Spectrum
from ._common import absolute_path
from .jcamp import read_jcamp, write_jcamp
from .text import read_text, write_csv

__all__ = ["read_spectrum", "read_text", "read_jcamp", "write_jcamp", "write_csv"]


def _is_jcamp(path: str) -> bool:
    try:
        with open(path, "rb") as f:
            head = f.read(4096)
    except FileNotFoundError:
        raise
    except OSError as exc:
        raise SpectrumFormatError(f"cannot read the file ({exc.strerror or exc}); give the "
                                  "path of a readable spectrum file", path=path) from exc
    for line in head.split(b"\n"):
        s = line.strip()
        if s.startswith(b"\xef\xbb\xbf"):
            s = s[3:].strip()
        if not s or s.startswith(b"$$"):
            continue
        return s.startswith(b"##")
    return False


def read_spectrum(path, *, x_unit: str | None = None, y_kind: str | None = None,
                  y_column: int | str | None = None,
                  block: int | str | None = None) -> Spectrum:
    """Read a spectrum file, JCAMP-DX or delimited text, told apart by content.

    Parameters
    ----------
    path : str or path-like
    x_unit : {"cm-1", "nm", "um", "THz"}, optional
        Unit of x when the file does not say (or to override it); see :func:`read_text`.
    y_kind : {"absorbance", "transmittance", "intensity"}, optional
        What y is when the file does not say (or to override it).
    y_column : int or str, optional
        Delimited text only: which y column (name or 0-based index among the y columns).
    block : int or str, optional
        JCAMP-DX only: which block of a compound file (``##BLOCKS=``), by ``##TITLE=`` or by
        0-based index among the blocks holding spectra. Default the first.

    Returns
    -------
    Spectrum
        ``meta["read_options"]`` holds these arguments, so
        ``read_spectrum(path, **meta["read_options"])`` reads the same spectrum again.

    Raises
    ------
    FileNotFoundError
        The file does not exist.
    SpectrumFormatError
        The file cannot be read as a spectrum (path, line and what to fix in the message).
    """
    apath = absolute_path(path)
    if _is_jcamp(apath):
        if y_column is not None:
            raise SpectrumFormatError("y_column applies to delimited text; this file is "
                                      "JCAMP-DX (use block= to choose a spectrum)", path=apath)
        return read_jcamp(apath, x_unit=x_unit, y_kind=y_kind, block=block)
    if block is not None:
        raise SpectrumFormatError("block applies to JCAMP-DX; this file is delimited text "
                                  "(use y_column= to choose a column)", path=apath)
    return read_text(apath, x_unit=x_unit, y_kind=y_kind, y_column=y_column)
