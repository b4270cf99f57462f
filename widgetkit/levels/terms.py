"""Term values of a diatomic (energies in cm⁻¹).

Conventions (Herzberg, *Spectra of Diatomic Molecules*, 1950):

* G(v) = ωe(v+½) − ωexe(v+½)² + ωeye(v+½)³
* B_v = Be − αe(v+½) + γe(v+½)²
* F_v(J) = B_v J(J+1) − D_v J²(J+1)²
* a line v′,J′ ← v″,J″ lies at ν = G(v′) − G(v″) + F_v′(J′) − F_v″(J″)
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

__all__ = ["vib_term", "rot_constant", "rot_term", "line_position"]


def vib_term(v, omega_e: float, omega_e_x_e: float = 0.0, omega_e_y_e: float = 0.0):
    """G(v) in cm⁻¹ (above the potential minimum)."""
    h = np.asarray(v, dtype=float) + 0.5
    return omega_e * h - omega_e_x_e * h**2 + omega_e_y_e * h**3


def rot_constant(v, B_e: float, alpha_e: float = 0.0, gamma_e: float = 0.0):
    """B_v = Be − αe(v+½) + γe(v+½)² in cm⁻¹."""
    h = np.asarray(v, dtype=float) + 0.5
    return B_e - alpha_e * h + gamma_e * h**2


def rot_term(J, B_v, D_v=0.0, l=0):
    """F_v(J) = B_v x − D_v x² in cm⁻¹ with x = J(J+1) − ℓ².

    ``l`` is the vibrational angular momentum ℓ of a linear polyatomic level
    (Herzberg, *Infrared and Raman Spectra of Polyatomic Molecules*, 1945);
    0 for a diatomic, where x = J(J+1).
    """
    x = np.asarray(J, dtype=float)
    x = x * (x + 1.0) - float(l) ** 2
    return B_v * x - D_v * x**2


def line_position(v_upper, J_upper, v_lower, J_lower, constants: Mapping[str, float]):
    """Wavenumber of v′,J′ ← v″,J″ from equilibrium constants.

    ``constants`` holds ``omega_e`` and optionally ``omega_e_x_e``,
    ``omega_e_y_e``, ``B_e``, ``alpha_e``, ``gamma_e`` and ``D_e`` (the
    centrifugal constant, taken the same for both levels).
    """
    c = {"omega_e_x_e": 0.0, "omega_e_y_e": 0.0, "B_e": 0.0, "alpha_e": 0.0,
         "gamma_e": 0.0, "D_e": 0.0, **constants}
    g = lambda v: vib_term(v, c["omega_e"], c["omega_e_x_e"], c["omega_e_y_e"])  # noqa: E731
    b = lambda v: rot_constant(v, c["B_e"], c["alpha_e"], c["gamma_e"])  # noqa: E731
    return (g(v_upper) - g(v_lower)
            + rot_term(J_upper, b(v_upper), c["D_e"]) - rot_term(J_lower, b(v_lower), c["D_e"]))
