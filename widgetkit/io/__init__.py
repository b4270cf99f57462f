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
from ._common import CHECKS, absolute_path, check_choice, transcode
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
    head = transcode(head[:4094] if head[:2] in (b"\xff\xfe", b"\xfe\xff") else head)
    for line in head.replace(b"\r", b"\n").split(b"\n"):
        s = line.strip()
        if s.startswith(b"\xef\xbb\xbf"):
            s = s[3:].strip()
        if not s or s.startswith(b"$$"):
            continue
        return s.startswith(b"##")
    return False


def read_spectrum(path, *, x_unit: str | None = None, y_kind: str | None = None,
                  y_column: int | str | None = None, block: int | str | None = None,
                  checks: str = "strict", percent: bool | None = None) -> Spectrum:
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
    checks : {"strict", "warn"}
        JCAMP-DX: ``"strict"`` (default) refuses a file whose redundant labels (FIRSTY, LASTY,
        line X values, Y-check, ...) disagree with its data beyond their written digits, as
        that signals a decoding error; ``"warn"`` reads it and lists every failed check in
        ``meta["warnings"]``, for a user who knows the file. Delimited text holds no such
        redundancy; the option changes nothing there.
    percent : bool, optional
        Transmittance only: True when the values are percent (divided by 100), False when
        they are a fraction. Default: from the file's label (``%``, ``percent``,
        ``fraction``), else from the data range (percent when max(y) > 2; a film whose
        fraction peaks at 1.5 stays a fraction).

    Returns
    -------
    Spectrum
        x in cm⁻¹, ascending (a Raman shift axis stays a shift, negative anti-Stokes values
        kept). ``meta["read_options"]`` holds the arguments, so
        ``read_spectrum(path, **meta["read_options"])`` reads the same spectrum again.
        ``meta["warnings"]`` (list of str, only when there is something to say) tells of
        anything odd that was accepted. Typed keys, set only when the file says so (every
        one is optional for a consumer):

        ``meta["resolution"]`` : float
            Spectral resolution in cm⁻¹ (JCAMP-DX ``##RESOLUTION=`` in 1/CM, or a header or
            comment line ``resolution: 0.5 cm-1``).
        ``meta["sample_state"]`` : {"gas", "liquid", "solid"}
            From ``##STATE=`` or a header line ``state: gas`` (vapour, solution, film, KBr
            pellet and the like map to these three).
        ``meta["technique"]`` : {"infrared", "raman"}
            From ``##DATA TYPE=`` (INFRARED SPECTRUM, RAMAN SPECTRUM), the x or y label
            (``Raman shift``, ``Raman intensity``) or a header line ``technique:``.
        ``meta["x_axis"]`` : "raman_shift"
            x is a Raman shift in cm⁻¹ (Stokes positive), not an absolute wavenumber:
            ``##XUNITS=1/CM`` with ``##DATA TYPE=RAMAN SPECTRUM``, or an x label such as
            ``Raman shift (cm-1)``. A shift axis is never converted like a wavelength.

    Raises
    ------
    FileNotFoundError
        The file does not exist.
    SpectrumFormatError
        The file cannot be read as a spectrum (path, line and what to fix in the message).
        Nothing else is raised for any content of the file.
    """
    apath = absolute_path(path)
    check_choice("checks", checks, CHECKS, apath)
    if _is_jcamp(apath):
        if y_column is not None:
            raise SpectrumFormatError("y_column applies to delimited text; this file is "
                                      "JCAMP-DX (use block= to choose a spectrum)", path=apath)
        return read_jcamp(apath, x_unit=x_unit, y_kind=y_kind, block=block, checks=checks,
                          percent=percent)
    if block is not None:
        raise SpectrumFormatError("block applies to JCAMP-DX; this file is delimited text "
                                  "(use y_column= to choose a column)", path=apath)
    return read_text(apath, x_unit=x_unit, y_kind=y_kind, y_column=y_column, percent=percent)
