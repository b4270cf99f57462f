"""Closed forms used to check and seed the numerical oscillator.

* Physicists' Hermite polynomials by the recursion H₀ = 1, H₁ = 2x,
  H_{n+1}(x) = 2x H_n(x) − 2n H_{n−1}(x) (Abramowitz and Stegun 22.7.13).
* Harmonic-oscillator wavefunctions in the dimensionless coordinate
  q = (r − r_e) sqrt(ω_e / (2 ħ²/(2μ))):
  ψ_v(q) = (2^v v! √π)^(−½) H_v(q) e^{−q²/2}, computed by the equivalent
  stable recursion for the normalised functions.
* Morse levels G(v) = ω_e(v+½) − ω_e x_e (v+½)² for v + ½ < ω_e/(2 ω_e x_e)
  (Morse, Phys. Rev. 34 (1929) 57).
"""

from __future__ import annotations

import math

import numpy as np

from .potentials import KINETIC, OscillatorError

__all__ = ["hermite", "harmonic_wavefunction", "harmonic_length", "morse_levels"]


def hermite(n: int, x) -> np.ndarray:
    """H_n(x) by the three-term recursion (physicists' convention)."""
    if n < 0:
        raise OscillatorError(f"the Hermite degree must be >= 0, got {n}")
    x = np.asarray(x, dtype=float)
    h_prev, h = np.ones_like(x), 2.0 * x
    if n == 0:
        return h_prev
    for k in range(1, n):
        h_prev, h = h, 2.0 * x * h - 2.0 * k * h_prev
    return h


def harmonic_wavefunction(v: int, q) -> np.ndarray:
    """Normalised ψ_v(q) (∫ψ² dq = 1), positive for large q."""
    q = np.asarray(q, dtype=float)
    p_prev = np.zeros_like(q)
    p = math.pi**-0.25 * np.exp(-0.5 * q * q)
    for k in range(v):
        p_prev, p = p, math.sqrt(2.0 / (k + 1)) * q * p - math.sqrt(k / (k + 1)) * p_prev
    return p


def harmonic_length(omega_e: float, reduced_mass: float) -> float:
    """Å per unit of q: sqrt(2 ħ²/(2μ) / ω_e) = sqrt(ħ / (μ ω))."""
    return math.sqrt(2.0 * KINETIC / reduced_mass / omega_e)


def morse_levels(omega_e: float, omega_e_x_e: float) -> np.ndarray:
    """All bound Morse levels G(v) (cm⁻¹ above the minimum), v = 0, 1, ..."""
    vmax = omega_e / (2.0 * omega_e_x_e) - 0.5
    n = int(math.ceil(vmax)) if vmax > 0 else 0
    h = np.arange(n) + 0.5
    return omega_e * h - omega_e_x_e * h * h
