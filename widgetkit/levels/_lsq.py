"""Weighted linear least squares with covariance, shared by the band and
progression fits (private).

The model is y = A β + ε with independent errors of standard deviation σᵢ.
The estimate minimises χ² = Σ ((yᵢ − (Aβ)ᵢ)/σᵢ)² and is computed by a singular
value decomposition of the column-scaled, weighted design matrix (stable for
the badly scaled columns J(J+1) and J²(J+1)²).

Covariance convention (stated once, used everywhere in ``widgetkit.levels``):

* with stated errors σᵢ: C = (AᵀWA)⁻¹ · max(1, χ²/ν) — the stated errors are
  trusted unless the scatter shows they are too small (Birge ratio > 1), then
  the covariance is inflated; it is never shrunk below the stated errors;
* without errors (unit weights): C = (AᵀA)⁻¹ · χ²/ν, the usual estimate from
  the scatter;
* with ν = 0 degrees of freedom (as many data as parameters) the fit passes
  through every point and nothing tests the model or the stated errors: the
  covariance is unknown (NaN) in both cases; ``cov_unscaled`` is still there
  for predictions.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["LinearFit", "weighted_lstsq", "propagate"]


@dataclass(frozen=True)
class LinearFit:
    """Result of :func:`weighted_lstsq`.

    Attributes
    ----------
    beta : ndarray, shape (p,)
    cov : ndarray, shape (p, p)
        Covariance after the scaling described in the module docstring.
    cov_unscaled : ndarray, shape (p, p)
        (AᵀWA)⁻¹ (with unit weights when no errors were given).
    residuals : ndarray, shape (n,)
        y − Aβ.
    chi2 : float
        Σ (residual/σ)² (with σ = 1 when no errors were given).
    dof : int
        n − p.
    scale : float
        The factor applied to ``cov_unscaled``.
    absolute : bool
        True when errors were given.
    """

    beta: np.ndarray
    cov: np.ndarray
    cov_unscaled: np.ndarray
    residuals: np.ndarray
    chi2: float
    dof: int
    scale: float
    absolute: bool

    @property
    def stderr(self) -> np.ndarray:
        return np.sqrt(np.clip(np.diag(self.cov), 0.0, None))

    @property
    def reduced_chi2(self) -> float:
        return self.chi2 / self.dof if self.dof > 0 else float("nan")


class SingularDesign(ValueError):
    """The design matrix does not determine every parameter."""


def weighted_lstsq(A, y, sigma=None, *, rcond: float = 1e-11) -> LinearFit:
    """Solve the weighted linear least-squares problem y ≈ A β.

    Parameters
    ----------
    A : array_like, shape (n, p)
    y : array_like, shape (n,)
    sigma : array_like, shape (n,), optional
        Standard errors of y (all finite and > 0); None for unit weights.
    rcond : float
        Singular values below ``rcond`` times the largest mark the problem as
        singular.

    Raises
    ------
    SingularDesign
        When n < p or the columns are (nearly) linearly dependent.
    """
    A = np.asarray(A, dtype=float)
    y = np.asarray(y, dtype=float)
    n, p = A.shape
    if n < p:
        raise SingularDesign(f"{n} data for {p} parameters")
    absolute = sigma is not None
    s = np.ones(n) if sigma is None else np.asarray(sigma, dtype=float)
    Aw = A / s[:, None]
    yw = y / s
    col = np.linalg.norm(Aw, axis=0)
    if np.any(col == 0):
        raise SingularDesign("a parameter has no data")
    As = Aw / col
    U, S, Vt = np.linalg.svd(As, full_matrices=False)
    if S[-1] < rcond * S[0]:
        raise SingularDesign("parameters are not separately determined")
    bs = Vt.T @ ((U.T @ yw) / S)
    beta = bs / col
    cov_u = (Vt.T / S**2) @ Vt / np.outer(col, col)
    resid = y - A @ beta
    chi2 = float(np.sum((resid / s) ** 2))
    dof = n - p
    if dof <= 0:
        scale = float("nan")
    elif absolute:
        scale = max(1.0, chi2 / dof)
    else:
        scale = chi2 / dof
    return LinearFit(beta, cov_u * scale, cov_u, resid, chi2, dof, scale, absolute)


def propagate(grad, cov) -> float:
    """Standard error of f(β) from its gradient: sqrt(gᵀ C g)."""
    g = np.asarray(grad, dtype=float)
    v = float(g @ np.asarray(cov, dtype=float) @ g)
    return float(np.sqrt(v)) if v >= 0 else float("nan")


def robust_scale(z) -> float:
    """1.4826 × median |z| (the normal-consistent MAD about zero) of normalised residuals."""
    z = np.asarray(z, dtype=float)
    if z.size == 0:
        return float("nan")
    return float(1.4826 * np.median(np.abs(z)))
