"""Joint (mass-independent) fit of the sub-bands of several isotopologues.

One set of equilibrium constants of a reference isotopologue (the most
abundant one found) describes every sub-band of one v′ ← v″ band; each
isotopologue i scales them by ρᵢ = sqrt(μ_ref/μᵢ) as in the isotope relations
of the Dunham expansion (J. L. Dunham, Phys. Rev. 41, 721 (1932); the powers
of ρ as in G. Herzberg, *Spectra of Diatomic Molecules*, 2nd ed. (1950),
ch. III §2; both from memory)::

    ωe,i = ρ ωe      ωexe,i = ρ² ωexe      Be,i = ρ² Be      αe,i = ρ³ αe
    D_v,i = ρ⁴ D_v

so a line v′,J′ ← v″,J″ of isotopologue i lies at (x = J(J+1), h = v+½)::

    ν = ρ ωe (v′ − v″) − ρ² ωexe (h′² − h″²)
        + ρ² Be (x′ − x″) − ρ³ αe (h′ x′ − h″ x″) − ρ⁴ (D′ x′² − D″ x″²)

which is *linear* in (ωe, ωexe, Be, αe, D′, D″): a weighted linear least-squares
fit (:mod:`._lsq`) with exact covariance. ωe and ωexe are told apart only by
the band origins of at least two isotopologues; ωeye and higher terms are
absorbed in them (effective two-term values), and D_v scales as ρ⁴ (β_e's ρ⁵
is neglected, a relative error of order (1 − ρ) β_e/D_e). The breakdown of
the Born–Oppenheimer mass scaling (small for heavy atoms, about 10⁻⁴ of the
isotope shift in HCl) shows as a joint Birge ratio above the separate fits'.

The reported mass-independent set is that of the mass-reduced Dunham
coefficients (J. K. G. Watson, J. Mol. Spectrosc. 80, 411 (1980), from
memory), with their signs: U₁₀ = ωe μ^½, U₂₀ = −ωexe μ, U₀₁ = Be μ,
U₁₁ = −αe μ^{3/2} (U₀₂ = −De μ² when D′ = D″), μ in u; and r_e, which is
mass-independent in the same approximation.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np

from ..errors import AssignmentError
from ._lsq import LinearFit, SingularDesign, propagate, weighted_lstsq
from .bandfit import R_E_CONSTANT

__all__ = ["JointFit", "JointSummary", "fit_joint", "JOINT_PARAMETERS", "JOINT_KEY",
           "TooFewIsotopologues"]

#: parameters of the reference isotopologue for each choice of ``centrifugal``
JOINT_PARAMETERS = {
    "separate": ("omega_e", "omega_e_x_e", "B_e", "alpha_e", "D_upper", "D_lower"),
    "shared": ("omega_e", "omega_e_x_e", "B_e", "alpha_e", "D"),
    "none": ("omega_e", "omega_e_x_e", "B_e", "alpha_e"),
}
#: the ``isotopologue`` of the mass-independent rows (and the key of their covariance)
JOINT_KEY = "mass-independent"


class TooFewIsotopologues(AssignmentError):
    """The joint fit was given lines of fewer than two isotopologues (nothing to fit jointly)."""


@dataclass(frozen=True)
class JointSummary:
    """What a joint isotopologue fit inside an assignment was made of
    (``BandAssignment.joint``; plain values, so a session records it as they are).

    Attributes
    ----------
    isotopologues : tuple of str
        The isotopologues fitted together, the reference first.
    reference : str
        The isotopologue whose constants are the fitted set (ρ = 1).
    centrifugal : str
        ``"separate"``, ``"shared"`` or ``"none"`` as finally fitted.
    n_lines : int
        Lines in the joint fit.
    scatter : float
        The Birge ratio (lines with position errors) or the rms residual in cm⁻¹ (without);
        NaN when the fit has no degrees of freedom.
    scatter_kind : str
        ``"Birge ratio"`` or ``"rms residual (cm-1)"``.
    """

    isotopologues: tuple
    reference: str
    centrifugal: str
    n_lines: int
    scatter: float
    scatter_kind: str

    def to_dict(self) -> dict:
        return {"isotopologues": list(self.isotopologues), "reference": self.reference,
                "centrifugal": self.centrifugal, "n_lines": int(self.n_lines),
                "scatter": float(self.scatter), "scatter_kind": self.scatter_kind}

    @classmethod
    def from_dict(cls, d: Mapping) -> JointSummary:
        return cls(tuple(str(i) for i in d["isotopologues"]), str(d["reference"]),
                   str(d["centrifugal"]), int(d["n_lines"]),
                   float(d["scatter"]) if d.get("scatter") is not None else float("nan"),
                   str(d["scatter_kind"]))


def _design(rho, Ju, Jl, band, centrifugal: str) -> np.ndarray:
    r = np.asarray(rho, dtype=float)
    xu = np.asarray(Ju, dtype=float)
    xl = np.asarray(Jl, dtype=float)
    xu, xl = xu * (xu + 1), xl * (xl + 1)
    hu, hl = band[0] + 0.5, band[1] + 0.5
    cols = [r * (band[0] - band[1]), -(r**2) * (hu**2 - hl**2), r**2 * (xu - xl),
            -(r**3) * (hu * xu - hl * xl)]
    if centrifugal == "separate":
        cols += [-(r**4) * xu**2, r**4 * xl**2]
    elif centrifugal == "shared":
        cols += [r**4 * (xl**2 - xu**2)]
    elif centrifugal != "none":
        raise AssignmentError(f"centrifugal must be 'separate', 'shared' or 'none', got {centrifugal!r}")
    return np.column_stack(cols)


@dataclass(frozen=True)
class JointFit:
    """Result of :func:`fit_joint`.

    Attributes
    ----------
    names : tuple of str
        Fitted parameters (of the reference isotopologue), :data:`JOINT_PARAMETERS`.
    fit : LinearFit
        Values, covariance (convention of :mod:`._lsq`), χ², degrees of freedom.
    reference : str
        The isotopologue the parameters belong to (ρ = 1).
    reference_mass : float
        Its reduced mass, u.
    rho : dict of str -> float
        ρ of every isotopologue in the fit.
    masses : dict of str -> float
        Reduced masses, u.
    band : (int, int)
    centrifugal : str
    """

    names: tuple
    fit: LinearFit = field(repr=False)
    reference: str
    reference_mass: float
    rho: dict
    masses: dict
    band: tuple
    centrifugal: str

    def _index(self, name: str) -> int:
        if self.centrifugal == "shared" and name in ("D_upper", "D_lower"):
            name = "D"
        return self.names.index(name) if name in self.names else -1

    def gradient(self, name: str, isotopologue: str) -> np.ndarray:
        """g with (constant of the isotopologue) = g · β for a band or equilibrium constant."""
        r = self.rho[isotopologue]
        g = np.zeros(len(self.names))
        hu, hl = self.band[0] + 0.5, self.band[1] + 0.5
        simple = {"omega_e": 1, "omega_e_x_e": 2, "B_e": 2, "alpha_e": 3, "D_upper": 4,
                  "D_lower": 4}
        if name in simple:
            k = self._index(name)
            if k >= 0:
                g[k] = r ** simple[name]
        elif name == "band_origin":
            g[0], g[1] = r * (self.band[0] - self.band[1]), -(r**2) * (hu**2 - hl**2)
        elif name in ("B_upper", "B_lower"):
            h = hu if name == "B_upper" else hl
            g[2], g[3] = r**2, -(r**3) * h
        else:
            raise KeyError(f"no joint constant {name!r}")
        return g

    def value(self, name: str, isotopologue: str) -> tuple[float, float]:
        """(value, standard error) of one constant of one isotopologue."""
        g = self.gradient(name, isotopologue)
        return float(g @ self.fit.beta), propagate(g, self.fit.cov)

    def predict(self, isotopologue, Ju, Jl) -> tuple[np.ndarray, np.ndarray]:
        """Calculated positions and their standard errors; ``isotopologue`` a name or an array."""
        iso = np.broadcast_to(np.asarray(isotopologue, dtype=object), np.shape(Ju))
        rho = np.array([self.rho[i] for i in iso], dtype=float)
        A = _design(rho, Ju, Jl, self.band, self.centrifugal)
        cov = self.fit.cov if np.all(np.isfinite(self.fit.cov)) else self.fit.cov_unscaled
        var = np.einsum("ij,jk,ik->i", A, cov, A)
        return A @ self.fit.beta, np.sqrt(np.clip(var, 0, None))

    def constants(self, isotopologue: str) -> list:
        """(name, value, stderr, unit) of one isotopologue, derived from the joint set."""
        out = [(nm, *self.value(nm, isotopologue), "cm-1")
               for nm in ("band_origin", "B_upper", "B_lower", "D_upper", "D_lower", "omega_e",
                          "omega_e_x_e", "B_e", "alpha_e")
               if not (nm.startswith("D") and self.centrifugal == "none")]
        Be, eBe = self.value("B_e", isotopologue)
        if Be > 0:
            re = float(np.sqrt(R_E_CONSTANT / (self.masses[isotopologue] * Be)))
            out.append(("r_e", re, 0.5 * re * eBe / Be, "Å"))
        return out

    def mass_independent(self) -> list:
        """(name, value, stderr, unit) of the mass-reduced Dunham coefficients and r_e."""
        mu = self.reference_mass
        spec = [("U_10", "omega_e", 0.5, 1.0, "cm-1 u^1/2"), ("U_20", "omega_e_x_e", 1.0, -1.0, "cm-1 u"),
                ("U_01", "B_e", 1.0, 1.0, "cm-1 u"), ("U_11", "alpha_e", 1.5, -1.0, "cm-1 u^3/2")]
        if self.centrifugal == "shared":
            spec.append(("U_02", "D_upper", 2.0, -1.0, "cm-1 u^2"))
        out = []
        for nm, const, power, sign, unit in spec:
            v, e = self.value(const, self.reference)
            out.append((nm, sign * v * mu**power, e * mu**power, unit))
        re = [c for c in self.constants(self.reference) if c[0] == "r_e"]
        return out + re


def fit_joint(isotopologue, J_upper, J_lower, position, sigma, *, rho: dict, masses: dict,
              reference: str, band: tuple[int, int] = (1, 0),
              centrifugal: str = "separate") -> JointFit:
    """Fit one set of mass-independent constants to the lines of several isotopologues.

    Parameters
    ----------
    isotopologue : array_like of str, shape (n,)
        Isotopologue of each line (keys of ``rho``).
    J_upper, J_lower : array_like of int, shape (n,)
    position : array_like, shape (n,)
        Observed wavenumbers, cm⁻¹.
    sigma : array_like, shape (n,), optional
        Standard errors of the positions (None: unit weights, errors from the scatter).
    rho : dict of str -> float
        ρ = sqrt(μ_reference/μ) of each isotopologue (1 for ``reference``).
    masses : dict of str -> float
        Reduced masses in u (for r_e and the mass-reduced coefficients).
    reference : str
    band : (int, int)
    centrifugal : {"separate", "shared", "none"}

    Raises
    ------
    AssignmentError
        Fewer than two isotopologues with lines, or lines that do not separate
        the parameters.
    """
    iso = np.asarray(isotopologue, dtype=object)
    found = sorted(set(iso.tolist()), key=str)
    rhos = {float(rho[i]) for i in found}
    if len(rhos) < 2:
        raise TooFewIsotopologues(
            f"the joint isotopologue fit needs assigned lines of at least two isotopologues "
            f"(found {', '.join(map(str, found)) or 'none'}); ωe and ωexe are told apart only by "
            "their band origins. Use joint=False for separate fits of each sub-band")
    names = JOINT_PARAMETERS.get(centrifugal)
    if names is None:
        raise AssignmentError(f"centrifugal must be 'separate', 'shared' or 'none', got {centrifugal!r}")
    r = np.array([rho[i] for i in iso], dtype=float)
    A = _design(r, J_upper, J_lower, band, centrifugal)
    try:
        f = weighted_lstsq(A, position, sigma)
    except SingularDesign as e:
        raise AssignmentError(
            f"the joint isotopologue fit cannot determine {', '.join(names)} from {len(A)} lines "
            f"({e}); assign more lines of each sub-band, use centrifugal='shared' or 'none', or "
            "joint=False") from None
    return JointFit(tuple(names), f, reference, float(masses[reference]),
                    {i: float(rho[i]) for i in found}, {i: float(masses[i]) for i in found},
                    (int(band[0]), int(band[1])), centrifugal)
