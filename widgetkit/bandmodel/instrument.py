"""Instrument line shapes (ILS) of a spectrometer and their Fourier transforms.

Resolution convention (stated once, used everywhere in :mod:`widgetkit.bandmodel`):
the resolution Δ (cm⁻¹) of a Fourier-transform spectrometer is 1/L, with L the
maximum optical path difference in cm (the common definition, e.g. Griffiths and
de Haseth, *Fourier Transform Infrared Spectrometry*, 2nd ed. 2007, ch. 2; from
memory). With the interferogram weighting A(t) over the path difference t:

========== ===================== ======================================= ==================
kind        A(t), |t| ≤ L          ILS(δ) (unit area)                       FWHM
========== ===================== ======================================= ==================
boxcar      1                      2L sinc(2πLδ)                            0.6034 Δ
triangular  1 − |t|/L              L sinc²(πLδ)                             0.8859 Δ
gaussian    exp(−2π²σ²t²)          exp(−δ²/2σ²)/(σ√(2π)), σ = Δ/(2√(2ln2))  Δ
========== ===================== ======================================= ==================

(sinc y = sin y / y.) "boxcar" is an unapodised FTIR, "triangular" the triangular
apodisation, "gaussian" the usual model of a grating (dispersive) instrument, whose
resolution is its FWHM. The FWHM factors follow from sinc(1.8955) = ½ and
sinc²(1.3916) = ½. A spectrum convolved with the ILS is the inverse transform of
the spectrum's transform times A(t): that is how :mod:`.render` applies them.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import FitError

__all__ = ["INSTRUMENTS", "check_instrument", "transfer", "transfer_derivative", "profile",
           "fwhm_factor", "SIGMA_PER_FWHM"]

#: registered instrument kinds (aliases map to them)
INSTRUMENTS = ("gaussian", "triangular", "boxcar")
_ALIASES = {"gauss": "gaussian", "dispersive": "gaussian", "sinc2": "triangular",
            "triangle": "triangular", "sinc": "boxcar", "unapodised": "boxcar",
            "unapodized": "boxcar"}
#: σ of a Gaussian per unit FWHM, 1/(2√(2 ln 2))
SIGMA_PER_FWHM = 1.0 / (2.0 * math.sqrt(2.0 * math.log(2.0)))
_FWHM = {"gaussian": 1.0, "triangular": 0.885892941378904, "boxcar": 0.603355}


def check_instrument(kind: str) -> str:
    """The registered name of an instrument kind, or a :class:`FitError` naming the choices."""
    k = str(kind).strip().lower()
    k = _ALIASES.get(k, k)
    if k not in INSTRUMENTS:
        raise FitError(f"instrument must be one of {', '.join(INSTRUMENTS)} (or sinc = boxcar, "
                       f"sinc2 = triangular), got {kind!r}")
    return k


def fwhm_factor(kind: str) -> float:
    """FWHM of the instrument line shape in units of the resolution Δ."""
    return _FWHM[check_instrument(kind)]


def transfer(kind: str, resolution: float, t: np.ndarray, *, dt: float | None = None) -> np.ndarray:
    """A(t): the Fourier transform of the unit-area ILS at path differences ``t`` (cm).

    For ``boxcar`` on a discrete grid of spacing ``dt`` the edge bin at |t| = L gets the
    fraction of it inside L (so the transform varies smoothly with the resolution).
    """
    t = np.abs(np.asarray(t, dtype=float))
    if resolution <= 0:
        return np.ones_like(t)
    if kind == "gaussian":
        s = resolution * SIGMA_PER_FWHM
        return np.exp(-2.0 * math.pi**2 * s * s * t * t)
    L = 1.0 / resolution
    if kind == "triangular":
        return np.clip(1.0 - t / L, 0.0, None)
    if dt:
        return np.clip((L - t) / dt + 0.5, 0.0, 1.0)
    return (t <= L).astype(float)


def transfer_derivative(kind: str, resolution: float, t: np.ndarray, *,
                        dt: float | None = None) -> np.ndarray:
    """∂A(t)/∂Δ (per cm⁻¹ of resolution)."""
    t = np.abs(np.asarray(t, dtype=float))
    if resolution <= 0:
        return np.zeros_like(t)
    if kind == "gaussian":
        s = resolution * SIGMA_PER_FWHM
        return -4.0 * math.pi**2 * s * SIGMA_PER_FWHM * t * t * np.exp(-2.0 * math.pi**2 * s * s * t * t)
    L = 1.0 / resolution
    dL = -1.0 / resolution**2
    if kind == "triangular":
        return np.where(t < L, -t, 0.0)  # ∂(1 − tΔ)/∂Δ
    if not dt:
        raise ValueError("the boxcar derivative needs the grid spacing dt")
    inside = np.abs(L - t) < 0.5 * dt
    return np.where(inside, dL / dt, 0.0)


def profile(kind: str, resolution: float, delta) -> np.ndarray:
    """The unit-area ILS at offsets ``delta`` (cm⁻¹) from the line, per the module table."""
    kind = check_instrument(kind)
    d = np.asarray(delta, dtype=float)
    if kind == "gaussian":
        s = resolution * SIGMA_PER_FWHM
        return np.exp(-0.5 * (d / s) ** 2) / (s * math.sqrt(2.0 * math.pi))
    L = 1.0 / resolution
    if kind == "triangular":
        return L * np.sinc(L * d) ** 2
    return 2.0 * L * np.sinc(2.0 * L * d)
