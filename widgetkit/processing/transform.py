"""Cropping and the absorbance/transmittance conversion.

Each function takes a :class:`~widgetkit.spectrum.Spectrum` and returns a new
one; the input is never changed. ``meta`` and ``source`` are carried over
unchanged (the session records which steps made a spectrum).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import SpectrumFormatError
from ..spectrum import Spectrum
from ._common import ProcessingError, describe_runs

__all__ = ["crop", "to_absorbance", "to_transmittance", "MAX_TRANSMITTANCE"]

#: transmittance fractions above this are refused by :func:`to_absorbance`
#: (they look like percent, which must be divided by 100 first)
MAX_TRANSMITTANCE = 2.0

#: absorbance below this would overflow 10**(-A) in :func:`to_transmittance`
_MIN_ABSORBANCE = -300.0


def crop(spectrum: Spectrum, lo: float, hi: float) -> Spectrum:
    """Keep the points with ``lo <= x <= hi`` (both ends included).

    Parameters
    ----------
    spectrum : Spectrum
        The spectrum to crop.
    lo, hi : float
        The range in cm⁻¹. The order does not matter: ``crop(s, 3200, 2600)``
        equals ``crop(s, 2600, 3200)``, because infrared spectra are usually
        read from high to low wavenumber (common practice) and a range is
        naturally given that way. The bounds are recorded as given by the
        session, so nothing is lost by accepting either order.

    Returns
    -------
    Spectrum
        A new spectrum with the same ``y_kind``, ``meta`` and ``source``.

    Raises
    ------
    ProcessingError
        When ``lo`` or ``hi`` is not a finite number.
    SpectrumFormatError
        When fewer than 3 points fall in the range; the message gives the
        range the spectrum covers and how many points it has.
    """
    try:
        a, b = float(lo), float(hi)
    except (TypeError, ValueError) as exc:
        raise ProcessingError(
            f"crop bounds must be numbers in cm-1, got lo={lo!r}, hi={hi!r}"
        ) from exc
    if not (math.isfinite(a) and math.isfinite(b)):
        raise ProcessingError(f"crop bounds must be finite, got lo={lo!r}, hi={hi!r}")
    if a > b:
        a, b = b, a
    x = spectrum.x
    i0 = int(np.searchsorted(x, a, side="left"))
    i1 = int(np.searchsorted(x, b, side="right"))
    n = i1 - i0
    if n < 3:
        raise SpectrumFormatError(
            f"crop to {a:.6g}-{b:.6g} cm-1 leaves {n} point(s), fewer than the 3 a spectrum "
            f"needs; the spectrum covers {x[0]:.6g}-{x[-1]:.6g} cm-1 with {x.size} points "
            f"(median spacing {float(np.median(np.diff(x))):.3g} cm-1); choose a wider range "
            "inside it"
        )
    return spectrum.replace(x=x[i0:i1], y=spectrum.y[i0:i1])


def to_absorbance(spectrum: Spectrum) -> Spectrum:
    """Convert a transmittance spectrum to absorbance, A = −log₁₀ T.

    Parameters
    ----------
    spectrum : Spectrum
        ``y_kind`` must be ``"transmittance"`` with ``y`` a fraction
        (0 < T, typically ≤ 1). Percent values must be divided by 100 first
        (the readers do this when the file says percent).

    Returns
    -------
    Spectrum
        Same ``x``, ``meta`` and ``source``; ``y = -log10(T)``,
        ``y_kind="absorbance"``.

    Raises
    ------
    SpectrumFormatError
        When any T ≤ 0 (no finite absorbance exists there): the message says
        how many points, their index ranges and wavenumbers, and how to fix it;
        when T exceeds :data:`MAX_TRANSMITTANCE` (looks like percent); when the
        spectrum is already absorbance or is an intensity spectrum.
    """
    kind = spectrum.y_kind
    if kind == "absorbance":
        raise SpectrumFormatError(
            "the spectrum is already absorbance; to_absorbance converts transmittance only "
            "(nothing to do: use it as it is)"
        )
    if kind != "transmittance":
        raise SpectrumFormatError(
            f"cannot convert a spectrum of y_kind {kind!r} to absorbance: A = -log10(T) needs "
            "transmittance (a fraction); emission, Raman and count spectra stay as intensity"
        )
    t = spectrum.y
    bad = t <= 0
    if bad.any():
        raise SpectrumFormatError(
            f"transmittance must be > 0 to take A = -log10(T), but {int(bad.sum())} of "
            f"{t.size} points have T <= 0 (lowest {float(t.min()):.4g}) at "
            f"{describe_runs(spectrum.x, bad)}; such values usually come from a detector "
            "zero offset or a fully absorbing (saturated) band: crop that region away or "
            "correct the zero level before converting"
        )
    t_max = float(t.max())
    if t_max > MAX_TRANSMITTANCE:
        raise SpectrumFormatError(
            f"transmittance reaches {t_max:.4g}, more than a fraction can be (max "
            f"{MAX_TRANSMITTANCE}); if the values are percent, divide them by 100 first"
        )
    return spectrum.replace(y=-np.log10(t), y_kind="absorbance")


def to_transmittance(spectrum: Spectrum) -> Spectrum:
    """Convert an absorbance spectrum to transmittance, T = 10^(−A) (a fraction).

    Parameters
    ----------
    spectrum : Spectrum
        ``y_kind`` must be ``"absorbance"`` (decadic).

    Returns
    -------
    Spectrum
        Same ``x``, ``meta`` and ``source``; ``y = 10**(-A)``,
        ``y_kind="transmittance"``.

    Raises
    ------
    SpectrumFormatError
        When the spectrum is not absorbance, or when A < −300 somewhere
        (10^(−A) would overflow float64).
    """
    kind = spectrum.y_kind
    if kind == "transmittance":
        raise SpectrumFormatError(
            "the spectrum is already transmittance; to_transmittance converts absorbance only"
        )
    if kind != "absorbance":
        raise SpectrumFormatError(
            f"cannot convert a spectrum of y_kind {kind!r} to transmittance: T = 10**(-A) "
            "needs absorbance"
        )
    a = spectrum.y
    bad = a < _MIN_ABSORBANCE
    if bad.any():
        raise SpectrumFormatError(
            f"absorbance below {_MIN_ABSORBANCE:g} at {describe_runs(spectrum.x, bad)} would "
            "overflow T = 10**(-A); check the data (is it really decadic absorbance?)"
        )
    return spectrum.replace(y=np.power(10.0, -a), y_kind="transmittance")
