"""Temperature from the Stokes and anti-Stokes Raman lines of the same transitions.

For a transition of shift Δ (cm⁻¹) between two levels, the anti-Stokes line starts
from the upper level and the Stokes line from the lower one; the degeneracy and
Placzek–Teller factors cancel in the ratio (detailed balance), leaving (Long, *The
Raman Effect*, 2002, ch. 5; from memory)::

    I_aS / I_S = ((ν̃₀ + Δ) / (ν̃₀ − Δ))^n · exp(−c₂ Δ / T)

with ν̃₀ the laser wavenumber, n = 4 for a detector that measures scattered energy
(power ∝ ν̃⁴) and n = 3 for one that counts photons (photons = power / hcν̃). For
several pairs, y_i = n ln((ν̃₀+Δ_i)/(ν̃₀−Δ_i)) − ln(I_aS/I_S)_i = (c₂/T) Δ_i is fitted as a
line through the origin by weighted least squares (σ(y_i)² = (σ_aS/I_aS)² + (σ_S/I_S)²);
T = c₂/k and σ_T = c₂ σ_k / k². With stated area errors the covariance is inflated by the
Birge ratio when the scatter exceeds them; without, errors come from the scatter (at
least two pairs needed). For a vibrational band (Stokes v=1←0 and anti-Stokes v=1→0) the
same formula holds in the harmonic approximation (equal polarisability matrix elements).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import AssignmentError
from ._lsq import SingularDesign, weighted_lstsq
from .candidates import C2

__all__ = ["RamanTemperature", "stokes_anti_stokes_temperature", "DETECTOR_EXPONENTS"]

#: detector kind -> exponent of the frequency factor
DETECTOR_EXPONENTS = {"energy": 4, "photon_counting": 3}


@dataclass(frozen=True)
class RamanTemperature:
    """Temperature from Stokes/anti-Stokes pairs: ``value`` and ``stderr`` (K), ``n_pairs``,
    ``detector`` and its ``exponent``, ``birge`` (scatter over stated errors; NaN without)."""

    value: float
    stderr: float
    n_pairs: int
    detector: str
    exponent: int
    birge: float


def stokes_anti_stokes_temperature(shift, stokes, anti_stokes, *, excitation_wavenumber: float,
                                   detector: str, stokes_err=None, anti_stokes_err=None
                                   ) -> RamanTemperature:
    """Temperature (K) from Stokes and anti-Stokes intensities of the same transitions.

    Parameters
    ----------
    shift : array_like, shape (k,)
        Δ > 0 of each transition, cm⁻¹.
    stokes, anti_stokes : array_like, shape (k,)
        Integrated intensities (areas) of each pair, > 0.
    excitation_wavenumber : float
        ν̃₀, vacuum cm⁻¹.
    detector : {"energy", "photon_counting"}
        Required: the frequency factor is ν⁴ for energy-measuring detectors, ν³ for photon
        counters (module docstring).
    stokes_err, anti_stokes_err : array_like, optional
        Standard errors of the areas.
    """
    if detector not in DETECTOR_EXPONENTS:
        raise AssignmentError(
            f"detector must be 'energy' (measures scattered power: ν^4) or 'photon_counting' "
            f"(counts photons, e.g. a CCD: ν^3), got {detector!r}")
    n = DETECTOR_EXPONENTS[detector]
    d = np.atleast_1d(np.asarray(shift, dtype=float))
    s = np.atleast_1d(np.asarray(stokes, dtype=float))
    a = np.atleast_1d(np.asarray(anti_stokes, dtype=float))
    nu0 = float(excitation_wavenumber)
    if not (d.shape == s.shape == a.shape and d.size >= 1):
        raise AssignmentError("shift, stokes and anti_stokes must be arrays of one length >= 1")
    if not (np.all(d > 0) and np.all(s > 0) and np.all(a > 0) and np.isfinite(nu0) and nu0 > d.max()):
        raise AssignmentError("shifts and intensities must be > 0 and the laser wavenumber above "
                              "every shift")
    y = n * np.log((nu0 + d) / (nu0 - d)) - np.log(a / s)
    sig = None
    if stokes_err is not None and anti_stokes_err is not None:
        es = np.atleast_1d(np.asarray(stokes_err, dtype=float))
        ea = np.atleast_1d(np.asarray(anti_stokes_err, dtype=float))
        sy = np.hypot(es / s, ea / a)
        if np.all(np.isfinite(sy) & (sy > 0)):
            sig = sy
    try:
        f = weighted_lstsq(d[:, None], y, sig)
    except SingularDesign as exc:
        raise AssignmentError(f"no temperature from these pairs: {exc}") from None
    k = float(f.beta[0])
    if not k > 0:
        raise AssignmentError("the anti-Stokes lines are not weaker than a Boltzmann factor allows "
                              f"(fitted c2/T = {k:.3g} cm); check the detector kind and the areas")
    T = C2 / k
    sk = float(f.stderr[0]) if np.isfinite(f.stderr[0]) else float("nan")
    birge = float(np.sqrt(f.reduced_chi2)) if sig is not None and f.dof > 0 else float("nan")
    return RamanTemperature(float(T), C2 * sk / k**2, int(d.size), detector, n, birge)
