"""Unit conversion at the edges: everything inside widgetkit is wavenumber in
cm⁻¹ (vacuum), ascending, float64.

Conversions (CODATA constants from :mod:`scipy.constants`):

* wavelength λ in nm: ν̃ = 10⁷ / λ
* wavelength λ in µm: ν̃ = 10⁴ / λ
* frequency ν in THz: ν̃ = ν·10¹² / (100 c), 1 THz ≈ 33.35641 cm⁻¹
* wavelengths measured in air: λ_vac = n(σ) λ_air with the refractive index of
  standard dry air of Edlén (Metrologia 2 (1966) 71), in the form adopted by the
  IAU (Morton, ApJS 130 (2000) 403)::

      n − 1 = 8.34254e-5 + 2.406147e-2 / (130 − σ²) + 1.5998e-4 / (38.9 − σ²)

  with σ the vacuum wavenumber in µm⁻¹ (15 °C, 101 325 Pa, 0.03 % CO₂); valid from
  about 200 nm into the infrared, good to about 1e-8 in n for standard air.
"""

from __future__ import annotations

import re

import numpy as np

__all__ = ["X_UNITS", "normalise_x_unit", "to_wavenumber", "from_wavenumber", "C_CM_PER_S",
           "air_refractive_index", "air_to_vacuum_nm", "vacuum_to_air_nm"]

#: speed of light in cm/s (CODATA exact value, 299 792 458 m/s)
C_CM_PER_S = 299_792_458.0 * 100.0

#: canonical x-unit names understood everywhere
X_UNITS = ("cm-1", "nm", "um", "THz")

_ALIASES = {
    "cm-1": "cm-1", "cm^-1": "cm-1", "1/cm": "cm-1", "cm−1": "cm-1", "cm⁻¹": "cm-1",
    "wavenumber": "cm-1", "wavenumbers": "cm-1", "kayser": "cm-1",
    "nm": "nm", "nanometer": "nm", "nanometers": "nm", "nanometre": "nm", "nanometres": "nm",
    "um": "um", "µm": "um", "μm": "um", "micron": "um", "microns": "um", "micrometer": "um",
    "micrometers": "um", "micrometre": "um", "micrometres": "um",
    "thz": "THz", "terahertz": "THz",
}


def normalise_x_unit(unit: str) -> str:
    """Return the canonical name (one of :data:`X_UNITS`) of an x unit.

    Raises
    ------
    ValueError
        When the unit is not known; the message lists the accepted names.
    """
    key = re.sub(r"\s+", "", str(unit)).lower().replace("−", "-")
    key = key.replace("cm**-1", "cm-1").replace("cm{-1}", "cm-1")
    if key in _ALIASES:
        return _ALIASES[key]
    raise ValueError(
        f"unknown x unit {unit!r}; use one of {', '.join(X_UNITS)} "
        "(wavenumber cm-1, wavelength nm or um, frequency THz)"
    )


def to_wavenumber(values, unit: str) -> np.ndarray:
    """Convert x values in ``unit`` to wavenumber in cm⁻¹ (vacuum).

    Parameters
    ----------
    values : array_like
        x values in ``unit``; wavelengths and frequencies must be > 0.
    unit : str
        Any name :func:`normalise_x_unit` accepts.

    Returns
    -------
    ndarray of float64, same shape (not sorted: wavelength order reverses).
    """
    unit = normalise_x_unit(unit)
    v = np.asarray(values, dtype=np.float64)
    if unit == "cm-1":
        return v.copy()
    if np.any(v <= 0):
        raise ValueError(f"{unit} values must be positive to convert to wavenumber")
    if unit == "nm":
        return 1.0e7 / v
    if unit == "um":
        return 1.0e4 / v
    # THz -> Hz -> cm^-1
    return v * 1.0e12 / C_CM_PER_S


def from_wavenumber(values, unit: str) -> np.ndarray:
    """Convert wavenumbers in cm⁻¹ (vacuum) to ``unit`` (for display; the inverse of
    :func:`to_wavenumber`): λ[nm] = 10⁷ / ν̃, λ[µm] = 10⁴ / ν̃, ν[THz] = ν̃ · 100 c / 10¹².

    Raises
    ------
    ValueError
        For an unknown unit, or wavenumbers ≤ 0 when converting to a wavelength.
    """
    unit = normalise_x_unit(unit)
    v = np.asarray(values, dtype=np.float64)
    if unit == "cm-1":
        return v.copy()
    if unit == "THz":
        return v * C_CM_PER_S / 1.0e12
    if np.any(v <= 0):
        raise ValueError(f"wavenumbers must be positive to convert to a wavelength in {unit}")
    return (1.0e7 if unit == "nm" else 1.0e4) / v


def air_refractive_index(vacuum_wavenumber_cm):
    """Refractive index n of standard dry air at vacuum wavenumber ν̃ (cm⁻¹), Edlén (1966) as in
    the module docstring (σ = ν̃ / 10⁴ in µm⁻¹)."""
    sigma2 = (np.asarray(vacuum_wavenumber_cm, dtype=np.float64) / 1.0e4) ** 2
    return 1.0 + 8.34254e-5 + 2.406147e-2 / (130.0 - sigma2) + 1.5998e-4 / (38.9 - sigma2)


def vacuum_to_air_nm(vacuum_nm):
    """Air wavelength (nm) of light of vacuum wavelength ``vacuum_nm``: λ_air = λ_vac / n."""
    lv = np.asarray(vacuum_nm, dtype=np.float64)
    return lv / air_refractive_index(1.0e7 / lv)


def air_to_vacuum_nm(air_nm):
    """Vacuum wavelength (nm) of light of air wavelength ``air_nm``: λ_vac = n(λ_vac) λ_air,
    solved by fixed-point iteration (n depends weakly on λ; converged to < 1e-12 relative)."""
    la = np.asarray(air_nm, dtype=np.float64)
    if np.any(~np.isfinite(la)) or np.any(la < 185.0):
        raise ValueError("air wavelengths must be finite and at least 185 nm (the dispersion "
                         "formula holds from about 200 nm into the infrared)")
    lv = la * air_refractive_index(1.0e7 / la)
    for _ in range(6):
        lv = la * air_refractive_index(1.0e7 / lv)
    return lv
