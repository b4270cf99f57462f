"""Handbook constants for demos and examples.

Values: Huber and Herzberg, *Constants of Diatomic Molecules* (1979), recalled
from memory; cm⁻¹, r_e in Å; ground states X ¹Σ⁺ (HCl, CO), X ¹Σg⁺ (N₂), X ³Σg⁻ (O₂).
``D_e`` is the centrifugal-distortion constant (taken equal for all v).

For HCl, ``gamma_e`` ≈ 0.0017 cm⁻¹ is of LOW confidence (it is
needed to reproduce high-J lines to 0.01 cm⁻¹ from B_e and α_e alone);
ω_e y_e and D_e are of medium confidence. These numbers are for demos; tests
that use them as check values must say "handbook value, from memory".
"""

from __future__ import annotations

__all__ = ["HANDBOOK"]

#: constants of the most abundant isotopologue, keyed by its name
HANDBOOK: dict[str, dict[str, float]] = {
    "1H-35Cl": {
        "omega_e": 2990.946,
        "omega_e_x_e": 52.8186,
        "omega_e_y_e": 0.2243,
        "B_e": 10.59341,
        "alpha_e": 0.30718,
        "gamma_e": 0.0017,   # low confidence
        "D_e": 5.3194e-4,
        "r_e": 1.27455,
    },
    "14N-14N": {  # X 1Σg+
        "omega_e": 2358.57,
        "omega_e_x_e": 14.324,
        "B_e": 1.99824,
        "alpha_e": 0.017318,
        "D_e": 5.76e-6,
        "r_e": 1.09768,
    },
    "16O-16O": {  # X 3Σg- (rotational levels labelled by N; fine structure not modelled)
        "omega_e": 1580.193,
        "omega_e_x_e": 11.981,
        "B_e": 1.44563,
        "alpha_e": 0.01593,
        "D_e": 4.839e-6,
        "r_e": 1.20752,
    },
    "12C-16O": {
        "omega_e": 2169.81358,
        "omega_e_x_e": 13.28831,
        "omega_e_y_e": 0.010511,
        "B_e": 1.93128087,
        "alpha_e": 0.01750441,
        "D_e": 6.12147e-6,
        "r_e": 1.128323,
    },
}
