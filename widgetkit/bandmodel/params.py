"""Parameters of the band model: names, units, roles, bounds, and the linear map from
the spectroscopic parameters to the term-map constants of the line system (private).

Two parameterisations of the constants (see :mod:`widgetkit.simulate.linesystem`):

* **joint** (mass-independent, Dunham-type): one set for all isotopologues,
  ``band_origin`` (of the main isotopologue's first band), ``omega_e_x_e``, ``B_e``,
  ``alpha_e``, ``D_e`` (and ``omega_e_y_e``, ``gamma_e``, ``beta_e``, held at 0 unless
  given); ω_e follows from ν₀ = ω_e Δv − ω_e x_e [(v′+½)² − (v″+½)²]
  + ω_e y_e [(v′+½)³ − (v″+½)³]. Each isotopologue's constants are the main one's
  scaled by ρ^p (ρ = sqrt(μ_main/μ_iso)).
* **separate**: for one band, each isotopologue its own ``band_origin``, ``B_upper``,
  ``B_lower`` and ``D`` (D′ = D″, ``centrifugal="shared"``) or ``D_upper``,
  ``D_lower`` (``"separate"``); names of minor isotopologues carry the isotopologue,
  ``B_lower(1H-37Cl)``.

Both are linear: c = C θ + c₀, so line positions and lower-state energies are linear
in θ and their derivatives are constant matrices.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..simulate.linesystem import BAND_NAMES, DUNHAM_NAMES

__all__ = ["Param", "spectroscopic_params", "constant_map", "UNITS", "PRIMARY"]

#: units of the parameters (cm⁻¹ unless listed)
UNITS = {"temperature": "K", "band_area": "cm-1 (absorbance)", "herman_wallis": "1"}
#: parameters the fit is about; the others are held when the data cannot determine them
PRIMARY = ("band_origin", "B_e", "alpha_e", "B_upper", "B_lower", "temperature", "band_area")


@dataclass
class Param:
    """One parameter: start value, whether it varies, bounds, role, and why it is held."""

    name: str
    value: float
    vary: bool = True
    lower: float = -math.inf
    upper: float = math.inf
    secondary: bool = False
    note: str = ""
    #: where the start value came from ("given", "estimated", "default", "fixed", ...)
    source: str = "estimated"
    extra: dict = field(default_factory=dict)

    @property
    def unit(self) -> str:
        base = self.name.split("(")[0]
        if base.startswith("baseline_"):
            return "absorbance"
        if base.startswith("abundance_ratio"):
            return "1"
        return UNITS.get(base, "cm-1")


def spectroscopic_params(joint: bool, isotopologues: list[str], centrifugal: str,
                         starts: dict) -> list[Param]:
    """The spectroscopic parameters with their start values.

    ``starts`` holds band constants of the main isotopologue (``band_origin``,
    ``B_upper``, ``B_lower``, ``D``) and, for joint, ``omega_e_x_e``.
    """
    if joint:
        out = [Param("band_origin", starts["band_origin"], lower=1.0),
               Param("omega_e_x_e", starts["omega_e_x_e"], secondary=True),
               Param("B_e", starts["B_e"], lower=1e-6),
               Param("alpha_e", starts["alpha_e"]),
               Param("D_e", starts["D"], secondary=True),
               Param("omega_e_y_e", 0.0, vary=False, secondary=True, source="default"),
               Param("gamma_e", 0.0, vary=False, secondary=True, source="default"),
               Param("beta_e", 0.0, vary=False, secondary=True, source="default")]
        return out
    out = []
    for i, iso in enumerate(isotopologues):
        sfx = "" if i == 0 else f"({iso})"
        s = starts if i == 0 else starts["minor"][iso]
        minor = i > 0
        out += [Param(f"band_origin{sfx}", s["band_origin"], lower=1.0, secondary=minor),
                Param(f"B_upper{sfx}", s["B_upper"], lower=1e-6, secondary=minor),
                Param(f"B_lower{sfx}", s["B_lower"], lower=1e-6, secondary=minor)]
        if centrifugal == "shared":
            out.append(Param(f"D{sfx}", s["D"], secondary=True))
        elif centrifugal == "separate":
            out += [Param(f"D_upper{sfx}", s["D"], secondary=True),
                    Param(f"D_lower{sfx}", s["D"], secondary=True)]
        else:  # "none"
            out.append(Param(f"D{sfx}", 0.0, vary=False, secondary=True, source="fixed"))
    return out


def constant_map(joint: bool, isotopologues: list[str], centrifugal: str, names: list[str],
                 band: tuple[int, int]) -> np.ndarray:
    """C of c = C θ (θ over ``names``; zero columns for the non-spectroscopic parameters).

    Columns follow ``names``; rows follow :data:`DUNHAM_NAMES` (joint) or, per isotopologue,
    :data:`BAND_NAMES` (separate).
    """
    idx = {n: k for k, n in enumerate(names)}
    if joint:
        C = np.zeros((len(DUNHAM_NAMES), len(names)))
        vu, vl = band
        dv = float(vu - vl)
        a = (vu + 0.5) ** 2 - (vl + 0.5) ** 2
        b = (vu + 0.5) ** 3 - (vl + 0.5) ** 3
        # ω_e = (ν₀ + a ω_e x_e − b ω_e y_e)/Δv
        C[0, idx["band_origin"]] = 1.0 / dv
        C[0, idx["omega_e_x_e"]] = a / dv
        C[0, idx["omega_e_y_e"]] = -b / dv
        for r, n in enumerate(DUNHAM_NAMES[1:], start=1):
            C[r, idx[n]] = 1.0
        return C
    C = np.zeros((len(BAND_NAMES) * len(isotopologues), len(names)))
    for i, iso in enumerate(isotopologues):
        sfx = "" if i == 0 else f"({iso})"
        r = len(BAND_NAMES) * i
        C[r + 0, idx[f"band_origin{sfx}"]] = 1.0
        C[r + 1, idx[f"B_upper{sfx}"]] = 1.0
        C[r + 2, idx[f"B_lower{sfx}"]] = 1.0
        if centrifugal == "separate":
            C[r + 3, idx[f"D_upper{sfx}"]] = 1.0
            C[r + 4, idx[f"D_lower{sfx}"]] = 1.0
        else:
            C[r + 3, idx[f"D{sfx}"]] = 1.0
            C[r + 4, idx[f"D{sfx}"]] = 1.0
    return C
