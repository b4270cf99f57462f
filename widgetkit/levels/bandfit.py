"""Term-model fit of one rovibrational band, combination differences, derived
equilibrium constants and the rotational temperature.

All fits are weighted *linear* least squares (:mod:`._lsq`), so results are
deterministic and their covariances exact for the linear model.

Band model (¹Σ–¹Σ, v′ ← v″; Herzberg, *Spectra of Diatomic Molecules*)::

    ν = ν₀ + B′ J′(J′+1) − D′ [J′(J′+1)]² − B″ J″(J″+1) + D″ [J″(J″+1)]²

linear in (ν₀, B′, B″, D′, D″). ``centrifugal="shared"`` imposes D′ = D″,
``"none"`` drops both.

Combination differences (each depends on one state only)::

    Δ₂F″(J) = R(J−1) − P(J+1) = F″(J+1) − F″(J−1)
    Δ₂F′(J) = R(J)   − P(J)   = F′(J+1) − F′(J−1)

with F(J+1) − F(J−1) = B (4J+2) − D [((J+1)(J+2))² − ((J−1)J)²]
= (4B − 6D)(J+½) − 8D(J+½)³.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import constants as sc

from ..errors import AssignmentError
from ._lsq import LinearFit, SingularDesign, propagate, robust_scale, weighted_lstsq
from .candidates import C2, honl_london

__all__ = [
    "PARAMETERS", "BandFit", "fit_band", "combination_differences", "equilibrium_constants",
    "rotational_temperature", "R_E_CONSTANT",
]

#: parameters fitted for each choice of ``centrifugal``
PARAMETERS = {
    "separate": ("band_origin", "B_upper", "B_lower", "D_upper", "D_lower"),
    "shared": ("band_origin", "B_upper", "B_lower", "D"),
    "none": ("band_origin", "B_upper", "B_lower"),
}

#: h/(8π²c) in u Å² cm⁻¹, so that r_e² [Å²] = R_E_CONSTANT / (μ[u] B_e[cm⁻¹]) (CODATA via scipy)
R_E_CONSTANT = sc.h / (8 * np.pi**2 * sc.c * 100.0) / sc.atomic_mass / 1e-20


def _design(J_upper, J_lower, centrifugal: str) -> np.ndarray:
    xu = np.asarray(J_upper, dtype=float)
    xl = np.asarray(J_lower, dtype=float)
    xu, xl = xu * (xu + 1), xl * (xl + 1)
    cols = [np.ones_like(xu), xu, -xl]
    if centrifugal == "separate":
        cols += [-(xu**2), xl**2]
    elif centrifugal == "shared":
        cols += [xl**2 - xu**2]
    elif centrifugal != "none":
        raise AssignmentError(f"centrifugal must be 'separate', 'shared' or 'none', got {centrifugal!r}")
    return np.column_stack(cols)


@dataclass(frozen=True)
class BandFit:
    """A fitted band: ``names`` of the parameters, the :class:`LinearFit`, the mode."""

    names: tuple[str, ...]
    fit: LinearFit
    centrifugal: str
    design: np.ndarray = field(repr=False, compare=False, default=None)

    @property
    def values(self) -> dict[str, float]:
        """All five band constants (D′ = D″ for "shared", 0 for "none")."""
        b = dict(zip(self.names, self.fit.beta, strict=True))
        if self.centrifugal == "shared":
            b["D_upper"] = b["D_lower"] = b.pop("D")
        elif self.centrifugal == "none":
            b["D_upper"] = b["D_lower"] = 0.0
        return {k: float(b[k]) for k in PARAMETERS["separate"]}

    def stderr_of(self, name: str) -> float:
        key = "D" if self.centrifugal == "shared" and name in ("D_upper", "D_lower") else name
        if key not in self.names:
            return 0.0
        return float(self.fit.stderr[self.names.index(key)])

    def predict(self, J_upper, J_lower) -> tuple[np.ndarray, np.ndarray]:
        """Calculated positions and their standard errors (from the covariance)."""
        A = _design(J_upper, J_lower, self.centrifugal)
        cov = self.fit.cov if np.all(np.isfinite(self.fit.cov)) else self.fit.cov_unscaled
        var = np.einsum("ij,jk,ik->i", A, cov, A)
        return A @ self.fit.beta, np.sqrt(np.clip(var, 0, None))



def fit_band(J_upper, J_lower, position, sigma=None, *, centrifugal: str = "separate") -> BandFit:
    """Fit the band model to assigned lines.

    Parameters
    ----------
    J_upper, J_lower : array_like of int, shape (n,)
    position : array_like, shape (n,)
        Observed wavenumbers, cm⁻¹.
    sigma : array_like, shape (n,), optional
        Standard errors of the positions; None for unit weights (errors then
        from the scatter).
    centrifugal : {"separate", "shared", "none"}

    Raises
    ------
    AssignmentError
        Fewer lines than parameters, or the J values do not separate the
        parameters (for example only one branch).
    """
    A = _design(J_upper, J_lower, centrifugal)
    names = PARAMETERS[centrifugal]
    try:
        f = weighted_lstsq(A, position, sigma)
    except SingularDesign as e:
        raise AssignmentError(
            f"cannot fit {', '.join(names)} from {len(A)} assigned lines ({e}); the band needs lines "
            "of both branches and more lines than parameters: assign more lines, use "
            "centrifugal='shared' or 'none', or lock lines by hand with "
            "s.set_assignment(line_id, label='R(0)')"
        ) from None
    return BandFit(tuple(names), f, centrifugal, A)


def _dF(J) -> tuple[np.ndarray, np.ndarray]:
    """Coefficients of B and D in F(J+1) − F(J−1)."""
    J = np.asarray(J, dtype=float)
    return 4 * J + 2, -(((J + 1) * (J + 2)) ** 2 - ((J - 1) * J) ** 2)


def combination_differences(J_upper, J_lower, position, sigma, band: BandFit) -> tuple[list, list]:
    """Lower- and upper-state combination differences of one band and their fits.

    Parameters
    ----------
    J_upper, J_lower, position, sigma : arrays of the lines used in ``band``
        (same order as in :func:`fit_band`); ``sigma`` None for unit weights.
    band : BandFit

    Returns
    -------
    rows : list of dict
        ``state`` ("lower"/"upper"), ``J``, ``lines`` ("R(2)-P(4)"), ``value``,
        ``stderr``, ``calc``, ``obs_minus_calc``.
    constants : list of (name, value, stderr, unit)
        ``B_lower_cd, D_lower_cd, B_upper_cd, D_upper_cd`` and
        ``B_lower_cd_diff``/``B_upper_cd_diff`` = (combination-difference B) −
        (B of the full fit), with the exact standard error of that
        difference (both are linear in the same observed positions,
        var = (g₁ − g₂) Σ (g₁ − g₂)ᵀ, scaled like the full fit).
    """
    Ju = np.asarray(J_upper, dtype=int)
    Jl = np.asarray(J_lower, dtype=int)
    y = np.asarray(position, dtype=float)
    s = np.ones(len(y)) if sigma is None else np.asarray(sigma, dtype=float)
    R = {int(j): i for i, j in enumerate(Jl) if Ju[i] == j + 1}
    P = {int(j): i for i, j in enumerate(Jl) if Ju[i] == j - 1}
    rows, consts = [], []
    G1 = band.fit.cov_unscaled @ (band.design.T / s**2)
    vals = band.values
    for state, pairs in (
        ("lower", [(J, R[J - 1], P[J + 1]) for J in range(1, 400) if (J - 1) in R and (J + 1) in P]),
        ("upper", [(J, R[J], P[J]) for J in range(1, 400) if J in R and J in P]),
    ):
        if not pairs:
            continue
        J = np.array([p[0] for p in pairs])
        iR = np.array([p[1] for p in pairs])
        iP = np.array([p[2] for p in pairs])
        d = y[iR] - y[iP]
        sd = np.sqrt(s[iR] ** 2 + s[iP] ** 2)
        cB, cD = _dF(J)
        D_fix = vals[f"D_{state}"]
        if len(J) >= 3 and band.centrifugal != "none":
            C, target, free = np.column_stack([cB, cD]), d, ("B", "D")
        else:
            C, target, free = cB[:, None], d - cD * D_fix, ("B",)
        try:
            f = weighted_lstsq(C, target, None if sigma is None else sd)
        except SingularDesign:
            continue
        calc = C @ f.beta + (0 if len(free) == 2 else cD * D_fix)
        for k in range(len(J)):
            jl_r = int(Jl[iR[k]])
            rows.append({"state": state, "J": int(J[k]), "lines": f"R({jl_r})-P({int(Jl[iP[k]])})",
                         "value": float(d[k]), "stderr": float(sd[k]) if sigma is not None else np.nan,
                         "calc": float(calc[k]), "obs_minus_calc": float(d[k] - calc[k])})
        se = f.stderr
        consts.append((f"B_{state}_cd", float(f.beta[0]), float(se[0]), "cm-1"))
        if len(free) == 2:
            consts.append((f"D_{state}_cd", float(f.beta[1]), float(se[1]), "cm-1"))
        # exact error of (B_cd − B_fit): both are linear maps of y
        K = np.zeros((len(J), len(y)))
        K[np.arange(len(J)), iR] = 1.0
        K[np.arange(len(J)), iP] = -1.0
        wd = 1.0 / (sd**2 if sigma is not None else np.ones(len(J)))
        G2 = f.cov_unscaled @ (C.T * wd) @ K
        g = G2[0] - G1[band.names.index(f"B_{state}")]
        var = float(g @ (g * s**2)) * (band.fit.scale if np.isfinite(band.fit.scale) else np.nan)
        diff = float(f.beta[0]) - vals[f"B_{state}"]
        consts.append((f"B_{state}_cd_diff", diff, float(np.sqrt(var)) if var >= 0 else np.nan, "cm-1"))
    return rows, consts


def equilibrium_constants(band: BandFit, v_upper: int, v_lower: int, reduced_mass: float) -> list:
    """B_e, α_e and r_e from the B values of the two levels of one band.

    With B_v = B_e − α_e(v+½): α_e = (B″ − B′)/(v′ − v″), B_e = B″ + α_e(v″+½),
    r_e = sqrt(h/(8π²cμB_e)); standard errors propagated with the covariance
    of (B′, B″).

    Returns
    -------
    list of (name, value, stderr, unit)
    """
    names = band.names
    iu, il = names.index("B_upper"), names.index("B_lower")
    cov = band.fit.cov[np.ix_([iu, il], [iu, il])]
    Bu, Bl = band.fit.beta[iu], band.fit.beta[il]
    dv = float(v_upper - v_lower)
    h = v_lower + 0.5
    alpha = (Bl - Bu) / dv
    Be = Bl + alpha * h
    g_alpha = np.array([-1.0 / dv, 1.0 / dv])
    g_Be = np.array([-h / dv, 1.0 + h / dv])
    out = [("B_e", float(Be), propagate(g_Be, cov), "cm-1"),
           ("alpha_e", float(alpha), propagate(g_alpha, cov), "cm-1")]
    if Be > 0:
        re = float(np.sqrt(R_E_CONSTANT / (reduced_mass * Be)))
        out.append(("r_e", re, 0.5 * re * out[0][2] / Be, "Å"))
    return out


def rotational_temperature(position, area, area_err, J_upper, J_lower, lower_energy,
                           *, temperature_guess: float = 300.0, outlier_sigma: float = 4.0):
    """Rotational temperature from a Boltzmann plot of line areas.

    For absorption lines of a ¹Σ–¹Σ band, area ∝ ν̃ L(J″) exp(−c₂E″/T)
    (1 − exp(−c₂ν̃/T)) with L the Hönl–London factor (J″+1 for R, J″ for P),
    so y = ln(area / (ν̃ L (1 − exp(−c₂ν̃/T)))) = a − (c₂/T) E″ is a straight
    line in E″; T = −c₂/slope, σ_T = c₂ σ_slope / slope². The stimulated
    emission factor depends on T and is iterated (three passes from
    ``temperature_guess``). Weights from ``area_err`` (σ_y = area_err/area)
    when given, else from the scatter; the covariance follows :mod:`._lsq`
    (inflated by the Birge ratio when the points scatter beyond their errors).

    A line whose area is off the straight line by more than ``outlier_sigma``
    times the expected scatter (σ_y × the robust Birge ratio, or the robust
    scatter without errors) is left out, one at a time, the worst first: a
    partly blended line carries the area of its neighbour, and with precise
    areas a few such lines bias T by several standard errors while the
    Birge ratio hides them.

    Returns
    -------
    (T, stderr, n_lines, n_left_out) or None when fewer than 3 usable lines or the slope is
    not negative.
    """
    a = np.asarray(area, dtype=float)
    ok = np.isfinite(a) & (a > 0)
    if ok.sum() < 3:
        return None
    nu = np.asarray(position, dtype=float)[ok]
    E = np.asarray(lower_energy, dtype=float)[ok]
    L = honl_london(np.asarray(J_upper)[ok], np.asarray(J_lower)[ok])
    ae = None if area_err is None else np.asarray(area_err, dtype=float)[ok]
    sig = ae / a[ok] if ae is not None and np.all(np.isfinite(ae) & (ae > 0)) else None
    if np.ptp(E) <= 0 or np.any(L <= 0):
        return None
    A = np.column_stack([np.ones_like(E), E])
    keep = np.ones(len(E), dtype=bool)
    for _ in range(len(E)):
        fit = _boltzmann(A, a[ok], nu, L, sig, keep, temperature_guess)
        if fit is None:
            return None
        f, T, y = fit
        z = (y - A @ f.beta) / (sig if sig is not None else 1.0)
        if f.dof < 3:
            break
        scale = robust_scale(z[keep])
        scale = max(1.0, scale) if sig is not None else (scale if scale > 0 else 1.0)
        worst = np.where(keep, np.abs(z) / scale, -1.0)
        if worst.max() <= outlier_sigma:
            break
        keep[int(np.argmax(worst))] = False
    if sig is not None:
        lin = _boltzmann_linear(a[ok][keep], ae[keep], nu[keep], L[keep], E[keep], f.beta, T)
        if lin is not None:
            return lin[0], lin[1], int(keep.sum()), int((~keep).sum())
    return float(T), float(C2 * f.stderr[1] / f.beta[1] ** 2), int(keep.sum()), int((~keep).sum())


def _boltzmann_linear(area, area_err, nu, L, E, beta, T):
    """The Boltzmann-plot line fitted to the areas themselves, weights 1/area_err².

    The logarithm of a noisy area is biased low by about (σ/area)²/2, which
    tilts the plot where the lines are weak (high J) and biases T by several
    of its standard errors at high signal-to-noise; fitting
    area = exp(a + b E″) ν̃ L (1 − exp(−c₂ν̃/T)) by Gauss–Newton from the
    logarithmic fit has no such bias. Covariance as in :mod:`._lsq`.
    """
    a0, b = float(beta[0]), float(beta[1])
    for _ in range(20):
        g = nu * L * -np.expm1(-C2 * nu / T)
        m = np.exp(a0 + b * E) * g
        J = np.column_stack([m, m * E]) / area_err[:, None]
        r = (area - m) / area_err
        try:
            step = weighted_lstsq(J, r, None).beta
        except SingularDesign:
            return None
        a0, b = a0 + step[0], b + step[1]
        if not b < 0:
            return None
        T = -C2 / b
        if abs(step[1]) < 1e-10 * abs(b):
            break
    m = np.exp(a0 + b * E) * nu * L * -np.expm1(-C2 * nu / T)
    try:
        f = weighted_lstsq(np.column_stack([m, m * E]), area, area_err)
    except SingularDesign:
        return None
    return float(T), float(C2 * f.stderr[1] / b**2)


def _boltzmann(A, area, nu, L, sig, keep, T):
    """Weighted straight-line fit of the Boltzmann plot of the kept lines (T iterated)."""
    for _ in range(3):
        y = np.log(area / (nu * L * -np.expm1(-C2 * nu / T)))
        try:
            f = weighted_lstsq(A[keep], y[keep], None if sig is None else sig[keep])
        except SingularDesign:
            return None
        if not f.beta[1] < 0:
            return None
        T = -C2 / f.beta[1]
    return f, T, y
