"""The :class:`Spectrum` value type.

A spectrum is an immutable pair of float64 arrays: ``x`` in wavenumber cm⁻¹
(vacuum), strictly ascending, and ``y`` of the same length, plus what kind of
quantity ``y`` is, free-form metadata and, when it was read from a file, where
it came from (``source``: path, sha256 of the file's bytes, format).
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping
from typing import Any

import numpy as np

from .errors import SpectrumFormatError

__all__ = ["Spectrum", "Y_KINDS", "array_sha256"]

#: the kinds of y values a spectrum may hold
Y_KINDS = ("absorbance", "transmittance", "intensity")


def array_sha256(a: np.ndarray) -> str:
    """sha256 (hex) of the little-endian float64 bytes of ``a``."""
    return hashlib.sha256(np.ascontiguousarray(a, dtype="<f8").tobytes()).hexdigest()


def _frozen(a) -> np.ndarray:
    arr = np.array(a, dtype=np.float64, copy=True)
    arr.setflags(write=False)
    return arr


class Spectrum:
    """An immutable spectrum on a wavenumber axis.

    Parameters
    ----------
    x : array_like, shape (n,)
        Wavenumber in cm⁻¹ (vacuum), strictly ascending, finite, n ≥ 3.
    y : array_like, shape (n,)
        Finite values; for ``y_kind="transmittance"`` a fraction (not percent).
    y_kind : {"absorbance", "transmittance", "intensity"}
        What ``y`` is. ``"intensity"`` covers emission, Raman and counts.
    meta : mapping, optional
        Title, origin and any other labels (kept as a plain dict copy).
    source : mapping, optional
        ``path``, ``sha256`` (of the file's bytes) and ``format`` when the
        spectrum was read from a file.

    Notes
    -----
    Readers sort and validate their input before building a Spectrum; the
    constructor checks again and raises :class:`SpectrumFormatError` on
    mismatched lengths, non-finite values, unsorted or duplicate x, or fewer
    than 3 points. ``x`` and ``y`` are read-only views; derive new spectra with
    :meth:`replace`.
    """

    __slots__ = ("_x", "_y", "_y_kind", "_meta", "_source")

    def __init__(
        self,
        x,
        y,
        *,
        y_kind: str = "absorbance",
        meta: Mapping[str, Any] | None = None,
        source: Mapping[str, Any] | None = None,
    ):
        x = _frozen(x)
        y = _frozen(y)
        if x.ndim != 1 or y.ndim != 1:
            raise SpectrumFormatError(
                f"x and y must be one-dimensional, got shapes {x.shape} and {y.shape}"
            )
        if x.shape != y.shape:
            raise SpectrumFormatError(
                f"x and y differ in length ({x.size} and {y.size}); give one y per x"
            )
        if x.size < 3:
            raise SpectrumFormatError(f"a spectrum needs at least 3 points, got {x.size}")
        for name, arr in (("x", x), ("y", y)):
            bad = ~np.isfinite(arr)
            if bad.any():
                i = int(np.argmax(bad))
                raise SpectrumFormatError(
                    f"{name} holds {int(bad.sum())} non-finite value(s) (NaN or inf), "
                    f"the first at index {i}; remove or replace them"
                )
        dx = np.diff(x)
        if np.any(dx <= 0):
            i = int(np.argmax(dx <= 0))
            what = "duplicate" if dx[i] == 0 else "descending"
            raise SpectrumFormatError(
                f"x must be strictly ascending; {what} values at index {i} and {i + 1} "
                f"({x[i]!r}, {x[i + 1]!r}); sort the data and remove duplicate x"
            )
        if y_kind not in Y_KINDS:
            raise SpectrumFormatError(
                f"y_kind must be one of {', '.join(Y_KINDS)}, got {y_kind!r}"
            )
        self._x = x
        self._y = y
        self._y_kind = y_kind
        self._meta = dict(meta or {})
        self._source = dict(source) if source else None

    @property
    def x(self) -> np.ndarray:
        """Wavenumber in cm⁻¹, ascending, read-only float64."""
        return self._x

    @property
    def y(self) -> np.ndarray:
        """Values, read-only float64."""
        return self._y

    @property
    def y_kind(self) -> str:
        return self._y_kind

    @property
    def meta(self) -> dict:
        """Metadata (a copy: editing it does not change the spectrum)."""
        return dict(self._meta)

    @property
    def source(self) -> dict | None:
        """``path``, ``sha256``, ``format`` of the file it was read from, or None."""
        return None if self._source is None else dict(self._source)

    def __len__(self) -> int:
        return self._x.size

    def replace(self, *, x=None, y=None, y_kind=None, meta=None, source=...) -> Spectrum:
        """A new spectrum with some fields replaced (others shared)."""
        return Spectrum(
            self._x if x is None else x,
            self._y if y is None else y,
            y_kind=self._y_kind if y_kind is None else y_kind,
            meta=self._meta if meta is None else meta,
            source=self._source if source is ... else source,
        )

    def data_sha256(self) -> str:
        """sha256 of x then y as little-endian float64 bytes."""
        h = hashlib.sha256()
        h.update(np.ascontiguousarray(self._x, dtype="<f8").tobytes())
        h.update(np.ascontiguousarray(self._y, dtype="<f8").tobytes())
        return h.hexdigest()

    def __eq__(self, other) -> bool:
        if not isinstance(other, Spectrum):
            return NotImplemented
        return (
            self._y_kind == other._y_kind
            and np.array_equal(self._x, other._x)
            and np.array_equal(self._y, other._y)
        )

    __hash__ = None  # type: ignore[assignment]

    def __repr__(self) -> str:
        title = self._meta.get("title")
        t = f", title={title!r}" if title else ""
        return (
            f"Spectrum({self._x.size} points, {self._x[0]:.6g}–{self._x[-1]:.6g} cm-1, "
            f"y_kind={self._y_kind!r}{t})"
        )
