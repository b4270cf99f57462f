"""Numerical vibrational oscillator (issue 5): levels and wavefunctions of a
diatomic potential by the sinc DVR (Colbert and Miller 1992), transition
moments of a polynomial dipole function, band strengths with Boltzmann
populations, Einstein A coefficients and integrated absorption.

>>> import widgetkit as wk
>>> lv = wk.oscillator.solve(wk.oscillator.morse(2990.946, 52.8186, r_e=1.27455), 0.9796)
>>> lv.n_levels
28
"""

from .analytic import harmonic_length, harmonic_wavefunction, hermite, morse_levels
from .moments import (
    A_FACTOR,
    C2,
    S_FACTOR,
    band_strengths,
    einstein_A,
    integrated_absorption,
    transition_moments,
    vibrational_populations,
)
from .potentials import (
    KINETIC,
    OscillatorError,
    Potential,
    harmonic,
    morse,
    morse_parameters,
    tabulated,
)
from .predict import predict_band_strengths
from .solver import VibrationalLevels, sinc_dvr_kinetic, solve

__all__ = [
    "Potential", "harmonic", "morse", "tabulated", "morse_parameters", "KINETIC",
    "OscillatorError", "VibrationalLevels", "solve", "sinc_dvr_kinetic",
    "transition_moments", "band_strengths", "vibrational_populations", "einstein_A",
    "integrated_absorption", "C2", "A_FACTOR", "S_FACTOR", "predict_band_strengths",
    "hermite", "harmonic_wavefunction", "harmonic_length", "morse_levels",
]
