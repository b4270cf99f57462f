"""Shared pieces of the readers: file access with hashing, label parsing, and the final
validation that turns raw columns into a :class:`~widgetkit.spectrum.Spectrum`."""

from __future__ import annotations

import hashlib
import io
import os
from typing import Any

import numpy as np

from ..errors import SpectrumFormatError
from ..spectrum import Y_KINDS, Spectrum
from ..units import normalise_x_unit, to_wavenumber
from ._labels import parse_x_label, parse_y_label

__all__ = ["absolute_path", "read_bytes", "source_of", "HashingReader", "decode_text",
           "transcode", "split_lines", "check_not_binary", "parse_x_label", "parse_y_label",
           "resolve_x_unit", "resolve_y_kind", "check_choice", "finish", "atomic_write",
           "PERCENT_THRESHOLD", "PERCENT_LIMIT", "FRACTION_WARN", "CHECKS"]

#: transmittance whose file says neither percent nor fraction is taken as percent when its
#: maximum exceeds this (common practice: a fraction exceeds 1 only by noise, fringes or a
#: reference mismatch -- films reach 1.5 -- while percent values of a usable spectrum run
#: well above 2, which would be an absorbance of 1.7 everywhere)
PERCENT_THRESHOLD = 2.0
#: a fraction above this is kept but flagged in ``meta["warnings"]`` (common practice)
FRACTION_WARN = 1.2
#: the values of the ``checks=`` option of the readers
CHECKS = ("strict", "warn")
#: above this maximum, "transmittance" is neither a fraction nor percent
PERCENT_LIMIT = 150.0


def absolute_path(path) -> str:
    """The absolute path of ``path`` as a string (``~`` expanded)."""
    return os.path.abspath(os.path.expanduser(os.fspath(path)))


def read_bytes(path: str) -> bytes:
    """All bytes of a file. A missing file raises :class:`FileNotFoundError`; a directory
    or unreadable file raises :class:`SpectrumFormatError`."""
    try:
        with open(path, "rb") as f:
            return f.read()
    except FileNotFoundError:
        raise
    except (IsADirectoryError, PermissionError, OSError) as exc:
        raise SpectrumFormatError(f"cannot read the file ({exc.strerror or exc}); "
                                  "give the path of a readable spectrum file", path=path) from exc


def source_of(path: str, data: bytes, fmt: str) -> dict[str, Any]:
    """The ``Spectrum.source`` record of a file read as ``fmt``."""
    return {"path": path, "sha256": hashlib.sha256(data).hexdigest(), "format": fmt,
            "size": len(data)}


class HashingReader(io.RawIOBase):
    """A read-only binary stream that hashes (sha256) and counts the bytes passing through."""

    def __init__(self, raw):
        super().__init__()
        self._raw = raw
        self.sha = hashlib.sha256()
        self.size = 0

    def readable(self) -> bool:
        return True

    def readinto(self, buf) -> int:
        n = self._raw.readinto(buf)
        if n:
            self.sha.update(memoryview(buf)[:n])
            self.size += n
        return n or 0

    def drain(self) -> None:
        """Read (and hash) whatever is left of the stream."""
        while True:
            chunk = self._raw.read(1 << 20)
            if not chunk:
                return
            self.sha.update(chunk)
            self.size += len(chunk)


def transcode(data: bytes) -> bytes:
    """UTF-16 text (with its byte-order mark) re-encoded as UTF-8; other bytes as they are.

    UTF-16 files hold NUL bytes and would otherwise be taken as binary."""
    if data[:2] in (b"\xff\xfe", b"\xfe\xff"):
        try:
            return data.decode("utf-16").encode("utf-8")
        except UnicodeDecodeError:
            return data
    return data


def decode_text(data: bytes) -> str:
    """Text of a file: UTF-8 (optional BOM), else Latin-1 (which never fails)."""
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def split_lines(text: str) -> list[str]:
    """Lines of ``text`` split at CR LF, LF or a lone CR (as pandas' parser and Python's
    universal newlines do), without the line ends. Line ``k`` (1-based) is ``[k - 1]``."""
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    return text.split("\n")


def check_not_binary(data: bytes, path: str) -> None:
    """Raise when ``data`` holds NUL bytes (binary files, not text)."""
    i = data.find(b"\x00")
    if i >= 0:
        line = data.count(b"\n", 0, i) + 1
        raise SpectrumFormatError("the file holds binary data (a NUL byte); widgetkit reads "
                                  "delimited text and JCAMP-DX; export the spectrum as one of "
                                  "these", path=path, line=line)


def resolve_x_unit(x_unit: str | None, from_file: str | None, quantity: str | None,
                   *, path: str, where: str) -> tuple[str, str]:
    """The x unit to use and where it came from (``"argument"``, ``"file"``, ``"default"``)."""
    if x_unit is not None:
        try:
            return normalise_x_unit(x_unit), "argument"
        except ValueError as exc:
            raise SpectrumFormatError(f"x_unit={x_unit!r}: {exc}", path=path) from None
    if from_file is not None:
        return from_file, "file"
    if quantity in ("wavelength", "frequency", "lambda"):
        raise SpectrumFormatError(
            f"the {where} names a {quantity} but no unit; pass x_unit= "
            "('nm' or 'um' for wavelength, 'THz' for frequency)", path=path)
    return "cm-1", "default"


def check_choice(name: str, value, allowed, path: str):
    """Refuse an option value outside ``allowed`` (a :class:`SpectrumFormatError`)."""
    if value not in allowed:
        raise SpectrumFormatError(f"{name} must be one of {', '.join(map(repr, allowed))}, got "
                                  f"{value!r}", path=path)
    return value


