"""Cropping, the absorbance/transmittance conversion and the Raman-shift axis.

Each function takes a :class:`~widgetkit.spectrum.Spectrum` and returns a new
one; the input is never changed. ``meta`` and ``source`` are carried over
unchanged (the session records which steps made a spectrum).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import SpectrumFormatError
from ..spectrum import Spectrum
from ..units import air_refractive_index, air_to_vacuum_nm, normalise_x_unit, to_wavenumber
from ._common import ProcessingError, describe_runs

__all__ = ["crop", "to_absorbance", "to_transmittance", "MAX_TRANSMITTANCE", "to_raman_shift",
           "excitation_wavenumber"]

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


def excitation_wavenumber(excitation: float, unit: str = "nm", medium: str | None = None) -> float:
    """Vacuum wavenumber (cm⁻¹) of the exciting laser line.

    Parameters
    ----------
    excitation : float
        The laser line, > 0.
    unit : str
        ``"nm"`` (or ``"um"``) for a wavelength, ``"cm-1"`` for a wavenumber (vacuum).
    medium : {"air", "vacuum"}
        Required for a wavelength: laser lines are quoted both ways (532.0 nm in air is
        532.148 nm in vacuum). An air wavelength is converted with Edlén's dispersion of
        standard air (:func:`widgetkit.units.air_to_vacuum_nm`). For ``"cm-1"`` only
        ``"vacuum"`` (or None) is accepted.
    """
    try:
        value = float(excitation)
    except (TypeError, ValueError):
        raise ProcessingError(f"excitation must be a number, got {excitation!r}") from None
    if not (math.isfinite(value) and value > 0):
        raise ProcessingError(f"excitation must be a positive number, got {excitation!r}")
    try:
        u = normalise_x_unit(unit)
    except ValueError as exc:
        raise ProcessingError(f"excitation unit: {exc}") from None
    if u == "THz":
        raise ProcessingError("give the excitation as a wavelength ('nm') or a wavenumber ('cm-1')")
    if u == "cm-1":
        if medium not in (None, "vacuum"):
            raise ProcessingError(
                f"medium={medium!r} with a wavenumber: widgetkit takes excitation wavenumbers as "
                "vacuum values; give an air wavelength with unit='nm', medium='air' instead")
        return value
    if medium not in ("air", "vacuum"):
        raise ProcessingError(
            f"say whether the excitation wavelength {value:g} {u} is measured in air or in vacuum: "
            "medium='air' or medium='vacuum' (laser lines are quoted both ways)")
    nm = value * (1000.0 if u == "um" else 1.0)
    if medium == "air":
        try:
            nm = float(air_to_vacuum_nm(nm))
        except ValueError as exc:
            raise ProcessingError(f"excitation {value:g} {u} in air: {exc}") from None
    return float(to_wavenumber(nm, "nm"))


def to_raman_shift(spectrum: Spectrum, excitation: float, *, unit: str = "nm",
                   medium: str | None = None, axis_medium: str = "vacuum") -> Spectrum:
    """Re-express a spectrum recorded against absolute wavenumber as Raman shift.

    Δν̃ = ν̃₀ − ν̃_s with ν̃₀ the vacuum wavenumber of the laser line
    (:func:`excitation_wavenumber`) and ν̃_s that of the scattered light: Stokes lines
    get positive shifts, anti-Stokes lines negative ones (kept). The result is sorted
    ascending in Δν̃ (the order of the points reverses).

    Parameters
    ----------
    spectrum : Spectrum
        x is the absolute wavenumber of the scattered light (cm⁻¹), as readers give it
        for files in cm⁻¹ or wavelength. ``y_kind`` "intensity" (an "absorbance" label,
        which readers give when a file does not say, is taken as intensity; transmittance
        is refused).
    excitation, unit, medium
        The laser line, see :func:`excitation_wavenumber`.
    axis_medium : {"vacuum", "air"}
        ``"air"`` when the file's x axis was a wavelength measured in air, so that the
        reader's ν̃ = 10⁷/λ is an air value: each point is then corrected to vacuum,
        ν̃_vac = ν̃_air / n (Edlén).

    Returns
    -------
    Spectrum
        x = Raman shift (cm⁻¹, ascending), y unchanged (reversed), ``y_kind="intensity"``;
        ``meta`` gains ``x_axis="raman_shift"``, ``technique="raman"``,
        ``excitation_wavenumber`` (vacuum cm⁻¹) and ``raman_shift`` (how it was made).

    Raises
    ------
    ProcessingError
        Bad excitation or medium; a spectrum that is already a Raman shift; shifts that
        cannot be right (the spectrum lies more than 10 000 cm⁻¹ from the laser line: a
        wavelength given as a wavenumber or the reverse).
    """
    meta = spectrum.meta
    if meta.get("x_axis") == "raman_shift":
        raise ProcessingError("the spectrum's x axis is already a Raman shift (meta x_axis = "
                              "'raman_shift'); nothing to convert")
    if spectrum.y_kind == "transmittance":
        raise ProcessingError("a transmittance spectrum is an absorption measurement, not Raman "
                              "scattering; to_raman_shift needs scattered intensity")
    if axis_medium not in ("vacuum", "air"):
        raise ProcessingError(f"axis_medium must be 'vacuum' or 'air', got {axis_medium!r}")
    nu0 = excitation_wavenumber(excitation, unit, medium)
    x = spectrum.x
    if axis_medium == "air":
        x = x / air_refractive_index(x / air_refractive_index(x))
    shift = nu0 - x[::-1]
    far = float(np.min(np.abs(shift)))
    if far > 10000.0:
        raise ProcessingError(
            f"the spectrum ({spectrum.x[0]:.6g}-{spectrum.x[-1]:.6g} cm-1) lies {far:.0f} cm-1 or more "
            f"from the laser line at {nu0:.6g} cm-1 (vacuum); check the excitation and its unit "
            f"(given: {excitation!r} {unit})")
    info = {"excitation": float(excitation), "unit": unit, "medium": medium,
            "axis_medium": axis_medium, "excitation_wavenumber": nu0,
            "y_kind_before": spectrum.y_kind}
    meta.update({"x_axis": "raman_shift", "technique": "raman", "excitation_wavenumber": nu0,
                 "raman_shift": info})
    return spectrum.replace(x=shift, y=spectrum.y[::-1], y_kind="intensity", meta=meta)
