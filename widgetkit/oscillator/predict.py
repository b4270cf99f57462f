"""Predicted band strengths from spectroscopic constants, for ranking
assignments of overtones and hot bands.

The potential is the Morse curve implied by ω_e and ω_e x_e (see
:func:`.potentials.morse`); the dipole function defaults to a linear one,
so overtones come from mechanical anharmonicity alone unless a curved dipole
is given.
"""

from __future__ import annotations

from collections.abc import Sequence

import pandas as pd

from .moments import band_strengths
from .potentials import morse
from .solver import solve

__all__ = ["predict_band_strengths"]


def predict_band_strengths(omega_e: float, omega_e_x_e: float, reduced_mass: float, *,
                           dipole: Sequence[float] = (0.0, 1.0), temperature: float | None = None,
                           v_max: int = 6, r_e: float = 1.0) -> pd.DataFrame:
    """Band table (as :func:`band_strengths`) of the Morse oscillator for these constants.

    Parameters
    ----------
    omega_e, omega_e_x_e : float
        cm⁻¹.
    reduced_mass : float
        u.
    dipole : sequence of float
        (c_0, c_1, ...) in D/Å^k; default (0, 1): a linear dipole of slope 1 D/Å,
        which fixes the relative intensities (absolute ones scale with c_1²).
    temperature : float, optional
        K, for hot-band populations.
    v_max : int
        Highest level solved (bands among v = 0 … v_max; default 6), capped
        at the number of bound Morse levels.
    r_e : float
        Å; only the origin of the dipole expansion.
    """
    levels = solve(morse(omega_e, omega_e_x_e, r_e=r_e), reduced_mass, n_levels=int(v_max) + 1)
    return band_strengths(levels, dipole, temperature=temperature)