def resolve_y_kind(y_kind: str | None, from_file: str | None, *, path: str,
                   where: str) -> tuple[str, str]:
    """The y kind to use and where it came from (``"argument"`` or ``"file"``)."""
    if y_kind is not None:
        if y_kind not in Y_KINDS:
            raise SpectrumFormatError(f"y_kind must be one of {', '.join(Y_KINDS)}, "
                                      f"got {y_kind!r}", path=path)
        return y_kind, "argument"
    if from_file is not None:
        return from_file, "file"
    raise SpectrumFormatError(
        f"the {where} does not say what the y values are; pass "
        "y_kind='absorbance', 'transmittance' or 'intensity'", path=path)


def finish(x: np.ndarray, y: np.ndarray, *, x_unit: str, y_kind: str, percent: bool | None,
           meta: dict[str, Any], source: dict[str, Any], path: str,
           row_lines: np.ndarray | None = None, percent_from: str = "the file") -> Spectrum:
    """Validate raw columns in file order and build the spectrum.

    Converts x to cm⁻¹ (vacuum, :func:`widgetkit.units.to_wavenumber`) unless x is a Raman
    shift or already in cm⁻¹ (negative values are kept there: anti-Stokes shifts), turns
    percent transmittance into a fraction, sorts by x and refuses non-finite values, fewer
    than 3 points and duplicate x. ``row_lines`` gives the 1-based file line of each row for
    the messages.

    Percent or fraction is decided in this order: ``percent`` (True or False, from the
    caller's argument or the file's label, ``percent_from`` says which), else the data range
    (percent when max(y) > :data:`PERCENT_THRESHOLD`). ``meta["transmittance_percent"]`` and
    ``meta["percent_from"]`` record the decision; a fraction above :data:`FRACTION_WARN` adds
    a line to ``meta["warnings"]``.
    """

    def line_of(i) -> int | None:
        return None if row_lines is None else int(row_lines[int(i)])

    x = np.asarray(x, np.float64)
    y = np.asarray(y, np.float64)
    if x.size < 3:
        raise SpectrumFormatError(f"the file holds {x.size} data point(s); a spectrum needs "
                                  "at least 3", path=path)
    for name, arr in (("x", x), ("y", y)):
        bad = ~np.isfinite(arr)
        if bad.any():
            i = int(np.argmax(bad))
            raise SpectrumFormatError(
                f"{name} value {arr[i]!r} is not finite ({int(bad.sum())} such value(s)); "
                "remove or replace NaN and inf", path=path, line=line_of(i))
    if x_unit != "cm-1":
        bad = x <= 0
        if bad.any():
            i = int(np.argmax(bad))
            raise SpectrumFormatError(f"x value {x[i]!r} in {x_unit} is not positive and has "
                                      "no wavenumber; check the x column or x_unit",
                                      path=path, line=line_of(i))
        x = to_wavenumber(x, x_unit)
        meta["x_converted"] = f"{x_unit} -> cm-1 (vacuum)"
    if y_kind == "transmittance":
        y = _percent_to_fraction(y, percent, percent_from, meta, path)
    if not np.all(x[1:] > x[:-1]):
        order = np.argsort(x, kind="stable")
        xs = x[order]
        same = np.flatnonzero(xs[1:] == xs[:-1])
        if same.size:
            i, j = sorted((int(order[same[0]]), int(order[same[0] + 1])))
            where = "" if row_lines is None else f" (lines {line_of(i)} and {line_of(j)})"
            raise SpectrumFormatError(
                f"duplicate x value {xs[same[0]]!r}{where}; each x may appear once: "
                "remove or average the repeated rows", path=path, line=line_of(j))
        x, y = xs, y[order]
        meta["sorted"] = "ascending wavenumber (file order differed)"
    if not meta.get("warnings"):
        meta.pop("warnings", None)
    return Spectrum(x, y, y_kind=y_kind, meta=meta, source=source)


def _percent_to_fraction(y: np.ndarray, percent: bool | None, percent_from: str,
                         meta: dict[str, Any], path: str) -> np.ndarray:
    ymax = float(np.max(y))
    if percent is None:
        percent = ymax > PERCENT_THRESHOLD
        percent_from = (f"the values (max {ymax:.6g} {'>' if percent else '<='} "
                        f"{PERCENT_THRESHOLD:g}; the file does not say)")
    meta["transmittance_percent"] = bool(percent)
    meta["percent_from"] = percent_from
    if percent and ymax > PERCENT_LIMIT:
        raise SpectrumFormatError(
            f"transmittance values reach {ymax!r}, beyond percent (<= {PERCENT_LIMIT:g}); "
            "pass y_kind='intensity' if these are not transmittance", path=path)
    if percent:
        return y / 100.0
    if ymax > FRACTION_WARN:
        meta.setdefault("warnings", []).append(
            f"transmittance read as a fraction reaches {ymax:.6g} (decided from "
            f"{percent_from}); pass percent=True if the values are percent")
    return y


def atomic_write(path: str, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically with the one writer of the package
    (:func:`widgetkit._files.atomic_write`: a temporary file beside it renamed over it, the
    umask's mode, links written through); a failed write leaves ``path`` as it was, and a
    place that cannot be written is a :class:`~widgetkit.errors.FilePathError` naming it."""
    from .._files import atomic_write as write

    write(path, data, what="write")
