"""Bound vibrational levels of a diatomic by the sinc discrete variable
representation (DVR) of Colbert and Miller, J. Chem. Phys. 96 (1992) 1982.

On an equally spaced grid r_i = r_0 + i Δr the Hamiltonian of the radial
equation

    [−ħ²/(2μ) d²/dr² + V(r) + ħ²/(2μ) J(J+1)/r²] ψ = E ψ

is the matrix (Colbert and Miller 1992, eq. A7, the (−∞, ∞) case)

    H_ij = ħ²/(2μ Δr²) (−1)^(i−j) · {π²/3 if i = j; 2/(i−j)² otherwise}
           + δ_ij V_J(r_i),

with ħ²/(2μ) = KINETIC/μ in cm⁻¹ Å² (see :mod:`.potentials`). Its lowest
eigenvalues are the level energies (cm⁻¹ above the minimum of the J = 0
potential) and the eigenvectors divided by sqrt(Δr) are the wavefunctions
on the grid, normalised so that Σ ψ(r_i)² Δr = 1. The DVR converges
exponentially with the number of points per local wavelength.

Automatic grid: the range covers the classically allowed region of the
highest wanted level plus tails in which the WKB decay ∫κ dr (κ =
sqrt((V − E)/(ħ²/2μ))) reaches 25 (ψ² below e⁻⁵⁰); the spacing starts at 4 points per shortest
local wavelength (Δr = π/(2 k_max), k_max from the highest energy above the
potential minimum) and is refined by 25 % steps until the level energies
change by less than ``tol`` (relative). Phase convention: each
wavefunction is positive in its outermost lobe (large r), which makes
⟨v|r − r_e|v+1⟩ > 0 as for Hermite functions.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from .dvr import diagonalise as _diagonalise
from .dvr import hamiltonian as _hamiltonian
from .dvr import ritz as _ritz
from .dvr import sinc_dvr_kinetic
from .potentials import OscillatorError, Potential

__all__ = ["VibrationalLevels", "solve", "sinc_dvr_kinetic"]

_TAIL = 25.0          # WKB decay integral kept beyond each turning point
_MAX_POINTS = 6000    # dense eigensolver limit
_REFINE = 1.25        # factor on the number of points per refinement
_DEFAULT_HARMONIC_LEVELS = 20


@dataclass(frozen=True, eq=False)
class VibrationalLevels:
    """Bound levels of one potential, reduced mass and J.

    Attributes
    ----------
    energies : ndarray, shape (n,)
        cm⁻¹ above the minimum of the J = 0 potential, ascending (v = 0 … n−1).
    r : ndarray, shape (m,)
        The grid in Å (equally spaced).
    wavefunctions : ndarray, shape (n, m)
        ψ_v(r_i), Σ_i ψ_v(r_i)² Δr = 1, outermost lobe positive.
    potential : Potential
    reduced_mass : float
        u.
    J : int
    r_e : float
        Minimum of the potential (Å); dipole polynomials are in (r − r_e).
    asymptote : float
        Levels at or above this energy (cm⁻¹) are not bound (inf: none dissociate).
    convergence : float
        Largest change (cm⁻¹) of any energy in the last grid refinement; an upper
        estimate of the discretisation error. NaN when the grid was given.
    B_v, D_v : ndarray, shape (n,), or None
        Rotational constants (cm⁻¹) when asked for: B_v = ⟨v|ħ²/(2μ r²)|v⟩ and
        D_v = −Σ_{n≠v} |⟨n|ħ²/(2μ r²)|v⟩|² / (E_v − E_n), the first- and
        second-order coefficients of E(v, J) in J(J+1) (Rayleigh–Schrödinger
        perturbation theory in the centrifugal term, summed over all DVR states).
    method : str
    """

    energies: np.ndarray
    r: np.ndarray
    wavefunctions: np.ndarray
    potential: Potential
    reduced_mass: float
    J: int
    r_e: float
    asymptote: float
    convergence: float
    B_v: np.ndarray | None = None
    D_v: np.ndarray | None = None
    method: str = "sinc DVR (Colbert and Miller, J. Chem. Phys. 96 (1992) 1982)"

    @property
    def n_levels(self) -> int:
        return int(self.energies.size)

    @property
    def dr(self) -> float:
        """Grid spacing Δr (Å)."""
        return float(self.r[1] - self.r[0])

    def matrix(self, func: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
        """M[v′, v″] = ⟨v′|f(r)|v″⟩ = Σ_i ψ_v′(r_i) f(r_i) ψ_v″(r_i) Δr (DVR quadrature)."""
        f = np.asarray(func(self.r), dtype=float)
        w = self.wavefunctions
        return (w * (f * self.dr)) @ w.T

    def expectation(self, func: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
        """⟨v|f(r)|v⟩ for every level, shape (n,)."""
        f = np.asarray(func(self.r), dtype=float)
        return np.einsum("vi,i,vi->v", self.wavefunctions, f * self.dr, self.wavefunctions)


def _v_eff(potential: Potential, mu: float, J: int, kin: float):
    cj = kin * J * (J + 1)

    def v(r):
        out = potential.energy(r, mu)
        return out + cj / (r * r) if J else out

    return v


def _auto_range(veff, lo: float, hi: float, e_top: float, kin: float, outer_tail: bool = True):
    """r range (lo, hi) holding the allowed region at e_top plus WKB tails; min V there; and the
    smaller of the two tail integrals reached (below _TAIL when the domain ends first).
    Without ``outer_tail`` the range ends at the outer turning point."""
    probe = np.linspace(lo, hi, 40001)
    with np.errstate(over="ignore"):
        v = veff(probe)
    allowed = np.flatnonzero(v <= e_top)
    if allowed.size == 0:
        raise OscillatorError(
            f"no part of the potential lies below {e_top:.6g} cm-1 inside r = {lo:.4g}..{hi:.4g} Å; "
            "check the potential and the reduced mass"
        )
    i0, i1 = int(allowed[0]), int(allowed[-1])
    kappa = np.sqrt(np.clip(v - e_top, 0.0, None) / kin)
    step = probe[1] - probe[0]
    left = np.cumsum(kappa[i0::-1]) * step
    j = int(np.searchsorted(left, _TAIL))
    r_lo = probe[max(i0 - j, 0)]
    right = np.cumsum(kappa[i1:]) * step
    k = int(np.searchsorted(right, _TAIL)) if outer_tail else 0
    r_hi = probe[min(i1 + k, probe.size - 1)]
    decay = min(float(left[min(j, left.size - 1)]), float(right[min(k, right.size - 1)]))
    return float(r_lo), float(r_hi), float(np.min(v[i0:i1 + 1])), decay


def _grid_from(grid) -> np.ndarray:
    if isinstance(grid, tuple) and len(grid) == 3:
        lo, hi, n = grid
        if not (float(hi) > float(lo)) or int(n) < 10:
            raise OscillatorError(f"grid=(r_min, r_max, n) needs r_max > r_min and n >= 10, got {grid!r}")
        return np.linspace(float(lo), float(hi), int(n))
    r = np.array(grid, dtype=float)  # a copy: the result's grid is made read-only
    if r.ndim != 1 or r.size < 10:
        raise OscillatorError("grid must be (r_min, r_max, n_points) or an array of >= 10 r values (Å)")
    d = np.diff(r)
    if np.any(d <= 0) or np.ptp(d) > 1e-9 * abs(d[0]) * r.size:
        raise OscillatorError("grid points must be equally spaced and ascending (sinc DVR)")
    return r


def _phase(w: np.ndarray) -> np.ndarray:
    """Flip rows so that each wavefunction is positive in its outermost lobe."""
    out = w.copy()
    big = np.abs(w) > 1e-3 * np.max(np.abs(w), axis=1, keepdims=True)
    last = w.shape[1] - 1 - np.argmax(big[:, ::-1], axis=1)
    signs = np.sign(w[np.arange(w.shape[0]), last])
    out *= signs[:, None]
    return out


def solve(potential: Potential, reduced_mass: float, *, n_levels: int | None = None, J: int = 0,
          grid=None, tol: float = 1e-10, rotational_constants: bool = False) -> VibrationalLevels:
    """Solve the radial Schrödinger equation for the bound levels of ``potential``.

    Parameters
    ----------
    potential : Potential
        From :func:`harmonic`, :func:`morse` or :func:`tabulated`.
    reduced_mass : float
        μ in u.
    n_levels : int, optional
        The lowest ``n_levels`` bound levels. Default: every bound level of a
        dissociating potential (energy below :meth:`Potential.asymptote`),
        20 levels of the harmonic potential.
    J : int
        Rotational quantum number; adds ħ²/(2μ) J(J+1)/r² to V. Energies stay
        relative to the J = 0 minimum.
    grid : (r_min, r_max, n_points) or array, optional
        Override the automatic grid (equally spaced, Å); no refinement is done
        and ``convergence`` is NaN. A grid much finer than the levels need is
        solved fast: on a coarser grid first, then refined on the given one by
        Rayleigh–Ritz with a residual test (the full matrix is diagonalised
        whenever that test fails).
    tol : float
        Relative change of the energies at which refinement stops (default 1e-10).
    rotational_constants : bool
        Also compute B_v and D_v by perturbation theory (J = 0 only; needs the
        full eigendecomposition, so it costs more).

    Returns
    -------
    VibrationalLevels

    Notes
    -----
    Levels bound by a tiny margin (closer to the asymptote than about 1e-5 of
    the well depth) have tails longer than the grid can hold; their energies
    carry the grid's box effect (for the 82 Morse levels of CO the top one, bound
    by 0.26 cm⁻¹, is 2e-3 cm⁻¹ high).

    Raises
    ------
    OscillatorError
        Bad input, no bound level, or no convergence within 6000 grid points.
    """
    if not isinstance(potential, Potential):
        raise OscillatorError(
            f"potential must come from harmonic(), morse() or tabulated(), got {type(potential).__name__}"
        )
    try:
        mu = float(reduced_mass)
    except (TypeError, ValueError):
        mu = math.nan
    if isinstance(reduced_mass, bool) or not (math.isfinite(mu) and mu > 0):
        raise OscillatorError(f"reduced_mass must be a positive number of u, got {reduced_mass!r}")
    if isinstance(J, bool) or not isinstance(J, (int, np.integer)) or J < 0:
        raise OscillatorError(f"J must be a non-negative integer, got {J!r}")
    J = int(J)
    if n_levels is not None and (isinstance(n_levels, bool) or not isinstance(n_levels, (int, np.integer))
                                 or n_levels < 1):
        raise OscillatorError(f"n_levels must be a positive integer or None, got {n_levels!r}")
    if rotational_constants and J != 0:
        raise OscillatorError("rotational_constants=True needs J=0 (B_v, D_v expand about J = 0)")
    if not (tol > 0):
        raise OscillatorError(f"tol must be positive, got {tol!r}")
    kin = potential.kinetic(mu)
    veff = _v_eff(potential, mu, J, kin)
    limit = potential.asymptote(mu)
    re = potential.r_e(mu)
    if n_levels is None and not math.isfinite(limit):
        n_levels = _DEFAULT_HARMONIC_LEVELS

    if grid is not None:
        r = _grid_from(grid)
        if rotational_constants:
            e, c = _diagonalise(veff, r, kin, n_levels, limit, everything=True)
        else:
            e, c = _solve_on_grid(potential, mu, J, kin, veff, r, n_levels, limit)
        conv = math.nan
    else:
        r, e, c, conv = _auto_solve(potential, mu, J, kin, veff, limit, n_levels, tol,
                                    rotational_constants)
    keep = e < limit
    if n_levels is not None:
        keep &= np.arange(e.size) < n_levels
    nb = int(np.count_nonzero(keep))
    if nb == 0:
        raise OscillatorError(
            f"the potential has no bound level below its asymptote ({limit:.6g} cm-1) for "
            f"reduced mass {mu} u and J={J}"
        )
    dr = r[1] - r[0]
    wf = _phase(c[:, :nb].T / math.sqrt(dr))
    b_v = d_v = None
    if rotational_constants:
        rot = kin / r**2
        rn = (c.T * rot) @ c[:, :nb]          # <n|R|v>, shape (all, nb)
        b_v = np.diagonal(rn[:nb]).copy()
        d_v = np.empty(nb)
        for v in range(nb):
            de = e[v] - e
            de[v] = np.inf
            d_v[v] = -np.sum(rn[:, v] ** 2 / de)
    energies = e[:nb].copy()
    for a in (r, energies, wf, b_v, d_v):
        if a is not None:
            a.setflags(write=False)
    return VibrationalLevels(energies=energies, r=r, wavefunctions=wf, potential=potential,
                             reduced_mass=mu, J=J, r_e=re, asymptote=limit, convergence=conv,
                             B_v=b_v, D_v=d_v)


def _e_top(potential, mu, J, kin, n_levels, limit) -> float:
    e_top = kin * J * (J + 1) / potential.r_e(mu) ** 2
    e_top += potential.curvature_omega(mu) * (n_levels + 0.5) if n_levels is not None else math.inf
    return min(e_top, limit)


def _solve_on_grid(potential, mu, J, kin, veff, r, n_levels, limit):
    """Lowest levels on a given grid, fast when the grid is finer than needed.

    The levels are first solved on a coarser grid over the same range that still
    has 6 points per shortest local wavelength at the highest wanted energy,
    then refined on the given grid by :func:`_ritz`, whose residual test decides
    whether the result is accepted; otherwise (and for grids that are not
    over-resolved) the given grid's matrix is diagonalised directly.
    """
    e_top = _e_top(potential, mu, J, kin, n_levels, limit)
    vmin = float(np.min(veff(r)))
    if not (math.isfinite(e_top) and e_top > vmin):
        return _diagonalise(veff, r, kin, n_levels, limit)
    dc = math.pi / (math.sqrt((e_top - vmin) / kin) * 6.0)
    nc = int(math.ceil((r[-1] - r[0]) / dc)) + 1
    if nc > 0.6 * r.size or nc < 32:
        return _diagonalise(veff, r, kin, n_levels, limit)
    rc = np.linspace(r[0], r[-1], nc)
    n_want = n_levels
    if n_want is None:
        n_want = int(np.count_nonzero(_diagonalise(veff, rc, kin, None, limit)[0] < limit)) + 2
    ec, cc = _diagonalise(veff, rc, kin, n_want, limit)
    if ec.size == 0:
        return _diagonalise(veff, r, kin, n_levels, limit)
    scale = max(float(np.max(np.abs(ec))), potential.curvature_omega(mu))
    out = _ritz(_hamiltonian(veff, r, kin), r, rc, cc, scale)
    return out if out is not None else _diagonalise(veff, r, kin, n_levels, limit)


def _auto_solve(potential, mu, J, kin, veff, limit, n_levels, tol, everything):
    lo, hi = potential.domain(mu)
    if J:
        lo = max(lo, 1e-3)
    omega = potential.curvature_omega(mu)
    e_top = _e_top(potential, mu, J, kin, n_levels, limit)
    all_bound = e_top >= limit
    if all_bound:
        # first pass (coarse) to find the highest bound level, whose tail sets the range; it
        # reaches out to where V is within 1e-6 of the asymptote (levels bound by less than
        # that are not resolved)
        r_lo, r_hi, vmin, _ = _auto_range(veff, lo, hi, e_top * (1 - 1e-6), kin, outer_tail=False)
        r = _points(r_lo, r_hi, e_top, vmin, kin, 1.5)
        e, _ = _diagonalise(veff, r, kin, None, limit)
        if e.size == 0:
            raise OscillatorError("the potential has no bound level; check its depth and the reduced mass")
        e_top = float(e[-1])
    elif potential.kind != "harmonic":
        # the harmonic estimate of the highest wanted level is refined by a coarse pass
        r_lo, r_hi, vmin, _ = _auto_range(veff, lo, hi, e_top, kin)
        r = _points(r_lo, r_hi, e_top, vmin, kin, 1.5)
        e, _ = _diagonalise(veff, r, kin, n_levels, limit)
        e_top = min(float(e[min(n_levels, e.size) - 1]), e_top)
    r_lo, r_hi, vmin, decay = _auto_range(veff, lo, hi, e_top, kin)
    if decay < 8.0:
        raise OscillatorError(
            f"the highest wanted level (about {e_top:.6g} cm-1) does not decay inside the range "
            f"r = {lo:.4g}..{hi:.4g} Å where the potential can be evaluated (it is still below that "
            "energy near an edge); extend the tabulated potential or ask for fewer levels"
        )
    factor = 2.0  # 2 x factor points per shortest local wavelength
    r = _points(r_lo, r_hi, e_top, vmin, kin, factor)
    n_want = None if all_bound else n_levels
    e_old, _ = _diagonalise(veff, r, kin, n_want, limit)
    while True:
        factor *= _REFINE
        r = _points(r_lo, r_hi, e_top, vmin, kin, factor)
        if r.size > _MAX_POINTS:
            raise OscillatorError(
                f"the automatic grid did not converge to tol={tol:g} within {_MAX_POINTS} points; "
                "loosen tol or give grid=(r_min, r_max, n_points)"
            )
        e, c = _diagonalise(veff, r, kin, n_want, limit)
        m = min(e.size, e_old.size)
        m = m if n_levels is None else min(m, n_levels)
        if m and e.size >= min(e_old.size, n_levels or e_old.size):
            diff = np.abs(e[:m] - e_old[:m])
            conv = float(np.max(diff))
            if np.all(diff <= tol * np.maximum(np.abs(e[:m]), omega * 0.5)):
                break
        e_old = e
    if everything:
        e, c = _diagonalise(veff, r, kin, n_want, limit, everything=True)
    return r, e, c, conv


def _points(r_lo: float, r_hi: float, e_top: float, vmin: float, kin: float, factor: float):
    kmax = math.sqrt(max(e_top - vmin, 1e-12) / kin)
    dr = math.pi / (kmax * factor)
    n = max(int(math.ceil((r_hi - r_lo) / dr)) + 1, 32)
    return np.linspace(r_lo, r_hi, n)
