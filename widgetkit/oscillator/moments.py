"""Vibrational transition moments, band strengths and populations.

Dipole function: μ(r) = Σ_k c_k (r − r_e)^k with ``dipole = (c_0, c_1, ...)``
in debye per Å^k (D, D/Å, D/Å², ...), r_e the minimum of the potential. The
transition moment M(v′, v″) = ⟨v′|μ(r)|v″⟩ is then in debye.

Band quantities (v′ ← v″, non-degenerate vibrational levels, rotation
averaged out):

* position ν̃ = E(v′) − E(v″) (cm⁻¹)
* Einstein A (s⁻¹): A = 16π³ ν³ |M|² / (3 ε₀ h c³) with ν = c ν̃, that is
  A = 3.13619×10⁻⁷ ν̃³[cm⁻¹] |M|²[D²] (CODATA constants from scipy.constants)
* integrated absorption per molecule (cm molecule⁻¹, that is cm⁻¹ / (molecule cm⁻²)):
  S = (8π³ / (3 h c)) ν̃ |M|² · p(v″) · (1 − exp(−c₂ ν̃ / T)) in Gaussian units,
  = 4.16238×10⁻¹⁹ ν̃[cm⁻¹] |M|²[D²] p(v″) (1 − e^{−c₂ν̃/T}); also given in
  km mol⁻¹ (× N_A × 10⁻⁵)
* Boltzmann population of v″: p(v″) = exp(−c₂ (E_v″ − E_0)/T) / Q_vib with
  Q_vib = Σ_v exp(−c₂ (E_v − E_0)/T) over the bound levels solved, c₂ = hc/k.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import pandas as pd
import scipy.constants as sc

from .potentials import OscillatorError
from .solver import VibrationalLevels

__all__ = [
    "C2",
    "A_FACTOR",
    "S_FACTOR",
    "transition_moments",
    "band_strengths",
    "vibrational_populations",
    "einstein_A",
    "integrated_absorption",
]

#: second radiation constant hc/k in cm K
C2 = sc.h * sc.c * 100.0 / sc.k
_DEBYE = 1e-21 / sc.c  # C m
#: A[s-1] = A_FACTOR * nu[cm-1]**3 * |M|[D]**2
A_FACTOR = 16.0 * math.pi**3 * 1e6 * _DEBYE**2 / (3.0 * sc.epsilon_0 * sc.h)
#: S[cm/molecule] = S_FACTOR * nu[cm-1] * |M|[D]**2 * population * stimulated-emission factor
S_FACTOR = 8.0 * math.pi**3 / (3.0 * sc.h * 1e7 * sc.c * 100.0) * 1e-36


def _coefficients(dipole) -> np.ndarray:
    try:
        c = np.atleast_1d(np.asarray(dipole, dtype=float))
    except (TypeError, ValueError):
        raise OscillatorError(
            f"dipole must be polynomial coefficients (c0, c1, ...) in D/Å^k, got {dipole!r}"
        ) from None
    if c.ndim != 1 or c.size == 0 or not np.all(np.isfinite(c)):
        raise OscillatorError(
            f"dipole must be a non-empty sequence of finite coefficients (c0, c1, ...), got {dipole!r}"
        )
    return c


def transition_moments(levels: VibrationalLevels, dipole: Sequence[float]) -> np.ndarray:
    """Matrix of vibrational transition moments.

    Parameters
    ----------
    levels : VibrationalLevels
        From :func:`solve`.
    dipole : sequence of float
        (c_0, c_1, ...) of μ(r) = Σ c_k (r − r_e)^k, in D/Å^k.

    Returns
    -------
    ndarray, shape (n, n)
        M[v_upper, v_lower] = ⟨v_upper|μ(r)|v_lower⟩ in D (symmetric; the
        diagonal holds the expectation values ⟨v|μ|v⟩).
    """
    c = _coefficients(dipole)
    re = levels.r_e
    return levels.matrix(lambda r: np.polynomial.polynomial.polyval(r - re, c))


def _check_temperature(temperature) -> float:
    try:
        t = float(temperature)
    except (TypeError, ValueError):
        raise OscillatorError(f"temperature must be a number of kelvin, got {temperature!r}") from None
    if not (math.isfinite(t) and t > 0):
        raise OscillatorError(f"temperature must be positive (kelvin), got {temperature!r}")
    return t


def vibrational_populations(energies, temperature: float) -> tuple[np.ndarray, float]:
    """Boltzmann populations p(v) and Q_vib (relative to the lowest level).

    Parameters
    ----------
    energies : array_like, shape (n,)
        Level energies in cm⁻¹ (any common zero).
    temperature : float
        K, > 0.

    Returns
    -------
    (p, Q) with p = exp(−c₂ (E − E_0)/T) / Q, Q = Σ exp(−c₂ (E − E_0)/T).
    """
    t = _check_temperature(temperature)
    e = np.asarray(energies, dtype=float)
    w = np.exp(-C2 * (e - e.min()) / t)
    q = float(w.sum())
    return w / q, q


def einstein_A(position, moment) -> np.ndarray:
    """A (s⁻¹) = 3.13619×10⁻⁷ ν̃³ |M|² for ν̃ in cm⁻¹ and M in D (non-degenerate levels)."""
    nu = np.asarray(position, dtype=float)
    return A_FACTOR * nu**3 * np.asarray(moment, dtype=float) ** 2


def integrated_absorption(position, moment, population=1.0, temperature=None) -> np.ndarray:
    """S (cm molecule⁻¹) = 4.16238×10⁻¹⁹ ν̃ |M|² p(v″) (1 − e^{−c₂ν̃/T}).

    Without ``temperature`` the stimulated-emission factor is left out (taken as 1).
    """
    nu = np.asarray(position, dtype=float)
    stim = 1.0 if temperature is None else -np.expm1(-C2 * nu / _check_temperature(temperature))
    return S_FACTOR * nu * np.asarray(moment, dtype=float) ** 2 * population * stim


def band_strengths(levels: VibrationalLevels, dipole: Sequence[float], *,
                   temperature: float | None = None, allowed_tol: float = 1e-9,
                   max_v_lower: int | None = None) -> pd.DataFrame:
    """Table of every vibrational band v′ ← v″ (v′ > v″) between the solved levels.

    Parameters
    ----------
    levels : VibrationalLevels
        From :func:`solve` (at least the levels 0 and 1).
    dipole : sequence of float
        (c_0, c_1, ...) in D/Å^k, μ(r) = Σ c_k (r − r_e)^k.
    temperature : float, optional
        K. With it the lower levels get Boltzmann populations (vibrational
        partition function over the solved levels) and the stimulated-emission
        factor 1 − exp(−c₂ν̃/T) is applied. Without it every lower level counts
        as fully populated (population 1) and there is no stimulated emission:
        intrinsic strengths per molecule in v″.
    allowed_tol : float
        A band is ``allowed`` when |M| > allowed_tol × the largest element of
        the moment matrix, diagonal included (DVR noise is ~1e-13 of it).
    max_v_lower : int, optional
        Leave out bands from v″ above this.

    Returns
    -------
    DataFrame, one row per band, ordered by v_lower then v_upper, with columns
        ``v_upper, v_lower`` (int); ``label`` ("2-0"); ``position`` (cm⁻¹);
        ``moment`` (D, signed, phases as in :func:`solve`); ``population``
        (fraction in v″); ``relative_intensity`` = I / I(1-0) with
        I = ν̃ |M|² p(v″) (1 − e^{−c₂ν̃/T}); ``allowed`` (bool);
        ``einstein_A`` (s⁻¹); ``integrated_absorption`` (cm molecule⁻¹);
        ``integrated_absorption_km_mol`` (km mol⁻¹).
    """
    if not isinstance(levels, VibrationalLevels):
        raise OscillatorError("levels must be the result of wk.oscillator.solve(...)")
    if levels.n_levels < 2:
        raise OscillatorError(
            "band_strengths needs at least the levels v=0 and v=1; solve with n_levels >= 2"
        )
    if not (allowed_tol > 0):
        raise OscillatorError(f"allowed_tol must be positive, got {allowed_tol!r}")
    m = transition_moments(levels, dipole)
    e = levels.energies
    n = e.size
    if temperature is None:
        pop = np.ones(n)
    else:
        pop, _ = vibrational_populations(e, temperature)
    vl, vu = np.triu_indices(n, k=1)
    if max_v_lower is not None:
        keep = vl <= int(max_v_lower)
        vl, vu = vl[keep], vu[keep]
    pos = e[vu] - e[vl]
    mom = m[vu, vl]
    noise = allowed_tol * float(np.max(np.abs(m)))
    s = integrated_absorption(pos, mom, pop[vl], temperature)
    fund = (vu == 1) & (vl == 0)
    ref = float(s[fund][0]) if fund.any() else math.nan
    if not (abs(m[1, 0]) > noise and ref > 0):
        raise OscillatorError(
            "the fundamental 1-0 has zero moment with this dipole, so intensities relative to it "
            "are undefined; give a dipole with a non-zero slope c1"
        )
    table = pd.DataFrame({
        "v_upper": vu.astype(int),
        "v_lower": vl.astype(int),
        "label": [f"{a}-{b}" for a, b in zip(vu, vl, strict=True)],
        "position": pos,
        "moment": mom,
        "population": pop[vl],
        "relative_intensity": s / ref,
        "allowed": np.abs(mom) > noise,
        "einstein_A": einstein_A(pos, mom),
        "integrated_absorption": s,
        "integrated_absorption_km_mol": s * sc.N_A * 1e-5,
    })
    return table
