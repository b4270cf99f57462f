"""The P–R branch separation of an unresolved band: the one implementation of the formula.

For a ¹Σ–¹Σ band whose rotational lines are not resolved, the P and R branch maxima
lie near the most populated J, J_max ≈ √(kT/(2hcB)) − ½, about 2B(J_max + ½) on
either side of the band origin, so

    Δν_PR ≈ 4B (J_max + ½) = √(8 k T B / (h c)) = K √(B T),   K = √(8 k/(h c))

with B in cm⁻¹ and T in K (Herzberg, *Spectra of Diatomic Molecules*, 2nd ed. 1950,
ch. III, intensity distribution in rotation–vibration bands, where the coefficient
is printed as 2.3583 from the constants of the time; from memory). With CODATA
constants (``scipy.constants``, k/hc = 0.6950348 cm⁻¹ K⁻¹) K = 2.35802 cm⁻¹ K^-½
(:data:`PR_COEFFICIENT`); the difference, 1.2e-4 relative, is far below the accuracy
of the formula itself.

The formula neglects the Hönl–London and ν factors, B′ ≠ B″ and the instrument
function; on the simulator's contours it holds to a few per cent (tests of
:mod:`widgetkit.bandmodel.quick`, which measures the maxima on a spectrum). It is a
starting point, not a result. The plausibility checks (:mod:`.plausibility`) and the
band model's quick estimate both use these functions.
"""

from __future__ import annotations

import math

import scipy.constants as sc

__all__ = ["PR_COEFFICIENT", "PR_COEFFICIENT_PRINTED", "expected_pr_separation",
           "rotational_constant_from_separation", "temperature_from_separation"]

#: K in Δν_PR = K √(B T): √(8k/(hc)) with CODATA constants, cm⁻¹ K^-½ (B in cm⁻¹)
PR_COEFFICIENT = math.sqrt(8.0 * sc.k / (sc.h * sc.c * 100.0))
#: the coefficient as printed by Herzberg (1950), from the constants of that time
PR_COEFFICIENT_PRINTED = 2.3583


def expected_pr_separation(B: float, temperature: float) -> float:
    """Δν_PR = K √(B T) in cm⁻¹ (B in cm⁻¹, T in K)."""
    return PR_COEFFICIENT * math.sqrt(float(B) * float(temperature))


def rotational_constant_from_separation(separation: float, temperature: float) -> float:
    """B = (Δν_PR / K)² / T in cm⁻¹."""
    return (float(separation) / PR_COEFFICIENT) ** 2 / float(temperature)


def temperature_from_separation(separation: float, B: float) -> float:
    """T = (Δν_PR / K)² / B in K."""
    return (float(separation) / PR_COEFFICIENT) ** 2 / float(B)
